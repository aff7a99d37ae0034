r"""Exact random configurations under each rule's law.

BE and FD draw uniformly from the admissible occupancy vectors; MB draws a
vector with probability ``n! / (k_1! ... k_r!)`` over the microstates (each
ball independently uniform among the urns, conditioned on the bounds).  The
laws are exact: every random choice is a uniform integer from NumPy's
``Generator.integers`` (Lemire's unbiased bounded integers, no floating point),
or a comparison of a uniform random real, revealed 64 bits at a time, with
exact integer thresholds.

Methods, chosen per model by :func:`sampling_method`:

``stars-and-bars``
    BE without upper bounds (after removing the lower bounds): a uniform
    ``(r-1)``-subset of ``n + r - 1`` positions are the bars (Feller, vol. 1,
    §II.5); the subset comes from Floyd's algorithm (Bentley & Floyd,
    *A sample of brilliance*, CACM 1987), run for all rows at once.
``subset``
    FD, and BE where no urn has room for more than one extra ball: a uniform
    subset of the free urns, by Floyd's algorithm.
``uniform-balls``
    MB without bounds: each ball uniform among the urns (several balls per
    32-bit draw), occupancies by ``numpy.bincount``.
``rejection``
    Bounded models whose admissible share of the unbounded proposal above
    (computed exactly) is at least :data:`REJECTION_MIN`: draw from the
    proposal and keep the vectors inside the bounds — exact, since the
    proposal is uniform (BE) or multinomial (MB) on a superset.
``sequential``
    Everything else: urn by urn, ``k_i`` is drawn with the exact integer
    weights ``S_{i+1}(m - k)`` (BE) or ``C(m, k) S_{i+1}(m - k)`` (MB), where
    ``S_{i+1}(m)`` counts the ways to place ``m`` balls in the remaining urns
    (suffix generating-function products).  The inverse distribution
    function is evaluated with 64-bit thresholds ``floor(2^64 F_j / F)``;
    only when the first 64 random bits equal a threshold (probability about
    ``K 2^-64``) more bits are drawn and compared exactly (the interval
    method of Han & Hoshi, *Interval algorithm for random number
    generation*, IEEE Trans. Inf. Theory, 1997).

Reproducibility: the same model, seed and size give the same rows, and
``sample(m, 10, seed)`` is the first 10 rows of ``sample(m, 1000, seed)``:
rows come in blocks of fixed sizes, block ``j`` from the child ``j`` of
``numpy.random.SeedSequence(seed)`` (PCG64).
"""

from __future__ import annotations

import math
from fractions import Fraction
from typing import Dict, Iterator, List, Optional, Tuple

import gmpy2
import numpy as np
from flint import fmpz_poly

from . import series
from .errors import InvalidParameters, TooLarge
from .model import Occupancy, Rule, as_count

__all__ = [
    "METHODS",
    "REJECTION_MIN",
    "iter_sample_blocks",
    "sample",
    "sample_array",
    "sampling_method",
]

mpz = gmpy2.mpz

#: Use rejection from the unbounded proposal when at least this share of
#: its draws is admissible.
REJECTION_MIN = Fraction(1, 4)
#: A forced rejection sampler refuses when fewer than this share of draws is kept.
REJECTION_FLOOR = Fraction(1, 10**6)
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
# public interface
# ---------------------------------------------------------------------------

#: The method names, in the order :func:`sampling_method` prefers them.
METHODS = ("stars-and-bars", "subset", "uniform-balls", "rejection", "sequential")


def sampling_method(model: Occupancy) -> str:
    """The name of the exact method :func:`sample` uses for *model* (see the module docstring)."""
    return _plan(model).method


def iter_sample_blocks(model: Occupancy, size, seed=None, method: Optional[str] = None) -> Iterator[np.ndarray]:
    """Yield ``size`` random configurations as int64 arrays of shape ``(rows, r)``.

    The laws and methods are described in the module docstring; *seed*
    (a whole number, or ``None`` for fresh operating-system entropy) makes
    the output reproducible.  *method* forces one of :data:`METHODS` where it
    applies (all give the same law; the default picks the fastest).  Raises
    InvalidParameters for a model that admits no configuration.
    """
    size = as_count(size, "size")
    if seed is not None:
        seed = as_count(seed, "seed")
    plan = _plan(model) if method is None else _forced(model, method)
    root = np.random.SeedSequence(seed)
    produced = 0
    index = 0
    rows = FIRST_BLOCK
    while produced < size:
        rng = np.random.Generator(
            np.random.PCG64(np.random.SeedSequence(root.entropy, spawn_key=(index,)))
        )
        block = plan.draw(rng, rows)
        take = min(rows, size - produced)
        yield block[:take]
        produced += take
        index += 1
        rows = min(2 * rows, plan.cap)


