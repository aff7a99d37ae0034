"""Speed-up and per-cell overhead of building a table on a local Dask cluster.

Usage: python scripts/bench_cluster.py [--balls 0..400] [--urns 1..50] [--rule MB] [--capacity C]

Builds the same table into fresh SQLite files: once by ``build_table`` (one
process), once by ``build_table_distributed`` on a 1-worker and on a 2-worker
``LocalCluster`` (started beforehand; the start-up is reported apart), checks
the cells are equal, and prints wall times, the speed-up of 2 workers over
one process and the per-cell overhead ``(T(1 worker) - T(one process)) / cells``.
"""

from __future__ import annotations

import argparse
import os
import tempfile
import time

import distributed

from enumerator.store.cluster import (
    RowTask,
    _compute_rows,
    build_table_distributed,
    local_cluster,
    plan_row_batches,
)
from enumerator.store.database import Store
from enumerator.store.tables import TableSpec, build_table, load_table


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--balls", default="0..400")
    parser.add_argument("--urns", default="1..50")
    parser.add_argument("--rule", default="MB")
    parser.add_argument("--capacity", type=int, default=None)
    parser.add_argument("--rounds", type=int, default=1)
    args = parser.parse_args()
    spec = TableSpec.make(args.rule, args.balls, args.urns, capacity=args.capacity)
    root = tempfile.mkdtemp(prefix="enumerator-cluster-bench-")
    print(f"table {spec.default_name()}: {spec.cells} cells; load average {os.getloadavg()[0]:.1f}")
    counter = [0]

    def fresh() -> Store:
        counter[0] += 1
        return Store(os.path.join(root, f"t{counter[0]}.sqlite"))

    times = {"one process": [], "1 worker": [], "2 workers": []}
    reference = None
    clusters = {}
    for k in (1, 2):
        t0 = time.perf_counter()
        context = local_cluster(k)  # Dask's workers without MALLOC_TRIM_THRESHOLD_ (see local_cluster)
        cluster = context.__enter__()
        client = distributed.Client(cluster, set_as_default=False)
        client.wait_for_workers(k)
        clusters[k] = (context, client)
        print(f"start-up of a {k}-worker LocalCluster: {time.perf_counter() - t0:.1f} s")
    for _ in range(args.rounds):
        store = fresh()
        t0 = time.perf_counter()
        build_table(spec, store=store)
        times["one process"].append(time.perf_counter() - t0)
        reference = load_table(spec.default_name(), store).cells
        for k in (1, 2):
            store = fresh()
            t0 = time.perf_counter()
            build_table_distributed(spec, store=store, client=clusters[k][1])
            times[f"{k} worker{'s' if k > 1 else ''}"].append(time.perf_counter() - t0)
            assert load_table(spec.default_name(), store).cells == reference, "cells differ"
    # the distributed path without the store: rows computed here vs sent to 1 worker and gathered
    tasks = [RowTask(r, tuple(spec.balls)) for r in spec.urns]
    args_ = (spec.rule, spec.quantity, spec.minimum, spec.capacity)
    local, remote = [], []
    for _ in range(args.rounds):
        t0 = time.perf_counter()
        _compute_rows(*args_, tasks)
        local.append(time.perf_counter() - t0)
        per_weight = local[-1] / max(1, len(tasks))
        client = clusters[1][1]
        t0 = time.perf_counter()
        batches = plan_row_batches(spec, tasks, 1e-9 + per_weight / 1e4, 1)
        client.gather([client.submit(_compute_rows, *args_, b, pure=False) for b in batches])
        remote.append(time.perf_counter() - t0)
    gap = (min(remote) - min(local)) / spec.cells
    print(f"rows only, no store: here {min(local):.2f} s, through 1 worker {min(remote):.2f} s "
          f"({len(batches)} tasks): {gap * 1e6:.1f} us/cell")
    for context, client in clusters.values():
        client.close()
        context.__exit__(None, None, None)
    best = {name: min(values) for name, values in times.items()}
    for name, value in best.items():
        print(f"{name:12s} {value:8.2f} s  (rounds: {', '.join(f'{v:.2f}' for v in times[name])})")
    print(f"speed-up, 2 workers over one process: {best['one process'] / best['2 workers']:.2f}x")
    overhead = (best["1 worker"] - best["one process"]) / spec.cells
    print(f"whole build, (1 worker - one process) / cells: {overhead * 1e6:.1f} us/cell "
          "(the client writes in batches of 20,000 cells, the single-process build one transaction per row)")
    print("cells equal to the single-process build: yes")


if __name__ == "__main__":
    main()
