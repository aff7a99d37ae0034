r"""The plan, suffix tables and rank tables behind listing, ranking and unranking.

Everything :mod:`enumerator.algorithms.listing` needs about a model before it
walks: the shifted bounds and suffix capacities (:class:`Plan`), the
lexicographic prefix walk with suffix feasibility (:func:`walk`, after Knuth,
*TAOCP* vol. 4A, §7.2.1.3), the tables of suffixes that let each prefix emit
its whole run at C speed (:class:`SuffixTable`), and the suffix counts of
ranking by counting (Nijenhuis and Wilf, *Combinatorial Algorithms*, 2nd ed.,
1978; ``_Ranker``).  The layout and the costs are described in
:mod:`enumerator.algorithms.listing`.

Caching: all of it lives in :data:`MEMO` (a
:class:`~enumerator.core.memo.ModelMemo`) under keys starting with
``"listing."``; the 32 most recently used models keep theirs.
"""

from __future__ import annotations

import math
import operator
from bisect import bisect_left
from itertools import accumulate
from typing import List, Tuple

import numpy as np

from ..core.errors import TooLarge
from ..core.memo import ModelMemo

__all__ = [
    "BLOCK_TABLE_BUDGET",
    "MEMO",
    "Plan",
    "RANK_TABLE_LIMIT",
    "SuffixTable",
    "TUPLE_TABLE_BUDGET",
    "block_dtype",
    "block_dtype_for",
    "count_for",
    "plan_for",
    "ranker_for",
    "suffix_table",
    "walk",
]

#: Working data kept per model between calls (see enumerator.core.memo).
MEMO = ModelMemo("listing")
_MEMO = MEMO

#: Upper limit (bytes, estimated) of the suffix-count table used by ``rank``
#: and ``unrank`` for bounded models; raise it to allow larger models.
RANK_TABLE_LIMIT = 512 * 2**20

# Building a level copies one slice per ball count when there are at most this
# many (memcpy speed); beyond, one gather per column avoids the Python loop.
_SLICE_COPIES = 2048

#: Budget (bytes, estimated) of the suffix table behind tuple listing.
TUPLE_TABLE_BUDGET = 8 * 2**20

#: Budget (bytes, estimated) of the suffix table behind block listing.
BLOCK_TABLE_BUDGET = 4 * 2**20

# ---------------------------------------------------------------------------
# the plan: shifted bounds and feasibility data, cached per model
# ---------------------------------------------------------------------------
class Plan:
    """Shifted description of a model: ``x_i = k_i - a_i``, ``0 <= x_i <= c_i``, sum ``N``."""

    # No reference back to the model or its memo: the memo holds the plan and
    # the tables, and a cycle would keep megabytes of tables alive until the
    # cyclic collector ran (never, with gc disabled).
    __slots__ = ("r", "n", "N", "lows", "caps", "rest", "empty", "dtype", "__weakref__")

    def __init__(self, model):
        self.n = model.balls
        self.r = model.urns
        self.lows = tuple(a for a, _ in model.bounds)
        self.N = self.n - sum(self.lows)
        caps = []
        for (a, top) in model.effective_bounds():
            caps.append(top - a)
        self.caps = tuple(caps)
        # rest[i] = total capacity of urns i+1 .. r-1
        rest = [0] * self.r
        running = 0
        for i in range(self.r - 1, -1, -1):
            rest[i] = running
            running += max(self.caps[i], 0)
        self.rest = tuple(rest)
        self.empty = self.N < 0 or min(self.caps) < 0 or running < self.N
        self.dtype = block_dtype_for(self.n)

    def first_prefix(self, p: int) -> List[int]:
        """The lexicographically first feasible values of urns ``0 .. p-1`` (shifted)."""
        x, m = [], self.N
        for i in range(p):
            v = m - self.rest[i]
            if v < 0:
                v = 0
            x.append(v)
            m -= v
        return x

    def unshift(self, x) -> Tuple[int, ...]:
        return tuple(map(operator.add, x, self.lows))