def sample_array(model: Occupancy, size, seed=None, method: Optional[str] = None) -> np.ndarray:
    """Return ``size`` random configurations as one int64 array of shape ``(size, r)``.

    >>> sample_array(Occupancy(balls=3, urns=2, rule="BE"), 4, seed=1).shape
    (4, 2)
    """
    blocks = list(iter_sample_blocks(model, size, seed, method))
    if not blocks:
        return np.zeros((0, model.urns), dtype=np.int64)
    return np.concatenate(blocks) if len(blocks) > 1 else blocks[0]


def sample(model: Occupancy, size, seed=None, method: Optional[str] = None) -> List[Tuple[int, ...]]:
    """Return ``size`` random configurations as tuples of ints, exactly from the rule's law.

    BE/FD: uniform over the admissible vectors; MB: probability
    ``n!/(k_1!...k_r!)`` over the microstates.  Same *seed*, same rows.

    >>> rows = sample(Occupancy(balls=2, urns=3, rule="FD"), 3, seed=7)
    >>> all(sum(k) == 2 and max(k) <= 1 for k in rows)
    True
    """
    return [tuple(row) for row in sample_array(model, size, seed, method).tolist()]


# ---------------------------------------------------------------------------
# planning
# ---------------------------------------------------------------------------

class _Plan:
    """A model's sampling method with its precomputed data."""

    method = ""

    def __init__(self, model: Occupancy):
        self.model = model
        self.r = model.urns
        self.cap = FIRST_BLOCK

    def draw(self, rng: np.random.Generator, rows: int) -> np.ndarray:  # pragma: no cover - abstract
        raise NotImplementedError

    def _set_cap(self, cells_per_row: int, budget: int = 0) -> None:
        cap = (budget or BLOCK_CELLS) // max(1, cells_per_row)
        cap = 1 << max(0, cap.bit_length() - 1)  # a power of two
        self.cap = max(FIRST_BLOCK, min(1 << 16, cap))


def _plan(model: Occupancy) -> _Plan:
    memo = model._memo
    plan = memo.get("sampling_plan")
    if plan is not None:
        return plan
    if model.configurations() == 0:
        raise InvalidParameters(
            f"{model!r} admits no configuration (its bounds cannot hold {model.balls} balls), "
            "so there is nothing to sample; change the balls or the bounds"
        )
    plan = _choose(model)
    memo["sampling_plan"] = plan
    return plan


def _forced(model: Occupancy, method: str) -> _Plan:
    """The plan for an explicitly requested *method*, or a clear error if it does not apply."""
    if method not in METHODS:
        raise InvalidParameters(f"method must be one of {', '.join(METHODS)} (got {method!r})")
    _plan(model)  # the emptiness check
    key = f"sampling_plan.{method}"
    plan = model._memo.get(key)
    if plan is not None:
        return plan
    bounds = model.effective_bounds()
    lows = [a for a, _ in bounds]
    free = model.balls - sum(lows)
    spans = [b - a for a, b in bounds]
    mb = model.rule is Rule.MB
    unbounded_mb = all(a == 0 and b >= model.balls for a, b in bounds)
    why = None
    if method == "sequential":
        plan = _Sequential(model)
    elif method == "subset":
        if mb or max(spans) > 1:
            why = "it needs BE or FD urns with room for at most one ball above their minimum"
        else:
            plan = _Subset(model, lows, spans, free)
    elif method == "stars-and-bars":
        if mb or not all(s >= free for s in spans):
            why = "it needs BE without upper bounds"
        else:
            plan = _StarsAndBars(model, lows, free)
    elif method == "uniform-balls":
        if not (mb and unbounded_mb):
            why = "it needs MB without bounds"
        else:
            plan = _UniformBalls(model)
    else:
        if mb:
            proposal = Occupancy(balls=model.balls, urns=model.urns, rule="MB")
            share = Fraction(model.microstates(), proposal.microstates())
            base: _Plan = _UniformBalls(proposal)
        else:
            proposal = Occupancy(balls=model.balls, bounds=[(a, None) for a in lows], rule="BE")
            share = Fraction(model.configurations(), proposal.configurations())
            base = _StarsAndBars(proposal, lows, free)
        if share < REJECTION_FLOOR:
            raise TooLarge(
                f"method 'rejection' would keep only about 1 in {-(-share.denominator // share.numerator):,} "
                f"draws for {model!r}; use the default method (sequential) instead"
            )
        plan = _Rejection(model, base, share)
    if why:
        raise InvalidParameters(f"method {method!r} does not apply to {model!r}: {why}")
    model._memo[key] = plan
    return plan


