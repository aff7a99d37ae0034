"""Benchmark workloads of the cluster path (enumerator.store.cluster), registered by scripts/bench.py.

* ``cluster-table-2-workers``: a table of at least 10^4 cells built on a
  2-worker ``LocalCluster`` against the single-process ``build_table``, each
  into a fresh SQLite file; the notes give the speed-up and the per-cell
  overhead of the distributed path.
* ``cluster-enumeration-sum``: an event the planner can only decide by
  listing, summed on 2 workers against the single-process listing
  (``event_count``).
* ``table-sqlite-vs-postgres``: the same table built into SQLite and into
  PostgreSQL (a throw-away server from ``tests/pg_server.py``), one process
  and 2 workers, side by side; PostgreSQL both by the store's COPY write path
  and by the multi-row INSERT it replaced.

Quick mode (``--quick``, run by the test suite) keeps each workload to a few
seconds: the clusters are in-process (threads, not processes: they start in
about a second and check the path and the answers, but show no speed-up under
the GIL) on small instances, and the PostgreSQL comparison is skipped with a
note (starting a server takes several seconds).  Each build goes into a fresh
store, so it is timed once per round (1 round quick, 3 full) and the best kept;
cluster start-up is timed apart and not included.
"""

from __future__ import annotations

import os
import shutil
import sys
import tempfile
import time
from contextlib import contextmanager
from pathlib import Path

#: The table of the speed-up (full mode): 20,020 cells of about 6,000 bits, ~7 s of rows on one core.
FULL_TABLE = ("MB", "0..1000", "61..80", 50)
#: A store-bound table (closed-form cells, ~20,000 writes) for the SQLite/PostgreSQL comparison.
STORE_TABLE = ("MB", "0..400", "1..50", None)
QUICK_TABLE = ("MB", "0..60", "1..12", 6)
#: The listed event: two counting statistics at once (no exact shortcut).
EVENT = "empty == 3 and count(== 1) == 2"
FULL_EVENT_MODEL = (18, 12)  # C(29, 11) = 34,597,290 configurations
QUICK_EVENT_MODEL = (10, 7)  # C(16, 6) = 8,008


