r"""Tables and enumeration sums on a Dask distributed cluster.

Two kinds of work split cleanly across processes and machines:

* **table rows** — each row (fixed ``r``, every ``n``) of a lookup table is
  one generating-function pass (:func:`enumerator.store.tables.row_values`),
  independent of every other row;
* **rank ranges of a listing** — the configurations of a model are ranked
  ``0 .. count - 1`` and :func:`enumerator.algorithms.listing.iter_blocks`
  lists any range ``[start, stop)`` by itself, so a sum over the listing is
  a sum of sums over disjoint shards.

:func:`build_table_distributed` sends row batches to the workers and writes
the results from the client through the store's ordinary write path
(:meth:`~enumerator.store.database.Store.put_many`), so a plain SQLite file
works (a PostgreSQL store is also read by the workers, which skip cells
stored meanwhile); :func:`enumeration_sum_distributed` sends equal rank
shards and adds the exact integer sums, :func:`enumeration_counts_distributed`
adds dicts of exact counts per value, and :func:`listing_to_files` has each
shard written to its own file.  On top of these, :func:`event_count_distributed`
and :func:`distribution_distributed` answer what the planner decides by
listing; :func:`~enumerator.algorithms.events.event_needs_listing` (the
event planner's own probe, re-exported here) and
:func:`distribution_needs_listing` tell, without listing, whether the
single-process route would list (only then does a cluster help).  The cluster is a
:class:`distributed.LocalCluster` of ``workers`` processes started here, or
an existing scheduler at ``cluster`` (``"tcp://host:8786"``), or a
:class:`distributed.Client` the caller holds.

Faults: Dask reschedules the tasks of a worker that dies, and the client
takes exactly one result per task (one future, one result), so a killed
worker costs only its shards and nothing is counted twice; rows are written
with ``put_many``, which keeps a key already stored, and files under a
temporary name renamed when whole.

Dask is an optional dependency: ``pip install 'enumerator[cluster]'``.
"""

from __future__ import annotations

import math
import os
import time
from collections import Counter
from contextlib import contextmanager
from dataclasses import dataclass
from functools import partial
from typing import Callable, Iterator, List, Optional, Sequence, Tuple

import gmpy2

from ..algorithms import laws
from ..algorithms.counting import count_configurations, exact_fraction
from ..algorithms.event_language import evaluate, parse_event
from ..algorithms.events import evaluate_block, event_needs_listing
from ..algorithms.grouped import integer_groups
from ..algorithms.laws import outcome_total
from ..algorithms.listing import iter_blocks
from ..algorithms.statistics import Distribution, Statistic, parse_statistic
from ..core import limits
from ..core.errors import InvalidParameters, TooLarge
from ..core.limits import Cost
from ..core.model import UrnModel, as_count
from .keys import ALGORITHM_VERSIONS, Key
from .tables import BuildReport, TablePlan, TableSpec, check_table_plan, claim_table, need_store, plan_table, row_values

__all__ = [
    "EventWeight",
    "RowTask",
    "StatisticWeights",
    "build_table_distributed",
    "check_cluster",
    "cluster_client",
    "distribution_distributed",
    "distribution_needs_listing",
    "enumeration_counts_distributed",
    "enumeration_sum_distributed",
    "event_count_distributed",
    "local_cluster",
    "event_needs_listing",
    "listing_to_files",
    "plan_row_batches",
    "plan_table_distributed",
]

#: Target duration of one task, in seconds.
TASK_SECONDS = 1.0
#: Cells the client buffers before one write transaction.
WRITE_BATCH = 20_000
#: Seconds to wait for the scheduler at a cluster= address before giving up.
CONNECT_SECONDS = 10.0
#: Tasks per worker aimed for at least (load balance, and a dead worker's share is small).
TASKS_PER_WORKER = 4


def _need_dask():
    try:
        import distributed  # noqa: F401
    except ImportError as error:  # pragma: no cover - depends on the environment
        raise InvalidParameters(
            "running on a cluster needs Dask: pip install 'enumerator[cluster]' "
            "(or drop workers= / cluster=)"
        ) from error
    return distributed


@contextmanager
def cluster_client(workers: Optional[int] = None, cluster=None, client=None) -> Iterator[object]:
    """Yield a :class:`distributed.Client`: the caller's, one on *cluster*, or a new local cluster.

    Parameters
    ----------
    workers : int, optional
        Start a :class:`distributed.LocalCluster` of this many worker
        processes (one thread each: the work is GMP/FLINT arithmetic that
        holds the GIL), closed again on exit.
    cluster : str, optional
        Address of a running Dask scheduler (``"tcp://host:8786"``).
    client : distributed.Client, optional
        A client the caller owns (not closed here).

    Raises
    ------
    InvalidParameters
        Unless exactly one of the three is given, when Dask is missing, or
        when no scheduler answers at *cluster* within :data:`CONNECT_SECONDS`.

    Notes
    -----
    Cost: starting a local cluster takes about a second per worker process
    (interpreter start and imports); connecting to a scheduler, one round trip.
    """
    check_cluster(workers, cluster, client)
    if client is not None:
        yield client
        return
    distributed = _need_dask()
    if cluster is not None:
        try:
            own = distributed.Client(str(cluster), set_as_default=False, timeout=CONNECT_SECONDS)
        except (OSError, TimeoutError, ValueError) as error:
            raise _unreachable(str(cluster), error) from None
        with own:
            yield own
        return
    with local_cluster(as_count(workers, "workers", 1)) as local:
        with distributed.Client(local, set_as_default=False) as own:
            yield own