def _choose(model: Occupancy) -> _Plan:
    bounds = model.effective_bounds()
    lows = [a for a, _ in bounds]
    free = model.balls - sum(lows)
    spans = [b - a for a, b in bounds]
    if model.rule is Rule.MB:
        unbounded = all(a == 0 and b >= model.balls for a, b in bounds)
        if unbounded:
            return _UniformBalls(model)
        proposal = Occupancy(balls=model.balls, urns=model.urns, rule="MB")
        share = Fraction(model.microstates(), proposal.microstates())
        if share >= REJECTION_MIN:
            return _Rejection(model, _UniformBalls(proposal), share)
        return _Sequential(model)
    if max(spans) <= 1:
        return _Subset(model, lows, spans, free)
    if all(s >= free for s in spans):
        return _StarsAndBars(model, lows, free)
    proposal = Occupancy(balls=model.balls, bounds=[(a, None) for a in lows], rule="BE")
    share = Fraction(model.configurations(), proposal.configurations())
    if share >= REJECTION_MIN:
        return _Rejection(model, _StarsAndBars(proposal, lows, free), share)
    return _Sequential(model)


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


class _StarsAndBars(_Plan):
    """BE without (binding) upper bounds: uniform bars among ``free + r - 1`` slots."""

    method = "stars-and-bars"

    def __init__(self, model: Occupancy, lows, free: int):
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


class _Subset(_Plan):
    """Every urn holds its lower bound or one more: a uniform subset of the free urns."""

    method = "subset"

    def __init__(self, model: Occupancy, lows, spans, free: int):
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

class _UniformBalls(_Plan):
    """Each ball uniform among the ``r`` urns; several balls per 32-bit draw."""

    method = "uniform-balls"

    def __init__(self, model: Occupancy):
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

class _Rejection(_Plan):
    """Draw from the unbounded proposal and keep the rows inside the bounds."""

    method = "rejection"

    def __init__(self, model: Occupancy, proposal: _Plan, share: Fraction):
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

