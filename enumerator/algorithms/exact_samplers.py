r"""The individual exact samplers: one class per method, each drawing blocks of occupancy rows.

Every sampler is a :class:`Sampler` built once per model by
:mod:`enumerator.algorithms.sampling` (which chooses among them and holds the
public interface); ``draw(rng, rows)`` returns an ``int64`` array of
``rows`` occupancy vectors.  The laws are exact: every random choice is a
uniform integer from NumPy's ``Generator.integers`` (Lemire's unbiased
bounded integers, no floating point), or a comparison of a uniform random
real, revealed 64 bits at a time, with exact integer thresholds.

``stars-and-bars`` (:class:`StarsAndBarsSampler`)
    BE without upper bounds: a uniform ``(r-1)``-subset of ``n + r - 1``
    positions are the bars (Feller, vol. 1, §II.5), by Floyd's algorithm
    (Bentley & Floyd, *A sample of brilliance*, CACM 1987) for all rows at once.
``subset`` (:class:`SubsetSampler`)
    A uniform subset of the free urns, by Floyd's algorithm or selection
    sampling (Knuth, *TAOCP* vol. 2, 3rd ed., 1997, §3.4.2, Algorithm S).
``uniform-balls`` (:class:`UniformBallsSampler`)
    MB without bounds: each ball uniform among the urns, occupancies by
    ``numpy.bincount``.
``rejection`` (:class:`RejectionSampler`)
    Draws from an unbounded proposal kept when inside the bounds — exact,
    since the proposal is uniform (BE) or multinomial (MB) on a superset.
``sequential`` (:class:`SequentialSampler`)
    Recursive halving of the urns with exact conditional weights and 64-bit
    thresholds, refined exactly only near a threshold (Han & Hoshi,
    *Interval algorithm for random number generation*, IEEE Trans. Inf.
    Theory, 1997).

The block sizes (:data:`FIRST_BLOCK` and the cell budgets) are shared with
the planner.
"""

from __future__ import annotations

import math
from fractions import Fraction
from typing import Dict, List, Optional, Tuple

import gmpy2
import numpy as np
from flint import fmpz_poly

from ..core import series
from ..core.errors import TooLarge
from ..core.model import UrnModel
from .counting import count_microstates

__all__ = [
    "BALL_CELLS",
    "BLOCK_CELLS",
    "FIRST_BLOCK",
    "MAX_TABLE_BITS",
    "RejectionSampler",
    "SEQUENTIAL_CELLS",
    "Sampler",
    "SequentialSampler",
    "StarsAndBarsSampler",
    "SubsetSampler",
    "UniformBallsSampler",
]

mpz = gmpy2.mpz

#: Rows of the first block; later blocks double up to a model-dependent cap.
FIRST_BLOCK = 64
#: About how many array cells one block may touch (sets the cap on rows):
#: Floyd's tables and the urn-by-urn sampler gain from long numpy calls, the
#: ball counting of uniform-balls from staying in cache (measured).
BLOCK_CELLS = 1 << 22
BALL_CELLS = 1 << 20
SEQUENTIAL_CELLS = 1 << 24
#: Largest estimated size (bits) of the suffix-count tables of the sequential method.
MAX_TABLE_BITS = 8 * 2**30

_TOP = np.uint64(2**64 - 1)


# ---------------------------------------------------------------------------
# the plan every sampler is
# ---------------------------------------------------------------------------

class Sampler:
    """A model's sampling method with its precomputed data: the base of every exact sampler.

    Parameters
    ----------
    model : UrnModel
        The problem; a subclass precomputes what its method needs.

    Attributes
    ----------
    method : str
        The method's name, as ``sample(..., method=)`` spells it.
    cap : int
        The most rows one block should have (:data:`FIRST_BLOCK` at least).

    Notes
    -----
    ``draw(rng, rows)`` returns an ``int64`` array of *rows* occupancy
    vectors, each drawn from the exact law of the model's rule; the planner
    in :mod:`enumerator.algorithms.sampling` chooses the subclass and sizes
    the blocks.
    """

    method = ""

    def __init__(self, model: UrnModel):
        self.model = model
        self.r = model.urns
        self.cap = FIRST_BLOCK

    def draw(self, rng: np.random.Generator, rows: int) -> np.ndarray:  # pragma: no cover - abstract
        raise NotImplementedError

    def _set_cap(self, cells_per_row: int, budget: int = 0) -> None:
        cap = (budget or BLOCK_CELLS) // max(1, cells_per_row)
        cap = 1 << max(0, cap.bit_length() - 1)  # a power of two
        self.cap = max(FIRST_BLOCK, min(1 << 16, cap))