def check_cluster(workers: Optional[int] = None, cluster=None, client=None) -> None:
    """Refuse, before any work is done or stored, a cluster that cannot be used.

    Parameters
    ----------
    workers, cluster, client
        As for :func:`cluster_client`.

    Raises
    ------
    InvalidParameters
        Unless exactly one of the three is given, when Dask is missing
        (unless *client* is given), when *workers* is not a positive count,
        or when nothing accepts a connection at the TCP address *cluster*.

    Notes
    -----
    Starts nothing and connects no Dask client: a route calls it first, so
    a refused request leaves the store as it was (no table definition is
    recorded).  :func:`cluster_client` checks the same way.  Cost: one TCP
    connection to the scheduler's port for *cluster*, else constant.
    """
    given = [x is not None for x in (workers, cluster, client)]
    if sum(given) != 1:
        raise InvalidParameters("give exactly one of workers=, cluster= or client=",
                                parameters=["workers", "cluster"])
    if client is not None:
        return
    _need_dask()
    if cluster is not None:
        _check_reachable(str(cluster))
    else:
        as_count(workers, "workers", 1)


@contextmanager
def local_cluster(workers: int, processes: bool = True) -> Iterator[object]:
    """Yield a :class:`distributed.LocalCluster` of *workers* single-threaded workers, closed on exit.

    Parameters
    ----------
    workers : int
        Worker processes (threads with ``processes=False``).
    processes : bool
        Separate processes (the default: the arithmetic holds the GIL).

    Yields
    ------
    distributed.LocalCluster

    Notes
    -----
    Dask's nannies start workers with ``MALLOC_TRIM_THRESHOLD_=65536``,
    which makes glibc return every freed block of more than 128 kB to the
    system, so each numpy block of a listing is mapped and faulted in
    afresh: a shard then takes about three times the CPU of the same ranks
    listed in a plain process (measured on ``MB n=18 r=12``).  The workers
    started here do without it (Dask's other settings kept), for their
    whole life, restarts included.  Cost: about a second per worker
    process to start.
    """
    import dask

    distributed = _need_dask()
    key = "distributed.nanny.pre-spawn-environ"
    environ = {k: v for k, v in (dask.config.get(key, default=None) or {}).items()
               if k != "MALLOC_TRIM_THRESHOLD_"}
    with dask.config.set({key: environ}):
        with distributed.LocalCluster(n_workers=workers, threads_per_worker=1, processes=processes,
                                      dashboard_address=":0") as local:
            yield local


def _unreachable(address: str, error) -> InvalidParameters:
    return InvalidParameters(
        f"cannot reach a Dask scheduler at {address!r} ({error}); check cluster= (tcp://HOST:8786, "
        "started by 'dask scheduler'), or use workers= for a local cluster", parameters=["cluster", "workers"])


def _check_reachable(address: str) -> None:
    """Refuse a malformed scheduler address, or a TCP one where nothing accepts a connection, at once.

    Dask's own client waits :data:`CONNECT_SECONDS` and more to close again
    after a failed connection; a plain socket knows in one round trip.
    """
    import socket

    from distributed.comm.addressing import parse_address, parse_host_port

    try:
        scheme, location = parse_address(address)
        if scheme not in ("tcp", "tls"):
            return
        host, port = parse_host_port(location)
    except (ValueError, TypeError) as error:
        raise _unreachable(address, error) from None
    try:
        socket.create_connection((host, port), timeout=CONNECT_SECONDS).close()
    except OSError as error:
        raise _unreachable(address, error) from None


def _worker_count(client) -> int:
    try:
        return max(1, len(client.scheduler_info().get("workers", {})))
    except Exception:  # pragma: no cover - a scheduler that does not answer yet
        return 1


# ---------------------------------------------------------------------------
# tables
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class RowTask:
    """One row to compute on a worker: ``r`` and the missing ``n`` (sorted)."""

    urns: int
    missing: Tuple[int, ...]


def _row_weight(spec: TableSpec, task: RowTask) -> float:
    """Relative cost of a row: its length times the size of its numbers (in machine words)."""
    top = task.missing[-1]
    span = max(top - task.urns * spec.minimum, 0) + 1
    # the values of a row have ~span*log(r)-bit (MB) or ~min(r, span)*log-bit entries
    size = min(task.urns, span) if spec.quantity == "configurations" else span
    return span * (1.0 + size * math.log2(task.urns + 1) / 64.0)


def plan_row_batches(spec: TableSpec, tasks: Sequence[RowTask], seconds_per_weight: float, workers: int,
                     task_seconds: float = TASK_SECONDS) -> List[List[RowTask]]:
    """Group *tasks* into batches of about *task_seconds* each (greedy, in row order).

    Parameters
    ----------
    spec : TableSpec
    tasks : sequence of RowTask
    seconds_per_weight : float
        Measured seconds per unit of :func:`_row_weight` (from a pilot row).
    workers : int
        Workers in the cluster: batches are made smaller when the whole
        table would otherwise give fewer than ``TASKS_PER_WORKER`` tasks per worker.
    task_seconds : float
        Target duration of one task.

    Returns
    -------
    list of list of RowTask

    Notes
    -----
    Cost: one pass over the rows.
    """
    estimate = [_row_weight(spec, t) * seconds_per_weight for t in tasks]
    total = sum(estimate)
    target = min(task_seconds, total / max(1, workers * TASKS_PER_WORKER))
    batches: List[List[RowTask]] = []
    current: List[RowTask] = []
    spent = 0.0
    for task, cost in zip(tasks, estimate):
        if current and spent + cost > target:
            batches.append(current)
            current, spent = [], 0.0
        current.append(task)
        spent += cost
    if current:
        batches.append(current)
    return batches


