r"""Lexicographic listing, ranking and unranking of admissible configurations.

A configuration of an :class:`~enumerator.model.UrnModel` is an occupancy
vector ``k = (k_1, ..., k_r)`` with ``a_i <= k_i <= b_i`` and
``k_1 + ... + k_r = n``.  This module lists them in **ascending lexicographic
order** (``n = 2, r = 2``: ``(0, 2), (1, 1), (2, 0)``), gives the rank of a
vector in that order (0-based) and the vector of a given rank.  The rule (MB,
BE, FD) does not change the set of vectors; FD bounds are already capped at 1
by the model.

Conventions
-----------
* Ranks run over ``[0, count)`` where ``count`` is the number of admissible
  vectors; a model whose bounds admit no vector lists nothing.  ``n = 0``
  lists the single vector of lower bounds (all zeros without minimums).
* Ranges ``[start, stop)`` follow slicing: ``stop=None`` is the end, ``start``
  and ``stop`` are clamped to ``count``, and ``stop <= start`` lists nothing.
* Internally every urn is shifted by its lower bound, ``x_i = k_i - a_i``, with
  capacity ``c_i = min(b_i, n') `` where ``n' = n - sum a_i``; the shift keeps
  the lexicographic order.

Listing
-------
The successor rule is the lexicographic one of Knuth, *The Art of Computer
Programming*, vol. 4A, *Combinatorial Algorithms, Part 1* (2011), §7.2.1.3
(there for compositions and combinations), with suffix feasibility: urn ``i``
takes values in ``[max(0, m - R_i), min(c_i, m)]`` where ``m`` balls remain
and ``R_i`` is the total capacity of the urns after ``i``, so the walk never
enters a dead end.

Only the first ``p = r - t`` urns are walked by that successor in Python;
each prefix then emits its whole run of suffixes (the last ``t`` urns
holding the ``m`` balls left) at C speed:

* A table of suffixes, built once per model and lazily, stores one level:
  every admissible vector of the last ``t - 1`` urns, grouped by the balls
  ``m`` they hold, groups in descending ``m``, each in lexicographic order.
  In that layout the run of the last ``t`` urns holding ``m`` is one
  contiguous slice of the table plus at most ``c + 1`` constant stretches
  for the first of them (urn ``p`` taking ``v = lo, ..., hi`` is followed
  by the groups ``m - lo, ..., m - hi``, which are adjacent).  Each level is
  built from the one below with one gather, bottom-up.  ``t`` is the
  largest depth whose table fits :data:`TUPLE_TABLE_BUDGET` or
  :data:`BLOCK_TABLE_BUDGET` (a few MB; ``t = 8`` for ``n = 16, r = 10``).
* Tuple mode yields a ``zip`` over ``itertools.repeat`` objects (the prefix)
  and the run's columns (``bytes`` when ``n <= 255``, else lists), so each
  tuple is built in C and CPython recycles it when the consumer drops it.
* Block mode writes runs into Fortran-ordered (column-major) numpy arrays:
  per run, one ``memset`` per prefix urn and one column-wise slice copy;
  arrays the consumer has dropped are recycled (first-touch page faults
  would otherwise cost more than the copying).
* Without room for a table, the last two urns are ``range`` objects.

Memory is the table plus one block, independent of the number of
configurations.

Ranking
-------
Rank and unrank use suffix counts, the ranking-by-counting method of
Nijenhuis and Wilf, *Combinatorial Algorithms*, 2nd ed. (1978): the rank of
a vector is the number of admissible vectors before it.  With ``N_j(m)`` the number of ways urns
``j, ..., r-1`` hold ``m`` balls and ``P_j(m) = N_j(0) + ... + N_j(m)``,

.. math::  \operatorname{rank}(x) = \sum_{i<r-1} \bigl(P_{i+1}(m_i) - P_{i+1}(m_i - x_i)\bigr),

``m_i`` being the balls left for urns ``i, ...``.  Three ways to get ``P``:

* no upper bound bites (every ``c_i >= n'``): the hockey-stick identity gives
  ``P_j(m) = C(m + r - j, r - j)`` (stars and bars), no table; the binomials
  are carried from urn to urn by exact small multiplications and divisions;
* every ``c_i <= 1`` (FD-like): ``N_j(m) = C(J, m)`` with ``J`` the urns of
  capacity 1 from ``j`` on, no table, carried the same way;
* otherwise a table of the prefix sums ``P_j(m)`` for all ``j`` and
  ``m <= n'``, built once per model by the recurrence
  ``N_j(m) = P_{j+1}(m) - P_{j+1}(m - c_j - 1)`` in ``O(r n')`` big-integer
  additions; above :data:`RANK_TABLE_LIMIT` bytes it raises
  :class:`~enumerator.errors.TooLarge`.

Unranking inverts each term: ``bisect`` on a table row (``O(r log n')``
look-ups), a scan of the carried binomial (``O(n' + r)`` small steps in
all; a binary search on ``math.comb`` when ``n'`` dwarfs ``r``), or one
comparison per urn (capacities at most 1).

The plan and the tables are :mod:`enumerator.algorithms.listing_tables`.

Any number of urns
------------------
:func:`rank_sparse` and :func:`unrank_sparse` take and give a configuration
as its occupied urns only, ``((urn, count), ...)``, with suffix counts by
urn groups (:mod:`enumerator.algorithms.sparse_ranking`), so ``r = 2**64``
costs nothing per urn.  The dense functions need one entry per urn and
stop at :data:`~enumerator.core.model.PER_URN_LIMIT` urns.  Listings check
their cost before starting (:func:`listing_cost`, :func:`check_listing`):
the memory of their blocks always, the time of a range when ``stop`` is
given; a caller that will print a whole listing calls
:func:`check_listing` first.  Weights do not change which configurations
exist, so nothing here reads them.

Caching: the plan, the suffix tables and the rank table live in that
module's :class:`~enumerator.core.memo.ModelMemo` under keys starting with
``"listing."``; the 32 most recently used models keep theirs.
"""

