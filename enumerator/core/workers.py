"""Local worker processes for the independent pieces of one answer.

Some answers are lists of independent pieces that each take a second or more
(the canonical ensemble at forty temperatures, say).  :func:`map_in_processes`
computes them in worker processes on this machine, one piece per task, the
results back in order; :func:`available_cores` says how many cores this
process may use, and :func:`active_processes` how many an algorithm may take
(``$ENUMERATOR_PROCESSES``, else the cores; a :func:`processes` block sets it
for the work inside, as :func:`~enumerator.core.limits.limited` does for the
limits).  This is for pieces inside one call; spreading whole tables
and enumerations over a Dask cluster is :mod:`enumerator.store.cluster`.

The limits in force (:func:`~enumerator.core.limits.active_limits`) travel to
the workers, with the memory limit shared out among them, so that every
piece is still planned and refused before it breaks.  An error raised by a
piece (of the project's family or not) is raised again here, the first in
the order of the pieces.
"""

from __future__ import annotations

import os
from contextlib import contextmanager
from contextvars import ContextVar
from typing import Callable, Iterator, List, Optional, Sequence, TypeVar

from .errors import InvalidParameters
from .limits import Limits, active_limits, limited

__all__ = ["ENV_PROCESSES", "active_processes", "available_cores", "map_after_first", "map_in_processes", "processes"]

#: Environment variable: most local processes one computation may use (default: the cores available).
ENV_PROCESSES = "ENUMERATOR_PROCESSES"

_active: ContextVar[Optional[int]] = ContextVar("enumerator_processes", default=None)

T = TypeVar("T")
R = TypeVar("R")


def available_cores() -> int:
    """Cores this process may run on (its CPU affinity where the system tells it, else the CPU count).

    >>> available_cores() >= 1
    True
    """
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except (AttributeError, OSError):  # not on Linux
        return max(1, os.cpu_count() or 1)


def _whole_count(value, name: str) -> int:
    try:
        count = int(str(value).strip())
    except ValueError:
        count = 0
    if count < 1:
        raise InvalidParameters(f"{name} must be a whole number of processes, at least 1 (got {value!r})")
    return count


def active_processes() -> int:
    """Most local processes a computation here may use.

    A :func:`processes` block's value, else ``$ENUMERATOR_PROCESSES``, else
    :func:`available_cores`; always 1 inside a daemonic process (a Dask
    worker or a pool's worker, which may not start processes of its own).
    """
    import multiprocessing

    if multiprocessing.current_process().daemon:
        return 1
    chosen = _active.get()
    if chosen is not None:
        return chosen
    text = os.environ.get(ENV_PROCESSES, "").strip()
    if text:
        return _whole_count(text, ENV_PROCESSES)
    return available_cores()


@contextmanager
def processes(count) -> Iterator[int]:
    """Within the block, computations use at most *count* local processes (1: none besides this one)."""
    token = _active.set(_whole_count(count, "processes"))
    try:
        yield _active.get()
    finally:
        _active.reset(token)


def _run(task):
    """One piece in a worker: the caller's limits, then the function."""
    func, item, limits = task
    with limited(memory=limits.memory, seconds=limits.seconds):
        return func(item)


def map_in_processes(func: Callable[[T], R], items: Sequence[T], workers: int) -> List[R]:
    """``[func(item) for item in items]``, computed by up to *workers* local processes.

    Parameters
    ----------
    func : callable
        A module-level function (it is sent to the workers by reference).
    items : sequence
        The pieces, each picklable, as are the results.
    workers : int
        Most processes; 1 (or a single item) computes here, in this process.

    Returns
    -------
    list
        The results in the order of *items*.

    Notes
    -----
    Workers are forked where the system allows it (they start in about a
    millisecond and share the loaded modules), otherwise spawned; pieces are
    handed out one at a time as workers come free, so unequal pieces balance
    out.  Each worker plans against the limits in force with the memory limit
    divided by the number of workers.  Cost: the pieces' own, divided by the
    workers, plus about 0.1 s to start them and the pickling of items and
    results.
    """
    import multiprocessing  # here, not at import: the command line starts faster without them

    items = list(items)
    workers = max(1, min(int(workers), len(items)))
    if multiprocessing.current_process().daemon:
        workers = 1  # a daemonic process (a Dask worker, a pool's worker) may not start processes
    if workers == 1:
        return [func(item) for item in items]
    from concurrent.futures import ProcessPoolExecutor

    limits = active_limits()
    share = Limits(memory=max(1, limits.memory // workers), seconds=limits.seconds)
    methods = multiprocessing.get_all_start_methods()
    context = multiprocessing.get_context("fork" if "fork" in methods else None)
    with ProcessPoolExecutor(max_workers=workers, mp_context=context) as pool:
        return list(pool.map(_run, [(func, item, share) for item in items]))


def map_after_first(func: Callable[[T], R], items: Sequence[T], workers: int, after_seconds: float) -> List[R]:
    """``[func(item) for item in items]``: the first here, timed; the rest in processes if it was slow.

    Parameters
    ----------
    func, items, workers
        As for :func:`map_in_processes`.
    after_seconds : float
        The rest go to up to *workers* processes only when the first item
        took at least this long (starting them costs about 0.1 s); otherwise
        they are computed here, one after the other.

    Returns
    -------
    list
        The results in the order of *items*.
    """
    import time

    items = list(items)
    if not items:
        return []
    started = time.perf_counter()
    first = func(items[0])
    if workers > 1 and len(items) > 1 and time.perf_counter() - started >= after_seconds:
        return [first, *map_in_processes(func, items[1:], workers)]
    return [first, *(func(item) for item in items[1:])]