#: Stores opened by this worker process, by URL (one engine and pool per server).
_WORKER_STORES: dict = {}


def _worker_store(url: str):
    """The store at *url*, opened once per worker process; None when this worker cannot reach it."""
    from ..core.errors import StoreError
    from .database import Store

    if url not in _WORKER_STORES:
        try:
            _WORKER_STORES[url] = Store(url)
        except (StoreError, OSError):
            _WORKER_STORES[url] = None  # e.g. a server on the client's loopback: compute every cell
    return _WORKER_STORES[url]


def _stored_here(url: str, quantity: str, rule: str, bounds: str, urns: int, version: int) -> set:
    """The ``n`` of a row stored at *url* as this worker sees it (empty when it cannot read the store)."""
    from ..core.errors import StoreError

    store = _worker_store(url)
    if store is None:
        return set()
    try:
        return store.stored_balls(quantity, rule, bounds, urns, version, values=False)
    except StoreError:
        return set()


def _compute_rows(rule: str, quantity: str, minimum: int, capacity: Optional[int],
                  batch: Sequence[RowTask], shared: Optional[Tuple[str, Tuple[str, ...], int]] = None,
                  ) -> List[Tuple[int, List[Tuple[int, int]], str, int]]:
    """Worker side: ``[(r, [(n, value) for missing n], method, ns per cell)]`` for each row of *batch*.

    With *shared* ``= (store URL, bounds text per row of the batch, version)``
    (a database server), each row first reads which of its cells are stored
    by then (by another builder, say) and computes only the others; a row
    found complete comes back with no cells.  A worker that cannot reach
    or read the store computes every cell (the client's write keeps a cell
    stored once).
    """
    out = []
    for index, task in enumerate(batch):
        missing = task.missing
        if shared is not None:
            url, bounds, version = shared
            have = _stored_here(url, quantity, rule, bounds[index], task.urns, version)
            missing = tuple(n for n in missing if n not in have)
            if not missing:
                out.append((task.urns, [], "", 0))
                continue
        t0 = time.perf_counter_ns()
        values, method = row_values(rule, quantity, task.urns, minimum, capacity, missing[-1])
        share = (time.perf_counter_ns() - t0) // len(missing)
        out.append((task.urns, [(n, values[n]) for n in missing], method, share))
    return out


def _shared_url(store) -> Optional[str]:
    """The URL (password included) by which workers may read *store*: a database server, else None (SQLite)."""
    if store.path is not None or store.url.get_backend_name() == "sqlite":
        return None
    return store.url.render_as_string(hide_password=False)


def plan_table_distributed(spec: TableSpec, store=None, *, name: Optional[str] = None,
                           workers: Optional[int] = None, cluster=None, client=None) -> TablePlan:
    """:func:`~enumerator.store.tables.plan_table` for the cluster route: the rows' time divided by the workers.

    Parameters
    ----------
    spec, store, name
        As :func:`~enumerator.store.tables.plan_table`.
    workers, cluster, client
        As :func:`cluster_client`: *workers* processes, the workers of the
        scheduler at *cluster*, or those of *client*.

    Returns
    -------
    TablePlan
        The rows' computation divided by the workers, the client's writes
        (one process) added in full, as the route runs them.

    Notes
    -----
    The workers of a scheduler at *cluster* are counted only when the plan
    with one worker would be refused (one short connection); a scheduler
    that cannot be asked counts as one worker.  The pilot row, computed by
    the client, and starting a local cluster (about a second per worker)
    are not counted.  Cost: that of :func:`~enumerator.store.tables.plan_table`.
    """
    plan = plan_table(spec, store, name=name)
    if workers is not None:
        return plan.spread(as_count(workers, "workers", 1))
    if client is not None:
        return plan.spread(_worker_count(client))
    limit = limits.active_limits()
    if plan.seconds_approx <= limit.seconds or cluster is None:
        return plan
    try:
        with cluster_client(cluster=cluster) as dask:
            return plan.spread(_worker_count(dask))
    except InvalidParameters:
        return plan


