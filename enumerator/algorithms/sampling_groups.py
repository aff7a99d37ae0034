r"""Exact sampling by urn groups: weights, any number of urns, sparse draws.

One draw is written sparsely, as the occupied urns with their counts, so a
model of ``2**64`` urns costs nothing per urn.  The law is the rule's, with
weights (``model.groups``): MB — each ball independently in urn ``i`` with
probability ``w_i / W``, conditioned on the bounds, so ``P(k) ∝ n!/prod k_i!
prod w_i^{k_i}``; BE/FD — ``P(k) ∝ prod w_i^{k_i}`` over the admissible
vectors.

The method (sequential sampling from exact counts, the counting-to-sampling
reduction of Nijenhuis & Wilf, *Combinatorial Algorithms*, 2nd ed., 1978,
ch. 13; Feller vol. 1 §II.5 for stars and bars):

0. **MB without a biting bound** needs no counts: each of the ``n`` balls
   picks its group by exact integer thresholds on ``c_g W_g`` (a uniform
   integer below ``W = sum c_g W_g``), then a uniform urn of the group.
1. **Between groups.**  Suffix rows ``R_g(m)`` (the weighted ways for the
   groups ``g, g+1, ...`` to hold ``m`` balls, see
   :mod:`enumerator.algorithms.group_rows`) give the law of the balls ``j``
   of group ``g`` given ``m`` left: weight ``S_g(j) R_{g+1}(m-j)`` (BE/FD) or
   ``C(m, j) S_g(j) R_{g+1}(m-j)`` (MB), out of ``R_g(m)``.  Rational weights
   are scaled to integers first, so every choice is an exact integer
   threshold: a uniform integer below the total (whole 64-bit words from
   NumPy's PCG64 with rejection, :class:`RandomWords` — no floating point) against the running
   sums.
2. **Inside a group** the urns are interchangeable (equal weight and
   bounds), so the weight cancels:

   * BE without a biting upper bound: a uniform ``j``-multiset of the ``c``
     urns, as ``j`` stars among ``c + j - 1`` slots chosen by Floyd's
     algorithm (Bentley & Floyd, *A sample of brilliance*, CACM 30(9), 1987);
   * BE/FD with room for one ball: a uniform ``j``-subset, by Floyd;
   * MB without a biting bound: each ball a uniform urn;
   * otherwise recursive halving of the group with exact rows of the halves
     (at most ``2 log2 c`` distinct sizes), descending only into halves that
     receive balls.

Cost per draw: ``O(G n)`` big-integer steps between groups plus ``O(n)``
(direct cases) or ``O(n^2 log c)`` (halving) inside; set-up: the rows of
:func:`enumerator.algorithms.group_rows.rows_cost`.  Nothing grows with the
number of urns ``r``.
"""

from __future__ import annotations

import bisect
import math
from typing import Dict, List, Optional, Tuple

import gmpy2
import numpy as np

from ..core.errors import InvalidParameters
from ..core.limits import STEPS_PER_SECOND, Cost, bigint_bytes, check
from .group_rows import group_row, integer_weights, row_bits, rows_cost, suffix_rows

__all__ = ["GroupSampler", "RandomWords"]

mpz = gmpy2.mpz

Sparse = Tuple[Tuple[int, int], ...]


