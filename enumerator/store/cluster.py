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
works; :func:`enumeration_sum_distributed` sends equal rank shards and adds
the exact integer sums.  The cluster is a
:class:`distributed.LocalCluster` of ``workers`` processes started here, or
an existing scheduler at ``cluster`` (``"tcp://host:8786"``), or a
:class:`distributed.Client` the caller holds.

Faults: Dask reschedules the tasks of a worker that dies, and the client
takes exactly one result per task (one future, one result), so a killed
worker costs only its shards and nothing is counted twice; rows are written
with ``put_many``, which keeps a key already stored.

Dask is an optional dependency: ``pip install 'enumerator[cluster]'``.
"""

from __future__ import annotations

import math
import time
from contextlib import contextmanager
from dataclasses import dataclass
from functools import partial
from typing import Callable, Iterator, List, Optional, Sequence, Tuple

import gmpy2

from ..algorithms.counting import count_configurations
from ..algorithms.event_language import evaluate, parse_event
from ..algorithms.grouped import integer_groups
from ..algorithms.laws import outcome_total
from ..algorithms.listing import iter_blocks
from ..core.errors import InvalidParameters
from ..core.model import UrnModel, as_count
from .keys import ALGORITHM_VERSIONS, Key
from .tables import BuildReport, TableSpec, _need_store, claim_table, row_values

__all__ = [
    "EventWeight",
    "RowTask",
    "build_table_distributed",
    "cluster_client",
    "enumeration_sum_distributed",
    "event_count_distributed",
    "plan_row_batches",
]

#: Target duration of one task, in seconds.
TASK_SECONDS = 1.0
#: Cells the client buffers before one write transaction.
WRITE_BATCH = 20_000
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
        Unless exactly one of the three is given, or when Dask is missing.

    Notes
    -----
    Cost: starting a local cluster takes about a second per worker process
    (interpreter start and imports); connecting to a scheduler, one round trip.
    """
    given = [x is not None for x in (workers, cluster, client)]
    if sum(given) != 1:
        raise InvalidParameters("give exactly one of workers=, cluster= or client=",
                                parameters=["workers", "cluster"])
    if client is not None:
        yield client
        return
    distributed = _need_dask()
    if cluster is not None:
        with distributed.Client(str(cluster), set_as_default=False) as own:
            yield own
        return
    workers = as_count(workers, "workers", 1)
    with distributed.LocalCluster(n_workers=workers, threads_per_worker=1, processes=True,
                                  dashboard_address=":0") as local:
        with distributed.Client(local, set_as_default=False) as own:
            yield own


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


def _compute_rows(rule: str, quantity: str, minimum: int, capacity: Optional[int],
                  batch: Sequence[RowTask]) -> List[Tuple[int, List[Tuple[int, int]], str, int]]:
    """Worker side: ``[(r, [(n, value) for missing n], method, ns per cell)]`` for each row of *batch*."""
    out = []
    for task in batch:
        t0 = time.perf_counter_ns()
        values, method = row_values(rule, quantity, task.urns, minimum, capacity, task.missing[-1])
        share = (time.perf_counter_ns() - t0) // len(task.missing)
        out.append((task.urns, [(n, values[n]) for n in task.missing], method, share))
    return out


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
        touches it, so any store works, a plain SQLite file included.
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
        exactly one of *workers*, *cluster*, *client* is given, or when Dask
        is not installed.
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
    interrupted, so a rerun computes only what is missing.  Cost: the
    single-process work spread over the workers, plus per cell the
    transfer of one big integer to the client and its share of a write.
    """
    target = _need_store(store)
    name = name or spec.default_name()
    started = time.perf_counter()
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
            report.rows_computed += 1
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
                                           spec.capacity, batch, pure=False) for batch in batches]
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
                       workers, cluster, client, progress, merge: Callable = _add, zero=0):
    """Run *task* (``task(lo, hi) -> (lo, hi, part)``, picklable) on equal shards of ``[start, stop)``; merge the parts.

    Each shard's one result is merged once, in the order the shards finish.
    """
    span = max(stop - start, 0)
    total = zero() if callable(zero) else zero
    if span == 0:
        return total
    with cluster_client(workers, cluster, client) as dask:
        from distributed import as_completed

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
                                client=None, progress: Optional[Callable[[int, int], None]] = None) -> int:
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
                              progress=progress)


class EventWeight:
    """The equally likely outcomes of the configurations in a block where an event holds.

    A picklable ``value_of_block`` for :func:`enumeration_sum_distributed`:
    for each row ``k`` of the block where *event* holds, the number of
    equally likely outcomes with occupancy ``k`` (``n!/prod k_i!`` under MB,
    1 under BE/FD, times ``prod w_i^{k_i}`` for integer-scaled urn weights),
    scaled as :func:`enumerator.algorithms.laws.outcome_total`.

    Notes
    -----
    Cost: one evaluation of the event and one weight per configuration
    (Python integers).
    """

    def __init__(self, model: UrnModel, event):
        self.model = model
        self.event = parse_event(event)
        groups, _ = integer_groups(model)
        self.powers = [w for c, _, _, w in groups for _ in range(c)] if model.weighted else None
        self.fac_n = gmpy2.fac(model.balls)

    def __call__(self, block) -> int:
        rule = self.model.rule
        found = gmpy2.mpz(0)
        for row in block.tolist():
            if evaluate(self.event, row):
                w = rule.weight(row, self.fac_n)
                if self.powers is not None:
                    for p, v in zip(self.powers, row):
                        if v:
                            w *= gmpy2.mpz(p) ** v
                found += w
        return int(found)


def event_count_distributed(model: UrnModel, event, **options) -> Tuple[int, int]:
    """Return ``(count, total)`` of *event* by listing on a cluster, as :func:`~enumerator.algorithms.events.event_count`.

    *options* go to :func:`enumeration_sum_distributed` (``workers=``,
    ``cluster=``, ``shards=`` ...).  ``P(event) = count / total``.  Method:
    a sum of :class:`EventWeight` over every configuration; cost as listing
    all ``count_configurations(model)`` configurations, spread over the workers.
    """
    return enumeration_sum_distributed(model, EventWeight(model, event), **options), int(outcome_total(model))