def build_table_distributed(spec: TableSpec, *, name: Optional[str] = None, store=None,
                            workers: Optional[int] = None, cluster=None, client=None,
                            progress: Optional[Callable[[int, int, int], None]] = None,
                            task_seconds: float = TASK_SECONDS,
                            write_batch: int = WRITE_BATCH) -> BuildReport:
    """Fill every cell of *spec* into the store, the rows computed on a Dask cluster.

    Parameters
    ----------
    spec : TableSpec
        The table (:meth:`TableSpec.make`).
    name : str, optional
        Its name (default :meth:`TableSpec.default_name`).
    store : Store or location, optional
        Where to build it (default: the current store).  Only the client
        writes it, so any store works, a plain SQLite file included; a
        database server (PostgreSQL) is also read by the workers, which
        skip the cells stored since the client planned the build.
    workers : int, optional
        Run on a new local cluster of this many processes.
    cluster : str, optional
        Run on the Dask scheduler at this address.
    client : distributed.Client, optional
        Run through a client the caller holds.
    progress : callable, optional
        Called as each row's result arrives (in any order of ``r``) as
        ``progress(urns, computed, reused)``, the same signature as
        :func:`~enumerator.store.tables.build_table`; rows found stored are
        reported first.  The sum of ``computed + reused`` is the cells done
        across the cluster.
    task_seconds : float
        Target duration of one task (default one second).
    write_batch : int
        Cells buffered by the client before one write transaction.

    Returns
    -------
    BuildReport
        As :func:`~enumerator.store.tables.build_table`.

    Raises
    ------
    InvalidParameters
        When a table of that name exists with another definition, when not
        exactly one of *workers*, *cluster*, *client* is given, when Dask
        is not installed, or when no scheduler answers at *cluster*; the
        cluster is checked (:func:`check_cluster`) before the store is
        opened, so such a refusal leaves the store as it was.
    TooLarge
        Before anything is computed or written, when the whole build
        (:func:`plan_table_distributed`: the rows' time divided by the
        workers) is beyond the active limits or its store size beyond the
        free disk space (:func:`~enumerator.store.tables.check_table_plan`).
    StoreError
        When the store is switched off or fails.

    Notes
    -----
    Method: the client reads which cells are stored (one query per row,
    as the single-process build) and keeps only rows with a missing cell;
    it computes the first such row itself as a pilot, which gives the
    seconds per unit of row cost (row length times number size), and groups
    the remaining rows into batches of about *task_seconds* (smaller when
    there are fewer than four batches per worker).  Each batch is one Dask
    task running :func:`~enumerator.store.tables.row_values` per row; the
    results are written as they arrive, every *write_batch* cells in one
    transaction, and whatever has arrived is written when the build is
    interrupted, so a rerun computes only what is missing.  With a
    database-server store each worker first reads which cells of its row
    are stored by then (one indexed query per row: another builder may have
    stored them since) and computes only the rest; the client counts the
    skipped cells as reused.  SQLite stores are read by the client alone.
    Cost: the single-process work spread over the workers, plus per cell
    the transfer of one big integer to the client and its share of a write
    (and per row one query from a worker on a server store).
    """
    # the cluster is checked first: a refused build records no table definition
    check_cluster(workers, cluster, client)
    target = need_store(store)
    name = name or spec.default_name()
    started = time.perf_counter()
    check_table_plan(plan_table_distributed(spec, target, name=name, workers=workers, cluster=cluster,
                                            client=client), target)
    claim_table(spec, name, target)
    report = BuildReport(name=name, spec=spec)
    version = ALGORITHM_VERSIONS[spec.quantity]
    tasks: List[RowTask] = []
    for r in spec.urns:
        have = target.stored_balls(spec.quantity, spec.rule, spec.bounds_text(r), r, version, values=False)
        missing = tuple(n for n in spec.balls if n not in have)
        reused = len(spec.balls) - len(missing)
        report.reused += reused
        if missing:
            tasks.append(RowTask(r, missing))
        elif progress is not None:
            progress(r, 0, reused)
    full = len(spec.balls)
    missing_of = {task.urns: len(task.missing) for task in tasks}
    shared = _shared_url(target)
    buffer: List[Tuple] = []

    def flush():
        if buffer:
            report.stored += target.put_many(buffer)
            buffer.clear()

    def take(rows):
        for r, cells, method, share in rows:
            bounds = spec.bounds_text(r)
            buffer.extend((spec.quantity, Key(spec.rule, n, bounds, r), version, value, "",
                           method + " (row time shared)", share) for n, value in cells)
            report.computed += len(cells)
            report.reused += missing_of[r] - len(cells)  # found stored by the worker
            report.rows_computed += 1 if cells else 0
            if progress is not None:
                progress(r, len(cells), full - len(cells))
            if len(buffer) >= write_batch:
                flush()

    try:
        if tasks:
            # the pilot row: computed here, its time calibrates the batch sizes
            pilot, rest = tasks[0], tasks[1:]
            t0 = time.perf_counter()
            take(_compute_rows(spec.rule, spec.quantity, spec.minimum, spec.capacity, [pilot]))
            per_weight = max(time.perf_counter() - t0, 1e-6) / _row_weight(spec, pilot)
            if rest:
                with cluster_client(workers, cluster, client) as dask:
                    from distributed import as_completed

                    batches = plan_row_batches(spec, rest, per_weight, _worker_count(dask), task_seconds)
                    futures = [dask.submit(_compute_rows, spec.rule, spec.quantity, spec.minimum,
                                           spec.capacity, batch,
                                           None if shared is None else
                                           (shared, tuple(spec.bounds_text(t.urns) for t in batch), version),
                                           pure=False) for batch in batches]
                    try:
                        for future in as_completed(futures, loop=dask.loop):
                            take(future.result())
                            future.release()
                    finally:
                        dask.cancel(futures)
    finally:
        flush()
    report.read_only = target.read_only
    report.seconds_approx = time.perf_counter() - started
    return report


# ---------------------------------------------------------------------------
# enumeration sums
# ---------------------------------------------------------------------------

def _equal_shards(start: int, stop: int, count: int) -> List[Tuple[int, int]]:
    """``[start, stop)`` cut into *count* consecutive ranges of equal length (the last ones one shorter)."""
    q, extra = divmod(stop - start, count)
    bounds = []
    lo = start
    for i in range(count):
        hi = lo + q + (1 if i < extra else 0)
        bounds.append((lo, hi))
        lo = hi
    return bounds


def _add(a, b):
    return a + b


def _shard_reduce(model: UrnModel, value_of_block, start: int, stop: int, block: int,
                  merge: Callable = _add, zero=0) -> Tuple[int, int, object]:
    """Worker side: ``(start, stop, value_of_block over the blocks of ranks [start, stop) merged)``."""
    total = zero() if callable(zero) else zero
    for array in iter_blocks(model, block, start, stop):
        total = merge(total, value_of_block(array))
    return start, stop, total


def _shard_sum(model: UrnModel, value_of_block, start: int, stop: int, block: int) -> Tuple[int, int, int]:
    """Worker side: ``(start, stop, sum of value_of_block over the blocks of ranks [start, stop))``."""
    return _shard_reduce(model, lambda array: int(value_of_block(array)), start, stop, block)