# ---------------------------------------------------------------------------
# Floyd's algorithm, all rows at once
# ---------------------------------------------------------------------------

def _floyd(rng: np.random.Generator, rows: int, population: int, k: int) -> np.ndarray:
    """``rows`` independent uniform ``k``-subsets of ``range(population)`` (unsorted, int64).

    Floyd's algorithm (Bentley & Floyd, CACM 30(9), 1987): for
    ``j = population - k, ..., population - 1`` draw ``t`` uniform on
    ``0..j`` and take ``t``, or ``j`` if ``t`` is already taken.  Membership
    is a boolean table ``rows x population`` when that is small, else a
    comparison with the earlier picks (``O(k^2)`` per row).
    """
    chosen = np.empty((rows, k), dtype=np.int64)
    if k == 0:
        return chosen
    idx = np.arange(rows)
    use_table = population <= 64 * k or rows * population <= BLOCK_CELLS
    if use_table:
        taken = np.zeros((rows, population), dtype=bool)
    for step, j in enumerate(range(population - k, population)):
        t = rng.integers(0, j + 1, size=rows, dtype=np.int64)
        if use_table:
            hit = taken[idx, t]
        else:
            hit = (chosen[:, :step] == t[:, None]).any(axis=1) if step else np.zeros(rows, dtype=bool)
        v = np.where(hit, j, t)
        if use_table:
            taken[idx, v] = True
        chosen[:, step] = v
    return chosen


def _selection(rng: np.random.Generator, rows: int, population: int, k: int) -> np.ndarray:
    """``rows`` independent uniform ``k``-subsets of ``range(population)`` as a 0/1 int64 matrix.

    Selection sampling (Knuth, *TAOCP* vol. 2, 3rd ed., 1997, §3.4.2,
    Algorithm S): item ``j`` is taken when a uniform integer in
    ``0..population-j-1`` falls below the number still wanted — one exact
    draw per item and row, written column by column.
    """
    out = np.zeros((population, rows), dtype=np.int64)  # item-major: each step writes one row
    wanted = np.full(rows, k, dtype=np.int64)
    for j in range(population):
        take = rng.integers(0, population - j, size=rows, dtype=np.int64) < wanted
        out[j] = take
        wanted -= take
    return out.T


class StarsAndBarsSampler(Sampler):
    """BE without (binding) upper bounds: uniform bars among ``free + r - 1`` slots.

    Parameters
    ----------
    model : UrnModel
        The problem.
    lows : sequence of int
        The lower bound of each urn.
    free : int
        The balls above the lower bounds.

    Notes
    -----
    The ``r - 1`` bars (or the *free* stars, whichever are fewer) are a
    uniform subset of the slots (Feller, vol. 1, §II.5), drawn for all rows
    at once by Floyd's algorithm (Bentley & Floyd, CACM 1987):
    ``O(min(r, free))`` draws per row.

    Examples
    --------
    >>> sampler = StarsAndBarsSampler(UrnModel(balls=5, urns=3, rule="BE"), [0, 0, 0], 5)
    >>> sampler.draw(np.random.default_rng(1), 4).sum(axis=1).tolist()
    [5, 5, 5, 5]
    """

    method = "stars-and-bars"

    def __init__(self, model: UrnModel, lows, free: int):
        super().__init__(model)
        self.lows = np.asarray(lows, dtype=np.int64)
        self.free = free
        self.slots = free + self.r - 1
        self._set_cap(max(self.r, self.slots))

    def draw(self, rng, rows):
        r, free, slots = self.r, self.free, self.slots
        if r == 1:
            out = np.full((rows, 1), free, dtype=np.int64)
        elif r - 1 <= free:
            bars = np.sort(_floyd(rng, rows, slots, r - 1), axis=1)
            edges = np.empty((rows, r + 1), dtype=np.int64)
            edges[:, 0] = -1
            edges[:, 1:r] = bars
            edges[:, r] = slots
            out = np.diff(edges, axis=1) - 1
        else:
            stars = np.sort(_floyd(rng, rows, slots, free), axis=1)
            urn = stars - np.arange(free, dtype=np.int64)  # bars before each star
            urn += (np.arange(rows, dtype=np.int64) * r)[:, None]
            out = np.bincount(urn.ravel(), minlength=rows * r).reshape(rows, r).astype(np.int64)
        return out + self.lows