def plan_for(model) -> Plan:
    """Return the model's :class:`Plan`, built once and kept in :data:`MEMO`.

    Parameters
    ----------
    model : UrnModel
        The model.

    Returns
    -------
    Plan
        Shifted bounds and suffix capacities.

    Notes
    -----
    ``O(r)`` on the first call for a model, a dictionary look-up after.
    """
    memo = _MEMO.slots(model)
    plan = memo.get("listing.plan")
    if plan is None:
        plan = memo["listing.plan"] = Plan(model)
    return plan


def block_dtype_for(n: int):
    """The smallest unsigned numpy integer type that holds *n*, else ``object``."""
    for dtype in (np.uint8, np.uint16, np.uint32, np.uint64):
        if n <= np.iinfo(dtype).max:
            return np.dtype(dtype)
    return np.dtype(object)


def block_dtype(model):
    """Return the numpy dtype of the arrays :func:`iter_blocks` yields for *model*.

    It is the smallest unsigned integer type holding ``n`` (``uint8`` for
    ``n <= 255``, then ``uint16``, ``uint32``, ``uint64``); beyond ``2^64 - 1``
    balls it is ``object`` (exact Python ints).  Cast before subtracting:
    unsigned arithmetic wraps around.
    """
    return plan_for(model).dtype


# ---------------------------------------------------------------------------
# the prefix walk (Knuth-style lexicographic successor with feasibility)
# ---------------------------------------------------------------------------
def walk(plan: Plan, p: int, x: List[int]):
    """Advance the shifted prefix *x* (length *p*, mutated in place) in lex order.

    Yields ``(i, m)`` for the current prefix: positions ``>= i`` changed since
    the previous yield (0 at first), and ``m`` the balls left for the suffix.
    The caller sets *x* to a feasible first prefix.  Each step costs
    ``O(p)`` in the worst case, amortised ``O(1)``.
    """
    caps, rest = plan.caps, plan.rest
    rem = [plan.N] * (p + 1)
    for i in range(p):
        rem[i + 1] = rem[i] - x[i]
    changed = 0
    while True:
        yield changed, rem[p]
        # find the rightmost position that can still grow
        i = p - 1
        while i >= 0 and (x[i] >= caps[i] or rem[i + 1] == 0):
            i -= 1
        if i < 0:
            return
        x[i] += 1
        rem[i + 1] -= 1
        for j in range(i + 1, p):
            v = rem[j] - rest[j]
            if v < 0:
                v = 0
            x[j] = v
            rem[j + 1] = rem[j] - v
        changed = i


# ---------------------------------------------------------------------------
# suffix tables
# ---------------------------------------------------------------------------
def _level_rows(plan: Plan, limit: int):
    """Row counts of the suffix levels: ``[sum_m N_l(m) for l = 1, 2, ...]``.

    Level ``l`` is the last ``l`` urns; ``N_l(m)`` (``m <= N``) comes from
    ``N_l(m) = sum_{v <= c} N_{l-1}(m - v)`` by prefix sums, in int64
    clipped at ``limit + 1`` (only the comparison with *limit* matters).
    Stops after the first level with more than *limit* rows or sums.
    """
    r, N, caps = plan.r, plan.N, plan.caps
    out = []
    row, top = np.ones(1, dtype=np.int64), 0
    for level in range(1, r + 1):
        c = caps[r - level]
        prev_top, top = top, min(N, top + c)
        if top + 1 > limit:
            break
        prefix = np.cumsum(row)
        ms = np.arange(top + 1, dtype=np.int64)
        new = prefix[np.minimum(ms, prev_top)]
        if c + 1 <= top:
            below = ms[c + 1 :] - (c + 1)
            new[c + 1 :] -= prefix[np.minimum(below, prev_top)]
        row = np.minimum(new, limit + 1)
        out.append(int(row.sum()))
        if out[-1] > limit:
            break
    return out


