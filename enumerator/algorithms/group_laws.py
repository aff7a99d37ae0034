r"""The group routes of the laws of statistics: counts by urn groups, for weighted models and any number of urns.

Every function here answers one statistic of :mod:`enumerator.algorithms.laws`
by urn groups (:mod:`enumerator.algorithms.grouped`), never urn by urn, so
its cost grows with ``n``, the number of groups and the size of the answer,
never with ``r``:

* the totals of a list of groups (:func:`_total_of`) and the MB tail of
  the maximum without bounds, ``P(max >= m)`` from the bounded counts of the
  groups capped below ``m``;
* ``max``/``min`` by grouped bounded counts, with the one-term
  inclusion–exclusion for ``2(m+1) > n`` (Riordan, *An Introduction to
  Combinatorial Analysis*, 1958, ch. 5) and, for free MB groups, a plan
  priced before any arithmetic (:func:`_max_plan`): a level recursion with
  one level index per group (:func:`_mb_free_levels`) at a base bound,
  extended to the next bounds from its tails (:func:`_mb_free_extend`),
  where few urns can exceed ``m``; else, bound by bound, the rows of blocks
  of groups (levels, or J. C. P. Miller's recurrence for a power of one urn
  of each group) joined by one dot product (:func:`_blocks_capped`), or a
  grouped count;
* ``urn:I`` by the urn's weight times the other groups' row (binomial under
  MB when the others are free);
* counting statistics by the bivariate generating function of the groups
  with the side of the window that excludes 0 marked (Flajolet & Sedgewick,
  *Analytic Combinatorics*, 2009, §III.2) — at most ``n`` urns hold a ball,
  so the law has at most ``n + 1`` values at any ``r`` — and
  :func:`marked_moments`, their first two binomial moments from
  ``G + G^2`` bounded counts (Feller, vol. 1, ch. IV).

Costs are checked with :func:`~enumerator.core.limits.check` before
computing.
"""

from __future__ import annotations

import math
from fractions import Fraction
from typing import Callable, Dict, Optional

import gmpy2
from flint import fmpz, fmpz_poly

from ..core import limits
from ..core.errors import InvalidParameters
from ..core.limits import Cost, bigint_bytes
from ..core.model import UrnModel
from ..core.workers import active_processes, map_in_processes
from . import grouped
from .extremes import mb_max_estimate, poly_dot
from .group_rows import combine

__all__ = ["marked_moments"]

mpz = gmpy2.mpz
divexact = gmpy2.divexact


def _total_of(groups, model: UrnModel, what: str):
    """The total weight of *groups* (integer weights) for the model's balls and rule."""
    return grouped.total_count(groups, model.rule.distinguishable, model.balls, what)


def _mb_free_tail(groups, n: int, start: int) -> Dict[int, "mpz"]:
    r"""``A_m`` for ``m >= start`` with ``2(m+1) > n``: MB, every group free (``a = 0``, no upper bound).

    At most one urn can exceed ``m``, so inclusion–exclusion has one term:
    ``A_m = W^n - sum_g c_g sum_{s>m} C(n, s) w_g^s (W - w_g)^{n-s}``
    (Feller, vol. 1, ch. IV), one pass of suffix sums per group: ``O(G n)``.
    """
    W = sum(c * w for c, _, _, w in groups)
    total = mpz(W) ** n
    suffix = {m: mpz(0) for m in range(start, n + 1)}
    for c, _, _, w in groups:
        acc = mpz(0)
        rest = W - w
        # term(s) = C(n, s) w^s rest^(n-s), from s = n down
        term = mpz(w) ** n
        for s in range(n, start - 1, -1):
            suffix[s] += c * acc  # urns above s: loads s+1..n
            acc += term
            if s:
                term = divexact(term * s * rest, (n - s + 1) * w) if w else mpz(0)
    return {m: total - suffix[m] for m in range(start, n + 1)}


# ---------------------------------------------------------------------------
# the same laws by groups (weighted models, any number of urns)
# ---------------------------------------------------------------------------

def _mb_max_cost(n: int, r: int, lo: int, hi: int) -> Cost:
    """Estimate :func:`~enumerator.algorithms.extremes.mb_max_cumulative`: its own plan, priced.

    :func:`~enumerator.algorithms.extremes.mb_max_estimate`: the plan's
    units at a rate fitted to measured runs, and the numbers it keeps.
    """
    seconds, memory = mb_max_estimate(n, r, hi)
    return Cost(seconds=seconds, memory=memory)


def _vector_level_states(groups, n: int, m: int):
    """The level vectors ``t`` (``t_g <= c_g``, ``K_t = n - |t|(m+1) >= 0``) of :func:`_mb_free_capped`, deepest first."""
    T = n // (m + 1)
    caps = [min(c, T) for c, _, _, _ in groups]
    layers = [[] for _ in range(T + 1)]

    def walk(g, prefix, used):
        if g == len(caps):
            layers[used].append(tuple(prefix))
            return
        for v in range(min(caps[g], T - used) + 1):
            prefix.append(v)
            walk(g + 1, prefix, used + v)
            prefix.pop()

    walk(0, [], 0)
    return [t for layer in reversed(layers) for t in layer]