from __future__ import annotations

import operator
import sys
from itertools import chain, islice, repeat
from typing import Iterator, List, Optional, Tuple

import numpy as np

from ..core.errors import InvalidConfiguration, InvalidParameters, TooLarge
from ..core.limits import Cost, active_limits, check
from ..core.model import PER_URN_LIMIT, as_count
from .listing_tables import (
    BLOCK_TABLE_BUDGET,
    MEMO,
    RANK_TABLE_LIMIT,
    TUPLE_TABLE_BUDGET,
    Plan,
    SuffixTable,
    block_dtype,
    block_dtype_for,
    count_for,
    plan_for,
    ranker_for,
    suffix_table,
    walk,
)
from .sparse_ranking import SparseRanker

__all__ = [
    "BLOCK_TABLE_BUDGET",
    "RANK_TABLE_LIMIT",
    "TUPLE_TABLE_BUDGET",
    "block_dtype",
    "iter_blocks",
    "iter_configurations",
    "iter_sparse",
    "check_listing",
    "listing_cost",
    "rank",
    "rank_sparse",
    "unrank",
    "unrank_sparse",
]

#: Listing speed for the estimates: urn entries written per second (C-level
#: tuples reach 2-5 x 10^7, blocks 4 x 10^7 to 10^9; measured on the
#: reference machine, rounded up so that only far-out work is refused).
CELLS_PER_SECOND = 1e8
#: Rows produced per second at best, whatever the width.
ROWS_PER_SECOND = 2e7
#: Output arrays a block listing may hold at once (the recycling pool of ``_Blocks``, plus one).
BLOCK_ARRAYS = 4

# Working data kept per model between calls, shared with listing_tables.
_MEMO = MEMO