class RandomWords:
    """Uniform 64-bit words from a NumPy generator, drawn 512 at a time, and exact bounded integers from them.

    :meth:`below` is exact by rejection (Knuth, *TAOCP* vol. 2, 3rd ed.,
    1997, §3.4.1): below ``2**64`` a word is kept when it is under the
    largest multiple of the bound and reduced modulo it; above, whole words
    are joined, masked to the bound's bit length and kept when under it.
    Buffering makes each draw a list pop instead of a NumPy call.
    """

    __slots__ = ("rng", "buffer")

    def __init__(self, rng: np.random.Generator):
        self.rng = rng
        self.buffer: List[int] = []

    def word(self) -> int:
        if not self.buffer:
            self.buffer = self.rng.integers(0, 2**64 - 1, size=512, endpoint=True, dtype=np.uint64).tolist()
        return self.buffer.pop()

    def below(self, bound: int) -> int:
        """A uniform integer in ``[0, bound)``, exactly."""
        if bound <= 0:
            raise ValueError("bound must be positive")
        if bound <= 2**64:
            limit = 2**64 - (2**64 % bound)
            while True:
                w = self.word()
                if w < limit:
                    return w % bound
        bits = (bound - 1).bit_length()
        words = -(-bits // 64)
        mask = (1 << bits) - 1
        while True:
            value = 0
            for _ in range(words):
                value = (value << 64) | self.word()
            value &= mask
            if value < bound:
                return value


def _pick_cumulative(rng, cumulative: List) -> int:
    """The index ``i`` with ``C_{i-1} <= U < C_i`` for ``U`` uniform below the last running sum ``C``."""
    u = rng.below(int(cumulative[-1]))
    return bisect.bisect_right(cumulative, u)


#: Most bytes of running sums the sampler keeps between draws; past it,
#: rows are summed afresh per draw.
MEMO_BYTES = 256 * 2**20


def _floyd(rng, population: int, k: int) -> List[int]:
    """A uniform ``k``-subset of ``range(population)``, sorted (Floyd's algorithm; any size of *population*)."""
    chosen = set()
    for j in range(population - k, population):
        t = rng.below(j + 1)
        chosen.add(j if t in chosen else t)
    return sorted(chosen)


class GroupSampler:
    """Exact sparse draws for a model, by its urn groups (see the module docstring).

    Parameters
    ----------
    model : UrnModel
        Any model that admits a configuration.

    Raises
    ------
    InvalidParameters
        When the model admits no configuration.
    TooLarge
        When the rows would exceed the active limits (:func:`enumerator.core.limits.check`).
    """

    def __init__(self, model):
        self.model = model
        self.n = n = model.balls
        self.kind = "exponential" if model.rule.distinguishable else "ordinary"
        eff = model.effective_groups()
        ints, _ = integer_weights([w for *_, w in eff])
        self.groups = []
        first = 1
        for (count, lower, upper, _), w in zip(eff, ints):
            self.groups.append((count, lower, upper, w, first))
            first += count
        spec = [(c, a, b, w) for c, a, b, w, _ in self.groups]
        self.empty = any(b < a for _, a, b, _ in spec) or sum(c * a for c, a, _, _ in spec) > n
        if self.empty:
            raise InvalidParameters(
                f"the model of {model} admits no configuration (its bounds cannot hold {n} balls), "
                "so there is nothing to sample; change the balls or the bounds"
            )
        self._halves: Dict[Tuple[int, int, int, int], List] = {}
        self._cumulative: Dict[Tuple[int, int], Tuple[int, List]] = {}
        self._kept = 0
        # MB without a biting bound: each ball independently in urn i with
        # probability w_i / W -- a group by exact integer thresholds on
        # c_g W_g, then a uniform urn of the group; no rows needed.
        self.free_balls = self.kind == "exponential" and all(a == 0 and b >= n for _, a, b, _ in spec)
        if self.free_balls:
            running, self.thresholds = 0, []
            for c, _, _, w in spec:
                running += c * w
                self.thresholds.append(running)
            self.rows = self.own = None
            return
        check(rows_cost(self.kind, spec, n), "the count rows of the group sampler",
              advice="use fewer balls or groups")
        self.rows = suffix_rows(self.kind, spec, n)
        if self.rows[0][n] == 0:
            raise InvalidParameters(
                f"the model of {model} admits no configuration (its bounds cannot hold {n} balls), "
                "so there is nothing to sample; change the balls or the bounds"
            )
        self.own = [group_row(self.kind, c, a, b, n, w) for c, a, b, w in spec] if len(spec) > 1 else None

    # -- cost --------------------------------------------------------------
    def draw_cost(self, size: int) -> Cost:
        """Seconds for *size* draws, and the memory of the running sums kept between them.

        Per draw: a Python overhead of about 100 steps, about 20 per ball and
        per group, and in groups whose capacity bites ``log2 c`` halvings per
        ball.  Once: the running sums, ``O(n)`` big products per ``(group,
        balls)`` pair met (``O(G n^2)`` at most, and ``O(n^2 log c)`` for
        the halvings).
        """
        n = self.n
        if self.free_balls:
            return Cost(seconds=size * (100 + 20 * n) / STEPS_PER_SECOND, memory=64 * (n + len(self.groups)))
        bits = row_bits(self.kind, self.model.urns, n)
        scale = max(1, bits // 640)
        once = len(self.groups) * (n + 1) * (n + 1) * scale
        per_draw = 100 + 20 * (n + len(self.groups))
        for c, a, b, _, _ in self.groups:
            if not self._direct(c, a, b, n):
                once += (n + 1) * (n + 1) * max(1, c.bit_length()) * scale
                per_draw += 20 * n * max(1, c.bit_length())
        return Cost(seconds=(once + size * per_draw) / STEPS_PER_SECOND,
                    memory=min(MEMO_BYTES, (once // scale) * bigint_bytes(bits)) + bigint_bytes(bits) * 4 * (n + 1))

    def _direct(self, c, a, b, j) -> bool:
        if a:
            return False
        if self.kind == "exponential":
            return b >= j
        return b >= j or b == 1

    # -- one draw ------------------------------------------------------------
    def draw(self, rng) -> Sparse:
        """One configuration as ``((urn, count), ...)``: occupied urns, 1-based, ascending.

        *rng* is a :class:`RandomWords` (pass the same one for successive
        draws) or a NumPy generator (wrapped for this draw alone).
        """
        if isinstance(rng, np.random.Generator):
            rng = RandomWords(rng)
        if self.free_balls:
            return self._draw_balls(rng)
        m = self.n
        out: List[Tuple[int, int]] = []
        last = len(self.groups) - 1
        for g, (c, a, b, _, first) in enumerate(self.groups):
            if g == last:
                j = m
            else:
                lo, cumulative = self._split(g, m)
                j = lo + _pick_cumulative(rng, cumulative)
            m -= j
            if j or a:
                out.extend((first + i, k) for i, k in self._inside(rng, c, a, b, j))
        return tuple(out)

    def _draw_balls(self, words: RandomWords) -> Sparse:
        """MB without biting bounds: ``n`` independent balls, each in urn ``i`` with probability ``w_i / W``.

        Vectorised (NumPy's exact bounded integers, Lemire's method) while the
        thresholds and urn numbers fit in 62 bits; else one exact draw per
        ball from :class:`RandomWords`.
        """
        n, thresholds = self.n, self.thresholds
        if n == 0:
            return ()
        total = thresholds[-1]
        if total < 2**62 and self.model.urns < 2**62:
            rng = words.rng
            u = rng.integers(0, total, size=n, dtype=np.int64)
            g = np.searchsorted(np.array(thresholds, dtype=np.int64), u, side="right")
            counts = np.array([c for c, *_ in self.groups], dtype=np.int64)
            firsts = np.array([f for *_, f in self.groups], dtype=np.int64)
            urns = firsts[g] + rng.integers(0, counts[g], dtype=np.int64)
            values, repeats = np.unique(urns, return_counts=True)
            return tuple(zip(values.tolist(), repeats.tolist()))
        tally: Dict[int, int] = {}
        for _ in range(n):
            g = bisect.bisect_right(thresholds, words.below(total))
            c, *_, first = self.groups[g]
            urn = first + words.below(c)
            tally[urn] = tally.get(urn, 0) + 1
        return tuple(sorted(tally.items()))

    def _split(self, g: int, m: int) -> Tuple[int, List]:
        """``(lo, running sums)`` of the law of group *g*'s balls given *m* left (kept while they fit)."""
        key = (g, m)
        got = self._cumulative.get(key)
        if got is not None:
            return got
        c, a, b, _, _ = self.groups[g]
        own, rest = self.own[g], self.rows[g + 1]
        lo = c * a
        cumulative, running = [], 0
        for t in range(lo, min(m, c * b) + 1):
            w = own[t] * rest[m - t]
            if self.kind == "exponential" and w:
                w *= math.comb(m, t)
            running += w
            cumulative.append(running)
        # the last running sum is R_g(m) (a labelled convolution for MB)
        got = (lo, cumulative)
        self._keep(key, got)
        return got

    def _keep(self, key, got) -> None:
        cumulative = got[1]
        size = len(cumulative) * bigint_bytes(int(cumulative[-1]).bit_length() if cumulative else 0)
        if self._kept + size <= MEMO_BYTES:
            self._cumulative[key] = got
            self._kept += size

    def _halves_split(self, c: int, a: int, b: int, j: int) -> Tuple[int, List]:
        """``(lo, running sums)`` of the left half's balls when ``c`` urns share ``j`` (kept while they fit)."""
        key = (-c, j, a, b)  # negative: never a group's (g, m) key
        got = self._cumulative.get(key)
        if got is not None:
            return got
        top = self.n
        c1 = c // 2
        c2 = c - c1
        left, right = self._half_row(c1, a, b, top), self._half_row(c2, a, b, top)
        lo = max(c1 * a, j - c2 * b)
        hi = min(c1 * b, j - c2 * a)
        cumulative, running = [], 0
        for t in range(lo, hi + 1):
            w = left[t] * right[j - t]
            if self.kind == "exponential" and w:
                w *= math.comb(j, t)
            running += w
            cumulative.append(running)
        got = (lo, cumulative)
        self._keep(key, got)
        return got

    def _inside(self, rng, c: int, a: int, b: int, j: int) -> List[Tuple[int, int]]:
        """``j`` balls among ``c`` interchangeable urns with bounds ``a..b``: 0-based ``(urn, count)`` pairs."""
        if j == 0 and a == 0:
            return []
        if c == 1:
            return [(0, j)]
        if not a:
            if self.kind == "exponential" and b >= j:
                counts: Dict[int, int] = {}
                for _ in range(j):
                    urn = rng.below(c)
                    counts[urn] = counts.get(urn, 0) + 1
                return sorted(counts.items())
            if self.kind == "ordinary" and b >= j:
                stars = _floyd(rng, c + j - 1, j)
                counts = {}
                for i, s in enumerate(stars):
                    counts[s - i] = counts.get(s - i, 0) + 1
                return sorted(counts.items())
            if self.kind == "ordinary" and b == 1:
                return [(u, 1) for u in _floyd(rng, c, j)]
        out: List[Tuple[int, int]] = []
        self._halve(rng, 0, c, a, b, j, out)
        return out

    def _half_row(self, c: int, a: int, b: int, top: int) -> List:
        key = (c, a, b, top)
        row = self._halves.get(key)
        if row is None:
            row = self._halves[key] = group_row(self.kind, c, a, b, top)
        return row

    def _halve(self, rng, offset: int, c: int, a: int, b: int, j: int, out: list) -> None:
        """Split ``j`` balls between the halves of ``c`` urns with the exact conditional law, down to single urns.

        Iterative (an explicit stack, left halves first), so a group of
        ``10**4000`` urns descends its 13,000 levels without recursion.
        """
        stack = [(offset, c, j)]
        while stack:
            offset, c, j = stack.pop()
            if j == 0 and a == 0:
                continue
            if c == 1:
                out.append((offset, j))
                continue
            c1 = c // 2
            c2 = c - c1
            lo, cumulative = self._halves_split(c, a, b, j)
            t = lo + _pick_cumulative(rng, cumulative)
            stack.append((offset + c1, c2, j - t))
            stack.append((offset, c1, t))

    # -- dense -------------------------------------------------------------
    def draw_dense(self, rng: np.random.Generator, rows: int, r: Optional[int] = None) -> np.ndarray:
        """*rows* draws as an int64 array of shape ``(rows, r)`` (small ``r`` only: the caller checks)."""
        r = self.model.urns if r is None else r
        out = np.zeros((rows, r), dtype=np.int64)
        words = RandomWords(rng)
        for i in range(rows):
            for urn, k in self.draw(words):
                out[i, urn - 1] = k
        return out