def _reduce_on_cluster(task: Callable, *, start: int, stop: int, shards: Optional[int],
                       workers, cluster, client, progress, merge: Callable = _add, zero=0,
                       before: Optional[Callable[[int], None]] = None):
    """Run *task* (``task(lo, hi) -> (lo, hi, part)``, picklable) on equal shards of ``[start, stop)``; merge the parts.

    Each shard's one result is merged once, in the order the shards finish.
    *before*, if given, is called with the number of workers before any
    shard is sent (before a local cluster is started when *workers* is
    given), so a cost check can refuse the work first.
    """
    span = max(stop - start, 0)
    total = zero() if callable(zero) else zero
    if span == 0:
        return total
    if before is not None and workers is not None:
        before(as_count(workers, "workers", 1))
    with cluster_client(workers, cluster, client) as dask:
        from distributed import as_completed

        if before is not None and workers is None:
            before(_worker_count(dask))
        count = as_count(shards, "shards", 1) if shards is not None else TASKS_PER_WORKER * _worker_count(dask)
        futures = [dask.submit(task, lo, hi, pure=False) for lo, hi in _equal_shards(start, stop, min(count, span))]
        done = 0
        try:
            for future in as_completed(futures, loop=dask.loop):
                lo, hi, part = future.result()
                total = merge(total, part)
                done += hi - lo
                future.release()
                if progress is not None:
                    progress(done, span)
        finally:
            dask.cancel(futures)
    return total


def enumeration_sum_distributed(model: UrnModel, value_of_block: Callable[[object], int], *,
                                start: int = 0, stop: Optional[int] = None, shards: Optional[int] = None,
                                block: int = 4096, workers: Optional[int] = None, cluster=None,
                                client=None, progress: Optional[Callable[[int, int], None]] = None,
                                before: Optional[Callable[[int], None]] = None) -> int:
    """Return ``sum(value_of_block(b))`` over the listing of *model*, ranks ``[start, stop)``, on a cluster.

    Parameters
    ----------
    model : UrnModel
    value_of_block : callable
        ``value_of_block(array) -> int`` for an array of configurations as
        :func:`~enumerator.algorithms.listing.iter_blocks` yields them
        (rows are configurations).  It must be picklable (a module-level
        function, a ``functools.partial`` or an instance such as
        :class:`EventWeight`) and return an exact integer.
    start, stop : int
        The rank range (default: the whole listing, ``count_configurations``).
    shards : int, optional
        Number of equal shards (default: four per worker).
    block : int
        Rows per block within a shard.
    workers, cluster, client
        The cluster, as :func:`cluster_client`.
    progress : callable, optional
        Called as each shard arrives as ``progress(ranks done, ranks in all)``.
    before : callable, optional
        Called with the number of workers before any shard is sent (a cost
        check that may refuse the work).

    Returns
    -------
    int
        The exact sum, equal to the single-process sum over
        ``iter_blocks(model, block, start, stop)``.

    Notes
    -----
    Method: ``[start, stop)`` is cut into *shards* ranges of equal length
    (the last ones one shorter); each shard is one task that lists its range
    with ``iter_blocks`` (which starts at any rank by unranking) and sums
    the exact integers; the client adds one integer per shard.  A shard of
    a dead worker is rerun by Dask from its start, and its one result is
    added once.  Cost: the listing of the range spread over the workers,
    plus one unranking and one round trip per shard.
    """
    stop = count_configurations(model) if stop is None else as_count(stop, "stop", 0)
    start = as_count(start, "start", 0)
    return _reduce_on_cluster(partial(_shard_sum, model, value_of_block, block=block), start=start, stop=stop,
                              shards=shards, workers=workers, cluster=cluster, client=client,
                              progress=progress, before=before)




def _merge_counts(into: dict, part: dict) -> dict:
    for value, weight in part.items():
        into[value] = into.get(value, 0) + weight
    return into


def _shard_counts(model: UrnModel, value_of_block, start: int, stop: int, block: int) -> Tuple[int, int, dict]:
    """Worker side: ``(start, stop, {value: weight})`` merged over the blocks of ranks ``[start, stop)``."""
    return _shard_reduce(model, value_of_block, start, stop, block, merge=_merge_counts, zero=dict)


def enumeration_counts_distributed(model: UrnModel, value_of_block: Callable[[object], dict], *,
                                   start: int = 0, stop: Optional[int] = None, shards: Optional[int] = None,
                                   block: int = 4096, workers: Optional[int] = None, cluster=None,
                                   client=None, progress: Optional[Callable[[int, int], None]] = None,
                                   before: Optional[Callable[[int], None]] = None) -> dict:
    """Return ``{value: total weight}`` over the listing of *model*, ranks ``[start, stop)``, on a cluster.

    As :func:`enumeration_sum_distributed`, but *value_of_block* returns a
    dict ``{value: exact int}`` for a block (such as :class:`StatisticWeights`)
    and the dicts are added key by key: each shard merges its blocks, the
    client merges one dict per shard.  *before* is called with the number of
    workers before anything is sent (a cost check).

    Parameters
    ----------
    model : UrnModel
    value_of_block : callable
        Picklable: an integer numpy block of configurations to
        ``{value: exact int}``.
    start, stop : int
        The ranks ``[start, stop)`` (default: all).
    shards, block, workers, cluster, client, progress, before
        As :func:`enumeration_sum_distributed`.

    Returns
    -------
    dict
        ``{value: exact int}`` summed over the range.

    Notes
    -----
    Cost: the listing of the range spread over the workers, plus one
    unranking, one round trip and one dict of at most (support size)
    entries per shard.
    """
    stop = count_configurations(model) if stop is None else as_count(stop, "stop", 0)
    start = as_count(start, "start", 0)
    return _reduce_on_cluster(partial(_shard_counts, model, value_of_block, block=block), start=start, stop=stop,
                              shards=shards, workers=workers, cluster=cluster, client=client,
                              progress=progress, merge=_merge_counts, zero=dict, before=before)