# ---------------------------------------------------------------------------
# public API
# ---------------------------------------------------------------------------
def rank(model, config) -> int:
    """Return the 0-based lexicographic rank of the admissible vector *config*.

    Ranking by suffix counts (Nijenhuis and Wilf, *Combinatorial Algorithms*,
    1978): the rank is the number of admissible vectors that precede
    *config*, summed urn by urn.  Cost: ``O(r)`` carried binomials (no bound
    bites, or every capacity at most 1) or ``O(r)`` table look-ups after a
    one-off ``O(r n)`` table build (other bounds).

    Examples
    --------
    >>> from enumerator import Occupancy
    >>> model = Occupancy(balls=2, urns=2, rule="BE")
    >>> [model.rank(k) for k in [(0, 2), (1, 1), (2, 0)]]
    [0, 1, 2]
    >>> model.unrank(1)
    (1, 1)

    Raises
    ------
    InvalidConfiguration
        if *config* is malformed (length, sign, sum) or breaks a bound.
    TooLarge
        if the suffix-count table would exceed :data:`RANK_TABLE_LIMIT`.
    """
    values = model.check_configuration(config)
    plan = plan_for(model)
    for i, (v, (a, b)) in enumerate(zip(values, model.bounds), start=1):
        if v < a:
            raise InvalidConfiguration(
                f"configuration entry {i} is {v} but urn {i} must hold at least {a}; "
                "only admissible configurations have a rank"
            )
        if b is not None and v > b:
            raise InvalidConfiguration(
                f"configuration entry {i} is {v} but urn {i} holds at most {b}; "
                "only admissible configurations have a rank"
            )
    x = [v - a for v, a in zip(values, plan.lows)]
    return ranker_for(_MEMO.slots(model), plan).rank_from(x, 0, plan.N)


def unrank(model, index) -> Tuple[int, ...]:
    """Return the admissible vector of 0-based lexicographic rank *index*.

    The inverse of :func:`rank`: urn by urn, the suffix counts locate the
    value whose block of successors contains *index* (Nijenhuis and Wilf,
    *Combinatorial Algorithms*, 1978).  Cost: ``O(r log n)`` table look-ups,
    or ``O(n + r)`` exact small multiplications of a carried binomial (no
    bound bites), or ``O(r)`` (capacities at most 1).  Exact for counts of
    any size.

    Raises
    ------
    InvalidParameters
        if *index* is not a whole number in ``[0, count)``.
    """
    if isinstance(index, bool):
        raise InvalidParameters(f"rank must be a whole number, not a boolean (got {index!r})")
    try:
        index = operator.index(index)
    except TypeError:
        raise InvalidParameters(
            f"rank must be a whole number (got {index!r} of type {type(index).__name__})"
        ) from None
    _dense_only(model, "unrank_sparse(model, index)")
    plan = plan_for(model)
    ranker = ranker_for(_MEMO.slots(model), plan)
    count = ranker.count
    if count == 0:
        raise InvalidParameters(
            f"rank {index} is out of range: this model admits no configuration, so no rank is valid; "
            "loosen the bounds or change the number of balls"
        )
    if not 0 <= index < count:
        raise InvalidParameters(
            f"rank {index} is out of range; valid ranks are 0 to {count - 1} "
            f"(the model has {count} configurations)"
        )
    return plan.unshift(ranker.unrank(index))


def _dense_only(model, instead: str) -> None:
    """Refuse a dense vector of more than :data:`PER_URN_LIMIT` urns, pointing at the sparse form."""
    if model.urns > PER_URN_LIMIT:
        raise TooLarge(
            f"the model has {model.urns:,} urns; a configuration with one entry per urn is limited to "
            f"{PER_URN_LIMIT:,} entries; use {instead}, which lists the occupied urns only"
        )


def _sparse_ranker(model) -> SparseRanker:
    memo = _MEMO.slots(model)
    got = memo.get("listing.sparse")
    if got is None:
        got = memo["listing.sparse"] = SparseRanker(model)
    return got


