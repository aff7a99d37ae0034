r"""Coefficient rows of urn groups: the counts of one group, and of a run of groups, for every ball number.

A group is ``c`` interchangeable urns with bounds ``a..b`` (``b`` finite and
tight, or ``None``) and an integer weight ``w`` (rational weights are first
scaled by the common denominator: the laws do not change, see
:func:`integer_weights`).  For ``m = 0..top`` its row is

* ordinary (BE, FD): ``w^m [x^m] (x^a + ... + x^b)^c`` — the weighted number
  of occupancy vectors of the group holding ``m`` balls;
* exponential (MB): ``w^m m! [x^m] (sum_{k=a}^{b} x^k/k!)^c`` — the weighted
  number of assignments of ``m`` labelled balls to the group's urns.

Rows of several groups combine by a product (ordinary) or a binomial
convolution (exponential, the labelled product of Flajolet & Sedgewick,
*Analytic Combinatorics*, 2009, §II.2).  Nothing is allocated per urn: ``c``
may be ``2**64`` or more, and every cost is in ``top``, the span ``b - a``
and the number of groups.

Algorithms: the binomial row ``C(m + c - 1, m)`` (no upper bound bites), the
three-term recurrence of :func:`enumerator.core.series.window_power_row`
(a capacity), ``c^m`` (MB unbounded), FLINT's truncated power of the
rational window (MB with a lower bound, or fewer than :data:`MILLER_COUNT`
urns), and J. C. P. Miller's recurrence for the power of a series,
``M_k = (1/k) sum_{i=1}^{min(k,s)} ((c+1) i - k) C(k, i) M_{k-i}``,
written on microstate counts ``M_k = k! [x^k]`` (Knuth, *TAOCP* vol. 2, 3rd
ed., 1997, §4.7; Henrici, *Applied and computational complex analysis*,
vol. 1, 1974, §1.6), exact in integers whatever the size of ``c``.
"""

from __future__ import annotations

import math
from collections import deque
from fractions import Fraction
from typing import Iterator, List, Optional, Sequence, Tuple

import gmpy2
from flint import fmpq, fmpq_poly, fmpz_poly

from ..core import series
from ..core.limits import STEPS_PER_SECOND, Cost, bigint_bytes, product_seconds

__all__ = [
    "MILLER_COUNT",
    "capped_levels",
    "capped_levels_row",
    "combine",
    "exponential_group_row",
    "exponential_route",
    "exponential_route_steps",
    "group_row",
    "integer_weights",
    "miller_row",
    "ordinary_group_row",
    "row_bits",
    "row_degree",
    "rows_cost",
    "scale_by_powers",
    "suffix_rows",
]

mpz = gmpy2.mpz

#: Groups of this many urns or more take Miller's recurrence: FLINT's truncated powers take a machine-word exponent.
MILLER_COUNT = 2 ** 62


def integer_weights(weights: Sequence[Fraction]) -> Tuple[List[int], int]:
    """Scale rational weights to integers by their common denominator ``D``.

    Every configuration's weight ``prod w_i^{k_i}`` is multiplied by ``D^n``
    (the same for all of them), so the law is unchanged.

    >>> integer_weights([Fraction(1, 2), Fraction(2, 3), Fraction(1)])
    ([3, 4, 6], 6)
    """
    d = 1
    for w in weights:
        d = d * w.denominator // math.gcd(d, w.denominator)
    return [int(w * d) for w in weights], d


def scale_by_powers(row: List, weight: int) -> List:
    """Entry ``k`` of *row* times ``weight^k`` (the row of urns of that weight)."""
    if weight == 1:
        return row
    out, power = [], mpz(1)
    for value in row:
        out.append(value * power if value else value)
        power *= weight
    return out