class SubsetSampler(Sampler):
    """Every urn holds its lower bound or one more: a uniform subset of the free urns.

    Parameters
    ----------
    model : UrnModel
        The problem.
    lows : sequence of int
        The lower bound of each urn.
    spans : sequence of int
        The room of each urn above its lower bound (0 or 1).
    free : int
        The balls above the lower bounds: the size of the subset.

    Notes
    -----
    By Floyd's algorithm for sparse subsets (Bentley & Floyd, CACM 1987) or
    selection sampling for dense ones (Knuth, *TAOCP* vol. 2, 3rd ed.,
    1997, §3.4.2, Algorithm S), taking the complement when it is smaller.

    Examples
    --------
    >>> fd = UrnModel(balls=2, urns=4, rule="FD")
    >>> SubsetSampler(fd, [0] * 4, [1] * 4, 2).draw(np.random.default_rng(1), 3).sum(axis=1).tolist()
    [2, 2, 2]
    """

    method = "subset"

    def __init__(self, model: UrnModel, lows, spans, free: int):
        super().__init__(model)
        self.lows = np.asarray(lows, dtype=np.int64)
        self.open = np.flatnonzero(np.asarray(spans) == 1)
        self.free = free
        self._set_cap(self.r + len(self.open))

    def draw(self, rng, rows):
        out = np.tile(self.lows, (rows, 1))
        m = len(self.open)
        pick, complement = (self.free, False) if 2 * self.free <= m else (m - self.free, True)
        if m <= 8 * pick:
            # Dense subsets: one cheap column step per urn beats Floyd's scattered lookups.
            extra = _selection(rng, rows, m, pick)
        else:
            chosen = _floyd(rng, rows, m, pick)
            extra = np.zeros((rows, m), dtype=np.int64)
            if pick:
                extra[np.arange(rows)[:, None], chosen] = 1
        if complement:
            extra = 1 - extra
        out[:, self.open] += extra
        return out


# ---------------------------------------------------------------------------
# MB without bounds
# ---------------------------------------------------------------------------

