"""Measure routes against the planner's estimates: CPU time and peak RSS of a child, beside the estimate.

Each case runs one ``enumerator`` command in a grandchild process; the
launcher reads the grandchild's ``getrusage(RUSAGE_CHILDREN)`` after it exits:
``ru_maxrss`` (peak resident memory) and ``ru_utime + ru_stime`` (CPU time,
which is what the limits are about: wall time under load is longer).  The
same command on a tiny instance gives the interpreter's own start (the
baseline), subtracted from both.  Beside them: the estimate the planner
checks before computing (:mod:`enumerator.core.limits` ``Cost``) and the
ratios estimate/measured.  An estimate is meant as an upper bound on memory
(ratio at least 1, within about 1.5) and within about 2x of the CPU time.

Usage::

    python scripts/measure_estimates.py            # small and medium sizes, a minute or two
    python scripts/measure_estimates.py --full     # also the large sizes (several minutes)
    python scripts/measure_estimates.py --only count --json

Routes measured: the MB count with a uniform capacity (capacity-overflow
route, :func:`enumerator.algorithms.counting_costs.capacity_overflow_cost`),
MB counts by groups (FLINT powers,
:func:`~enumerator.algorithms.counting_costs.flint_power_cost`), the exact
occupation law of a trap
(:func:`enumerator.algorithms.levels.occupation.exact_law_cost`) and the
exact pair of the no-collision threshold
(:func:`enumerator.algorithms.threshold.exact_pair_cost`).

``--full`` on 2026-12-02 (2 cores, load 0.5-1.6; MB of 10^6 bytes)::

    command                                           est s   cpu s  ratio   est MB  peak MB  ratio
    count -n 5000 -r 7 --capacity 1000                 0.16    0.08   2.09     11.3      4.4   2.53
    count -n 10000 -r 7 --capacity 2000                0.60    0.38   1.59     36.6     15.1   2.42
    count -n 20000 -r 7 --capacity 4000                2.32    1.99   1.16    129.3     60.9   2.12
    count -n 3000 --bounds 7x0:600,1x0:                0.74    0.65   1.14    172.4    165.5   1.04
    count -n 5000 --bounds 7x0:1000,1x0:               2.32    2.07   1.12    523.3    229.0   2.29
    count -n 4000 --bounds 7x0:800,5x0:700             2.18    2.58   0.85    445.3    365.3   1.22
    count -n 7000 --bounds 7x0:1400,1x0:               4.92    4.80   1.02   1083.3    733.2   1.48
    levels --preset trap --particles 100 (exact law)   2.84    1.62   1.76     13.9     10.9   1.27
    levels --preset trap --particles 140               11.55   7.55   1.53     36.9     29.7   1.25
    levels --preset trap --particles 170               26.05  18.13   1.44     65.2     52.7   1.24
    levels --preset trap --particles 200               51.60  40.44   1.28    105.0     86.6   1.21
    threshold --vary urns -n 2^16                      1.75    1.14   1.53     17.0     14.2   1.20
    threshold --vary urns -n 2^18                      9.58    7.71   1.24     76.6     60.5   1.27
    threshold --vary urns -n 2^20                     50.96   47.05   1.08    340.9    258.9   1.32

Before these estimates were corrected, ``count -n 20000 -r 7 --capacity
4000`` planned 2.9 GB and peaked at 6.0 GB (a FLINT power; it now takes the
capacity-overflow route), the trap at 200 particles planned 20.3 s for
55 s of CPU, and the threshold at ``2^20`` planned 13.8 s and 41 MB.
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

LAUNCHER = r"""
import json, resource, subprocess, sys
code = "import sys; from enumerator.cli import main; sys.argv[0] = 'enumerator'; sys.exit(main())"
proc = subprocess.run([sys.executable, "-c", code] + sys.argv[1:], stdout=subprocess.PIPE, stderr=subprocess.PIPE)
usage = resource.getrusage(resource.RUSAGE_CHILDREN)
out = proc.stdout.decode()
print(json.dumps({"code": proc.returncode, "maxrss": usage.ru_maxrss, "cpu": usage.ru_utime + usage.ru_stime,
                  "stderr": proc.stderr.decode()[-400:], "answer": out if len(out) < 2000 else out[:2000]}))