def ordinary_group_row(count: int, lower: int, upper: Optional[int], top: int, weight: int = 1) -> List:
    """``w^m [x^m] (x^a + ... + x^b)^c`` for ``m = 0..top`` (as ``mpz``).

    Parameters
    ----------
    count : int
        ``c >= 1`` urns (any size).
    lower, upper : int, int or None
        The bounds ``a`` and ``b`` of each urn (``None``: no upper bound).
    top : int
        The last ball number.
    weight : int
        The integer weight ``w`` of each urn.

    Returns
    -------
    list of mpz
        ``top + 1`` entries: the weighted number of vectors of the group.

    Notes
    -----
    ``C(m + c - 1, m)`` carried by exact small steps when no bound bites,
    else the three-term recurrence of
    :func:`enumerator.core.series.window_power_row` (Miller's method,
    Knuth *TAOCP* vol. 2 §4.7): ``O(top)`` big-integer steps whatever ``c``.

    Examples
    --------
    >>> [int(v) for v in ordinary_group_row(3, 0, 2, 6)]
    [1, 3, 6, 7, 6, 3, 1]
    >>> [int(v) for v in ordinary_group_row(2**64, 0, None, 2)][2] == (2**64 + 1) * 2**64 // 2
    True
    """
    low = count * lower
    if low > top or (upper is not None and upper < lower):
        return [mpz(0)] * (top + 1)
    span_top = top - low
    if upper is None or upper - lower >= span_top:
        values = series.binomial_row(count, span_top)
    else:
        values = series.window_power_row(upper - lower, count, span_top)
    return scale_by_powers([mpz(0)] * low + list(values), weight)


def exponential_group_row(count: int, lower: int, upper: Optional[int], top: int, weight: int = 1) -> List:
    """``w^m m! [x^m] (sum_{k=a}^{b} x^k/k!)^c`` for ``m = 0..top`` (as ``mpz``).

    Parameters
    ----------
    count, lower, upper, top, weight
        As in :func:`ordinary_group_row`.

    Returns
    -------
    list of mpz
        ``top + 1`` entries: the weighted number of assignments of ``m``
        labelled balls to the group's urns.

    Notes
    -----
    ``(c w)^m`` without a biting bound; Miller's recurrence on ``M_k = k!
    [x^k]`` (:func:`miller_row`, ``O(top * min(top, b))`` steps) for
    :data:`MILLER_COUNT` urns or more or spans up to 16; else FLINT's
    truncated power of the rational window (``O(M(top) log c)``; the only
    route with a lower bound, where ``c <= top / a``).

    Examples
    --------
    >>> [int(v) for v in exponential_group_row(3, 1, None, 4)]  # onto maps: 3! S(m, 3)
    [0, 0, 0, 6, 36]
    >>> [int(v) for v in exponential_group_row(10**30, 0, 1, 2)][2] == 10**30 * (10**30 - 1)
    True
    """
    low = count * lower
    if low > top or (upper is not None and upper < lower):
        return [mpz(0)] * (top + 1)
    high = lower + (top - low) if upper is None else min(upper, lower + (top - low))
    if lower == 0 and high >= top:
        out, value = [], mpz(1)
        for _ in range(top + 1):
            out.append(value)
            value *= count
        return scale_by_powers(out, weight)
    route = exponential_route(count, lower, high, top)
    if route == "miller":
        # O(top * s) steps whatever c (binary powering costs log2 c products)
        return scale_by_powers(miller_row(count, high, top, True), weight)
    if route == "levels":
        return scale_by_powers(capped_levels_row(count, high, top), weight)
    return scale_by_powers(_egf_power_row(count, lower, high, top), weight)


def _levels_steps(count: int, cap: int, top: int) -> int:
    """Steps of :func:`capped_levels_row`: ``sum_t (K_t - cap)`` over the levels with ``K_t > cap``."""
    steps, t = 0, 0
    while t <= count:
        K = top - t * (cap + 1)
        if K <= cap:
            break
        steps += K - cap
        t += 1
    return steps


def exponential_route(count: int, lower: int, high: int, top: int) -> str:
    """The route of :func:`exponential_group_row` for a bounded group: ``"miller"``, ``"levels"`` or ``"power"``.

    Miller's recurrence when FLINT's power cannot take the exponent
    (:data:`MILLER_COUNT`) or the span is at most 16; otherwise, without a
    lower bound, the cheaper in small steps of Miller (``top * b``) and the
    level recursion (:func:`capped_levels_row`, ``~ top^2 / (2b)``) when
    that is below ``top^2 / 8`` (about the cost of the rational power of a
    row of ``top`` entries, measured 1.6-3.4 s against 0.04-0.13 s for
    levels at 200 urns, ``top = 2000``, ``b`` = 30 and 100); else FLINT's
    rational power.
    """
    if lower == 0 and (count >= MILLER_COUNT or high <= 16):
        return "miller"
    if lower == 0:
        miller = top * high
        levels = _levels_steps(count, high, top)
        if min(miller, levels) <= top * top / 8:
            return "miller" if miller <= levels else "levels"
    return "power"


