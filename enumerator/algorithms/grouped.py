r"""Weighted counts by urn groups, in time that grows with ``n`` and the number of groups, never with ``r``.

A model's urns are groups ``(c, a, b, w)``: ``c`` interchangeable urns holding
``a..b`` balls each, of weight ``w``.  Everything the laws of statistics
need reduces to the generating function of one group raised to the power
``c`` and to products over groups:

MB (labelled balls)
    ``N(k) = k! [x^k] prod_g (sum_{j=a_g}^{b_g} (w_g x)^j / j!)^{c_g}`` — the
    total weight of the assignments of ``k`` labelled balls, each assignment
    weighing ``prod_i w_i^{k_i}`` (so with weights ``w_i / W`` it is the
    probability, up to the factor ``W^n``);
BE, FD (unlabelled balls)
    ``N(k) = [x^k] prod_g (sum_{j=a_g}^{b_g} (w_g x)^j)^{c_g}`` — the total
    weight ``prod_i w_i^{k_i}`` of the admissible occupancy vectors.

Weights are scaled to integers first (:func:`integer_groups`): every
configuration of ``n`` balls gains the same factor ``L^n``, which cancels in
every probability.

Powers of a group's series (:func:`unit_row`) and the products of rows are
those of :mod:`enumerator.algorithms.group_rows` (one implementation for
every route by groups): closed forms where they exist (``c^k`` for free MB
urns; the binomial row or the window recurrence for BE/FD), J. C. P.
Miller's recurrence for the power of a series with any exponent (Knuth,
*TAOCP* vol. 2, 3rd ed., 1997, §4.7, eq. (9)) written for the integers
``N(k)``, or FLINT's truncated power of rational series.  Groups are
combined by (binomial) convolution, one FLINT product each (Flajolet &
Sedgewick, *Analytic Combinatorics*, 2009, §II.2, labelled products).  Marking the urns whose
occupancy lies in a set ``Z`` (not containing 0) adds a variable ``y``:
``prod_g (A_g(x) + y B_g(x))^{c_g}``, packed into one univariate series
(Kronecker substitution) — the law of the number of marked urns has at most
``n + 1`` values whatever ``r`` is.

Every route estimates its cost (:func:`row_cost`, :func:`marked_cost`) and
calls :func:`~enumerator.core.limits.check` before computing.
"""

from __future__ import annotations

import math
from fractions import Fraction
from math import lcm
from typing import Dict, List, Optional, Sequence, Tuple

import gmpy2
from flint import fmpq, fmpq_poly, fmpz_poly

from ..core import limits
from ..core.limits import Cost, bigint_bytes
from .group_rows import (
    MILLER_COUNT,
    combine,
    exponential_route_steps,
    group_row,
    miller_row,
    row_degree,
    scale_by_powers,
)

__all__ = [
    "Group",
    "integer_groups",
    "marked_row",
    "total_count",
    "total_row",
    "unit_row",
    "weighted_dot",
]

mpz = gmpy2.mpz
divexact = gmpy2.divexact

#: ``(count, lower, upper, integer weight)``; ``upper`` finite (tight).
Group = Tuple[int, int, int, int]

#: FLINT's powers take a machine-word exponent; larger counts go through Miller's recurrence.
_WORD = MILLER_COUNT