def _vector_level_cost(groups, n: int, m: int, bits: float) -> Cost:
    """Estimate :func:`_mb_free_capped` at bound *m*: its steps, and the rows of the layers it keeps at once.

    The states of each layer ``s = |t|`` are counted by a small DP over the
    groups, so nothing is listed.  A step is ``G + 3`` small-by-big
    operations; measured 0.47 us of CPU per operation at 23,000 bits
    (2000 balls in 5 groups of 200 urns: 0.04 s at ``m = 600``, 0.97 s at
    ``m = 250``), priced ``(1 + b / 20000) / 4e6`` s.
    """
    T = n // (m + 1)
    G = len(groups)
    if G > 1 and T > 40:
        # at least C(T + G - 1, G - 1) states of rows of about n/2 entries: never the cheaper route
        return Cost(seconds=math.inf, memory=0)
    ways = _level_ways(groups, T)
    steps = sum(ways[s] * max(0, n - s * (m + 1) - m) for s in range(T + 1)) * (G + 3)
    entries = [ways[s] * (max(0, n - s * (m + 1)) + 1) for s in range(T + 1)] + [0, 0]
    kept = max(entries[s] + entries[s + 1] + entries[s + 2] for s in range(T + 1))
    big = bits + n * math.log2(max(2, max(w for _, _, _, w in groups)))  # the scaling S_t
    return Cost(seconds=steps * (1 + big / 20000) / 4e6, memory=kept * bigint_bytes(big))


def _mb_free_capped(groups, n: int, m: int):
    r"""MB total weight of ``n`` balls in free weighted groups with every urn at most *m*, by levels over the groups.

    ``P_t = prod_g e_m(w_g x)^{c_g - t_g}`` for vectors ``t`` (``t_g`` urns of
    group ``g`` left out).  From ``e_m' = e_m - x^m/m!``,
    ``P_t' = W_t P_t - x^m/m! sum_g (c_g - t_g) w_g^{m+1} P_{t + e_g}``
    (``W_t = sum_g (c_g - t_g) w_g``), so the labelled counts scaled by
    ``S_t = prod_g w_g^{(m+1) t_g}``, ``M_t(k) = S_t k! [x^k] P_t``, obey

    ``M_t(k+1) = W_t M_t(k) - C(k, m) sum_g (c_g - t_g) M_{t+e_g}(k - m)``,

    with ``M_t(k) = S_t W_t^k`` for ``k <= m`` — the level recursion of
    :func:`~enumerator.algorithms.extremes.mb_max_cumulative` with one level
    index per group (the differential equation of the truncated
    exponential; Flajolet & Sedgewick, *Analytic Combinatorics*, 2009,
    §VII.8).  Level ``t`` is needed up to ``K_t = n - |t|(m+1)``: cost
    :func:`_vector_level_cost`, small when ``m`` is a large part of ``n``
    (few urns can exceed it), whatever the counts ``c_g``.
    """
    return _mb_free_levels(groups, n, m)[0]


def _mb_free_levels(groups, n: int, m: int, extensions: int = 0, whole: bool = False):
    r"""The levels of :func:`_mb_free_capped` at bound *m*: ``(M_0(n), tails)``.

    For ``extensions = D > 0``, ``tails[t]`` holds ``M_t(K_t - i)`` for
    ``i < min(K_t + 1, |t| (D - 1) + 1)``, the entries :func:`_mb_free_extend`
    reads for the bounds ``m + 1 .. m + D``; for ``D = 0`` it is empty.
    With *whole*, the first item is the whole row ``M_0(0..n)`` (the
    weighted counts of ``0..n`` balls) instead of ``M_0(n)``.  Cost
    :func:`_vector_level_cost` (the tails: :func:`_vector_extension_cost`).
    """
    W = sum(c * w for c, _, _, w in groups)
    G = len(groups)
    binomials = [mpz(1)] * max(n - m, 1)  # C(k, m) for k = m .. n - 1
    value = mpz(1)
    for k in range(m, n - 1):
        value = divexact(value * (k + 1), k + 1 - m)
        binomials[k + 1 - m] = value
    rows: Dict[tuple, list] = {}
    tails: Dict[tuple, list] = {}
    layer = None
    for t in _vector_level_states(groups, n, m):
        size = sum(t)
        if size != layer:
            # a layer is read only by the layer above it: drop the rows two layers down
            for key in [key for key in rows if sum(key) >= size + 2]:
                del rows[key]
            layer = size
        K = n - size * (m + 1)
        Wt = W - sum(v * w for v, (_, _, _, w) in zip(t, groups))
        S = mpz(1)
        for v, (_, _, _, w) in zip(t, groups):
            if v:
                S *= mpz(w) ** ((m + 1) * v)
        row = [mpz(0)] * (K + 1)
        v = S
        row[0] = v
        for k in range(1, min(m, K) + 1):
            v *= Wt
            row[k] = v
        if K > m:
            below = []
            for g in range(G):
                if t[g] < groups[g][0]:
                    deeper = t[:g] + (t[g] + 1,) + t[g + 1:]
                    if deeper in rows:
                        below.append((groups[g][0] - t[g], rows[deeper]))
            for k in range(m, K):
                acc = mpz(0)
                for factor, lower in below:
                    acc += factor * lower[k - m]
                v = Wt * v - binomials[k - m] * acc
                row[k + 1] = v
        rows[t] = row
        if extensions:
            take = min(K + 1, size * (extensions - 1) + 1)
            tails[t] = row[K - take + 1:][::-1]
    top = rows[(0,) * G]
    return (top if whole else top[n]), tails