def exponential_route_steps(count: int, lower: int, high: int, top: int) -> Optional[int]:
    """Small-number steps of the route :func:`exponential_route` picks (None for FLINT's power)."""
    route = exponential_route(count, lower, high, top)
    if route == "miller":
        return top * max(1, high)
    if route == "levels":
        return _levels_steps(count, high, top) + top
    return None


def capped_levels(count: int, cap: int, top: int) -> Iterator[Tuple[int, int, List]]:
    r"""The level recursion over the number of urns, deepest level first.

    ``L_t(k)`` counts the assignments of ``k`` labelled balls to ``c - t``
    urns (``c`` = *count*) holding at most ``b`` (= *cap*) each.  From
    ``e_b' = e_b - x^b/b!``,
    ``L_t(k+1) = j (L_t(k) - C(k, b) L_{t+1}(k - b))`` with ``j = c - t``
    and ``L_t(k) = j^k`` for ``k <= b`` (the differential equation of the
    truncated exponential; Flajolet & Sedgewick, *Analytic Combinatorics*,
    2009, §VII.8).  Level ``t`` is needed up to ``K_t = top - t(b+1)``.

    Yields
    ------
    (t, K_t, row)
        For ``t = T, T-1, ..., 0`` (``T = min(c, top // (b+1))``), with
        ``row[k] = L_t(k)`` for ``k = 0..K_t``; the last one is level 0.

    Notes
    -----
    Cost ``sum_t (K_t - b) ~ top^2 / (2b)`` small-by-big multiplications.
    :func:`capped_levels_row` keeps level 0; the maximum-load laws
    (:mod:`enumerator.algorithms.extremes`) also keep each level's tail.
    """
    b = cap
    T = min(count, top // (b + 1))
    binomials = [mpz(1)] * max(top - b, 1)  # C(k, b) for k = b .. top - 1
    c = mpz(1)
    for k in range(b, top - 1):
        c = gmpy2.divexact(c * (k + 1), k + 1 - b)
        binomials[k + 1 - b] = c
    prev: List = []
    for t in range(T, -1, -1):
        j = count - t
        K = top - t * (b + 1)
        if j == 0:
            cur = [mpz(1)] + [mpz(0)] * K
        else:
            cur = [mpz(0)] * (K + 1)
            v = mpz(1)
            cur[0] = v
            for k in range(1, min(b, K) + 1):
                v *= j
                cur[k] = v
            if K > b:
                for k in range(b, K):
                    v = j * (v - binomials[k - b] * prev[k - b])
                    cur[k + 1] = v
        yield t, K, cur
        prev = cur


def capped_levels_row(count: int, cap: int, top: int) -> List:
    r"""``k! [x^k] e_b(x)^c`` for ``k = 0..top``: assignments of ``k`` labelled balls to ``c`` urns holding at most ``b``.

    Level 0 of :func:`capped_levels` (``b >= top``: the powers ``c^k``);
    cost ``~ top^2 / (2b)`` small-by-big steps.

    >>> [int(v) for v in capped_levels_row(3, 1, 4)]  # injective maps into 3 urns: 3^(k)
    [1, 3, 6, 6, 0]
    """
    if cap >= top:
        out, value = [], mpz(1)
        for _ in range(top + 1):
            out.append(value)
            value *= count
        return out
    # level 0 comes last; each deeper level is dropped once the next is built
    return deque(capped_levels(count, cap, top), maxlen=1)[0][2]


def miller_row(c: int, span: int, top: int, labelled: bool) -> List:
    r"""Coefficients of ``(sum_{j=0}^{span} x^j [/ j!])^c`` up to ``x^top``, any exponent ``c``.

    Miller's recurrence (Knuth, TAOCP vol. 2, §4.7, eq. (9)) for ``g = f^c``
    with ``f_0 = 1``: ``k g_k = sum_{j=1}^{k} ((c+1) j - k) f_j g_{k-j}``.
    Labelled balls keep ``N(k) = k! g_k`` (integers):
    ``N(k) = (1/k) sum_j ((c+1) j - k) C(k, j) N(k-j)``.  ``O(top * span)``
    small-by-big multiplications, exact divisions.

    >>> [int(v) for v in miller_row(3, 1, 3, True)]  # injective maps into 3 urns: 3^(k)
    [1, 3, 6, 6]
    """
    N = [mpz(0)] * (top + 1)
    N[0] = mpz(1)
    c1 = c + 1
    for k in range(1, top + 1):
        total = mpz(0)
        binom = mpz(1)
        for j in range(1, min(k, span) + 1):
            if labelled:
                binom = gmpy2.divexact(binom * (k - j + 1), j)
                total += (c1 * j - k) * binom * N[k - j]
            else:
                total += (c1 * j - k) * N[k - j]
        N[k] = gmpy2.divexact(total, k)
    return N


def _egf_power_row(c: int, a: int, b: int, top: int) -> List:
    """``k! [x^k] (sum_{j=a}^{b} x^j / j!)^c`` by FLINT's truncated power (``c`` below a machine word)."""
    base = fmpq_poly([0] * a + [fmpq(1, int(gmpy2.fac(j))) for j in range(a, b + 1)])
    power = base.pow_trunc(c, top + 1)
    coeffs = power.coeffs()
    out = [mpz(0)] * (top + 1)
    fac = mpz(1)
    for k in range(top + 1):
        if k:
            fac *= k
        if k < len(coeffs) and coeffs[k] != 0:
            q = coeffs[k]
            out[k] = gmpy2.divexact(fac * int(q.p), int(q.q))
    return out


def group_row(kind: str, count: int, lower: int, upper: Optional[int], top: int, weight: int = 1) -> List:
    """The row of one group: :func:`ordinary_group_row` or :func:`exponential_group_row` by *kind*.

    Parameters
    ----------
    kind : str
        ``"ordinary"`` (BE, FD) or ``"exponential"`` (MB).
    count, lower, upper, top, weight
        As in :func:`ordinary_group_row`.

    Returns
    -------
    list of mpz
    """
    if kind == "exponential":
        return exponential_group_row(count, lower, upper, top, weight)
    return ordinary_group_row(count, lower, upper, top, weight)


def combine(kind: str, left: Sequence, right: Sequence, top: int) -> List:
    """The row of two disjoint sets of urns from theirs, for ``m = 0..top``.

    Parameters
    ----------
    kind : str
        ``"ordinary"`` or ``"exponential"``.
    left, right : sequence of int
        The two rows (at least ``top + 1`` entries, or shorter: zeros).
    top : int
        The last ball number.

    Returns
    -------
    list of mpz

    Notes
    -----
    Ordinary: the truncated product ``sum_j L_j R_{m-j}``; exponential: the
    binomial convolution ``sum_j C(m, j) L_j R_{m-j}``, computed as one FLINT
    product of ``top!/j!``-scaled rows followed by exact divisions.  Only up
    to the sum of the rows' degrees, and a constant row is a scaling.

    >>> [int(v) for v in combine("exponential", [1, 1, 1], [1, 1, 1], 2)]  # 2 urns, MB
    [1, 2, 4]
    """
    dx, dy = row_degree(left), row_degree(right)
    if dx < 0 or dy < 0:
        return [mpz(0)] * (top + 1)
    reach = min(top, dx + dy)
    if reach < top:
        # short rows (a few urns, small bounds) cost what their length says, not top
        return combine(kind, left[: reach + 1], right[: reach + 1], reach) + [mpz(0)] * (top - reach)
    if dx == 0 or dy == 0:
        # one row is a constant: a scaling
        c, row = (left[0], right) if dx == 0 else (right[0], left)
        out = [c * v for v in row[: top + 1]]
        return out + [mpz(0)] * (top + 1 - len(out))
    if kind != "exponential":
        product = fmpz_poly([int(v) for v in left[: top + 1]]).mul_low(
            fmpz_poly([int(v) for v in right[: top + 1]]), top + 1)
        return [mpz(v) for v in series.coefficients(product, top)]
    # X_j = x_j top!/j!, Y_j = y_j top!/j!: [z^m] X Y = top!^2 / m! * sum_j C(m, j) x_j y_{m-j}
    falls = [mpz(1)] * (top + 1)  # top!/j!
    for j in range(top - 1, -1, -1):
        falls[j] = falls[j + 1] * (j + 1)
    X = fmpz_poly([int(v * f) for v, f in zip(left, falls)])
    Y = fmpz_poly([int(v * f) for v, f in zip(right, falls)])
    coeffs = X.mul_low(Y, top + 1).coeffs()
    ftop = falls[0]
    out = []
    for m in range(top + 1):
        c = mpz(int(coeffs[m])) if m < len(coeffs) else mpz(0)
        out.append(gmpy2.divexact(c, ftop * falls[m]) if c else mpz(0))
    return out


def row_degree(row: Sequence) -> int:
    """The index of the last nonzero entry (-1 for a zero row)."""
    d = len(row) - 1
    while d >= 0 and not row[d]:
        d -= 1
    return d


def suffix_rows(kind: str, groups: Sequence[Tuple[int, int, Optional[int], int]], top: int) -> List[List]:
    """Rows of the groups ``g, g+1, ...`` for every ``g`` (the last entry is the empty suffix ``[1, 0, ...]``).

    *groups* are ``(count, lower, upper, integer weight)``.  Cost: one
    :func:`group_row` and one :func:`combine` per group (see :func:`rows_cost`).
    """
    out = [[mpz(1)] + [mpz(0)] * top]
    for count, lower, upper, weight in reversed(list(groups)):
        row = group_row(kind, count, lower, upper, top, weight)
        out.append(combine(kind, row, out[-1], top))
    out.reverse()
    return out


def row_bits(kind: str, urns: int, top: int, weight_bits: int = 0) -> int:
    """An upper bound on the bits of any entry of a row of *urns* urns up to *top* balls.

    Ordinary: ``log2 C(top + r, top)`` (by ``lgamma`` while ``r`` is below
    ``2^60``, else ``top log2(top + r)``); exponential: ``top log2 r``; each
    weight adds at most *weight_bits* per ball.
    """
    if kind == "exponential":
        base = top * max(1, urns.bit_length())
    elif urns < 2**60:
        nats = math.lgamma(top + urns + 1) - math.lgamma(top + 1) - math.lgamma(urns + 1)
        base = int(nats / math.log(2)) + 1
    else:
        base = top * (urns + top).bit_length()
    return max(64, base + top * weight_bits)


def rows_cost(kind: str, groups: Sequence[Tuple[int, int, Optional[int], int]], top: int, rows: int = 0) -> Cost:
    """The cost of :func:`suffix_rows` for *groups* (and of keeping *rows* extra rows of the same size).

    Time: per group, its row (``O(top)`` steps, or ``O(top * min(top, s))``
    for Miller's recurrence) and one product of rows of ``top + 1`` entries
    of :func:`row_bits` bits; memory: ``G + 1 + rows`` rows.
    """
    urns = sum(g[0] for g in groups)
    weight_bits = max((int(g[3]).bit_length() for g in groups), default=1)
    bits = row_bits(kind, urns, top, weight_bits)
    entries = (len(groups) + 1 + rows) * (top + 1)
    steps = 0
    for _count, lower, upper, _ in groups:
        span = top if upper is None else min(top, upper - lower)
        small = None
        if kind == "exponential" and span < top:
            small = exponential_route_steps(_count, lower, lower + span, top)
        steps += small if small is not None else (top + 1) * max(1, _count.bit_length() if span < top else 1)
    seconds = (steps / STEPS_PER_SECOND) * max(1.0, bits / 640.0)
    seconds += len(groups) * product_seconds(bits * (top + 1))
    return Cost(seconds=seconds, memory=entries * bigint_bytes(bits))