class _BlockWeights:
    """Shared part of the picklable block functions: the rule's weight of a configuration."""

    def __init__(self, model: UrnModel):
        self.model = model
        groups, _ = integer_groups(model)
        self.powers = [w for c, _, _, w in groups for _ in range(c)] if model.weighted else None
        self.fac_n = gmpy2.fac(model.balls)

    def weight(self, row) -> "gmpy2.mpz":
        """Equally likely outcomes (weight) of one configuration, scaled as :func:`outcome_total`."""
        w = self.model.rule.weight(row, self.fac_n)
        if self.powers is not None:
            for p, v in zip(self.powers, row):
                if v:
                    w *= gmpy2.mpz(p) ** v
        return w

    def vectorised(self, block) -> bool:
        """Whether *block* can be weighed by profile with numpy (unweighted, machine integers)."""
        return self.powers is None and block.dtype != object

    def by_profile(self, rows):
        """``[(profile, how many rows)]`` of an int64 array: the MB weight depends on the profile only."""
        import numpy as np

        if not len(rows):
            return []
        profiles, times = np.unique(Statistic("profile").block_value(rows), axis=0, return_counts=True)
        return zip(profiles.tolist(), times.tolist())


class EventWeight(_BlockWeights):
    """The equally likely outcomes of the configurations in a block where an event holds.

    A picklable ``value_of_block`` for :func:`enumeration_sum_distributed`:
    for each row ``k`` of the block where *event* holds, the number of
    equally likely outcomes with occupancy ``k`` (``n!/prod k_i!`` under MB,
    1 under BE/FD, times ``prod w_i^{k_i}`` for integer-scaled urn weights),
    scaled as :func:`enumerator.algorithms.laws.outcome_total`.

    Notes
    -----
    Cost: unweighted models with machine-size entries are decided with
    numpy (the event evaluated on the whole block, as the single-process
    listing of :mod:`enumerator.algorithms.events` does) and, under MB,
    weighed once per distinct profile among the hits; otherwise one
    evaluation of the event and one weight per configuration (Python integers).
    """

    def __init__(self, model: UrnModel, event):
        super().__init__(model)
        self.event = parse_event(event)

    def __call__(self, block) -> int:
        if self.vectorised(block):
            import numpy as np

            arr = block.astype(np.int64)
            mask = evaluate_block(self.event, arr)
            if not self.model.rule.distinguishable:
                return int(mask.sum())
            return int(sum((self.weight(p) * t for p, t in self.by_profile(arr[mask])), gmpy2.mpz(0)))
        found = gmpy2.mpz(0)
        for row in block.tolist():
            if evaluate(self.event, row):
                found += self.weight(row)
        return int(found)


class StatisticWeights(_BlockWeights):
    """The equally likely outcomes of a block's configurations by the value of a statistic.

    A picklable ``value_of_block`` for :func:`enumeration_counts_distributed`:
    ``{value: outcomes}`` over the rows of the block, values as
    :func:`enumerator.algorithms.statistics.statistic_counts` gives them
    (``int``, or a tuple in decreasing order for ``profile``), weights as
    :class:`EventWeight`.

    Notes
    -----
    Cost: unweighted models with machine-size entries: the statistic of the
    whole block with numpy and one weight per distinct (value, profile)
    pair; otherwise one value and one weight per configuration.
    """

    def __init__(self, model: UrnModel, statistic):
        super().__init__(model)
        self.statistic = parse_statistic(statistic)

    def __call__(self, block) -> dict:
        stat = self.statistic
        out: dict = {}
        if self.vectorised(block):
            import numpy as np

            arr = block.astype(np.int64)
            if not len(arr):
                return out
            values = stat.block_value(arr)
            keys = values if not stat.numeric else np.asarray(values).reshape(-1, 1)
            if self.model.rule.distinguishable and stat.numeric:
                keys = np.column_stack([keys, Statistic("profile").block_value(arr)])
            rows, times = np.unique(keys, axis=0, return_counts=True)
            for row, t in zip(rows.tolist(), times.tolist()):
                value = tuple(row) if not stat.numeric else row[0]
                profile = tuple(row) if not stat.numeric else tuple(row[1:])
                w = self.weight(profile) * t if self.model.rule.distinguishable else t
                out[value] = out.get(value, 0) + int(w)
            return out
        for row in block.tolist():
            value = stat.value(row)
            out[value] = out.get(value, 0) + int(self.weight(row))
        return out


def _listing_check(model: UrnModel, what: str, limit: Optional[int]) -> Tuple[int, Callable[[int], None]]:
    """``(configurations, check)``: *limit* applied now, the time check once the worker count is known."""
    total = count_configurations(model)
    if limit is not None and total > as_count(limit, "limit", 1):
        raise TooLarge(
            f"{what} needs all {total} configurations listed, above the limit {limit}; raise limit=",
            parameters=["limit"],
        )
    r = model.urns

    def check(workers: int) -> None:
        # each configuration is r numbers, tested and weighed once, spread over the workers
        limits.check(Cost(seconds=total * r / limits.STEPS_PER_SECOND / max(1, workers),
                          memory=min(total, 1 << 16) * r * 8 * 4),
                     f"listing the {total} configurations of {r} urns for {what} on {workers} workers",
                     advice="lower limit=, use fewer urns, or add workers", parameters=["limit"])

    return total, check