def _extension_tails(n: int, m: int, tails: Dict[tuple, list]) -> Dict[tuple, list]:
    """``{t: [n!/(K_t - i)! M_t(K_t - i)]}`` from the tails of :func:`_mb_free_levels` (what :func:`_mb_free_extend` reads)."""
    out = {}
    start: Dict[int, mpz] = {n: mpz(1)}  # n!/K! for K = n - j(m+1), j = 0, 1, ...
    for j in range(1, max((sum(t) for t in tails), default=0) + 1):
        K = n - j * (m + 1)
        value = start[K + m + 1]
        for s in range(K + 1, K + m + 2):
            value *= s
        start[K] = value
    for t, tail in tails.items():
        K = n - sum(t) * (m + 1)
        falling = start[K]  # n!/K!, then n!/(K - i)!
        row = []
        for i, v in enumerate(tail):
            row.append(falling * v)
            falling *= K - i
        out[t] = row
    return out


def _mb_free_extend(groups, n: int, m: int, d: int, vtails: Dict[tuple, list]):
    r"""MB total weight of ``n`` balls in free weighted groups with every urn at most ``m + d``, from the levels at *m*.

    With ``delta_g = sum_{l=m+1}^{m+d} (w_g x)^l / l!``,
    ``e_{m+d}(w_g x)^{c_g} = sum_s C(c_g, s) delta_g^s e_m(w_g x)^{c_g - s}``, so

    ``A_{m+d} = sum_t prod_g C(c_g, t_g) n! [x^n] prod_g delta_g^{t_g} P_t``

    over the level vectors ``t`` of :func:`_mb_free_levels`.  Writing
    ``delta_g = (w_g x)^{m+1} eps(w_g x) / (m+d)!`` with the integer
    polynomial ``eps(z) = sum_{i<d} (m+d)!/(m+1+i)! z^i``, each ``t`` is one
    dot product of the short FLINT polynomial ``prod_g eps(w_g x)^{t_g}``
    (degree ``|t|(d-1)``, built from its parent vector by one product)
    with the tail of ``M_t`` (:func:`_mb_free_levels`; *vtails* holds
    ``n!/(K_t-i)! M_t(K_t - i)``), divided exactly by ``((m+d)!)^{|t|}``.
    The extension of :func:`~enumerator.algorithms.extremes.mb_max_cumulative`
    to vectors of levels; cost :func:`_vector_extension_cost`.
    """
    F = gmpy2.fac(m + d)
    base = [int(divexact(F, gmpy2.fac(m + 1 + i))) for i in range(d)]
    eps = [fmpz_poly([b * w ** i for i, b in enumerate(base)]) for _, _, _, w in groups]
    polys: Dict[tuple, fmpz_poly] = {}
    powers = [mpz(1)]
    total = mpz(0)
    for t in sorted(vtails, key=sum):
        size = sum(t)
        if size == 0:
            E = fmpz_poly([1])
        else:
            g = next(i for i, v in enumerate(t) if v)
            parent = t[:g] + (t[g] - 1,) + t[g + 1:]
            E = polys[parent].mul_low(eps[g], size * (d - 1) + 1)
        polys[t] = E
        acc = poly_dot(E, vtails[t])
        if acc:
            while len(powers) <= size:
                powers.append(powers[-1] * F)
            choose = mpz(1)
            for v, (c, _, _, _) in zip(t, groups):
                if v:
                    choose *= gmpy2.comb(c, v)
            total += choose * divexact(acc, powers[size])
    return total


def _capped(groups, top: int):
    return [(c, a, min(b, top), w) for c, a, b, w in groups]


def _raised(groups, bottom: int):
    return [(c, max(a, bottom), b, w) for c, a, b, w in groups]


def _level_ways(groups, T: int) -> list:
    """``ways[s]``: the level vectors ``t`` with ``|t| = s`` (``t_g <= c_g``), for ``s = 0..T`` (a small DP, nothing listed)."""
    ways = [1] + [0] * T
    for c, _, _, _ in groups:
        prefix = [0]
        for value in ways:
            prefix.append(prefix[-1] + value)
        ways = [prefix[s + 1] - prefix[max(0, s - c)] for s in range(T + 1)]
    return ways


def _tail_bits(groups, n: int, bits: float) -> float:
    """Bits of an extension tail entry: ``n!/(K-i)! M_t(K - i)`` (the count, the scaling ``S_t`` and the falling factorial)."""
    return bits + n * math.log2(max(2, max(w for _, _, _, w in groups))) + n * math.log2(n + 2)


def _vector_extension_cost(groups, n: int, m: int, d: int, bits: float) -> float:
    """Seconds of :func:`_mb_free_extend` for the bound ``m + d`` from the levels at *m*.

    Per level vector ``t`` (``|t| = s``): one short FLINT product and a dot
    product of ``s (d - 1) + 1`` terms, each a coefficient of
    ``s (d - 1) log2((m + d) w)`` bits times a tail entry
    (:func:`_tail_bits`).  Priced like the level steps of
    :func:`_vector_level_cost`, with the coefficient's limbs as a factor,
    times 4 for the conversions between FLINT and gmpy2 numbers (measured
    3.3 to 5 times the bare figure: 1.3 s for the 17 extensions from
    ``m = 300``, 2000 balls in 5 groups of 200).
    """
    T = n // (m + 1)
    ways = _level_ways(groups, T)
    big = _tail_bits(groups, n, bits)
    wbits = math.log2(max(2, (m + d) * max(w for _, _, _, w in groups)))
    terms = 0.0
    for s in range(T + 1):
        if ways[s]:
            length = min(n - s * (m + 1), s * (d - 1)) + 1
            terms += ways[s] * (length * (1 + s * (d - 1) * wbits / 2000) + 4)
    return 4 * terms * (1 + big / 20000) / 4e6