def rank_sparse(model, occupied) -> int:
    """Return the lexicographic rank of a configuration given by its occupied urns only.

    Parameters
    ----------
    model : UrnModel
        Any model (any number of urns: ``2**64`` is ordinary).
    occupied : mapping or iterable of (int, int)
        ``{urn: count}`` or ``((urn, count), ...)`` with urns numbered from
        1; urns not listed hold 0 (so every urn with a positive lower bound
        must be listed).

    Returns
    -------
    int
        The same rank as :func:`rank` of the dense vector.

    Raises
    ------
    InvalidConfiguration
        For a malformed or inadmissible configuration.
    TooLarge
        When the suffix counts exceed the active limits.

    Notes
    -----
    Ranking by counting (Nijenhuis & Wilf, *Combinatorial Algorithms*, 1978)
    with suffix counts by groups
    (:class:`enumerator.algorithms.sparse_ranking.SparseRanker`): urns that
    hold their minimum contribute nothing, so the cost is the groups' rows
    (``O(G)`` products of ``n' + 1`` counts) plus one row per occupied urn,
    independent of ``r``.

    Examples
    --------
    >>> from enumerator.core.model import UrnModel
    >>> model = UrnModel(balls=3, urns=2**40, rule="BE")
    >>> rank_sparse(model, {2**40: 3})
    0
    >>> unrank_sparse(model, rank_sparse(model, {5: 1, 7: 2}))
    ((5, 1), (7, 2))
    """
    return _sparse_ranker(model).rank(occupied)


def unrank_sparse(model, index) -> Tuple[Tuple[int, int], ...]:
    """Return the configuration of rank *index* as its occupied urns: ``((urn, count), ...)``, 1-based, ascending.

    The inverse of :func:`rank_sparse`; urns with a positive lower bound are
    always listed.  Cost: the groups' rows, then ``O(log2 r)`` suffix counts
    per occupied urn (a binary search for the next occupied urn: the suffix
    counts never increase along the urns), each ``O(n')`` big-integer steps.

    Raises
    ------
    InvalidParameters
        If *index* is not a whole number in ``[0, count)``.
    TooLarge
        When the work exceeds the active limits.
    """
    return _sparse_ranker(model).unrank(index)


#: Python-level steps per second of :func:`iter_sparse` (one step per occupied urn or group visited).
SPARSE_STEPS_PER_SECOND = 1e6


def iter_sparse(model, start=0, stop=None) -> Iterator[Tuple[Tuple[int, int], ...]]:
    """Yield the configurations of ranks ``[start, stop)`` as their occupied urns, for any number of urns.

    Each item is what :func:`unrank_sparse` gives for its rank:
    ``((urn, count), ...)``, urns numbered from 1 and ascending, urns with a
    positive lower bound always listed; the order is that of
    :func:`iter_configurations` (lexicographic, urn 1 most significant).

    Parameters
    ----------
    model : UrnModel
        Any model; ``r = 2**64`` urns is ordinary.
    start, stop : int
        The ranks (``stop=None``: to the end).

    Yields
    ------
    tuple of (int, int)

    Raises
    ------
    InvalidParameters
        For a negative or non-whole *start*/*stop*.
    TooLarge
        When the groups' suffix counts exceed the limits, or (with *stop*
        given) the range would take longer than the limits allow.

    Notes
    -----
    The first item is :func:`unrank_sparse` of *start*; each next one is the
    lexicographic successor (Knuth, *TAOCP* vol. 4A, 2011, §7.2.1.3, the
    successor of a bounded composition) taken on the occupied urns only:
    the rightmost urn that can take one more ball with balls to its right
    gains one, and the balls to its right are refilled as far right as the
    bounds allow.  Runs of empty urns are skipped a group at a time, so a
    step costs ``O(occupied urns + groups)`` Python operations, never ``r``.

    Examples
    --------
    >>> from enumerator.core.model import UrnModel
    >>> list(iter_sparse(UrnModel(balls=2, urns=2**64, rule="BE"), 0, 3))
    [((18446744073709551616, 2),), ((18446744073709551615, 1), (18446744073709551616, 1)), ((18446744073709551615, 2),)]
    """
    start = as_count(start, "start")
    if stop is not None:
        stop = as_count(stop, "stop")
    ranker = _sparse_ranker(model)
    end = ranker.count if stop is None else min(stop, ranker.count)
    if start >= end:
        return iter(())
    if stop is not None:
        steps = (end - start) * (max(ranker.N, 0) + len(ranker.counts) + 1)
        check(Cost(seconds=steps / SPARSE_STEPS_PER_SECOND, memory=0), f"listing {model} sparsely",
              advice="list a shorter range of ranks (start=, stop=)", parameters=["start", "stop"])
    first = ranker.unrank(start)
    return _sparse_walk(ranker, first, end - start)


