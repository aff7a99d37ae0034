"""The benchmark harness runs end to end in quick mode and every method agrees.

Part of the default test run on purpose (no marker, no skip): CI runs it.
No timing is asserted; timings and targets are only printed by
``scripts/bench.py``.  The cross-checks themselves live in the script: each
workload compares enumerator's answer with general-purpose peers (gmpy2,
python-flint, SymPy, itertools) and prints ``MISMATCH`` and exits 1 when one
differs.
"""

import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
BENCH = ROOT / "scripts" / "bench.py"

# The workloads the engine issue asks for; a workload that disappears from the
# registry fails this test.
EXPECTED = [
    "be-capacity-20000",
    "be-capacity-100000",
    "be-per-urn-bounds",
    "mb-capacity-microstates",
    "mb-probability-same-model",
    "mb-probability-fresh-model",
    "list-tuples",
    "list-tuples-for-loop",
    "list-blocks",
    "list-memory",
    # issue 10: urn groups at hash-table sizes
    "no-collision-2^64",
    "max-le-3-2^64",
    "max-law-1024",
    "moments-occupied-2^32",
    "threshold-three-birthdays",
    "weighted-max-law",
    "million-digit-count-printed",
]


def _run(*args):
    # The timeout only guards against a hang; it is not a timing check.
    return subprocess.run([sys.executable, str(BENCH), *args], cwd=str(ROOT),
                          capture_output=True, text=True, timeout=900)


def test_quick_benchmark_runs_every_workload_and_all_answers_agree():
    listed = _run("--list")
    assert listed.returncode == 0, listed.stderr
    names = [line.split()[0] for line in listed.stdout.splitlines() if line.strip()]
    assert set(EXPECTED) <= set(names)

    quick = _run("--quick")
    output = quick.stdout + quick.stderr
    assert quick.returncode == 0, output
    assert "MISMATCH" not in output
    assert "ERROR" not in output
    for name in names:
        assert f"== {name}:" in quick.stdout, f"workload {name} did not report"
    summary = quick.stdout.split("Summary", 1)[1]
    for name in names:
        assert name in summary, f"workload {name} missing from the summary table"


_WRONG_PEER = r"""
import importlib.util, sys
spec = importlib.util.spec_from_file_location("bench", sys.argv[1])
bench = sys.modules["bench"] = importlib.util.module_from_spec(spec)
spec.loader.exec_module(bench)

@bench.workload("deliberately-wrong", "a peer off by one", target=bench.at_most(1))
def _wrong(ctx):
    from enumerator import Occupancy
    return ctx.compare(
        bench.Method("enumerator", lambda: Occupancy(balls=6, urns=3, rule="BE").configurations()),
        [bench.Method("off by one", lambda: 28 + 1)],  # C(8, 2) = 28, stars and bars (common practice)
    )

sys.exit(bench.main(["--quick", "--only", "deliberately-wrong"]))
"""


def test_a_disagreeing_peer_is_reported_and_fails_the_run():
    # Guards the check above: without it, "no MISMATCH" could pass vacuously.
    proc = subprocess.run([sys.executable, "-c", _WRONG_PEER, str(BENCH)], cwd=str(ROOT),
                          capture_output=True, text=True, timeout=300)
    assert proc.returncode == 1, proc.stdout + proc.stderr
    assert "MISMATCH: off by one returned 29, enumerator 28" in proc.stdout