class UniformBallsSampler(Sampler):
    """MB without bounds: each ball uniform among the ``r`` urns, several balls per 32-bit draw.

    Parameters
    ----------
    model : UrnModel
        The problem (no binding bounds, no weights).

    Notes
    -----
    A uniform integer below ``r^per`` holds ``per`` base-``r`` digits, one
    urn per ball; the occupancies are one ``numpy.bincount``: ``O(n)`` per
    row.

    Examples
    --------
    >>> UniformBallsSampler(UrnModel(balls=7, urns=3)).draw(np.random.default_rng(1), 2).sum(axis=1).tolist()
    [7, 7]
    """

    method = "uniform-balls"

    def __init__(self, model: UrnModel):
        super().__init__(model)
        n, r = model.balls, model.urns
        per = 1
        while r > 1 and r ** (per + 1) < 2**32:
            per += 1
        self.per = per  # base-r digits in one uniform draw below r^per
        self.words = -(-n // per) if n else 0
        self._set_cap(max(n, r), BALL_CELLS)

    def draw(self, rng, rows):
        n, r = self.model.balls, self.r
        if r == 1 or n == 0:
            return np.full((rows, r), n, dtype=np.int64)
        high = r**self.per
        dtype = np.uint32 if high <= 2**32 else np.uint64
        values = rng.integers(0, high, size=(rows, self.words), dtype=dtype)
        # Flat bin of each ball: urn + r * row, built in place in the narrowest type.
        index_type = np.uint32 if dtype == np.uint32 and rows * r < 2**32 else np.int64
        index = np.empty((rows, self.per, self.words), dtype=index_type)
        offsets = (np.arange(rows, dtype=index_type) * index_type(r))[:, None]
        base = dtype(r)
        for d in range(self.per):
            quotient = values // base
            np.subtract(values, quotient * base, out=index[:, d, :], casting="unsafe")
            index[:, d, :] += offsets
            values = quotient
        balls = index.reshape(rows, self.per * self.words)[:, :n]
        return np.bincount(balls.ravel(), minlength=rows * r).reshape(rows, r)


# ---------------------------------------------------------------------------
# rejection from an unbounded proposal
# ---------------------------------------------------------------------------

class RejectionSampler(Sampler):
    """Draw from an unbounded proposal and keep the rows inside the bounds.

    Parameters
    ----------
    model : UrnModel
        The problem, with bounds.
    proposal : Sampler
        A sampler of the same balls and urns with looser bounds (MB: none;
        BE: the lower bounds only).
    share : Fraction
        The exact share of the proposal's draws that fall inside the bounds
        (sizes the batches only).

    Notes
    -----
    Exact, since the proposal is uniform (BE) or multinomial (MB) on a
    superset (von Neumann's rejection method; Knuth, *TAOCP* vol. 2, 3rd
    ed., 1997, §3.4.1): ``1 / share`` proposals per row on average.
    """

    method = "rejection"

    def __init__(self, model: UrnModel, proposal: Sampler, share: Fraction):
        super().__init__(model)
        self.proposal = proposal
        self.share = share
        bounds = model.effective_bounds()
        self.low = np.array([a for a, _ in bounds], dtype=np.int64)
        self.high = np.array([b for _, b in bounds], dtype=np.int64)
        self.cap = proposal.cap

    def draw(self, rng, rows):
        kept = []
        have = 0
        ratio = float(1 / self.share)  # sizes the proposal batches only; the law stays exact
        while have < rows:
            batch = int((rows - have) * ratio * 1.1) + 16
            batch = min(batch, 4 * self.cap)
            proposed = self.proposal.draw(rng, batch)
            ok = np.all((proposed >= self.low) & (proposed <= self.high), axis=1)
            accepted = proposed[ok]
            kept.append(accepted)
            have += len(accepted)
        return np.concatenate(kept)[:rows]


# ---------------------------------------------------------------------------
# sequential: urn by urn with exact suffix counts
# ---------------------------------------------------------------------------

class _Node:
    """One node of the balanced split of urns ``lo..hi-1`` (a leaf when ``hi == lo + 1``)."""

    __slots__ = ("lo", "hi", "key", "left", "right")

    def __init__(self, lo: int, hi: int, key):
        self.lo, self.hi, self.key = lo, hi, key
        self.left: Optional[_Node] = None
        self.right: Optional[_Node] = None


class SequentialSampler(Sampler):
    r"""Recursive halving of the urns with exact integer weights and 64-bit thresholds.

    Parameters
    ----------
    model : UrnModel
        The problem, any bounds, BE or MB.

    Raises
    ------
    TooLarge
        When the count tables would exceed :data:`MAX_TABLE_BITS`.

    The urns are split into halves, recursively (a balanced binary tree).
    ``S_v(m)`` counts the ways (BE: vectors; MB: assignments of ``m``
    labelled balls) to put ``m`` balls in the urns of node ``v``: the
    product of its urns' generating functions, built up the tree (ordinary
    windows for BE; exponential ones held as ``n!`` times the series, with
    :func:`enumerator.series.scaled_product`'s exact division, for MB).
    Nodes with the same bounds share their counts and tables, so uniform
    bounds need ``O(log r)`` products.  With ``m`` balls at a node, the
    left half receives ``j`` with weight ``S_L(j) S_R(m - j)`` (BE) or
    ``C(m, j) S_L(j) S_R(m - j)`` (MB), out of ``S_v(m)`` — the conditional
    law of the exact distribution, so drawing down the tree is exact.

    Only the bulk of each weight row is summed: the weights are log-concave
    in ``j`` (products and convolutions of log-concave sequences without
    internal zeros stay log-concave: Hoggar, *Chromatic polynomials and
    logarithmic concavity*, J. Comb. Theory B 16, 1974), so a geometric
    bound shows each omitted tail below ``S_v(m) / 2^66``.  The thresholds
    then equal ``floor(2^64 F_j / F)`` up to one unit, and any word within
    one unit of a threshold is refined exactly from the full row.
    """

    method = "sequential"

    def __init__(self, model: UrnModel):
        super().__init__(model)
        bounds = model.effective_bounds()
        self.bounds = bounds
        self.n = model.balls
        self.free = self.n - sum(a for a, _ in bounds)
        self.low_total = sum(a for a, _ in bounds)
        self.high_total = sum(b for _, b in bounds)
        self.mb = model.rule.distinguishable  # counts weighted by multinomials
        self._check_size()
        self.scale = int(gmpy2.fac(self.n)) if self.mb else 1
        self.info: Dict[tuple, dict] = {}  # key -> {"low", "high", "counts", "poly"}
        self.preorder: List[_Node] = []
        self.root = self._build(0, self.r)
        self.tables: Dict[tuple, dict] = {}
        self._set_cap(4 * self.r, SEQUENTIAL_CELLS)

    def _check_size(self) -> None:
        bits = count_microstates(self.model).bit_length()
        estimate = 2 * self.r * (self.free + 1) * max(bits, 1)
        if estimate > MAX_TABLE_BITS:
            raise TooLarge(
                f"exact sampling of {self.model} needs count tables of about "
                f"{estimate // 8 // 2**20:,} MiB; use fewer balls or urns, or looser bounds"
            )

    # -- the tree and its counts -------------------------------------------
    def _build(self, lo: int, hi: int) -> _Node:
        key = tuple(self.bounds[lo:hi])
        node = _Node(lo, hi, key)
        self.preorder.append(node)
        if hi - lo > 1:
            mid = (lo + hi) // 2
            node.left = self._build(lo, mid)
            node.right = self._build(mid, hi)
        self._counts(node)
        return node

    def _counts(self, node: _Node) -> dict:
        """``S_node(low + t)`` for ``t = 0..top`` (memoised by the node's bounds)."""
        info = self.info.get(node.key)
        if info is not None:
            return info
        free = self.free
        low = sum(a for a, _ in node.key)
        high = min(sum(b for _, b in node.key), low + free)
        top = high - low
        if node.left is None:
            a, _ = node.key[0]
            if self.mb:
                fac = gmpy2.fac
                poly = fmpz_poly([int(self.scale // fac(a + t)) for t in range(top + 1)])
            else:
                poly = series.window(0, top)
            counts = [1] * (top + 1)  # one way to put m balls in one urn (either rule)
        else:
            left, right = self.info[node.left.key], self.info[node.right.key]
            poly = left["poly"].mul_low(right["poly"], top + 1)
            if self.mb:
                poly = poly // self.scale
                fac = gmpy2.fac
                counts = []
                m_fac = fac(low)
                for t in range(top + 1):
                    if t:
                        m_fac *= low + t
                    c = series.coefficient(poly, t)
                    counts.append(int(gmpy2.divexact(m_fac * c, self.scale)) if c else 0)
            else:
                counts = series.coefficients(poly, top)
        info = {"low": low, "high": high, "counts": counts, "poly": poly}
        self.info[node.key] = info
        return info

    # -- one split: weights, the bulk, thresholds --------------------------
    def _split(self, node: _Node, m: int):
        """``(j_lo, j_hi, weight, total)`` for *m* balls at *node*: the left half's share."""
        left, right = self.info[node.left.key], self.info[node.right.key]
        j_lo = max(left["low"], m - right["high"])
        j_hi = min(left["high"], m - right["low"])
        cl, cr = left["counts"], right["counts"]
        a_l, a_r = left["low"], right["low"]
        total = self.info[node.key]["counts"][m - self.info[node.key]["low"]]
        if self.mb:
            def weight(j):
                return math.comb(m, j) * cl[j - a_l] * cr[m - j - a_r]
        else:
            def weight(j):
                return cl[j - a_l] * cr[m - j - a_r]
        return j_lo, j_hi, weight, total

    def _row(self, node: _Node, m: int) -> Tuple[int, np.ndarray]:
        """``(j_first, thresholds)`` from the bulk of the weights, as described in the class docstring."""
        j_lo, j_hi, weight, total = self._split(node, m)
        if j_lo == j_hi:
            return j_lo, np.zeros(0, dtype=np.uint64)
        # The mode, by bisection on w(j+1) >= w(j) (log-concave, hence unimodal).
        a, b = j_lo, j_hi
        while a < b:
            mid = (a + b) // 2
            if weight(mid + 1) >= weight(mid):
                a = mid + 1
            else:
                b = mid
        mode = a
        tiny = total  # a tail sum s is negligible when s * 2^66 < total
        up = [weight(mode)]
        j = mode
        while j < j_hi:
            nxt = weight(j + 1)
            here = up[-1]
            if nxt < here and (here * nxt) << 66 < tiny * (here - nxt):
                break
            up.append(nxt)
            j += 1
        down = []
        j = mode
        here = up[0]
        while j > j_lo:
            prev = weight(j - 1)
            if prev < here and (here * prev) << 66 < tiny * (here - prev):
                break
            down.append(prev)
            here = prev
            j -= 1
        core = down[::-1] + up
        first = mode - len(down)
        limit = (1 << 64) - 1
        values: List[int] = []
        cumulative = 0
        for w in core[:-1]:
            cumulative += w
            t = (cumulative << 64) // total
            if t >= limit:
                break
            values.append(t)
        skip = 0
        while skip < len(values) and values[skip] == 0:
            skip += 1
        return first + skip, np.array(values[skip:], dtype=np.uint64)

    def _exact_bucket(self, rng, node: _Node, m: int, word: int) -> int:
        """The share of ``U = (word + V) / 2^64`` from the full row, drawing more bits of ``V`` as needed."""
        j_lo, j_hi, weight, total = self._split(node, m)
        cumulative = [0]
        for j in range(j_lo, j_hi + 1):
            cumulative.append(cumulative[-1] + weight(j))
        numerator, bits = word, 64
        while True:
            low, high = numerator * total, (numerator + 1) * total  # U * total in [low, high) / 2^bits
            for index in range(len(cumulative) - 1):
                if (cumulative[index] << bits) <= low and high <= (cumulative[index + 1] << bits):
                    return j_lo + index
            extra = int(rng.integers(0, 2**64 - 1, dtype=np.uint64, endpoint=True))
            numerator = (numerator << 64) | extra
            bits += 64

    def _table(self, node: _Node) -> dict:
        table = self.tables.get(node.key)
        if table is None:
            info = self.info[node.key]
            m_lo = max(info["low"], self.n - (self.high_total - sum(b for _, b in node.key)))
            m_hi = min(info["high"], self.n - (self.low_total - info["low"]))
            count = max(0, m_hi - m_lo + 1)
            table = {
                "m_lo": m_lo,
                "values": np.full((count, 1), _TOP, dtype=np.uint64),
                "first": np.zeros(count, dtype=np.int64),
                "done": np.zeros(count, dtype=bool),
            }
            self.tables[node.key] = table
        return table

    def _fill(self, table: dict, node: _Node, needed) -> None:
        rows = [(m, *self._row(node, m)) for m in needed]
        need = max(len(t) for _, _, t in rows)
        values = table["values"]
        if need > values.shape[1]:
            wider = np.full((values.shape[0], need), _TOP, dtype=np.uint64)
            wider[:, : values.shape[1]] = values
            table["values"] = values = wider
        for m, first, thresholds in rows:
            at = m - table["m_lo"]
            values[at, : len(thresholds)] = thresholds
            table["first"][at] = first
            table["done"][at] = True

    # -- drawing -----------------------------------------------------------
    def _share(self, rng, node: _Node, balls: np.ndarray) -> np.ndarray:
        """The left half's share of *balls* at *node*, for every row."""
        table = self._table(node)
        position = balls - table["m_lo"]
        missing = ~table["done"][position]
        if missing.any():
            self._fill(table, node, np.unique(balls[missing]).tolist())
        values = table["values"]
        width = values.shape[1]
        rows = len(balls)
        words = rng.integers(0, 2**64 - 1, size=rows, dtype=np.uint64, endpoint=True)
        flat = values.reshape(-1)
        base = position * width
        count = np.zeros(rows, dtype=np.int64)
        step = 1 << (width.bit_length() - 1)
        while step:  # count = #{j : threshold_j < word}, by binary lifting (rows are sorted)
            probe = count + step
            less = (probe <= width) & (flat[base + np.minimum(probe, width) - 1] < words)
            count += step * less
            step >>= 1
        share = table["first"][position] + count
        # Thresholds are exact to one unit: a word within one unit of one is refined exactly.
        above = flat[base + np.minimum(count, width - 1)]
        below = flat[base + np.maximum(count - 1, 0)]
        tie = (words <= 1) | (words == _TOP) | ((count < width) & (above == words))
        tie |= (count > 0) & (below == words - np.uint64(1))
        for row in np.flatnonzero(tie).tolist():
            share[row] = self._exact_bucket(rng, node, int(balls[row]), int(words[row]))
        return share

    def draw(self, rng, rows):
        out = np.empty((rows, self.r), dtype=np.int64)
        balls = {id(self.root): np.full(rows, self.n, dtype=np.int64)}
        for node in self.preorder:
            here = balls.pop(id(node))
            if node.left is None:
                out[:, node.lo] = here
                continue
            share = self._share(rng, node, here)
            balls[id(node.left)] = share
            balls[id(node.right)] = here - share
        return out