def event_count_distributed(model: UrnModel, event, *, limit: Optional[int] = None, **options) -> Tuple[int, int]:
    """Return ``(count, total)`` of *event* by listing on a cluster, as :func:`~enumerator.algorithms.events.event_count`.

    *options* go to :func:`enumeration_sum_distributed` (``workers=``,
    ``cluster=``, ``shards=`` ...).  ``P(event) = count / total``.  With
    *limit*, more than *limit* configurations are refused before any work
    (:class:`~enumerator.core.errors.TooLarge`), and the listing's time,
    divided by the number of workers, is checked against the active limits
    (:mod:`enumerator.core.limits`) before a shard is sent.  Method: a sum
    of :class:`EventWeight` over every configuration; cost as listing all
    ``count_configurations(model)`` configurations, spread over the workers.
    """
    node = parse_event(event)
    _, check = _listing_check(model, f"the event {str(node)!r}", limit)
    return enumeration_sum_distributed(model, EventWeight(model, node), before=check, **options), \
        int(outcome_total(model))


def _marked_window(stat: Statistic, r: int):
    """The occupancies ``(low, high)`` the exact route of a counting statistic marks, or None."""
    entry = stat.entry
    if entry.marking is None:
        canonical = entry.canonical(stat.parameter, r) if entry.canonical is not None else None
        if canonical is None or canonical[1] == 0 or not isinstance(canonical[0], Statistic):
            return None
        stat = canonical[0]
        entry = stat.entry
        if entry.marking is None:
            return None
    how, J = entry.marking(stat.parameter)
    return (J, J) if how == "exactly" else (J, None)


def distribution_needs_listing(model: UrnModel, statistic) -> bool:
    """Whether the exact law of *statistic* is found by listing every configuration.

    Parameters
    ----------
    model : UrnModel
    statistic : str or Statistic

    Returns
    -------
    bool
        True for the two listing routes of :mod:`enumerator.algorithms.laws`:
        the profile law of a weighted model, and a counting statistic
        (``empty``, ``occupied``, ``exactly:J``, ``atleast:J``, ``count(...)``)
        whose binomial moments would need more than
        :data:`~enumerator.algorithms.laws.GROUP_TUPLE_LIMIT` bounded counts
        (many urns with differing per-urn bounds).  False otherwise.

    Notes
    -----
    Follows the route choice of :func:`~enumerator.algorithms.laws.marked_counts`
    and :func:`~enumerator.algorithms.laws.profile_counts` without running
    them: ``O(r)`` for the per-urn bounds of a model with at most
    :data:`~enumerator.algorithms.laws.PER_URN_ROUTES` urns, constant otherwise.
    """
    stat = parse_statistic(statistic)
    if stat.kind == "profile":
        return model.weighted
    n, r = model.balls, model.urns
    window = _marked_window(stat, r)
    if window is None or model.weighted or r > laws.PER_URN_ROUTES or (r > n + 1 and n <= 200):
        return False
    low, high = window
    if model.is_uniform:
        a0, b0 = model.groups[0].lower, model.groups[0].upper
        free_top = b0 is None or b0 >= n - (r - 1) * a0
        closed = model.rule.value != "FD" and (high == low or (high is None and low >= 1))
        if a0 == 0 and free_top and closed:
            return False
    tuples = 1
    for (a, b), e in Counter(model.effective_bounds()).items():
        s, t = max(a, low), (b if high is None else min(b, high))
        if s <= t and not (s == a and t == b):
            tuples *= e + 1
    return tuples > laws.GROUP_TUPLE_LIMIT  # read at call time, as laws reads it


def distribution_distributed(model: UrnModel, statistic, *, limit: Optional[int] = None,
                             **options) -> Distribution:
    """Return the exact law of *statistic* by listing on a cluster, as :func:`~enumerator.algorithms.statistics.distribution`.

    Parameters
    ----------
    model : UrnModel
    statistic : str or Statistic
    limit : int, optional
        Refuse more than this many configurations (before any work).
    **options
        ``workers=``, ``cluster=``, ``client=``, ``shards=``, ``block=``,
        ``progress=`` as :func:`enumeration_counts_distributed`.

    Returns
    -------
    Distribution
        The same pmf (exact fractions over the support), mean and variance
        as the single-process law.

    Raises
    ------
    InvalidParameters
        For an urn beyond ``r`` or a model without configurations.
    TooLarge
        Above *limit* configurations, or when the listing's time divided by
        the workers is beyond the active limits.

    Notes
    -----
    Method: :class:`StatisticWeights` summed over equal rank shards
    (:func:`enumeration_counts_distributed`), then ``count / total`` per
    value with ``total`` = :func:`~enumerator.algorithms.laws.outcome_total`
    and the moments ``sum v c / total``, ``sum v^2 c / total - mean^2``
    (exact).  Cost: the listing spread over the workers.
    """
    stat = parse_statistic(statistic)
    if stat.entry.indexes_urns and stat.parameter > model.urns:
        raise InvalidParameters(
            f"statistic {stat.name!r} names urn {stat.parameter}, but the model has {model.urns} urns; "
            f"use urn:1 to urn:{model.urns}"
        )
    total = int(outcome_total(model))
    if total == 0:
        raise InvalidParameters(
            f"the model ({model!r}) admits no configuration, so {stat.name!r} has no distribution; "
            "loosen the bounds or change the number of balls"
        )
    _, check = _listing_check(model, f"the law of {stat.name}", limit)
    counts = enumeration_counts_distributed(model, StatisticWeights(model, stat), before=check, **options)
    counts = {v: int(c) for v, c in counts.items() if c}
    if sum(counts.values()) != total:  # pragma: no cover - a lost or doubled shard
        raise AssertionError(f"the shards of {stat.name} do not add up to the total for {model!r}")
    pmf = {value: exact_fraction(c, total) for value, c in sorted(counts.items())}
    mean = variance = None
    if stat.numeric:
        first = sum((gmpy2.mpz(v) * c for v, c in counts.items()), gmpy2.mpz(0))
        second = sum((gmpy2.mpz(v) * v * c for v, c in counts.items()), gmpy2.mpz(0))
        mean = exact_fraction(first, total)
        variance = exact_fraction(second * total - first * first, total * total)
    return Distribution(stat.name, pmf, mean, variance)