"""


def run(argv):
    """Run ``enumerator *argv`` in a grandchild: ``(CPU seconds, peak RSS in bytes, start of stdout)``."""
    env = dict(os.environ, PYTHONPATH=str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    proc = subprocess.run([sys.executable, "-c", LAUNCHER, *argv], capture_output=True, text=True, env=env)
    if proc.returncode:
        raise RuntimeError(proc.stderr)
    report = json.loads(proc.stdout)
    if report["code"]:
        raise RuntimeError(f"enumerator {' '.join(argv)} exited {report['code']}: {report['stderr']}")
    scale = 1 if sys.platform == "darwin" else 1024  # ru_maxrss: KiB on Linux, bytes on macOS
    return report["cpu"], report["maxrss"] * scale, report["answer"]


# ---------------------------------------------------------------------------
# the estimates of each command, read from the library
# ---------------------------------------------------------------------------

def count_estimate(argv, _answer):
    """``count``: the configurations and the microstates, one after the other."""
    from enumerator.algorithms.counting_costs import counting_cost
    from enumerator.core.model import UrnModel

    opts = dict(zip(argv[1::2], argv[2::2]))
    if "--bounds" in opts:
        model = UrnModel(balls=int(opts["-n"]), bounds=opts["--bounds"], rule=opts.get("--rule", "MB"))
    else:
        model = UrnModel(balls=int(opts["-n"]), urns=int(opts["-r"]), rule=opts.get("--rule", "MB"),
                         capacity=int(opts["--capacity"]))
    return counting_cost(model, "configurations") + counting_cost(model, "microstates")


def levels_estimate(argv, _answer):
    """``levels --factor X --occupation-law L``: the exact law."""
    from enumerator.algorithms.levels import make_system
    from enumerator.algorithms.levels.occupation import exact_law_cost

    opts = dict(zip(argv[1::2], argv[2::2]))
    system = make_system(int(opts["--particles"]), preset=opts["--preset"], rule=opts["--rule"])
    return exact_law_cost(system, opts["--factor"])


def threshold_estimate(argv, answer):
    """``threshold --vary urns --event "max <= 1"``: the exact pair at the answer."""
    from enumerator.algorithms.threshold import exact_pair_cost
    from enumerator.core.model import UrnModel

    opts = dict(zip(argv[1::2], argv[2::2]))
    value = int(json.loads(answer[: answer.index(', "probability"')] + "}")["value"])
    base, power = opts["-n"].split("^")
    cost, _ = exact_pair_cost(UrnModel(balls=int(base) ** int(power), urns=value), "urns", value)
    return cost


def count(n, r, capacity):
    return ["count", "-n", str(n), "-r", str(r), "--capacity", str(capacity), "--no-cache", "--json"]


def count_bounds(n, bounds):
    return ["count", "-n", str(n), "--bounds", bounds, "--no-cache", "--json"]


def trap(particles):
    return ["levels", "--preset", "trap", "--particles", str(particles), "--rule", "BE", "--factor", "9/10",
            "--occupation-law", "0", "--json"]


def threshold(k):
    return ["threshold", "--vary", "urns", "-n", f"2^{k}", "--event", "max <= 1", "--target", "1/2", "--json"]


#: ``(area, baseline command, estimate, [(size, command)...], [large sizes...])``
CASES = [
    ("count", count(1, 1, 1), count_estimate,
     [count(5000, 7, 1000), count(10000, 7, 2000)], [count(20000, 7, 4000)]),
    ("count-groups", count(1, 1, 1), count_estimate,
     [count_bounds(3000, "7x0:600,1x0:"), count_bounds(5000, "7x0:1000,1x0:"),
      count_bounds(4000, "7x0:800,5x0:700")], [count_bounds(7000, "7x0:1400,1x0:")]),
    ("levels", trap(2), levels_estimate, [trap(100), trap(140)], [trap(170), trap(200)]),
    ("threshold", threshold(4), threshold_estimate, [threshold(16), threshold(18)], [threshold(20)]),
]


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--full", action="store_true", help="also the large sizes (minutes)")
    parser.add_argument("--only", help="one area: " + ", ".join(c[0] for c in CASES))
    parser.add_argument("--json", action="store_true", help="one JSON object per line")
    args = parser.parse_args(argv)
    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    if not args.json:
        print(f"# CPU time and peak RSS above the command's own start; load {load:.1f} on {os.cpu_count()} cores")
        print(f"{'command':<62} {'est s':>8} {'cpu s':>8} {'ratio':>6} {'est MB':>9} {'peak MB':>9} {'ratio':>6}")
    for area, base_argv, estimate, sizes, large in CASES:
        if args.only and args.only != area:
            continue
        base_cpu, base_rss, _ = run(base_argv)
        for argv in sizes + (large if args.full else []):
            cpu, rss, answer = run(argv)
            cost = estimate(argv, answer)
            cpu_net = max(cpu - base_cpu, 1e-3)
            mb_net = max(rss - base_rss, 0) / 1e6
            row = {"area": area, "command": " ".join(argv[:-1] if argv[-1] == "--json" else argv),
                   "estimate_seconds": round(cost.seconds, 3), "cpu_seconds": round(cpu_net, 3),
                   "estimate_mb": round(cost.memory / 1e6, 1), "peak_mb": round(mb_net, 1),
                   "baseline_mb": round(base_rss / 1e6, 1), "load": round(load, 2)}
            if args.json:
                print(json.dumps(row), flush=True)
                continue
            m_ratio = cost.memory / 1e6 / mb_net if mb_net > 0.5 else float("nan")
            print(f"{row['command'][:62]:<62} {cost.seconds:8.2f} {cpu_net:8.2f} {cost.seconds / cpu_net:6.2f} "
                  f"{cost.memory / 1e6:9.1f} {mb_net:9.1f} {m_ratio:6.2f}", flush=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