def register(bench) -> None:
    """Declare this file's workloads with ``bench.workload``."""
    Measurement, Result = bench.Measurement, bench.Result
    fmt_time = bench.fmt_time

    def spec_of(table):
        from enumerator.store.tables import TableSpec

        rule, balls, urns, capacity = table
        return TableSpec.make(rule, balls, urns, capacity=capacity)

    @contextmanager
    def cluster(ctx, workers):
        """A client on a fresh cluster: worker processes (full), threads in this process (quick)."""
        import distributed

        from enumerator.store.cluster import local_cluster

        t0 = time.perf_counter()
        with local_cluster(workers, processes=not ctx.quick) as local:
            with distributed.Client(local, set_as_default=False) as client:
                client.wait_for_workers(workers)
                yield client, time.perf_counter() - t0

    def cpu_clock(client=None):
        """``(CPU seconds of this process, of the busiest worker, of all workers)`` so far.

        Without *client* (one process, or a cluster of threads) the workers count 0.
        """
        if client is None:
            return lambda: (time.process_time(), 0.0, 0.0)

        def read():
            workers = list(client.run(time.process_time).values())
            return time.process_time(), max(workers), sum(workers)

        return read

    def total_cpu(used):
        """Client plus all workers (the busiest worker is among them)."""
        return used[0] + used[2]

    def spent(before, after):
        return tuple(b - a for a, b in zip(before, after))

    def cpu_text(used):
        client, busiest, workers = used
        cores = os.cpu_count() or 1
        ideal = max(client, busiest, (client + workers) / cores)
        return (f"{client + workers:.2f} (client {client:.2f}, workers {workers:.2f}, busiest worker "
                f"{busiest:.2f}; on {cores} idle cores about max(client, busiest worker, all / {cores}) "
                f"= {ideal:.2f} s)")

    local_clock = cpu_clock()

    def timed_builds(rounds, build, cpu=local_clock):
        """Best and median seconds of *build(store)* over fresh SQLite stores, the last store's cells,
        and the least CPU seconds of a round (this process and the workers: unlike wall time, not
        stretched by other programs on a busy machine)."""
        from enumerator.store.database import Store

        root = tempfile.mkdtemp(prefix="enumerator-cluster-bench-")
        seconds, cpus, store = [], [], None
        try:
            for i in range(rounds):
                store = Store(os.path.join(root, f"t{i}.sqlite"))
                c0 = cpu()
                t0 = time.perf_counter()
                name = build(store)
                seconds.append(time.perf_counter() - t0)
                cpus.append(spent(c0, cpu()))
            from enumerator.store.tables import load_table

            cells = load_table(name, store).cells
        finally:
            shutil.rmtree(root, ignore_errors=True)
        return min(seconds), sorted(seconds)[len(seconds) // 2], len(seconds), cells, min(cpus, key=total_cpu)

    def measurement(label, best, median, samples, answer):
        if isinstance(answer, dict):  # a table's cells: compared whole by the workload, shown by size
            answer = f"{len(answer)} cells"
        return Measurement(label, best, median, samples, 1, agrees=True, answer=answer)

    @bench.workload("cluster-table-2-workers",
                    "table build MB n=0..1000 r=61..80 capacity 50 (20,020 cells): "
                    "2-worker LocalCluster against one process")
    def _cluster_table(ctx):
        from enumerator.store.cluster import build_table_distributed
        from enumerator.store.tables import build_table

        spec = spec_of(QUICK_TABLE if ctx.quick else FULL_TABLE)
        rounds = 1 if ctx.quick else 3
        notes = [f"{spec.cells} cells; each build into a fresh SQLite file, best of {rounds}; "
                 f"load average {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores"]
        if ctx.quick:
            notes.append("quick: a small table on an in-process cluster (threads): checks the path, "
                         "no speed-up expected; run without --quick for the figures")

        def single(store):
            return build_table(spec, store=store).name

        one = timed_builds(rounds, single)
        runs = {}
        for workers in ((2,) if ctx.quick else (1, 2)):
            with cluster(ctx, workers) as (client, start):
                runs[workers] = timed_builds(
                    rounds, lambda store, c=client: build_table_distributed(spec, store=store, client=c).name,
                    cpu=cpu_clock(None if ctx.quick else client))
            notes.append(f"start-up of a {workers}-worker cluster: {fmt_time(start)} (not included)")
        two = runs[2]
        ours = measurement("2-worker cluster", two[0], two[1], two[2], two[3])
        peer = measurement("one process (build_table)", one[0], one[1], one[2], one[3])
        result = Result("", "", ours, [peer], notes=notes)
        if two[3] != one[3]:
            result.mismatches.append("the cluster's cells differ from the single-process build")
        notes.append(f"speed-up, 2 workers over one process: {one[0] / two[0]:.2f}x")
        notes.append(f"per-cell overhead, 2 x T(2 workers) - T(one process) over the cells: "
                     f"{(2 * two[0] - one[0]) / spec.cells * 1e6:.1f} us/cell")
        if 1 in runs:
            notes.append(f"per-cell overhead, T(1 worker) - T(one process) over the cells: "
                         f"{(runs[1][0] - one[0]) / spec.cells * 1e6:.1f} us/cell "
                         f"(1 worker: {fmt_time(runs[1][0])})")
        if not ctx.quick:
            notes.append(f"CPU seconds, one process: {one[4][0]:.2f}")
            for k in sorted(runs):
                notes.append(f"CPU seconds, {k} worker{'s' if k > 1 else ''}: {cpu_text(runs[k][4])}")
            notes.append(f"CPU overhead of 2 workers over one process: "
                         f"{(total_cpu(runs[2][4]) - one[4][0]) / spec.cells * 1e6:.1f} us/cell")
        return result

    @bench.workload("cluster-enumeration-sum",
                    f"P({EVENT}), MB n=18 r=12 (34,597,290 configurations listed): "
                    "2-worker LocalCluster against the single-process listing")
    def _cluster_sum(ctx):
        from enumerator.algorithms.events import event_count
        from enumerator.core.model import UrnModel
        from enumerator.store.cluster import event_count_distributed

        n, r = QUICK_EVENT_MODEL if ctx.quick else FULL_EVENT_MODEL
        model = UrnModel(balls=n, urns=r, rule="MB")
        rounds = 1 if ctx.quick else 3
        notes = [f"n={n} r={r}; best of {rounds}; load average {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores"]
        if ctx.quick:
            notes.append("quick: n=10 r=7 on an in-process cluster (threads): checks the path and the answer only")

        def best_of(call, cpu=local_clock):
            seconds, cpus, answer = [], [], None
            for _ in range(rounds):
                c0 = cpu()
                t0 = time.perf_counter()
                answer = call()
                seconds.append(time.perf_counter() - t0)
                cpus.append(spent(c0, cpu()))
            return min(seconds), sorted(seconds)[len(seconds) // 2], answer, min(cpus, key=total_cpu)

        single = best_of(lambda: event_count(model, EVENT, limit=10 ** 9))
        with cluster(ctx, 2) as (client, start):
            many = best_of(lambda: event_count_distributed(model, EVENT, client=client, limit=10 ** 9),
                           cpu=cpu_clock(None if ctx.quick else client))
        notes.append(f"start-up of the cluster: {fmt_time(start)} (not included)")
        notes.append(f"speed-up, 2 workers over one process: {single[0] / many[0]:.2f}x")
        if not ctx.quick:
            notes.append(f"CPU seconds, one process: {single[3][0]:.2f}; 2 workers: {cpu_text(many[3])}")
        ours = measurement("2-worker cluster", many[0], many[1], rounds, many[2])
        peer = measurement("one process (event_count)", single[0], single[1], rounds, single[2])
        result = Result("", "", ours, [peer], notes=notes)
        if many[2] != single[2]:
            result.mismatches.append(f"cluster {many[2]} != one process {single[2]}")
        return result

    @bench.workload("table-sqlite-vs-postgres",
                    "the same table (MB n=0..400 r=1..50, 20,050 cells) built into PostgreSQL and into SQLite, "
                    "one process and 2 workers")
    def _sqlite_vs_postgres(ctx):
        from enumerator.store.cluster import build_table_distributed
        from enumerator.store.database import Store
        from enumerator.store.tables import build_table, load_table

        spec = spec_of(STORE_TABLE)
        if ctx.quick:
            return Result("", "", Measurement("PostgreSQL", None, skipped=True, note="skipped"), [],
                          notes=["quick: skipped (starting a PostgreSQL server takes several seconds); "
                                 "run without --quick"])
        tests = str(Path(__file__).resolve().parent.parent / "tests")
        if tests not in sys.path:
            sys.path.insert(0, tests)
        import pg_server

        try:
            server = pg_server.start()
        except (pg_server.Unavailable, RuntimeError, OSError) as error:
            return Result("", "", Measurement("PostgreSQL", None, skipped=True, note="skipped"), [],
                          notes=[f"skipped: no PostgreSQL server ({error})"])
        rounds = 3
        root = tempfile.mkdtemp(prefix="enumerator-pg-bench-")
        #: (label, backend, PostgreSQL write path); the INSERT path is the multi-row
        #: INSERT ... ON CONFLICT the store used before COPY (still its path without TEMPORARY)
        configs = (("SQLite", "sqlite", None), ("PostgreSQL", "postgres", "copy"),
                   ("PostgreSQL by INSERT", "postgres", "insert"))
        times = {}
        answers = {}
        try:
            with cluster(ctx, 2) as (client, _):
                for i in range(rounds):  # interleaved: each round builds every configuration once
                    for how in ("one process", "2 workers"):
                        for label, where, path in configs:
                            url = None
                            if where == "sqlite":
                                store = Store(os.path.join(root, f"{how}-{i}.sqlite"))
                            else:
                                url = pg_server.create_database(server.url)
                                store = Store(url)
                                if path == "insert":
                                    store._copy = None  # the store's own fallback: write by INSERT
                            t0 = time.perf_counter()
                            if how == "one process":
                                build_table(spec, store=store)
                            else:
                                build_table_distributed(spec, store=store, client=client)
                            times.setdefault((label, how), []).append(time.perf_counter() - t0)
                            answers[label, how] = load_table(spec.default_name(), store).cells
                            store.close()
                            if url is not None:
                                pg_server.drop_database(server.url, url)
        finally:
            from enumerator import store as results

            results.close_all()
            server.stop()
            shutil.rmtree(root, ignore_errors=True)
        times = {key: (min(seconds), sorted(seconds)[len(seconds) // 2]) for key, seconds in times.items()}
        reference = answers["SQLite", "one process"]
        pg = times["PostgreSQL", "one process"]
        lite = times["SQLite", "one process"]
        old = times["PostgreSQL by INSERT", "one process"]
        ours = measurement("PostgreSQL (COPY), one process", pg[0], pg[1], rounds, reference)
        peer = measurement("SQLite, one process", lite[0], lite[1], rounds, reference)
        before = measurement("PostgreSQL by INSERT, one process", old[0], old[1], rounds, reference)
        notes = [f"{spec.cells} cells; {rounds} interleaved rounds, each build into a fresh file / database; "
                 f"load average {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores"]
        for (label, how), (best, median) in sorted(times.items()):
            notes.append(f"{label:20s} {how:11s} median {fmt_time(median)} ({median / spec.cells * 1e6:.0f} us/cell), "
                         f"best {fmt_time(best)}")
        for how in ("one process", "2 workers"):
            notes.append(f"{how}: PostgreSQL / SQLite {times['PostgreSQL', how][1] / times['SQLite', how][1]:.2f}x, "
                         f"INSERT path / COPY path {times['PostgreSQL by INSERT', how][1] / times['PostgreSQL', how][1]:.1f}x"
                         " (medians)")
        result = Result("", "", ours, [peer, before], notes=notes)
        for key, cells in answers.items():
            if cells != reference:
                result.mismatches.append(f"{key} cells differ from SQLite, one process")
        return result
