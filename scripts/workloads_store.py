"""Benchmark workloads of the result store's streaming reads: peak memory of table export, show and cache export.

``scripts/bench.py`` loads this file and calls :func:`register`.  Each
measured command runs in a grandchild process (bench.py's memory launcher:
Linux carries a process's peak RSS across fork and exec, so the launcher is
a bare Python between the benchmark and the measured process) and its peak
resident memory is ``getrusage(RUSAGE_CHILDREN).ru_maxrss`` read by the
launcher.

Run alone, it measures an existing store (for example a table of 10^6 cells
built beforehand)::

    python scripts/workloads_store.py --store big.sqlite --table big
"""

from __future__ import annotations

import argparse
import math
import sys
import tempfile
from pathlib import Path

#: The measured process: runs the CLI with its stdout sent to /dev/null and
#: prints one JSON line (exit code, seconds) on the real stdout.
_CLI_CHILD = r"""
import json, os, sys, time
argv = sys.argv[1:]
real = os.dup(1)
quiet = os.open(os.devnull, os.O_WRONLY)
os.dup2(quiet, 1)
from enumerator.cli import main
t = time.perf_counter()
code = 0
try:
    main(argv)
except SystemExit as stop:
    code = stop.code or 0
sys.stdout.flush()
seconds = time.perf_counter() - t
os.dup2(real, 1)
print(json.dumps({"code": code, "seconds": seconds}))
"""

#: The pre-streaming way, for comparison: every cell of the table read into a
#: dict (a window of it for show), then rendered as one text.
_IN_MEMORY_CHILD = r"""
import json, sys, time
from enumerator.store import open_store
from enumerator.store.tables import TableData, StoredTable, export_table, open_table
store, name, output = sys.argv[1:4]
t = time.perf_counter()
table = open_table(name, store=open_store(store))
cells = {(n, r): (text, digits) for n, r, text, digits in table.cells()}
text = export_table(TableData(name, table.spec, cells), "csv")
with open(output, "w") as handle:
    handle.write(text)
print(json.dumps({"code": 0, "seconds": time.perf_counter() - t}))
"""

def child_peak(bench, code: str, *args: str):
    """Run *code* with *args* in a grandchild (``bench.child_peak``); return ``(report, peak RSS in MB)``.

    Raises
    ------
    RuntimeError
        When the child fails (its stderr is in the message).
    """
    # these commands read the store they are given
    return bench.child_peak(code, *args, drop_env=("ENUMERATOR_NO_CACHE",))


def commands(store: str, name: str, out: Path) -> dict:
    """The measured commands on table *name* of *store*: label -> (child code, args)."""
    cli = _CLI_CHILD
    return {
        "table export csv (long)": (cli, ["table", "export", name, "--store", store, "--output", out / "long.csv"]),
        "table export csv (wide)": (cli, ["table", "export", name, "--layout", "wide", "--store", store,
                                          "--output", out / "wide.csv"]),
        "table export parquet (long)": (cli, ["table", "export", name, "--format", "parquet", "--store", store,
                                              "--output", out / "long.parquet"]),
        "table export parquet (wide)": (cli, ["table", "export", name, "--format", "parquet", "--layout", "wide",
                                              "--store", store, "--output", out / "wide.parquet"]),
        "table show (20 x 8 window)": (cli, ["table", "show", name, "--urns", "1..8", "--store", store]),
        "table list": (cli, ["table", "list", "--store", store]),
        "cache export csv": (cli, ["cache", "export", "--format", "csv", "--store", store,
                                   "--output", out / "cache.csv"]),
        "all cells in memory, then csv (before streaming)": (_IN_MEMORY_CHILD, [store, name, out / "memory.csv"]),
    }


def _check_long_csv(path: Path, spec) -> str:
    """Every line of a long CSV of a BE table equals stars and bars C(n+r-1, r-1) (common practice); return a note."""
    count = 0
    with open(path) as handle:
        next(handle)
        for count, line in enumerate(handle, 1):
            n, r, value, _ = line.rstrip("\n").split(",")
            if count % 997 == 1 and int(value) != math.comb(int(n) + int(r) - 1, int(r) - 1):
                raise AssertionError(f"cell ({n}, {r}) differs from C(n+r-1, r-1)")
    if count != spec.cells:
        raise AssertionError(f"{count} lines for {spec.cells} cells")
    return f"{count} lines, every 997th checked against C(n+r-1, r-1)"


def register(bench) -> None:
    """Declare the store's streaming workloads in *bench* (``scripts/bench.py``)."""

    @bench.workload("table-export-memory",
                    "peak RSS of 'table export' (csv, long) of a BE table, 200 x 1000 cells (quick: 100 x 50)",
                    target=bench.peak_below_mb(200))
    def _table_export_memory(ctx):
        from enumerator.store import open_store
        from enumerator.store.tables import TableSpec, build_table

        balls, urns = ("0..99", "1..50") if ctx.quick else ("0..199", "1..1000")
        folder = Path(tempfile.mkdtemp(prefix="enumerator-bench-store-"))
        store = str(folder / "table.sqlite")
        spec = TableSpec.make("BE", balls, urns)
        target = open_store(store)
        build_table(spec, store=target, name="t")
        target.close()
        runs = commands(store, "t", folder)
        ours, ours_mb = child_peak(bench, runs["table export csv (long)"][0], *runs["table export csv (long)"][1])
        peer, peer_mb = child_peak(bench, *runs["all cells in memory, then csv (before streaming)"][:1],
                                   *runs["all cells in memory, then csv (before streaming)"][1])
        note = _check_long_csv(folder / "long.csv", spec)
        same = (folder / "long.csv").read_bytes() == (folder / "memory.csv").read_bytes()
        mine = bench.Measurement("enumerator table export (child process)", ours_mb, ours_mb, 1, 1, agrees=True,
                                 answer=spec.cells)
        other = bench.Measurement("every cell in memory, then csv (child process)", peer_mb, peer_mb, 1, 1,
                                  agrees=same, answer=spec.cells if same else None)
        result = bench.Result("", "", mine, [other], unit="MB")
        result.notes.append(f"{spec.cells} cells ({balls} x {urns}); {note}; "
                            f"the CLI command took {bench.fmt_time(ours['seconds'])} (imports included), "
                            f"the in-memory export {bench.fmt_time(peer['seconds'])}")
        if not same:
            result.mismatches.append("the streamed export and the in-memory one differ")
        return result


def main(argv=None) -> int:
    """Measure every command of :func:`commands` (or those named by ``--only``) on an existing table."""
    parser = argparse.ArgumentParser(description="Peak memory of the store's reads on an existing table.")
    parser.add_argument("--store", required=True)
    parser.add_argument("--table", required=True)
    parser.add_argument("--only", action="append", help="measure only these (labels as printed)")
    args = parser.parse_args(argv)
    import bench  # beside this file (scripts/ is on the path when this file is run)

    folder = Path(tempfile.mkdtemp(prefix="enumerator-store-measure-"))
    for label, (code, child_args) in commands(args.store, args.table, folder).items():
        if args.only and label not in args.only:
            continue
        report, peak = child_peak(bench, code, *child_args)
        print(f"{label:<50} peak RSS {peak:8.1f} MB  {report['seconds']:8.2f} s", flush=True)
        for path in folder.iterdir():  # outputs of hundreds of MB: one at a time
            path.unlink()
    return 0


if __name__ == "__main__":
    sys.exit(main())