def _vector_tail_memory(groups, n: int, m: int, D: int, bits: float) -> int:
    """Bytes of the tails :func:`_mb_free_levels` keeps for *D* extensions (every level vector)."""
    T = n // (m + 1)
    ways = _level_ways(groups, T)
    entries = sum(ways[s] * (min(n - s * (m + 1), s * max(D - 1, 0)) + 1) for s in range(T + 1))
    return entries * bigint_bytes(_tail_bits(groups, n, bits))


#: Most memory the tails of one run of levels may take, whatever the limits (the planner stops extending there).
_TAIL_MEMORY = 512 * 2 ** 20


def _levels_span(groups, n: int, m: int, last: int, bits: float):
    """``(D, cost)``: the extensions after the levels at *m* (bounds ``m+1 .. m+D``, ``m + D <= last``) and their cost.

    Extensions are added while the next one costs less than the average so
    far per bound (as :func:`~enumerator.algorithms.extremes.mb_max_cumulative`
    plans them) and the tails fit in :data:`_TAIL_MEMORY` and in a quarter
    of the memory limit in force.
    """
    base = _vector_level_cost(groups, n, m, bits)
    spent = base.seconds
    D = 0
    room = min(_TAIL_MEMORY, limits.active_limits().memory // 4)
    if math.isfinite(spent) and n // (m + 1) <= 64:
        while m + D + 1 <= last:
            # the first extension also pays for the tails (n!/(K-i)! M_t(K-i)): measured 0.55-0.65 of the levels
            extra = _vector_extension_cost(groups, n, m, D + 1, bits) + (0.6 * base.seconds if D == 0 else 0.0)
            if extra >= spent / (D + 1) or _vector_tail_memory(groups, n, m, D + 1, bits) > room:
                break
            spent += extra
            D += 1
    memory = base.memory + (_vector_tail_memory(groups, n, m, D, bits) if D else 0)
    return D, Cost(seconds=spent, memory=memory)


def _miller_polynomial(block, m: int) -> list:
    """``q_i = i! [x^i] prod_{g in block} e_m(w_g x)`` for ``i = 0..|block| m``: one urn of each group, at most *m* each."""
    q = [mpz(1)]
    for _, _, _, w in block:
        out = [mpz(0)] * (len(q) + m)
        powers = [mpz(w) ** j for j in range(m + 1)]
        for i, a in enumerate(q):
            if a:
                choose = mpz(1)  # C(i + j, j)
                for j in range(m + 1):
                    out[i + j] += a * choose * powers[j]
                    choose = divexact(choose * (i + j + 1), j + 1)
        q = out
    return q


def _miller_block_row(block, n: int, m: int) -> list:
    r"""``k! [x^k] Q(x)^c`` for ``k = 0..n``, ``Q = prod_{g in block} e_m(w_g x)``: a block of groups of one count ``c``.

    The block's urns form ``c`` copies of one urn of each group, so its
    row is a power of the polynomial ``Q`` of degree ``D = |block| m``, by
    J. C. P. Miller's recurrence (Knuth, *TAOCP* vol. 2, 3rd ed., 1997,
    §4.7, eq. (9)) on the integers ``N(k) = k! [x^k] Q^c``:
    ``N(k) = (1/k) sum_{i=1}^{D} ((c+1) i - k) C(k, i) q_i N(k-i)``.
    ``n D`` multiplications of a big number by one of about
    ``i log2(n S)`` bits (``S`` the block's weight per copy):
    :func:`_miller_block_cost`.
    """
    c = block[0][0]
    q = _miller_polynomial(block, m)
    D = len(q) - 1
    N = [mpz(0)] * (n + 1)
    N[0] = mpz(1)
    c1 = c + 1
    for k in range(1, n + 1):
        total = mpz(0)
        binom = mpz(1)
        for i in range(1, min(k, D) + 1):
            binom = divexact(binom * (k - i + 1), i)
            if q[i]:
                total += (c1 * i - k) * binom * q[i] * N[k - i]
        N[k] = divexact(total, k)
    return N


def _miller_block_cost(block, n: int, m: int, bits: float) -> Cost:
    """Estimate :func:`_miller_block_row` (infinite unless every group of *block* has the same count).

    ``n D`` steps, ``D = |block| m``, step ``i`` on a multiplier of about
    ``i log2(n S)`` bits; measured 0.15 s for the 5 groups of 200 at
    ``m = 10`` and 0.84 s for 3 of them at ``m = 60`` (2000 balls, loaded
    machine), priced ``(n D + n D^2 log2(n S) / 2000) (1 + b/20000) / 2.7e6`` s.
    """
    if len({c for c, _, _, _ in block}) != 1:
        return Cost(seconds=math.inf, memory=0)
    D = len(block) * m
    S = sum(w for _, _, _, w in block)
    steps = n * min(n, D) + n * min(n, D) ** 2 * math.log2(max(2, n * S)) / 2000
    return Cost(seconds=steps * (1 + bits / 20000) / 2.7e6, memory=(n + D + 2) * bigint_bytes(bits))


def _block_route(block, n: int, m: int, bits: float):
    """``(how, cost)``: the cheapest row of one block at bound *m*, ``"levels"``, ``"miller"`` or ``"rows"``.

    ``"rows"`` (a grouped row: one row per group and a FLINT product per
    further group) is priced as its single-group rows and
    :func:`_product_cost` per product, the same figures as the other
    routes, so that the choice compares like with like.
    """
    options = [("levels", _vector_level_cost(block, n, m, bits)), ("miller", _miller_block_cost(block, n, m, bits))]
    if len(block) > 1:
        options.append(("rows", _grouped_row_cost(block, n, m, bits)))
    return min(options, key=lambda option: option[1].seconds)


def _grouped_row_cost(block, n: int, m: int, bits: float) -> Cost:
    """A grouped row of free MB groups at bound *m*: one row per group and ``|block| - 1`` products."""
    cost = _product_cost(n, bits).times(len(block) - 1)
    for g in block:
        cost = cost + min(_vector_level_cost([g], n, m, bits), _miller_block_cost([g], n, m, bits),
                          key=lambda c: c.seconds)
    return cost


def _block_row(block, n: int, m: int, how: str) -> list:
    """The row ``k! [x^k] prod_{g in block} e_m(w_g x)^{c_g}``, ``k = 0..n``, by the route *how* (:func:`_block_route`)."""
    if how == "levels":
        return _mb_free_levels(block, n, m, whole=True)[0]
    if how == "miller":
        return _miller_block_row(block, n, m)
    return grouped.total_row(_capped(block, m), True, n, "a row of urn groups")


def _partitions(groups):
    """The ways :func:`_blocks_capped` may cut the groups: all in one block, two halves, pairs."""
    G = len(groups)
    out = [[list(groups)]]
    if G > 1:
        half = -(-G // 2)
        out.append([list(groups[:half]), list(groups[half:])])
    if G > 3:
        out.append([list(groups[i:i + 2]) for i in range(0, G, 2)])
    return out


def _product_cost(n: int, bits: float) -> Cost:
    """One binomial convolution of two rows of ``n + 1`` entries (:func:`~enumerator.algorithms.group_rows.combine`).

    Its FLINT product, the scaling by ``n!/k!`` and the exact divisions:
    measured 0.5-0.6 s for 2001 entries of 5 groups of 200 (loaded
    machine), about 8 times :func:`~enumerator.core.limits.product_seconds`
    of the scaled row's bits.
    """
    row = (n + 1) * (bits + n * math.log2(n + 2))
    return Cost(seconds=8 * limits.product_seconds(row), memory=4 * (n + 1) * bigint_bytes(bits + n * math.log2(n + 2)))


def _blocks_plan(groups, n: int, m: int, bits: float):
    """``(blocks, hows, cost)``: the cheapest cut of :func:`_partitions` and the route of each block's row."""
    best = None
    dot = Cost(seconds=(n + 1) * 3 * limits.product_seconds(bits), memory=0)
    for blocks in _partitions(groups):
        hows, cost = [], Cost()
        for block in blocks:
            how, part = _block_route(block, n, m, bits)
            hows.append(how)
            cost = cost + part
        cost = cost + _product_cost(n, bits).times(max(0, len(blocks) - 2)) + (dot if len(blocks) > 1 else Cost())
        if best is None or cost.seconds < best[2].seconds:
            best = (blocks, hows, cost)
    return best


def _blocks_cost(groups, n: int, m: int, bits: float) -> Cost:
    """Estimate :func:`_blocks_capped` at bound *m* (:func:`_blocks_plan`)."""
    return _blocks_plan(groups, n, m, bits)[2]


def _blocks_capped(groups, n: int, m: int, blocks=None, hows=None):
    r"""``A_m`` of free weighted MB groups from the whole rows of blocks of groups and one dot product.

    The groups are cut into blocks (one block, two halves or pairs:
    :func:`_blocks_plan` picks the cheapest by estimate, or *blocks* and
    *hows* give them); each block's row
    ``k! [x^k] prod_{g in block} e_m(w_g x)^{c_g}`` (``k = 0..n``) comes from
    the levels over its groups (:func:`_mb_free_levels`: ``O(n T^{|block|})``
    small-by-big steps, ``T = n // (m + 1)``: few urns can exceed ``m``),
    Miller's recurrence for a block of equal counts
    (:func:`_miller_block_row`: ``O(n |block| m)`` steps, small ``m``) or
    a grouped row (FLINT products); the rows are combined by binomial
    convolutions but for the last two, whose convolution is needed at ``n``
    only: one dot product (Flajolet & Sedgewick, *Analytic
    Combinatorics*, 2009, §II.2, labelled products).  With 5 groups of one
    count, 2000 balls: no product at all for small ``m`` (one block by
    Miller, or halves), one for pairs, against three for a grouped count.
    """
    if blocks is None:
        bits = max(64.0, n * math.log2(max(2, sum(c * w for c, _, _, w in groups))))
        blocks, hows, _ = _blocks_plan(groups, n, m, bits)
    rows = [_block_row(block, n, m, how) for block, how in zip(blocks, hows)]
    while len(rows) > 2:
        rows = [combine("exponential", rows[0], rows[1], n)] + rows[2:]
    if len(rows) == 1:
        return rows[0][n]
    return grouped.weighted_dot(rows[0], rows[1], True, n)


def _per_bound_route(groups, n: int, m: int, free: bool, bits: float):
    """``(name, cost)`` of the cheaper way to one ``A_m`` on its own: ``"blocks"`` (free MB groups) or ``"rows"``."""
    rows = grouped.row_cost(_capped(groups, m), n, True)
    if free and len(groups) > 1:
        # a grouped count (grouped.total_count): G rows, G - 2 products and one dot product, priced as the blocks are
        rows = Cost(seconds=max(rows.seconds, _grouped_row_cost(groups, n, m, bits).seconds
                                - _product_cost(n, bits).seconds), memory=rows.memory)
    if free and len(groups) > 2:
        blocks = _blocks_cost(groups, n, m, bits)
        if blocks.seconds < rows.seconds:
            return "blocks", blocks
    return "rows", rows


def _levels_first(groups, n: int, m: int, bits: float, last: Optional[int] = None) -> bool:
    """True when the levels over the groups at *m* with their extensions cost less per bound than one ``A_m`` on its own."""
    last = n // 2 - 1 if last is None else last
    D, levels = _levels_span(groups, n, m, max(m, last), bits)
    _, other = _per_bound_route(groups, n, m, True, bits)
    return levels.seconds / (D + 1) < other.seconds


def _max_plan(groups, n: int, lo: int, last: int, free: bool, bits: float):
    """The steps of :func:`_group_max_counts` for ``m = lo..last``: ``[(m, D, route, cost)]``.

    ``route`` is ``"levels"`` (the levels over the groups at ``m`` and
    ``D`` extensions, free MB groups only), ``"blocks"`` or ``"rows"`` (one
    ``A_m``; ``D = 0``).  Chosen from the estimates alone, so the whole plan
    is priced before any arithmetic.  Planning costs ``O(G T^2)`` small
    steps per bound tried.
    """
    plan = []
    m = lo
    while m <= last:
        if free and _levels_first(groups, n, m, bits, last):
            D, cost = _levels_span(groups, n, m, last, bits)
            plan.append((m, D, "levels", cost))
            m += D + 1
            continue
        route, cost = _per_bound_route(groups, n, m, free, bits)
        plan.append((m, 0, route, cost))
        m += 1
    return plan


def _group_max_counts(model: UrnModel, total) -> Dict[int, "mpz"]:
    r"""``{m: weight with max == m}`` by groups: one grouped count per ``m`` (uppers lowered to ``m``).

    For MB with every group free, the ``m`` with ``2(m+1) > n`` come from
    one pass of suffix sums (:func:`_mb_free_tail`), and the others by the
    plan of :func:`_max_plan`: the levels over the groups
    (:func:`_mb_free_levels`) at a base bound followed by extensions to the
    next bounds (:func:`_mb_free_extend`), where few urns can exceed ``m``;
    else, bound by bound, the blocks of at most two groups and one dot
    product (:func:`_blocks_capped`) or a grouped count.  Cost: the sum of
    the plan's steps, checked first.
    """
    n, r = model.balls, model.urns
    groups, _ = grouped.integer_groups(model)
    labelled = model.rule.distinguishable
    lo = max(max(a for _, a, _, _ in groups), -(-n // r))
    hi = min(n, max(b for _, _, b, _ in groups))
    cumulative: Dict[int, mpz] = {}
    free = labelled and all(a == 0 and b >= n for _, a, b, _ in groups)
    last = hi
    cost = Cost()
    bits = max(64.0, n * math.log2(max(2, sum(c * w for c, _, _, w in groups))))
    if free and hi >= n // 2:
        start = max(lo, n // 2)
        last = start - 1
        # suffix sums: G n products, and one count per m kept
        cost = Cost(seconds=len(groups) * (n - start + 1) * 2 * limits.product_seconds(bits),
                    memory=(n - start + 2) * bigint_bytes(bits))
    if labelled:
        span = last - lo + 1
        if span > 4096:
            # a long range: first a sampled price (one bound on its own at 4096 evenly spaced m, scaled up),
            # so a law far beyond the limits is refused without planning every bound
            stride = -(-span // 4096)
            rough = Cost()
            for m in range(lo, last + 1, stride):
                rough = rough + _per_bound_route(groups, n, m, free, bits)[1].times(min(stride, last + 1 - m))
            limits.check(Cost(seconds=cost.seconds + rough.seconds, memory=max(cost.memory, rough.memory)),
                         f"the law of max for {n} balls in {r} urns",
                         advice="ask for P(max <= m) at one m (an event) instead of the whole law")
        plan = _max_plan(groups, n, lo, last, free, bits)
        for _, _, _, step in plan:
            cost = Cost(seconds=cost.seconds + step.seconds, memory=max(cost.memory, step.memory))
    else:
        # one grouped count per m: priced at every m, or at 4096 evenly spaced m (scaled up) for longer ranges
        plan = []
        span = last - lo + 1
        stride = max(1, -(-span // 4096))
        for m in range(lo, last + 1, stride):
            cost = cost + grouped.row_cost(_capped(groups, m), n, False).times(min(stride, last + 1 - m))
    workers = min(active_processes(), len(plan)) if cost.seconds > PROCESSES_AFTER_SECONDS else 1
    if workers > 1:
        # shared out longest first: at most the even share plus the longest step; each worker holds its own rows
        longest = max(step.seconds for _, _, _, step in plan)
        biggest = max(step.memory for _, _, _, step in plan)
        cost = Cost(seconds=min(cost.seconds, cost.seconds / workers + longest),
                    memory=cost.memory + (workers - 1) * biggest)
    limits.check(cost, f"the law of max for {n} balls in {r} urns",
                 advice="ask for P(max <= m) at one m (an event) instead of the whole law")
    if free and hi >= n // 2:
        cumulative.update(_mb_free_tail(groups, n, max(lo, n // 2)))
    if workers > 1:
        order = sorted(plan, key=lambda step: -step[3].seconds)
        tasks = [(groups, model, n, m, D, route) for m, D, route, _ in order]
        for part in map_in_processes(_max_step, tasks, workers):
            cumulative.update(part)
    steps = {m: (D, route) for m, D, route, _ in plan}

    def at_most(m: int) -> mpz:
        value = cumulative.get(m)
        if value is None and m in steps:
            D, route = steps[m]
            part = _max_step((groups, model, n, m, D, route))
            cumulative.update(part)
            value = part[m]
        if value is None:
            value = mpz(_total_of(_capped(groups, m), model, "a bounded count"))
        return value

    return law_from_cumulative(at_most, lo, hi, total)


#: Estimated seconds above which the law of max shares its plan's steps among local processes.
PROCESSES_AFTER_SECONDS = 2.0


def _max_step(task) -> Dict[int, "mpz"]:
    """One step ``(groups, model, n, m, D, route)`` of :func:`_max_plan`: ``{m: A_m}`` and, after levels, ``A_{m+1..m+D}``."""
    groups, model, n, m, D, route = task
    if route == "levels":
        value, tails = _mb_free_levels(groups, n, m, extensions=D)
        out = {m: value}
        if D:
            vtails = _extension_tails(n, m, tails)
            for d in range(1, D + 1):
                out[m + d] = _mb_free_extend(groups, n, m, d, vtails)
        return out
    if route == "blocks":
        return {m: _blocks_capped(groups, n, m)}
    return {m: mpz(_total_of(_capped(groups, m), model, "a bounded count"))}


def law_from_cumulative(at_most: Callable[[int], "mpz"], lo: int, hi: int, total) -> Dict[int, "mpz"]:
    """``{m: A_m - A_(m-1)}`` for ``m = lo..hi`` from the cumulative counts ``A_m = at_most(m)``.

    Only the nonzero differences are kept, and the walk stops once ``A_m``
    reaches *total* (no later ``m`` can add weight), so ``at_most`` is
    called at most ``hi - lo + 1`` times, in increasing ``m``.
    """
    counts: Dict[int, mpz] = {}
    previous = mpz(0)
    for m in range(lo, hi + 1):
        value = at_most(m)
        if value != previous:
            counts[m] = value - previous
        previous = value
        if value == total:
            break
    return counts


def _group_min_counts(model: UrnModel, total) -> Dict[int, "mpz"]:
    """``{m: weight with min == m}`` by groups: lowers raised to ``m``, at most ``n // r + 1`` counts."""
    n, r = model.balls, model.urns
    groups, _ = grouped.integer_groups(model)
    lo = min(a for _, a, _, _ in groups)
    hi = min(min(b for _, _, b, _ in groups), n // r)
    counts: Dict[int, mpz] = {}
    current = mpz(total)
    for m in range(lo, hi + 1):
        following = mpz(0) if m + 1 > hi else mpz(_total_of(_raised(groups, m + 1), model, "a bounded count"))
        if current != following:
            counts[m] = current - following
        current = following
        if current == 0:
            break
    return counts


def _split_urn(groups, index: int):
    """``(the urn's group, the other urns' groups)`` for the 0-based urn *index*, walking the groups."""
    start = 0
    for position, g in enumerate(groups):
        c = g[0]
        if index < start + c:
            others = list(groups[:position]) + ([(c - 1,) + tuple(g[1:])] if c > 1 else []) + list(groups[position + 1:])
            return g, others
        start += c
    raise InvalidParameters(f"urn {index + 1} is beyond the model's {start} urns; use urn:1 to urn:{start}")


def _group_urn_counts(model: UrnModel, index: int) -> Dict[int, "mpz"]:
    r"""``{v: weight with k_index == v}`` by groups.

    The urn's weight for ``v`` balls (``C(n, v) w^v`` for labelled balls)
    times the other urns' weight for ``n - v``: a binomial law under MB when
    the others are free (``C(n, v) w^v (W - w)^{n-v}``), otherwise one row of
    the other groups (:func:`~enumerator.algorithms.grouped.total_row`).
    """
    n = model.balls
    groups, _ = grouped.integer_groups(model)
    # tight uppers of the whole model stay valid for the urn and the others
    (_, a, b, w), others = _split_urn(groups, index)
    labelled = model.rule.distinguishable
    counts: Dict[int, mpz] = {}
    if b < a:
        return counts
    top = n - a
    limits.check(Cost(seconds=(top + 1) / limits.STEPS_PER_SECOND,
                      memory=(top + 1) * bigint_bytes(n * math.log2(max(2, sum(c * g for c, _, _, g in groups))))),
                 f"the law of one urn for {n} balls", advice="use fewer balls")
    if not others:
        return {n: mpz(w) ** n} if a <= n <= b else {}
    lowest = sum(c * x for c, x, _, _ in groups)
    if labelled and all(x == 0 and y >= n - lowest for _, x, y, _ in others):
        rest = mpz(sum(c * g for c, _, _, g in others))
        binom = gmpy2.comb(n, a)
        for v in range(a, min(b, n) + 1):
            counts[v] = binom * mpz(w) ** v * rest ** (n - v)
            binom = divexact(binom * (n - v), v + 1)
        return {v: c for v, c in counts.items() if c}
    row = grouped.total_row(others, labelled, top, f"the law of one urn for {n} balls")
    binom = gmpy2.comb(n, a)
    for v in range(a, min(b, n) + 1):
        c = row[n - v]
        if c:
            counts[v] = (binom if labelled else 1) * mpz(w) ** v * c
        binom = divexact(binom * (n - v), v + 1)
    return counts


def _single_group_occupied(groups, labelled: bool, n: int) -> Optional[Dict[int, "mpz"]]:
    r"""The law of the occupied urns of one group of free urns (or of capacity 1), or None.

    MB: ``C(c, u) u! S(n, u) w^n`` (Stirling numbers of the second kind, FLINT);
    BE: ``C(c, u) C(n - 1, u - 1) w^n``; capacity 1: every ball alone, ``u = n``
    (Feller, vol. 1, ch. II.5).  ``O(n)`` terms, whatever ``c`` is.
    """
    if len(groups) != 1:
        return None
    c, a, b, w = groups[0]
    if a != 0:
        return None
    scale = mpz(w) ** n
    if b == 1 and b < n:
        return {n: gmpy2.comb(c, n) * scale * (gmpy2.fac(n) if labelled else 1)} if c >= n else {}
    if b < n:
        return None
    if n == 0:
        return {0: mpz(1)}
    counts: Dict[int, mpz] = {}
    choose = mpz(1)
    for u in range(1, min(n, c) + 1):
        choose = divexact(choose * (c - u + 1), u)  # C(c, u)
        if labelled:
            ways = mpz(int(fmpz.stirling_s2(n, u))) * gmpy2.fac(u)
        else:
            ways = gmpy2.comb(n - 1, u - 1)
        counts[u] = choose * ways * scale
    return counts


def _group_marked_law(model: UrnModel, low: int, high: Optional[int]) -> Dict[int, "mpz"]:
    r"""``{j: weight with j urns holding low..high}`` by groups, at any number of urns.

    The side of the window without 0 is marked (at most ``n`` such urns):
    the window itself when ``low >= 1``, else its complement, and then
    ``j = r - u``.  One bivariate generating function
    (:func:`~enumerator.algorithms.grouped.marked_row`).
    """
    n, r = model.balls, model.urns
    groups, _ = grouped.integer_groups(model)
    labelled = model.rule.distinguishable
    single = _single_group_occupied(groups, labelled, n) if (low, high) in ((1, None), (0, 0)) else None
    if single is not None:
        return single if low == 1 else {r - u: c for u, c in single.items()}
    if low >= 1:
        row = grouped.marked_row(groups, labelled, n, low, high, f"the law of a counting statistic for {n} balls")
        return {u: c for u, c in enumerate(row) if c}
    if high is None:  # every urn holds at least 0
        return {r: mpz(_total_of(groups, model, "the model's total weight"))}
    row = grouped.marked_row(groups, labelled, n, high + 1, None, f"the law of a counting statistic for {n} balls")
    return {r - u: c for u, c in enumerate(row) if c}


def _tight(groups, n: int):
    """Groups ``(count, lower, upper or None, weight)`` with finite, tight upper bounds."""
    lowest = sum(c * a for c, a, _, _ in groups)
    return [(c, a, (n - (lowest - a)) if b is None else min(b, n - (lowest - a)), w) for c, a, b, w in groups]


def marked_moments(model: UrnModel, low: int, high: Optional[int]):
    r"""Exact ``(E[X], E[X(X-1)])`` of ``X`` = the urns holding ``low..high`` balls, from bounded counts.

    Parameters
    ----------
    model : UrnModel
        Any model (weights, bounds, any number of urns).
    low, high : int, int or None
        The window (``high`` None: no end).

    Returns
    -------
    tuple of Fraction
        The first two factorial moments.

    Notes
    -----
    The binomial moments of a counting statistic are sums over one urn and
    over ordered pairs of distinct urns (Feller, vol. 1, ch. IV.3), and urns
    of one group are interchangeable:
    ``E[X] = sum_g c_g N_g / N`` and
    ``E[X(X-1)] = sum_{g,h} p_{gh} N_{gh} / N``, where ``N_g`` is the total
    weight with one urn of group ``g`` confined to the window, ``N_{gh}``
    with one urn of ``g`` and another of ``h`` confined, and ``p_{gh}`` the
    number of such ordered pairs (``c_g (c_g - 1)`` or ``c_g c_h``).
    ``G + G^2`` grouped counts (:func:`~enumerator.algorithms.grouped.total_count`),
    each ``O(G M(n))`` — never a pass over the urns.
    """
    n = model.balls
    ints, _ = grouped.integer_groups(model)
    base = [(c, g.lower, g.upper, w) for (c, _, _, w), g in zip(ints, model.groups)]
    labelled = model.rule.distinguishable

    def count(groups):
        return grouped.total_count(_tight(groups, n), labelled, n, "a binomial moment")

    def confine(groups, position):
        c, a, b, w = groups[position]
        lo = max(a, low)
        hi = b if high is None else (high if b is None else min(b, high))
        if hi is not None and hi < lo:
            return None
        parts = [(c - 1, a, b, w)] if c > 1 else []
        return groups[:position] + [(1, lo, hi, w)] + parts + groups[position + 1:]

    total = count(base)
    first = mpz(0)
    second = mpz(0)
    for g in range(len(base)):
        groups_g = confine(base, g)
        if groups_g is None:
            continue
        first += base[g][0] * count(groups_g)
        for h in range(len(base)):
            pairs = base[g][0] * (base[g][0] - 1) if g == h else base[g][0] * base[h][0]
            if not pairs:
                continue
            # urn of g sits at index g in groups_g; the rest of group g (if any) follows it
            position = h if h < g else (g + 1 if h == g else h + (1 if base[g][0] > 1 else 0))
            two = confine(groups_g, position)
            if two is not None:
                second += pairs * count(two)
    return Fraction(int(first), int(total)), Fraction(int(second), int(total))
