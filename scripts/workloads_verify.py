"""Benchmark workload of ``cache verify --sample K``: a sample drawn in SQL against reading every row first.

``scripts/bench.py`` loads this file and calls :func:`register`.  The store
holds BE configurations ``C(n + r - 1, r - 1)`` (stars and bars) for a grid
of ``n`` and ``r``, written once before timing; both methods check the same
number of rows with the same recomputation, so the difference is what each
reads to choose them: :meth:`Store.verify <enumerator.store.database.Store.verify>`
draws ids in SQL and reads only the rows drawn, the peer (the way verify
chose its sample before) reads every stored entry and then draws with
``random.sample``.
"""

from __future__ import annotations

import math
import random
import shutil
import tempfile
from pathlib import Path

#: Rows checked by each call.
SAMPLE = 50


def _fill(path: Path, rows: int):
    """A store at *path* of *rows* BE configurations (stars and bars, common practice); return it open."""
    from enumerator import Occupancy
    from enumerator.store.database import Store
    from enumerator.store.keys import Key

    store = Store(str(path))
    batch, done = [], 0
    for r in range(1, rows + 1):
        for n in range(200):
            if done == rows:
                break
            batch.append(("configurations", Key.of(Occupancy(balls=n, urns=r, rule="BE")), 1,
                          math.comb(n + r - 1, r - 1), "", "", 0))
            done += 1
        if len(batch) >= 5000 or done == rows:
            store.put_many(batch)
            batch = []
        if done == rows:
            break
    return store


def register(bench) -> None:
    """Declare the verify workload in *bench* (``scripts/bench.py``)."""
    Method = bench.Method

    @bench.workload("verify-sample-sql",
                    f"cache verify --sample {SAMPLE}: ids drawn in SQL vs every row read first "
                    "(100,000 rows; quick: 5,000)",
                    target=bench.faster_by(1))
    def _verify_sample(ctx):
        from enumerator.store.entries import check_entry

        rows = 5_000 if ctx.quick else 100_000
        folder = Path(tempfile.mkdtemp(prefix="enumerator-bench-verify-"))
        store = _fill(folder / "verify.sqlite", rows)
        try:
            def drawn_in_sql():
                report = store.verify(sample=SAMPLE, seed=1)
                return report["checked"], len(report["mismatches"])

            def every_row_first():
                chosen = random.Random(1).sample(list(store.entries()), SAMPLE)
                checks = [check_entry(entry) for entry in chosen]
                return sum(c is not None for c in checks), sum(c is not None and c.problem is not None for c in checks)

            result = ctx.compare(
                Method("enumerator verify (ids drawn in SQL)", drawn_in_sql),
                [Method("every entry read, then random.sample", every_row_first)],
                items=SAMPLE,
            )
            result.notes.append(f"{rows} rows in the store; answer = (rows checked, mismatches)")
            return result
        finally:
            store.close()
            shutil.rmtree(folder, ignore_errors=True)