class _Sequential(_Plan):
    r"""Urn-by-urn inverse transform with exact integer weights and 64-bit thresholds.

    ``S_i(m)``: the number of ways (BE: vectors; MB: assignments of ``m``
    labelled balls) to fill urns ``i..r-1`` with ``m`` balls, from the
    suffix products of the urns' (exponential) generating functions.
    Given ``m`` balls left at urn ``i``, ``k`` has weight ``S_{i+1}(m-k)``
    (BE) or ``C(m, k) S_{i+1}(m-k)`` (MB) out of ``S_i(m)``.
    """

    method = "sequential"

    def __init__(self, model: Occupancy):
        super().__init__(model)
        bounds = model.effective_bounds()
        self.lows = [a for a, _ in bounds]
        self.highs = [b for _, b in bounds]
        r = self.r
        self.free = model.balls - sum(self.lows)
        # Lower and upper totals of the suffixes i..r-1.
        self.suffix_low = [0] * (r + 1)
        self.suffix_high = [0] * (r + 1)
        for i in range(r - 1, -1, -1):
            self.suffix_low[i] = self.suffix_low[i + 1] + self.lows[i]
            self.suffix_high[i] = self.suffix_high[i + 1] + self.highs[i]
        self.mb = model.rule is Rule.MB
        self._check_size()
        self.tables = self._suffix_tables()
        self.rows: Dict[Tuple[int, int], Tuple[int, np.ndarray]] = {}
        self._set_cap(4 * r, SEQUENTIAL_CELLS)

    def _check_size(self) -> None:
        bits = self.model.microstates().bit_length()
        estimate = self.r * (self.free + 1) * max(bits, 1)
        if estimate > MAX_TABLE_BITS:
            raise TooLarge(
                f"exact sampling of {self.model!r} urn by urn needs suffix tables of about "
                f"{estimate // 8 // 2**20:,} MiB; use fewer balls or urns, or looser bounds"
            )

    def _suffix_tables(self) -> List[List[int]]:
        """``tables[i][t] = S_i(suffix_low[i] + t)`` for ``t = 0..free``."""
        r, free = self.r, self.free
        length = free + 1
        tables: List[List[int]] = [[]] * (r + 1)
        if not self.mb:
            poly = fmpz_poly([1])
            tables[r] = [1]
            for i in range(r - 1, -1, -1):
                span = min(self.highs[i] - self.lows[i], free)
                poly = poly.mul_low(series.window(0, span), length)
                tables[i] = series.coefficients(poly, min(free, self.suffix_high[i] - self.suffix_low[i]))
            return tables
        # MB: suffix EGF products held as n! * Q (series.scaled_product), converted
        # to the counts S_i(L_i + t) = (L_i + t)! * coefficient / n!.
        n = self.model.balls
        fac = gmpy2.fac
        scale = fac(n)
        scaled = fmpz_poly([int(scale)])
        tables[r] = [1]
        for i in range(r - 1, -1, -1):
            a = self.lows[i]
            span = min(self.highs[i] - a, free)
            window = fmpz_poly([int(scale // fac(a + t)) for t in range(span + 1)])
            scaled = scaled.mul_low(window, length) // int(scale)
            top = min(free, self.suffix_high[i] - self.suffix_low[i])
            low = self.suffix_low[i]
            values = []
            m_fac = fac(low)
            for t in range(top + 1):
                if t:
                    m_fac *= low + t
                c = series.coefficient(scaled, t)
                values.append(int(gmpy2.divexact(m_fac * c, scale)) if c else 0)
            tables[i] = values
        return tables

    # -- one row of thresholds --------------------------------------------
    def _weights(self, i: int, m: int) -> Tuple[int, List[int], int]:
        """``(k_lo, weights, total)`` for urn *i* with *m* balls left (exact ints)."""
        a, b = self.lows[i], self.highs[i]
        low_next, high_next = self.suffix_low[i + 1], self.suffix_high[i + 1]
        k_lo = max(a, m - high_next)
        k_hi = min(b, m - low_next)
        nxt = self.tables[i + 1]
        weights = [nxt[m - k - low_next] for k in range(k_lo, k_hi + 1)]
        if self.mb:
            c = math.comb(m, k_lo)
            for idx, k in enumerate(range(k_lo, k_hi + 1)):
                weights[idx] *= c
                c = c * (m - k) // (k + 1)
        # BE: total = sum_k S_{i+1}(m - k); MB: sum_k C(m, k) S_{i+1}(m - k).
        total = self.tables[i][m - self.suffix_low[i]]
        return k_lo, weights, total

    def _row(self, i: int, m: int) -> Tuple[int, np.ndarray]:
        key = (i, m)
        row = self.rows.get(key)
        if row is None:
            k_lo, weights, total = self._weights(i, m)
            thresholds = np.full(max(len(weights) - 1, 0), _TOP, dtype=np.uint64)
            cumulative = 0
            limit = (1 << 64) - 1
            for j in range(len(weights) - 1):
                cumulative += weights[j]
                t = (cumulative << 64) // total
                if t >= limit:
                    break  # this and every later threshold saturate at 2^64 - 1
                thresholds[j] = t
            row = (k_lo, thresholds)
            self.rows[key] = row
        return row

    def _exact_bucket(self, rng, i: int, m: int, word: int) -> int:
        """The bucket of ``U = (word + V) / 2^64`` exactly, drawing more bits of ``V`` as needed."""
        k_lo, weights, total = self._weights(i, m)
        cumulative = [0]
        for w in weights:
            cumulative.append(cumulative[-1] + w)
        numerator, bits = word, 64
        while True:
            low, high = numerator * total, (numerator + 1) * total  # U*total in [low, high) / 2^bits
            for j in range(len(weights)):
                if (cumulative[j] << bits) <= low and high <= (cumulative[j + 1] << bits):
                    return k_lo + j
            extra = int(rng.integers(0, 2**64 - 1, dtype=np.uint64, endpoint=True))
            numerator = (numerator << 64) | extra
            bits += 64

    def draw(self, rng, rows):
        r = self.r
        out = np.empty((rows, r), dtype=np.int64)
        left = np.full(rows, self.model.balls, dtype=np.int64)
        for i in range(r - 1):
            values, inverse = np.unique(left, return_inverse=True)
            inverse = inverse.reshape(-1)
            built = [self._row(i, int(m)) for m in values]
            width = max((len(t) for _, t in built), default=0)
            k_lo = np.array([k for k, _ in built], dtype=np.int64)
            if width == 0:
                k = k_lo[inverse]
            else:
                table = np.full((len(values), width), _TOP, dtype=np.uint64)
                for row_index, (_, t) in enumerate(built):
                    table[row_index, : len(t)] = t
                words = rng.integers(0, 2**64 - 1, size=rows, dtype=np.uint64, endpoint=True)
                # count = #{j : threshold_j < word}, a binary search per row.
                lo = np.zeros(rows, dtype=np.int64)
                hi = np.full(rows, width, dtype=np.int64)
                flat = table.reshape(-1)
                base = inverse * width
                while True:
                    active = lo < hi
                    if not active.any():
                        break
                    mid = (lo + hi) >> 1
                    less = flat[base + np.minimum(mid, width - 1)] < words
                    lo = np.where(active & less, mid + 1, lo)
                    hi = np.where(active & ~less, mid, hi)
                k = k_lo[inverse] + lo
                at = np.minimum(lo, width - 1)
                tie = (lo < width) & (flat[base + at] == words)
                for row_index in np.flatnonzero(tie):
                    k[row_index] = self._exact_bucket(rng, i, int(left[row_index]), int(words[row_index]))
            out[:, i] = k
            left -= k
        out[:, r - 1] = left
        return out