def _choose_suffix(plan: Plan, budget: int, top_column: int) -> int:
    """The largest ``t >= 3`` whose suffix table fits *budget* bytes, else 2 (range columns).

    A table for ``t`` urns stores level ``t - 1`` (all its rows, every
    ``m <= N``) and, while it is built, level ``t - 2``; with
    ``top_column > 0`` it also caches level ``t`` at that many bytes per
    entry (tuple mode).
    """
    r = plan.r
    if r <= 2:
        return r
    size = plan.dtype.itemsize
    # a stored level of l >= 2 urns costs at least 2 * size bytes a row
    rows = _level_rows(plan, budget // (2 * size))
    best = 2
    for t in range(3, min(r, len(rows)) + 1):
        cost = (rows[t - 2] * (t - 1) + rows[t - 3] * (t - 2)) * size
        cost += rows[t - 1] * t * top_column
        if cost > budget:
            break
        best = t
    return best


def _plus(values, a: int, dtype):
    """``values + a`` in *dtype*: small shifted int64 values plus a lower bound of any size."""
    if np.dtype(dtype).kind == "O":
        return values.astype(object) + a
    return values.astype(dtype) + dtype.type(a)


def _repeat(values, lengths, dtype=np.int64):
    """``numpy.repeat(values, lengths)`` for positive *lengths*, as *dtype*, by a running sum.

    ``numpy.repeat`` copies element by element; writing the jumps at the
    stretch boundaries and summing is several times faster.  For unsigned
    *dtype* the sum runs modulo ``2^bits``, which is exact because every
    partial sum is one of the *values*.
    """
    if np.dtype(dtype).kind == "O":
        return np.repeat(np.asarray(values, dtype=object), lengths)
    total = int(lengths.sum())
    out = np.zeros(total, dtype=dtype)
    if total:
        firsts = np.cumsum(lengths) - lengths
        out[firsts] = np.diff(values, prepend=0).astype(dtype)
        np.cumsum(out, dtype=out.dtype, out=out)
    return out


def _aranges(starts, stops):
    """Concatenation of ``arange(a, b)`` for the pairs of *starts*, *stops* (int64, ``b > a``)."""
    lengths = stops - starts
    total = int(lengths.sum())
    out = np.ones(total, dtype=np.int64)
    if total:
        firsts = np.cumsum(lengths) - lengths
        out[firsts] = starts - np.concatenate(([1], stops[:-1])) + 1
        out[0] = starts[0]
        np.cumsum(out, dtype=out.dtype, out=out)
    return out


class SuffixTable:
    """The admissible suffixes of urns ``p .. r-1``, from one stored level.

    Level ``j`` (urns ``j .. r-1``) lists, for ``m = top_j, ..., 1, 0`` in
    that (descending) order, the admissible suffixes holding ``m`` balls
    (shifted), each group in lexicographic order.  Because the suffixes of
    level ``j`` with ``m`` balls are, for ``v = lo .. hi`` in turn, the value
    ``v`` followed by level ``j + 1``'s group ``m - v``, and those groups sit
    next to each other in the descending order, every run of level ``j``
    is one *contiguous slice* of level ``j + 1`` plus a column of ``v``
    values.  So only level ``p + 1`` is stored, Fortran-ordered (each urn's
    column contiguous), built bottom-up by one gather per level; the run of
    the top level ``p`` is a slice of it and at most ``c_p + 1`` constant
    stretches for urn ``p``.
    """

    def __init__(self, plan: Plan, p: int):
        self.plan = plan
        self.p = p
        r, N, caps, lows, dtype = plan.r, plan.N, plan.caps, plan.lows, plan.dtype
        top = min(N, caps[r - 1])
        rows = np.empty((top + 1, 1), dtype=dtype, order="F")
        rows[:, 0] = _plus(np.arange(top, -1, -1, dtype=np.int64), lows[r - 1], dtype)
        counts = np.ones(top + 1, dtype=np.int64)
        for j in range(r - 2, p, -1):
            rows, counts = self._stack(j, rows, counts)
        self.rows = rows  # level p + 1
        self.counts = counts  # its group sizes, indexed by m
        ends = np.cumsum(counts[::-1])[::-1]  # end of group q in descending order
        self.ends = ends
        self.runs = {}
        self.cols = {}

    def _stack(self, j, rows, counts):
        """Level ``j`` from level ``j + 1`` (*rows*, group sizes *counts*)."""
        plan = self.plan
        c, a = plan.caps[j], plan.lows[j]
        top1 = len(counts) - 1
        top = min(plan.N, top1 + c)
        ends = np.cumsum(counts[::-1])[::-1]
        starts = ends - counts
        ms = np.arange(top, -1, -1, dtype=np.int64)
        lo = np.maximum(0, ms - top1)
        hi = np.minimum(c, ms)
        # group m of level j = level j+1 rows from start(m - lo) to end(m - hi)
        first, last = starts[ms - lo], ends[ms - hi]
        # the value column: v = lo..hi for each m, each repeated counts[m - v] times
        vs = _aranges(lo, hi + 1)
        qs = _repeat(ms, hi - lo + 1) - vs
        total = int((last - first).sum())
        new = np.empty((total, rows.shape[1] + 1), dtype=plan.dtype, order="F")
        new[:, 0] = _repeat(_plus(vs, a, plan.dtype), counts[qs], plan.dtype)
        if len(ms) <= _SLICE_COPIES:
            pos = 0
            for f, g in zip(first.tolist(), last.tolist()):
                new[pos : pos + g - f, 1:] = rows[f:g]
                pos += g - f
        else:
            index = _aranges(first, last)
            for k in range(rows.shape[1]):
                new[:, k + 1] = rows[:, k][index]
        group = (last - first)[::-1].copy()  # indexed by m ascending
        return new, group

    def run(self, m: int):
        """``(start, stop, values, stretch_ends)`` of the top-level group ``m``."""
        got = self.runs.get(m)
        if got is None:
            plan, p = self.plan, self.p
            counts = self.counts
            top1 = len(counts) - 1
            lo = max(0, m - top1)
            hi = min(plan.caps[p], m)
            start = int(self.ends[m - lo] - counts[m - lo])
            stop = int(self.ends[m - hi])
            values = [v + plan.lows[p] for v in range(lo, hi + 1)]
            stretch = list(accumulate(int(counts[m - v]) for v in range(lo, hi + 1)))
            got = self.runs[m] = (start, stop, values, stretch)
        return got

    def fill(self, block, m: int, lo: int, take: int):
        """Write rows ``[lo, lo + take)`` of group ``m`` into columns ``p ..`` of *block*."""
        start, _, values, stretch = self.run(m)
        p = self.p
        block[:, p + 1 :] = self.rows[start + lo : start + lo + take]
        column = block[:, p]
        at = 0
        end = lo + take
        for value, last in zip(values, stretch):
            if last <= lo:
                continue
            upto = (last if last < end else end) - lo
            column[at:upto] = value
            at = upto
            if last >= end:
                break

    def columns(self, m: int):
        """Group ``m`` as one ``bytes`` (uint8) or ``list`` per urn, cached."""
        got = self.cols.get(m)
        if got is None:
            start, stop, values, stretch = self.run(m)
            counts = np.diff(np.array([0] + stretch, dtype=np.int64))
            first = np.repeat(np.array(values, dtype=self.plan.dtype), counts)
            part = self.rows[start:stop]
            if self.plan.dtype == np.uint8:
                got = [first.tobytes()] + [part[:, k].tobytes() for k in range(part.shape[1])]
            else:
                got = [first.tolist()] + [part[:, k].tolist() for k in range(part.shape[1])]
            self.cols[m] = got
        return got


def suffix_table(memo: dict, plan: Plan, mode: str):
    """``(t, table)`` for ``mode`` "tuples" or "blocks"; ``table`` is None when the last two urns are ranges."""
    key = "listing.table." + mode
    got = memo.get(key)
    if got is None:
        if mode == "tuples":
            column = 1 if plan.dtype == np.uint8 else 8
            t = _choose_suffix(plan, TUPLE_TABLE_BUDGET, column)
        else:
            t = _choose_suffix(plan, BLOCK_TABLE_BUDGET, 0)
        table = None
        if t >= 3:
            other = memo.get("listing.table." + ("blocks" if mode == "tuples" else "tuples"))
            if other is not None and other[0] == t:
                table = other[1]
            else:
                table = SuffixTable(plan, plan.r - t)
        got = memo[key] = (t, table)
    return got


# ---------------------------------------------------------------------------
# ranking: closed forms or the table of prefix sums P_j(m)
# ---------------------------------------------------------------------------
class _Ranker:
    """Suffix counts for rank/unrank: ``kind`` is "stars", "binary" or "table"."""

    def __init__(self, plan: Plan):
        self.plan = plan
        r, N, caps = plan.r, plan.N, plan.caps
        if plan.empty:
            self.kind, self.count = "empty", 0
        elif all(c >= N for c in caps):
            # no upper bound bites: stars and bars
            self.kind = "stars"
            self.count = math.comb(N + r - 1, r - 1)
        elif all(c <= 1 for c in caps):
            self.kind = "binary"
            after = [0] * r  # capacity-1 urns after i
            running = 0
            for i in range(r - 1, -1, -1):
                after[i] = running
                running += caps[i]
            self.after = after
            self.count = math.comb(running, N)
        else:
            self.kind = "table"
            self.rows = self._build_rows()
            P1 = self.rows[1]
            low = N - caps[0] - 1
            self.count = P1[N] - (P1[low] if low >= 0 else 0)

    def _build_rows(self):
        plan = self.plan
        r, N, caps = plan.r, plan.N, plan.caps
        entries = r * (N + 1)
        bits = min(N + r, sum((c + 1).bit_length() for c in caps))
        estimate = entries * (32 + bits // 16)
        if estimate > RANK_TABLE_LIMIT:
            raise TooLarge(
                f"ranking this model needs a table of {r} x {N + 1} suffix counts "
                f"(about {estimate // 2**20} MB, above the {RANK_TABLE_LIMIT // 2**20} MB limit); "
                "reduce the number of balls or urns, or raise enumerator.algorithms.listing_tables.RANK_TABLE_LIMIT"
            )
        rows = [None] * (r + 1)
        rows[r] = [1] * (N + 1)
        zeros = [0] * (N + 1)
        for i in range(r - 1, 0, -1):
            prev = rows[i + 1]
            shift = caps[i] + 1
            if shift <= N:
                # N_i(m) = P_{i+1}(m) - P_{i+1}(m - c_i - 1)
                counts = map(operator.sub, prev, zeros[:shift] + prev[: N + 1 - shift])
            else:
                counts = prev  # capacity at least N: N_i(m) = P_{i+1}(m)
            rows[i] = list(accumulate(counts))
        return rows

    def rank_from(self, x, i0: int, m: int) -> int:
        """Rank contributions of urns ``i0 ..`` (shifted values *x*), *m* balls left before ``i0``."""
        if self.kind == "stars":
            return self._rank_stars(x, i0, m)
        if self.kind == "binary":
            return self._rank_binary(x, i0, m)
        rows = self.rows
        total = 0
        for i in range(i0, self.plan.r - 1):
            k = x[i]
            if k:
                P = rows[i + 1]
                total += P[m] - P[m - k]
                m -= k
        return total

    def unrank(self, index: int) -> List[int]:
        """Shifted vector of rank *index* (``0 <= index < count``)."""
        if self.kind == "stars":
            return self._unrank_stars(index)
        if self.kind == "binary":
            return self._unrank_binary(index)
        r, m = self.plan.r, self.plan.N
        x = [0] * r
        rows = self.rows
        for i in range(r - 1):
            P = rows[i + 1]
            # the value v is the one with P[m] - P[m - v] <= index < P[m] - P[m - v - 1]
            q = bisect_left(P, P[m] - index, 0, m + 1)
            if q < m:
                index -= P[m] - P[q]
            x[i] = m - q
            m = q
        x[r - 1] = m
        return x

    # Stars and bars: with j urns after urn i, B = C(m + j, j) is both the
    # number of completions of the prefix and P_{i+1}(m).  It is carried from
    # urn to urn by exact small multiplications and divisions,
    # C(q - 1 + j, j) = C(q + j, j) q / (q + j) and
    # C(q + j - 1, j - 1) = C(q + j, j) j / (q + j), instead of calling comb.
    def _rank_stars(self, x, i0: int, m: int) -> int:
        r = self.plan.r
        if i0 >= r - 1:
            return 0
        j = r - 1 - i0
        B = math.comb(m + j, j)
        total = 0
        for i in range(i0, r - 1):
            j = r - 1 - i
            k = x[i]
            if k == 0:
                low = B
            elif k <= 16:
                low, q = B, m
                for _ in range(k):
                    low = low * q // (q + j)
                    q -= 1
            else:
                low = math.comb(m - k + j, j)
            total += B - low
            m -= k
            if j > 1:
                B = low * j // (m + j)
        return total

    def _unrank_stars(self, index: int) -> List[int]:
        r, m = self.plan.r, self.plan.N
        x = [0] * r
        # scanning values upward costs n + r steps in all; a binary search on
        # comb costs r log n binomials, better when n is much larger than r
        scan = m <= 64 * r
        B = self.count
        for i in range(r - 1):
            j = r - 1 - i
            target = B - index  # smallest q with C(q + j, j) >= target
            if scan:
                q, cur = m, B
                while q:
                    below = cur * q // (q + j)
                    if below < target:
                        break
                    cur, q = below, q - 1
            else:
                lo, hi = 0, m
                while lo < hi:
                    mid = (lo + hi) // 2
                    if math.comb(mid + j, j) >= target:
                        hi = mid
                    else:
                        lo = mid + 1
                q, cur = lo, math.comb(lo + j, j)
            index -= B - cur
            x[i] = m - q
            m = q
            if j > 1:
                B = cur * j // (m + j)
        x[r - 1] = m
        return x

    # Capacities 0 or 1: with J capacity-1 urns after urn i, B = C(J, m) is
    # the number of completions with urn i empty, carried by
    # C(J - 1, m) = C(J, m) (J - m) / J and C(J - 1, m - 1) = C(J, m) m / J.
    def _rank_binary(self, x, i0: int, m: int) -> int:
        caps, after = self.plan.caps, self.after
        total, J, B = 0, None, 0
        for i in range(i0, self.plan.r):
            if not caps[i]:
                continue
            if J is None:
                J = after[i]
                B = math.comb(J, m)
            if x[i]:
                total += B
                B = B * m // J if J else 0
                m -= 1
            else:
                B = B * (J - m) // J if J else 0
            J -= 1
        return total

    def _unrank_binary(self, index: int) -> List[int]:
        caps, after = self.plan.caps, self.after
        m = self.plan.N
        x = [0] * self.plan.r
        J, B = None, 0
        for i in range(self.plan.r):
            if not caps[i]:
                continue
            if J is None:
                J = after[i]
                B = math.comb(J, m)
            if index >= B:
                index -= B
                x[i] = 1
                B = B * m // J if J else 0
                m -= 1
            else:
                B = B * (J - m) // J if J else 0
            J -= 1
        return x


def ranker_for(memo: dict, plan: Plan) -> _Ranker:
    """Return the suffix counts behind rank/unrank for *plan*, built once per model.

    Parameters
    ----------
    memo : dict
        The model's slots in :data:`MEMO`.
    plan : Plan
        The model's plan.

    Returns
    -------
    _Ranker
        Carried binomials or the table of prefix sums ``P_j(m)``.

    Raises
    ------
    TooLarge
        when the table would exceed :data:`RANK_TABLE_LIMIT` bytes.

    Notes
    -----
    Ranking by counting (Nijenhuis and Wilf, *Combinatorial Algorithms*,
    2nd ed., 1978): ``O(1)`` set-up without biting bounds, else an
    ``O(r n')`` table of big-integer prefix sums.
    """
    got = memo.get("listing.ranker")
    if got is None:
        got = memo["listing.ranker"] = _Ranker(plan)
    return got


def count_for(memo: dict, plan: Plan) -> int:
    """Return the number of admissible vectors of *plan*, from its suffix counts.

    Parameters
    ----------
    memo : dict
        The model's slots in :data:`MEMO`.
    plan : Plan
        The model's plan.

    Returns
    -------
    int
        The exact count (the ranks run over ``[0, count)``).

    Notes
    -----
    Read off :func:`ranker_for` (same cost).
    """
    return ranker_for(memo, plan).count
