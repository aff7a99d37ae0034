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
(a capacity), ``c^m`` (MB unbounded), and J. C. P. Miller's recurrence for
the power of a series,
``M_k = (1/k) sum_{i=1}^{min(k,s)} ((c+1) i - k) C(k, i) M_{k-i}``,
written on microstate counts ``M_k = k! [x^k]`` (Knuth, *TAOCP* vol. 2, 3rd
ed., 1997, §4.7; Henrici, *Applied and computational complex analysis*,
vol. 1, 1974, §1.6), exact in integers whatever the size of ``c``.
"""

from __future__ import annotations

import math
from fractions import Fraction
from typing import List, Optional, Sequence, Tuple

import gmpy2
from flint import fmpz_poly

from ..core import series
from ..core.limits import STEPS_PER_SECOND, Cost, bigint_bytes, product_seconds

__all__ = [
    "combine",
    "exponential_group_row",
    "group_row",
    "integer_weights",
    "ordinary_group_row",
    "row_bits",
    "rows_cost",
    "suffix_rows",
]

mpz = gmpy2.mpz


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


def _scale_by_powers(row: List, weight: int) -> List:
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
    if low > top:
        return [mpz(0)] * (top + 1)
    span_top = top - low
    if upper is None or upper - lower >= span_top:
        values = series.binomial_row(count, span_top)
    else:
        values = series.window_power_row(upper - lower, count, span_top)
    return _scale_by_powers([mpz(0)] * low + list(values), weight)


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
    [x^k]`` (``O(top * min(top, b))`` steps) for ``2^32`` urns or more or
    spans up to 16; else FLINT's binary power of the window scaled by
    ``top!`` (``O(M(top) log c)``; the only route with a lower bound, where
    ``c <= top / a``).

    Examples
    --------
    >>> [int(v) for v in exponential_group_row(3, 1, None, 4)]  # onto maps: 3! S(m, 3)
    [0, 0, 0, 6, 36]
    >>> [int(v) for v in exponential_group_row(10**30, 0, 1, 2)][2] == 10**30 * (10**30 - 1)
    True
    """
    low = count * lower
    if low > top:
        return [mpz(0)] * (top + 1)
    span_top = top - low
    if lower == 0 and (upper is None or upper >= top):
        out, value = [], mpz(1)
        for _ in range(top + 1):
            out.append(value)
            value *= count
        return _scale_by_powers(out, weight)
    if lower == 0 and (count >= 2**32 or upper <= 16):
        # Miller's recurrence on M_k = k! [x^k] f^c with f = sum_{i<=s} x^i/i!:
        # O(top * s) steps whatever c (binary powering costs log2 c products).
        s = upper
        c1 = count + 1
        out = [mpz(1)] + [mpz(0)] * top
        for k in range(1, top + 1):
            total = mpz(0)
            binom = mpz(1)
            for i in range(1, min(k, s) + 1):
                binom = binom * (k - i + 1) // i
                total += (c1 * i - k) * binom * out[k - i]
            out[k] = gmpy2.divexact(total, k)
        return _scale_by_powers(out, weight)
    # Fewer than 2^32 urns (any with a lower bound: count <= top / lower): a
    # truncated binary power of the window scaled by top! (exact divisions
    # after each product), O(M(top) log c).
    fac = gmpy2.fac
    scale = fac(top)
    high = span_top if upper is None else min(upper - lower, span_top)
    window = fmpz_poly([int(scale // fac(lower + k)) for k in range(high + 1)])
    product = series.scaled_power(window, count, span_top, scale)
    out = [mpz(0)] * (top + 1)
    m_fac = fac(low)
    for j in range(span_top + 1):
        m = low + j
        if j:
            m_fac *= m
        c = series.coefficient(product, j)
        if c:
            out[m] = gmpy2.divexact(m_fac * c, scale)
    return _scale_by_powers(out, weight)


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
    product of ``top!/j!``-scaled rows followed by exact divisions.

    >>> [int(v) for v in combine("exponential", [1, 1, 1], [1, 1, 1], 2)]  # 2 urns, MB
    [1, 2, 4]
    """
    if kind != "exponential":
        product = fmpz_poly([int(v) for v in left[: top + 1]]).mul_low(
            fmpz_poly([int(v) for v in right[: top + 1]]), top + 1)
        return [mpz(v) for v in series.coefficients(product, top)]
    fac = gmpy2.fac
    scale = fac(top)
    scaled = []
    for row in (left, right):
        values, f = [], scale
        for j in range(top + 1):
            values.append(int(row[j] * f) if j < len(row) and row[j] else 0)
            if j < top:
                f = f // (j + 1)
        scaled.append(fmpz_poly(values))
    product = scaled[0].mul_low(scaled[1], top + 1)
    square = scale * scale
    out, m_fac = [], mpz(1)
    for m in range(top + 1):
        if m:
            m_fac *= m
        c = series.coefficient(product, m)
        out.append(gmpy2.divexact(m_fac * c, square) if c else mpz(0))
    return out


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
        miller = kind == "exponential" and lower == 0 and span < top and (_count >= 2**32 or span <= 16)
        steps += (top + 1) * (max(1, span) if miller else max(1, _count.bit_length() if span < top else 1))
    seconds = (steps / STEPS_PER_SECOND) * max(1.0, bits / 640.0)
    seconds += len(groups) * product_seconds(bits * (top + 1))
    return Cost(seconds=seconds, memory=entries * bigint_bytes(bits))