# ---------------------------------------------------------------------------
# a listing written to files, one per shard
# ---------------------------------------------------------------------------

def shard_file_name(lo: int, hi: int, stop: int, extension: str) -> str:
    """The file of ranks ``[lo, hi)``: ``ranks-LO-HI.EXT``, zero-padded to the digits of *stop* (sorts in rank order).

    Parameters
    ----------
    lo, hi : int
        The shard's ranks ``[lo, hi)``.
    stop : int
        The end of the whole listing (sets the width).
    extension : str
        ``csv`` or ``jsonl``.

    Returns
    -------
    str

    Examples
    --------
    >>> shard_file_name(0, 50, 120, "csv")
    'ranks-000-050.csv'
    """
    width = len(str(stop))
    return f"ranks-{lo:0{width}d}-{hi:0{width}d}.{extension}"


def _write_shard(model: UrnModel, directory: str, stop_all: int, extension: str, header: Optional[str],
                 formatter: Callable, block: int, lo: int, hi: int) -> Tuple[int, int, Tuple[int, int, str, int]]:
    """Worker side: write ranks ``[lo, hi)`` to one file; ``(lo, hi, (lo, hi, file name, rows))``.

    Written to ``NAME.partial`` and renamed at the end, so a file of that
    name is always whole; a shard rerun after a worker died writes it again.
    """
    name = shard_file_name(lo, hi, stop_all, extension)
    final = os.path.join(directory, name)
    partial_path = final + ".partial"
    rows = 0
    with open(partial_path, "w", encoding="ascii", newline="") as out:
        if header is not None:
            out.write(header)
        for array in iter_blocks(model, block, lo, hi):
            if len(array):
                out.write(formatter(array))
                rows += len(array)
    os.replace(partial_path, final)
    return lo, hi, (lo, hi, name, rows)


def _append(into: list, part) -> list:
    into.append(part)
    return into


def listing_to_files(model: UrnModel, directory, formatter: Callable[[object], str], *, extension: str,
                     header: Optional[str] = None, start: int = 0, stop: Optional[int] = None,
                     shards: Optional[int] = None, block: int = 4096, workers: Optional[int] = None,
                     cluster=None, client=None,
                     progress: Optional[Callable[[int, int], None]] = None) -> List[dict]:
    """Write the listing of ranks ``[start, stop)`` to one file per shard, on a cluster or here.

    Parameters
    ----------
    model : UrnModel
    directory : str or path
        Where the files go (created if missing).  On a cluster the workers
        write there themselves, so it must be a path every worker can reach
        (always so for ``workers=``: a local cluster).
    formatter : callable
        ``formatter(block) -> str``: the text of a block's rows (picklable:
        a module-level function).
    extension : str
        The files' extension (``"csv"``, ``"jsonl"``).
    header : str, optional
        Text written at the top of every file (a csv header line).
    start, stop : int
        The rank range (default: the whole listing).
    shards : int, optional
        Number of equal shards (default: four per worker, or one without a cluster).
    block : int
        Rows per block.
    workers, cluster, client
        The cluster, as :func:`cluster_client`; none of them: the shards are
        written one after another in this process.
    progress : callable, optional
        ``progress(ranks done, ranks in all)`` as each file is finished.

    Returns
    -------
    list of dict
        ``{"file", "start", "stop", "listed"}`` per file, in rank order.

    Notes
    -----
    Method: equal rank shards (as :func:`enumeration_sum_distributed`);
    each is listed by :func:`~enumerator.algorithms.listing.iter_blocks`
    from its first rank and written to ``ranks-LO-HI.EXT`` through a
    temporary name, so a file is whole or absent and a shard rerun after a
    worker died replaces its own file only.  Cost: the listing and the
    formatting spread over the workers, one unranking per shard.
    """
    total = count_configurations(model)
    stop = total if stop is None else min(as_count(stop, "stop", 0), total)
    start = min(as_count(start, "start", 0), stop)
    directory = os.fspath(directory)
    os.makedirs(directory, exist_ok=True)
    task = partial(_write_shard, model, directory, stop, extension, header, formatter, block)
    if workers is None and cluster is None and client is None:
        count = 1 if shards is None else as_count(shards, "shards", 1)
        parts = []
        for lo, hi in (_equal_shards(start, stop, min(count, stop - start)) if stop > start else []):
            parts.append(task(lo, hi)[2])
            if progress is not None:
                progress(hi - start, stop - start)
    else:
        parts = _reduce_on_cluster(task, start=start, stop=stop, shards=shards, workers=workers, cluster=cluster,
                                   client=client, progress=progress, merge=_append, zero=list)
    return [{"file": name, "start": lo, "stop": hi, "listed": rows}
            for lo, hi, name, rows in sorted(parts)]