def _sparse_walk(ranker: SparseRanker, first, rows: int) -> Iterator[Tuple[Tuple[int, int], ...]]:
    """*rows* sparse configurations from *first* on, by lexicographic successors (see :func:`iter_sparse`)."""
    import bisect

    firsts, counts, spans, lows = ranker.firsts, ranker.counts, ranker.spans, ranker.lows
    fixed = [g for g, a in enumerate(lows) if a]

    def group(j: int) -> int:
        return bisect.bisect_right(firsts, j) - 1

    x = {}
    for urn, k in first:
        j = urn - 1
        v = k - lows[group(j)]
        if v:
            x[j] = v
    occ = sorted(x)

    def emit():
        if not fixed:
            return tuple((j + 1, x[j]) for j in occ)
        out = {j + 1: v for j, v in x.items()}
        for g in fixed:
            for j in range(firsts[g], firsts[g] + counts[g]):
                out[j + 1] = lows[g] + x.get(j, 0)
        return tuple(sorted(out.items()))

    def advance() -> bool:
        moved = 0
        while occ:
            p = occ.pop()
            moved += x.pop(p)
            prev = occ[-1] if occ else -1
            i = None
            j = p - 1
            while j > prev:  # the rightmost empty urn in (prev, p) that may hold a ball
                g = group(j)
                if spans[g] > 0:
                    i = j
                    break
                j = firsts[g] - 1
            if i is None and occ and x[prev] < spans[group(prev)]:
                i = prev
            if i is None:
                continue
            if i in x:
                x[i] += 1
            else:
                x[i] = 1
                occ.append(i)
            left = moved - 1  # refill the urns after i, as far right as they go
            filled = []
            g = len(counts) - 1
            while left > 0:
                s = spans[g]
                lo, hi = max(firsts[g], i + 1), firsts[g] + counts[g] - 1
                if s > 0 and hi >= lo:
                    full = min(left // s, hi - lo + 1)
                    filled.extend((hi - t, s) for t in range(full))
                    left -= full * s
                    if left and full < hi - lo + 1:
                        filled.append((hi - full, left))
                        left = 0
                g -= 1
            for j, v in reversed(filled):
                x[j] = v
                occ.append(j)
            return True
        return False

    yield emit()
    for _ in range(rows - 1):
        if not advance():  # pragma: no cover - rows never exceeds the count
            return
        yield emit()


def listing_cost(model, start=0, stop=None, size=None) -> Cost:
    """The estimated cost of listing ranks ``[start, stop)``: rows times urns, and the blocks in memory.

    Parameters
    ----------
    model : UrnModel
        The model (never expanded per urn: the count comes from its groups).
    start, stop : int
        The ranks; ``stop=None`` is the end (the count is then computed from
        the groups' suffix rows, :func:`rank_sparse`'s set-up).
    size : int, optional
        Rows per block (:func:`iter_blocks`); ``None`` for tuples.

    Returns
    -------
    Cost
        Seconds ``rows * r / CELLS_PER_SECOND`` (at least ``rows /
        ROWS_PER_SECOND``); memory :data:`BLOCK_ARRAYS` blocks of ``size``
        rows of ``r`` 8-byte entries (what a caller converting a block to
        int64 holds).

    Raises
    ------
    TooLarge
        When even counting the configurations is beyond the limits.
    """
    start = as_count(start, "start")
    if stop is not None:
        rows = max(0, as_count(stop, "stop") - start)  # an upper bound, without counting
    elif model.urns == 1:
        rows = 1
    else:
        rows = max(0, _sparse_ranker(model).count - start)
    return _cost(model, rows, size)


def _cost(model, rows: Optional[int], size: Optional[int], itemsize: int = 8, timed: bool = True) -> Cost:
    r = model.urns
    seconds = 0.0 if rows is None or not timed else max(rows * r / CELLS_PER_SECOND, rows / ROWS_PER_SECOND)
    memory = 0
    if size is not None:
        height = size if rows is None else min(size, rows)
        memory = BLOCK_ARRAYS * height * r * itemsize
    return Cost(seconds=seconds, memory=memory)


def check_listing(model, start=0, stop=None, size=None) -> None:
    """Refuse a listing of ranks ``[start, stop)`` beyond the active limits, before it starts.

    For callers that will consume the whole range (a command printing a
    listing): :func:`iter_configurations` and :func:`iter_blocks` are lazy
    and check the time only when *stop* is given, and the memory of their
    blocks always.  Cost of the check: the groups' suffix rows when *stop*
    is ``None`` (see :func:`listing_cost`).

    Raises
    ------
    TooLarge
        Naming ``start=``/``stop=`` (and ``size=`` for blocks).
    """
    _check(model, listing_cost(model, start, stop, size), size)


def _check(model, cost: Cost, size) -> None:
    advice = "list a range of ranks (start=, stop=)"
    parameters = ["start", "stop"]
    if size is not None:
        advice += " or smaller blocks (size=)"
        parameters.append("size")
    check(cost, f"listing {model}", advice=advice, parameters=parameters)


def _check_listing(model, start, stop, size=None) -> None:
    """The lazy iterators' check: the time of a given range, the memory of the blocks (of their dtype).

    Without *stop*, the rows are counted (the groups' suffix rows) only when
    full blocks would not fit: a short listing then needs short blocks.
    """
    start = as_count(start, "start")
    rows = None if stop is None else max(0, as_count(stop, "stop") - start)
    itemsize = np.dtype(block_dtype_for(model.balls)).itemsize
    cost = _cost(model, rows, size, itemsize)
    if rows is None and size is not None and cost.memory > active_limits().memory:
        try:
            rows = max(0, _sparse_ranker(model).count - start)
        except TooLarge:
            rows = None
        cost = _cost(model, rows, size, itemsize, timed=False)
    _check(model, cost, size)


def _range(memo: dict, plan: Plan, start, stop):
    """Validate *start*/*stop*; return ``(start, total, empty)``, ``total=None`` to the end.

    Only a nonzero *start* needs the count (to clamp it); ``stop`` past the
    end simply runs out.
    """
    start = as_count(start, "start")
    if stop is not None:
        stop = as_count(stop, "stop")
    if plan.empty or (stop is not None and stop <= start):
        return start, None, True
    if start:
        count = count_for(memo, plan)
        if start >= count:
            return start, None, True
        if stop is not None and stop >= count:
            stop = None
    return start, (None if stop is None else stop - start), False


def _start_state(memo: dict, plan: Plan, p: int, start: int):
    """Prefix of rank *start* and its offset inside its run: ``(x_prefix, offset)``."""
    if start == 0:
        return plan.first_prefix(p), 0
    ranker = ranker_for(memo, plan)
    x = ranker.unrank(start)
    m = plan.N - sum(x[:p])
    return x[:p], ranker.rank_from(x, p, m)


def iter_configurations(model, start=0, stop=None) -> Iterator[Tuple[int, ...]]:
    """Yield the admissible vectors of ranks ``[start, stop)`` in lexicographic order.

    Lexicographic generation with suffix feasibility (Knuth, *The Art of
    Computer Programming*, vol. 4A, 2011, §7.2.1.3 style): a Python successor
    walks the first urns, and each prefix emits its whole run of suffixes
    from a small precomputed table through C-level ``zip``/``repeat``
    iterators (see the module notes).  A range starts by unranking *start*,
    never walking earlier ranks.  Memory is bounded by the table budget,
    whatever the number of configurations; cost per configuration is
    ``O(r)`` C-level steps.

    Parameters
    ----------
    start, stop : int
        Ranks ``[start, stop)``; ``stop=None`` lists to the end.  Both are
        clamped to the count; ``stop <= start`` yields nothing.

    Yields
    ------
    tuple of int
        UrnModel vectors; a tuple may be reused by CPython once the consumer
        has dropped its reference (as ``itertools`` does), never while held.
    """
    _check_listing(model, start, stop)
    plan = plan_for(model)
    start, total, empty = _range(_MEMO.slots(model), plan, start, stop)
    if empty:
        return iter(())
    r = plan.r
    if r == 1:
        return iter([(plan.N + plan.lows[0],)])
    t, table = suffix_table(_MEMO.slots(model), plan, "tuples")
    p = r - t
    x, offset = _start_state(_MEMO.slots(model), plan, p, start)
    if table is None:
        return chain.from_iterable(_range_runs(plan, p, x, offset, total))
    return chain.from_iterable(_trim(_table_runs(plan, table, p, x), offset, total))


def _table_runs(plan: Plan, table: SuffixTable, p: int, x: List[int]):
    """Yield ``(zip, length)`` per prefix: ``repeat`` columns, then the table's run."""
    lows = plan.lows
    reps = [repeat(v + a) for v, a in zip(x, lows)]
    for changed, m in walk(plan, p, x):
        for i in range(changed, p):
            reps[i] = repeat(x[i] + lows[i])
        cols = table.columns(m)
        yield zip(*reps, *cols), len(cols[0])


def _range_runs(plan: Plan, p: int, x: List[int], offset: int, total: Optional[int]):
    """Yield one ``zip`` per prefix of ``r - 2`` urns; the last two urns are ``range`` objects.

    *offset* skips into the first run and *total* caps the number of
    configurations, both by moving the range ends (they may exceed
    ``sys.maxsize``, which ``islice`` refuses).
    """
    lows, caps = plan.lows, plan.caps
    a, b = lows[-2], lows[-1]
    c_last, c_pen = caps[-1], caps[-2]
    reps = [repeat(v + w) for v, w in zip(x, lows)]
    for changed, m in walk(plan, p, x):
        for i in range(changed, p):
            reps[i] = repeat(x[i] + lows[i])
        lo = m - c_last
        if lo < 0:
            lo = 0
        lo += offset
        offset = 0
        hi = c_pen if c_pen < m else m
        last = False
        if total is not None:
            if hi - lo + 1 >= total:
                hi = lo + total - 1
                last = True
            else:
                total -= hi - lo + 1
        yield zip(*reps, range(lo + a, hi + 1 + a), range(m - lo + b, m - hi - 1 + b, -1))
        if last:
            return


def _trim(runs, offset: int, total: Optional[int]):
    """Skip *offset* items of the first run and stop after *total* items overall."""
    first = True
    for run, length in runs:
        if first:
            first = False
            if offset:
                run = islice(run, offset, None)
                length -= offset
        if total is not None:
            if length >= total:
                yield islice(run, total)
                return
            total -= length
        yield run


def iter_blocks(model, size, start=0, stop=None) -> Iterator[np.ndarray]:
    """Yield numpy arrays of shape ``(<= size, r)`` holding ranks ``[start, stop)`` in order.

    The same listing as :func:`iter_configurations`, many rows per array
    (Knuth-style lexicographic generation, *TAOCP* vol. 4A, 2011, §7.2.1.3,
    walked in Python on the first urns only): each prefix's run is written
    with one fill per prefix urn and one column-wise copy of a slice of the
    suffix table, ``O(1)`` numpy calls per run and memory-bandwidth speed.

    Conventions: row ``i`` of the concatenated arrays is the configuration
    of rank ``start + i``; every array but the last has exactly *size* rows.
    An array you hold (or a view of it) is never written again, so keep or
    modify it freely; the memory of one you dropped may be recycled for a
    later block, as CPython recycles the tuples of ``zip``.  Arrays are
    **Fortran-ordered** (column-major: each urn's column is contiguous),
    which is what makes the fill fast; use ``numpy.ascontiguousarray`` for
    row-major memory.  The dtype is :func:`block_dtype`: the smallest
    unsigned integer type holding ``n`` (``object`` beyond ``2^64 - 1``).
    Memory: the suffix table (at most :data:`BLOCK_TABLE_BUDGET` bytes) plus
    one block.  Ranges and clamping are as in :func:`iter_configurations`.

    Raises
    ------
    InvalidParameters
        if *size* is not a whole number at least 1, or *start*/*stop* are
        not whole numbers at least 0.
    """
    size = as_count(size, "block size", 1)
    _check_listing(model, start, stop, size)
    plan = plan_for(model)
    start, total, empty = _range(_MEMO.slots(model), plan, start, stop)
    if empty:
        return iter(())
    r = plan.r
    if r == 1:
        return iter([np.array([[plan.N + plan.lows[0]]], dtype=plan.dtype)])
    t, table = suffix_table(_MEMO.slots(model), plan, "blocks")
    p = r - t
    x, offset = _start_state(_MEMO.slots(model), plan, p, start)
    if table is None:
        return _blocks_ranges(plan, size, p, x, offset, total)
    return _blocks_table(plan, table, size, p, x, offset, total)


class _Blocks:
    """Fortran-ordered output arrays, recycled only once the consumer has dropped them.

    Fresh memory costs a page fault per 4 KiB on first touch, which at
    listing speed is most of the time, so a few arrays are kept and one is
    reused when its reference count shows that nothing outside this pool
    refers to it (no variable, no view, no buffer export) -- the test
    CPython's ``zip`` and ``itertools.combinations`` apply to their result
    tuples.  A block the consumer still holds is never written again.
    """

    __slots__ = ("shape", "dtype", "pool", "free")

    def __init__(self, size: int, r: int, dtype):
        self.shape = (size, r)
        self.dtype = dtype
        self.pool = [np.empty(0)]
        self.free = self._count(0)  # the references of the pool and of this check alone
        self.pool.clear()

    def _count(self, i: int) -> int:
        return sys.getrefcount(self.pool[i])

    def take(self):
        pool = self.pool
        for i in range(len(pool)):
            if self._count(i) == self.free:
                return pool[i]
        out = np.empty(self.shape, dtype=self.dtype, order="F")
        if len(pool) < 3:
            pool.append(out)
        return out


def _blocks_table(plan, table, size, p, x, offset, total):
    """Blocks whose last urns come from the suffix table (one run per remaining ``m``)."""
    run = table.run

    def span(m):
        start, stop = run(m)[:2]
        return stop - start

    return _fill_blocks(plan, size, p, x, offset, total, span, table.fill)


def _blocks_ranges(plan, size, p, x, offset, total):
    """Blocks whose last two urns are ranges: ``(a + j, b + m - j)`` for ``j`` in a window."""
    r, dtype, lows, caps = plan.r, plan.dtype, plan.lows, plan.caps
    a, b = lows[-2], lows[-1]
    c_last, c_pen = caps[-1], caps[-2]

    def first(m):
        return m - c_last if m > c_last else 0

    def span(m):
        return (c_pen if c_pen < m else m) - first(m) + 1

    def fill(block, m, j, take):
        steps = np.arange(first(m) + j, first(m) + j + take, dtype=dtype)
        block[:, r - 2] = steps + a
        block[:, r - 1] = np.subtract(m + b, steps, dtype=dtype)

    return _fill_blocks(plan, size, p, x, offset, total, span, fill)


def _fill_blocks(plan, size, p, x, offset, total, span, fill):
    """Walk the prefixes and cut their suffix runs into blocks of *size* rows.

    ``span(m)`` is the length of the run of suffixes for ``m`` remaining
    balls, ``fill(block, m, j, take)`` writes suffixes ``j .. j+take-1`` of
    that run into the last columns; the prefix urns are written here, one
    broadcast per block.  *offset* skips into the first run, *total* caps the
    rows (``None``: to the end).
    """
    r, dtype, lows = plan.r, plan.dtype, plan.lows
    blocks = _Blocks(size, r, dtype)
    prefix = np.array([v + a for v, a in zip(x, lows)], dtype=dtype)
    out = blocks.take()
    pos = 0
    for changed, m in walk(plan, p, x):
        for i in range(changed, p):
            prefix[i] = x[i] + lows[i]
        lo, length = offset, span(m)
        offset = 0
        while lo < length:
            take = length - lo
            if take > size - pos:
                take = size - pos
            if total is not None and take > total:
                take = total
            block = out[pos : pos + take]
            if p:
                block[:, :p] = prefix  # one memset per prefix urn, in one call
            fill(block, m, lo, take)
            pos += take
            lo += take
            if total is not None:
                total -= take
                if total == 0:
                    yield out[:pos]
                    return
            if pos == size:
                yield out
                out = blocks.take()
                pos = 0
    if pos:
        yield out[:pos]