def integer_groups(model) -> Tuple[List[Group], int]:
    """Return the model's effective groups with integer weights, and the scale ``L``.

    Parameters
    ----------
    model : UrnModel
        Any model.

    Returns
    -------
    groups : list of (count, lower, upper, weight)
        Upper bounds finite and tight (:meth:`UrnModel.effective_groups`),
        weights ``w_g L`` with ``L`` the lcm of the weights' denominators
        (then divided by their gcd), all integers.
    scale : Fraction
        ``w_g = weight_g / scale``; every weight of ``n`` balls is
        ``scale^n`` times too large, which cancels in probabilities.

    Notes
    -----
    ``O(G)`` operations.
    """
    eff = model.effective_groups()
    den = lcm(*(Fraction(w).denominator for *_, w in eff))
    ints = [int(Fraction(w) * den) for *_, w in eff]
    common = math.gcd(*ints)
    out = [(c, a, b, w // common) for (c, a, b, _), w in zip(eff, ints)]
    return out, Fraction(den, common)


# ---------------------------------------------------------------------------
# cost estimates
# ---------------------------------------------------------------------------

def _bits(count: int, weight: int, top: int) -> float:
    """Bits of the largest entry of a row up to *top* balls (``(c w)^top`` for MB)."""
    return max(1.0, top * math.log2(max(2, count) * max(2, weight)))


def row_cost(groups: Sequence[Group], top: int, labelled: bool) -> Cost:
    """Estimate :func:`total_row` on *groups* up to *top* balls.

    Miller's recurrence (``top * min(b, top)``) or the level recursion
    (``~ top^2 / (2b)``) costs small-by-big steps per bounded MB group, as
    :func:`~enumerator.algorithms.group_rows.exponential_route` chooses;
    every power, product or closed form a few FLINT multiplications of
    length ``top`` (``limits.product_seconds`` of the whole row's bits).
    """
    total_bits = sum(_bits(c, w, top) for c, *_, w in groups) + top * math.log2(top + 2)
    row_bytes = (top + 1) * bigint_bytes(total_bits)
    seconds = 0.0
    for c, a, b, _ in groups:
        span = max(0, min(b, top) - a)
        steps = exponential_route_steps(c, a, a + span, top) if labelled and span < top else None
        if steps is not None:
            # Miller's recurrence or the level recursion (group_rows.exponential_route)
            seconds += steps * (1 + total_bits / 4000) / limits.STEPS_PER_SECOND
        else:
            seconds += 4 * limits.product_seconds((top + 1) * total_bits) * max(1, math.log2(max(2, min(c, top))))
        seconds += (top + 1) / limits.STEPS_PER_SECOND
    # one (binomial) convolution per further group: a FLINT product of top!/k!-scaled rows, measured
    # 1.2 s on a loaded machine for 2001 entries at 5 weighted groups of 200 urns (about twice this figure)
    seconds += max(0, len(groups) - 1) * 2 * limits.product_seconds((top + 1) * total_bits)
    return Cost(seconds=seconds, memory=4 * row_bytes)


# ---------------------------------------------------------------------------
# one group
# ---------------------------------------------------------------------------

def unit_row(c: int, a: int, b: int, labelled: bool, top: int) -> List:
    r"""The counts of one group of ``c`` unweighted urns holding ``a..b`` each, for ``0..top`` balls.

    Parameters
    ----------
    c : int
        Urns in the group, any size.
    a, b : int
        Bounds of each urn (``b`` finite; ``b < a``: nothing fits).
    labelled : bool
        MB (assignments of labelled balls) or BE/FD (occupancy vectors).
    top : int
        The most balls.

    Returns
    -------
    list of mpz
        Entry ``k``: the count for ``k`` balls.

    Notes
    -----
    The group's row of :mod:`enumerator.algorithms.group_rows`
    (:func:`~enumerator.algorithms.group_rows.group_row`, weight 1): closed
    forms for free urns (``c^k``; ``C(k + c - 1, k)``), BE/FD by the
    three-term window recurrence, MB bounded above by Miller's recurrence
    (any ``c``; ``O(top * b)``) or FLINT's truncated power of the rational
    window (``c < 2^62``; ``O(M(top) log c)``).
    """
    return group_row("exponential" if labelled else "ordinary", c, a, b, top)


def _weighted(row: List, w: int) -> List:
    """Entry ``k`` times ``w^k``."""
    return scale_by_powers(row, w)


# ---------------------------------------------------------------------------
# products over groups
# ---------------------------------------------------------------------------

def _convolve(x: List, y: List, labelled: bool, top: int) -> List:
    """The (binomial, for labelled balls) convolution of two rows, up to *top* (:func:`~enumerator.algorithms.group_rows.combine`)."""
    return combine("exponential" if labelled else "ordinary", x, y, top)


def total_row(groups: Sequence[Group], labelled: bool, top: int, what: str = "the count") -> List:
    """The weighted count of ``k = 0..top`` balls in *groups*, all ``k`` at once.

    Parameters
    ----------
    groups : sequence of (count, lower, upper, integer weight)
        From :func:`integer_groups` (upper bounds finite).
    labelled : bool
        MB or BE/FD.
    top : int
        The most balls.
    what : str
        The work, for the refusal message.

    Returns
    -------
    list of mpz

    Raises
    ------
    TooLarge
        When :func:`row_cost` is beyond the limits.

    Notes
    -----
    One :func:`unit_row` per distinct ``(count, lower, upper)`` (weights
    scale entry ``k`` by ``w^k``), then ``G - 1`` FLINT products: cost
    ``O(G M(top))`` plus Miller's ``O(top * b)`` steps per bounded MB group.
    """
    limits.check(row_cost(groups, top, labelled), what, advice="use fewer balls or fewer groups")
    units: Dict = {}
    row: Optional[List] = None
    for c, a, b, w in groups:
        key = (c, a, b)
        if key not in units:
            units[key] = unit_row(c, a, b, labelled, top)
        part = _weighted(units[key], w)
        row = part if row is None else _convolve(row, part, labelled, top)
    return row if row is not None else [mpz(1)] + [mpz(0)] * top


def weighted_dot(x: List, y: List, labelled: bool, n: int):
    """Entry *n* of the convolution of two rows (``O(n)`` big multiplications)."""
    total = mpz(0)
    binom = mpz(1)
    for i in range(n + 1):
        if x[i] and y[n - i]:
            total += (binom * x[i] * y[n - i]) if labelled else x[i] * y[n - i]
        binom = divexact(binom * (n - i), i + 1)
    return total


def total_count(groups: Sequence[Group], labelled: bool, n: int, what: str = "the count"):
    """The model's total weight for ``n`` balls (:func:`total_row` entry ``n``).

    Free MB groups (``a = 0``, no upper bound below ``n``) are one
    exponential ``e^{Qx}``: ``n! [x^n] P(x) e^{Qx} = sum_i C(n, i) P_i Q^{n-i}``
    with ``P`` the other groups' row (Flajolet & Sedgewick 2009, §II.2), so a
    model with only free urns costs one power; a group of few urns with a
    lower bound and no upper bound is written ``(e^{wx} - p(x))^c``
    (inclusion–exclusion over the urns below their bound) when that is
    shorter.  Cost: as :func:`total_row` on the bounded groups.
    """
    if n < 0:
        return mpz(0)
    if any(b < a for _, a, b, _ in groups) or sum(c * a for c, a, _, _ in groups) > n:
        return mpz(0)
    # the answer has at most n log2(n + sum c w) bits (MB: W^n; BE: C(n + r - 1, n) W^n)
    bits = max(64.0, n * math.log2(n + 2 + sum(c * w for c, _, _, w in groups)))
    limits.check(Cost(seconds=limits.product_seconds(bits) * math.log2(n + 2), memory=4 * bigint_bytes(bits)),
                 what, advice="use fewer balls")
    fixed = [g for g in groups if g[1] == g[2]]
    if fixed:
        # urns that must hold exactly a balls each: a constant factor, and fewer balls for the rest
        held = sum(c * a for c, a, _, _ in fixed)
        factor = mpz(1)
        for c, a, _, w in fixed:
            factor *= mpz(w) ** (c * a)
        if labelled:
            # n! / ((a!)^c ... (n - held)!) chooses which balls the fixed urns hold
            factor *= gmpy2.fac(n) // gmpy2.fac(n - held)
            for c, a, _, _ in fixed:
                factor = divexact(factor, gmpy2.fac(a) ** c)
        rest = [g for g in groups if g[1] != g[2]]
        if not rest:
            return factor if held == n else mpz(0)
        return factor * total_count(rest, labelled, n - held, what)
    if not labelled:
        if len(groups) == 1:
            # one group: sum_j (-1)^j C(c, j) C(L - j s + c - 1, c - 1) w^n, L = n - c a, s = b - a + 1
            c, a, b, w = groups[0]
            room, span = n - c * a, b - a + 1
            if span == 2:  # each urn holds a or a + 1 (FD): choose the urns holding a + 1
                return gmpy2.comb(c, room) * mpz(w) ** n
            terms = room // span + 1
            limits.check(Cost(seconds=terms * 4 * limits.product_seconds(bits), memory=4 * bigint_bytes(bits)),
                         what, advice="use fewer balls")
            value = mpz(0)
            choose = mpz(1)
            for j in range(terms):
                rest = room - j * span
                term = choose * gmpy2.comb(rest + c - 1, rest)
                value = value - term if j & 1 else value + term
                choose = divexact(choose * (c - j), j + 1)
            return value * mpz(w) ** n
        first = total_row(groups[:1], labelled, n, what)
        rest = total_row(groups[1:], labelled, n, what)
        return weighted_dot(first, rest, False, n)
    lowest = sum(c * a for c, a, _, _ in groups)

    def open_top(g) -> bool:
        # the upper bound does not bite: the other urns' lower bounds already leave no more room
        return g[2] >= n - (lowest - g[1])

    free = [g for g in groups if g[1] == 0 and open_top(g)]
    Q = sum(c * w for c, _, _, w in free)
    lower_only = []
    terms = 1
    for g in groups:
        if g[1] > 0 and open_top(g) and terms * (g[0] + 1) <= 64:
            lower_only.append(g)
            terms *= g[0] + 1
    bounded = [g for g in groups if g not in free and g not in lower_only]
    if not bounded and not lower_only:
        return mpz(Q) ** n
    if not free and not lower_only and len(bounded) == 1 and bounded[0][1] == 0:
        # one group of urns holding 0..b each: only N(n) is needed
        c, _, b, w = bounded[0]
        return _capped_count(c, min(b, n), n, what) * mpz(w) ** n
    if not free and not lower_only and len(bounded) >= 2:
        # only entry n of the last product is needed: a dot product of two halves' rows instead of a
        # full product (halves keep the convolved rows short: 7 row-sizes of work for 5 groups, not 9)
        half = len(bounded) // 2
        return weighted_dot(total_row(bounded[:half], True, n, what), total_row(bounded[half:], True, n, what), True, n)
    reach = min(n, sum(c * b for c, _, b, _ in bounded))
    base = total_row(bounded, True, reach, what) if bounded else [mpz(1)]
    base = base + [mpz(0)] * (n - reach if bounded else n)
    # (e^{wx} - p(x))^c = sum_t C(c, t) (-p)^t e^{(c - t) w x}, p = sum_{j<a} (wx)^j/j!
    total = mpz(0)
    choices = [[(t, math.comb(c, t)) for t in range(c + 1)] for c, _, _, _ in lower_only]
    for pick in _product(choices):
        row = base
        sign = 1
        weight = 1
        Z = Q
        for (t, choose), (c, a, _, w) in zip(pick, lower_only):
            weight *= choose
            if t & 1:
                sign = -sign
            Z += (c - t) * w
            if t:
                reach = min(n, t * (a - 1))
                part = _weighted(miller_row(t, a - 1, reach, True), w) + [mpz(0)] * (n - reach)
                row = _convolve(row, part, True, n)
        total += sign * weight * _exp_dot(row, Z, n)
    return total


def _falling(c: int, n: int):
    """``c (c - 1) ... (c - n + 1)`` by a balanced product tree (``O(M(answer) log n)``)."""
    if n <= 0:
        return mpz(1)
    if c < n:
        return mpz(0)
    level = [mpz(c - i) for i in range(n)]
    while len(level) > 1:
        level = [level[i] * level[i + 1] if i + 1 < len(level) else level[i] for i in range(0, len(level), 2)]
    return level[0]


def _capped_count(c: int, b: int, n: int, what: str):
    r"""Assignments of ``n`` labelled balls to ``c`` urns holding at most ``b`` each, any ``c``.

    ``b = 1``: the falling factorial ``c^{(n)}`` (no two balls together: the
    birthday product, Feller, vol. 1, II.3).  Otherwise Miller's recurrence
    (:func:`~enumerator.algorithms.group_rows.miller_row`) keeping only the last ``b`` entries: ``O(n b)``
    small-by-big steps and memory for ``b + 1`` numbers.
    """
    bits = max(64.0, n * math.log2(max(2, c)))
    if b <= 1 or b >= n:
        # a product tree of n word-sized factors (measured 5 s for n = 10^6, c = 2^64), or one power
        seconds = n / limits.STEPS_PER_SECOND + 3 * limits.product_seconds(bits) * math.log2(n + 2)
        memory = 4 * bigint_bytes(bits) + 64 * n
    else:
        seconds = (n * b * (1 + bits / 4000) / limits.STEPS_PER_SECOND
                   + 2 * limits.product_seconds(bits) * math.log2(n + 2))
        memory = (b + 4) * bigint_bytes(bits)
    limits.check(Cost(seconds=seconds, memory=memory), what, advice="use fewer balls")
    if b >= n:
        return mpz(c) ** n
    if b <= 0:
        return mpz(1) if n == 0 else mpz(0)
    if b == 1:
        return _falling(c, n)
    window = [mpz(1)]  # N(k - len(window) + 1 .. k), newest last
    c1 = c + 1
    for k in range(1, n + 1):
        total = mpz(0)
        binom = mpz(1)
        for j in range(1, min(k, b) + 1):
            binom = divexact(binom * (k - j + 1), j)
            total += (c1 * j - k) * binom * window[-j]
        window.append(divexact(total, k))
        if len(window) > b:
            window.pop(0)
    return window[-1]


def _product(lists):
    """The Cartesian product of *lists* (an iterator of tuples)."""
    if not lists:
        yield ()
        return
    for head in lists[0]:
        for tail in _product(lists[1:]):
            yield (head,) + tail


def _exp_dot(row: List, Z: int, n: int):
    """``n! [x^n] R(x) e^{Zx} = sum_i C(n, i) R_i Z^{n-i}`` for a row of labelled counts."""
    top = max(0, row_degree(row))
    if Z == 0:
        return row[n] if n < len(row) else mpz(0)
    acc = mpz(0)
    binom = mpz(1)
    for i in range(top + 1):
        acc = acc * Z + binom * row[i]
        binom = divexact(binom * (n - i), i + 1)
    return acc * mpz(Z) ** (n - top)


# ---------------------------------------------------------------------------
# marking: the law of the number of urns with occupancy in a set
# ---------------------------------------------------------------------------

def marked_cost(groups: Sequence[Group], n: int) -> Cost:
    """Estimate :func:`marked_row`: packed series of ``(n + 1)^2`` rational coefficients per group."""
    bits = sum(_bits(c, w, n) for c, *_, w in groups) + n * math.log2(n + 2)
    size = (n + 1) * (n + 2)
    seconds = 0.0
    for c, _, b, _ in groups:
        if c >= _WORD:
            seconds += n * min(b, n) * (n + 1) * (1 + bits / 4000) / limits.STEPS_PER_SECOND
        else:
            seconds += 3 * limits.product_seconds(size * bits) * max(1, math.log2(max(2, min(c, n))))
    return Cost(seconds=seconds, memory=6 * size * bigint_bytes(bits))


def marked_row(groups: Sequence[Group], labelled: bool, n: int, low: int, high: Optional[int],
               what: str = "the law") -> List:
    r"""The weight of the outcomes with ``u`` urns holding ``low..high`` balls, ``u = 0..n``.

    Parameters
    ----------
    groups : sequence of (count, lower, upper, integer weight)
        From :func:`integer_groups`.
    labelled : bool
        MB or BE/FD.
    n : int
        Balls.
    low, high : int, int or None
        The marked occupancies, ``low >= 1`` (so at most ``n`` urns are
        marked); ``high`` None for no end.
    what : str
        The work, for the refusal message.

    Returns
    -------
    list
        Entry ``u``: the total weight of the outcomes with exactly ``u``
        marked urns (for labelled balls, of assignments).

    Raises
    ------
    TooLarge
        When :func:`marked_cost` is beyond the limits.

    Notes
    -----
    The bivariate generating function ``prod_g (A_g(x) + y B_g(x))^{c_g}``
    (Flajolet & Sedgewick 2009, §III.2), with ``y^u x^k`` packed at
    ``k (n + 1) + u`` (Kronecker substitution; ``u <= k`` since a marked urn
    holds a ball): FLINT's truncated power for ``c_g < 2^62``, Miller's
    recurrence with polynomial coefficients otherwise, one product per
    group.  Cost ``O(G M(n^2) log c)``, never growing with ``r``.
    """
    if low < 1:
        raise ValueError("marked occupancies must start at 1 or more")
    limits.check(marked_cost(groups, n), what, advice="use fewer balls or fewer groups")
    S = n + 1
    length = (n + 1) * S
    total = None
    for c, a, b, w in groups:
        if b < a or c * a > n:
            return [mpz(0)] * (n + 1)
        b = min(b, n)
        if c >= _WORD and a == 0:
            part = _miller_marked(c, a, b, w, labelled, n, low, high)
        else:
            coeffs = [fmpq(0)] * ((b + 1) * S)
            for j in range(a, b + 1):
                value = fmpq(int(mpz(w) ** j), int(gmpy2.fac(j)) if labelled else 1)
                marked = low <= j and (high is None or j <= high)
                coeffs[j * S + (1 if marked else 0)] = value
            part = fmpq_poly(coeffs).pow_trunc(c, length)
        total = part if total is None else total.mul_low(part, length)
    coeffs = total.coeffs() if total is not None else [fmpq(1)]
    scale = int(gmpy2.fac(n)) if labelled else 1
    out = []
    for u in range(n + 1):
        i = n * S + u
        q = coeffs[i] if i < len(coeffs) else fmpq(0)
        value = q * scale
        out.append(mpz(int(value.p)) if value != 0 else mpz(0))
    return out


def _miller_marked(c, a, b, w, labelled, n, low, high) -> fmpq_poly:
    """``(sum_{j=0}^{b} y^{[j marked]} (w x)^j [/ j!])^c`` packed, by Miller's recurrence in ``Z[y]``.

    Only reached for ``c >= 2^62`` urns, hence ``a = 0`` (more urns with a
    lower bound would need more than ``n`` balls).
    """
    S = n + 1
    N: List[fmpz_poly] = [fmpz_poly([1])]
    ys = fmpz_poly([0, 1])
    one = fmpz_poly([1])
    c1 = c + 1
    for k in range(1, n + 1):
        acc = fmpz_poly([])
        binom = mpz(1)
        for j in range(1, min(k, b) + 1):
            factor = (c1 * j - k)
            if labelled:
                binom = divexact(binom * (k - j + 1), j)
                factor *= binom
            marked = low <= j and (high is None or j <= high)
            acc += int(factor) * (ys if marked else one) * N[k - j]
        N.append(fmpz_poly([int(divexact(mpz(int(v)), k)) for v in acc.coeffs()]) if acc != 0 else fmpz_poly([]))
    coeffs = [fmpq(0)] * ((n + 1) * S)
    p = mpz(1)
    fac = mpz(1)
    for k in range(n + 1):
        if k:
            p *= w
            fac *= k
        for u, v in enumerate(N[k].coeffs()):
            if v != 0:
                coeffs[k * S + u] = fmpq(int(v) * int(p), int(fac) if labelled else 1)
    return fmpq_poly(coeffs)
