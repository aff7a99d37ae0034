"""Exact truncated power-series arithmetic: the hot kernel.

Series are python-flint ``fmpz_poly`` values (FLINT's exact integer
polynomials, with subquadratic Kronecker-substitution multiplication).  Every
function truncates at a degree bound so the work is proportional to the
coefficients that are needed.

References: W. Hart, *Fast library for number theory: an introduction*, ICMS
2010 (FLINT); A. Schönhage, *Asymptotically fast algorithms for the numerical
multiplication and division of polynomials with complex coefficients*, 1982
(Kronecker substitution).
"""

from __future__ import annotations

from typing import Iterable, List, Sequence

import gmpy2
from flint import fmpz_poly

__all__ = [
    "binomial_row",
    "coefficient",
    "coefficients",
    "dot_reversed",
    "falling_window",
    "from_coefficients",
    "inverse",
    "miller_power",
    "miller_rational_power",
    "one_minus_power",
    "power",
    "product",
    "scaled_power",
    "scaled_product",
    "window",
    "window_power_row",
    "window_span",
]

mpz = gmpy2.mpz

#: :func:`miller_power` gathers the terms of a coefficient before one product by
#: an exponent longer than this many bits (when the base has several terms).
SPLIT_EXPONENT_BITS = 512

#: Use the full power (then truncate) when its degree is at most this many
#: times the truncation degree; FLINT's ``pow_trunc`` works by repeated
#: truncated squaring and is several times slower than the full binary power,
#: which exploits the exact degree (measured in scripts/bench.py).
FULL_POWER_RATIO = 6


def from_coefficients(values: Sequence) -> fmpz_poly:
    """Build a series from its coefficient list ``[c_0, c_1, ...]``."""
    return fmpz_poly([int(v) for v in values])


def coefficients(series: fmpz_poly, degree: int) -> List[int]:
    """Return ``[c_0, ..., c_degree]`` as Python ints (zero-padded)."""
    values = [int(c) for c in series.coeffs()[: degree + 1]]
    values.extend([0] * (degree + 1 - len(values)))
    return values


def coefficient(series: fmpz_poly, k: int) -> int:
    """Return the coefficient of ``x^k`` as a Python int (0 beyond the degree)."""
    if k < 0 or k > series.degree():
        return 0
    return int(series[k])


def window(low: int, high: int) -> fmpz_poly:
    """``x^low + ... + x^high`` (an urn holding between *low* and *high* balls)."""
    return fmpz_poly([0] * low + [1] * (high - low + 1))


def falling_window(low: int, high: int) -> fmpz_poly:
    """``sum_{k=0}^{high-low} (high!/(k+low)!) x^k``: ``high!/x^low`` times the EGF window.

    The exponential generating function ``sum_{k=low}^{high} x^k/k!`` scaled
    by ``high!`` and shifted by ``x^low`` has integer coefficients
    ``high!/k!`` (products of consecutive integers), built from the top down
    with one small multiplication each.
    """
    span = high - low
    values = [0] * (span + 1)
    c = mpz(1)
    for k in range(high, low - 1, -1):
        values[k - low] = c
        c *= k
    return fmpz_poly([int(v) for v in values])


def one_minus_power(step: int, exponent: int, degree: int) -> fmpz_poly:
    """``(1 - x^step)^exponent`` truncated at *degree*, by the binomial theorem.

    The sparse coefficients ``(-1)^j C(exponent, j)`` are updated one from the
    previous with one small multiplication and one exact division.
    """
    top = min(exponent, degree // step)
    values = [0] * (top * step + 1)
    c = mpz(1)
    for j in range(top + 1):
        values[j * step] = -c if j & 1 else c
        c = c * (exponent - j) // (j + 1)
    return fmpz_poly([int(v) for v in values])


def power(base: fmpz_poly, exponent: int, degree: int) -> fmpz_poly:
    """``base^exponent``, exact in every coefficient up to *degree*.

    Chooses FLINT's full binary power when the full degree is within
    :data:`FULL_POWER_RATIO` of the truncation, else ``pow_trunc``.  The
    result may carry terms above *degree* (truncating costs a copy); use
    ``truncate`` or :func:`coefficients` when they matter.
    """
    if exponent == 0:
        return fmpz_poly([1])
    full_degree = base.degree() * exponent
    if full_degree <= FULL_POWER_RATIO * (degree + 1):
        return base ** exponent
    span = window_span(base)
    if span is not None:
        # A window far above the truncation: the three-term recurrence of
        # window_power_row costs O(degree) big operations, pow_trunc
        # O(M(degree) log exponent).
        return fmpz_poly([int(c) for c in window_power_row(span, exponent, degree)])
    return base.pow_trunc(exponent, degree + 1)


def window_span(base: fmpz_poly):
    """The span ``s`` of a window ``1 + x + ... + x^s``, or ``None`` for any other series.

    Parameters
    ----------
    base : fmpz_poly
        A series.

    Returns
    -------
    int or None
        ``s >= 1`` when *base* is ``1 + x + ... + x^s`` with ``s < 64``,
        else ``None``.

    Notes
    -----
    Recognises the bases whose powers :func:`window_power_row` computes by
    its three-term recurrence (Knuth, *TAOCP* vol. 2, 3rd ed., 1997, §4.7)
    instead of by repeated squaring; ``O(s)``.

    Examples
    --------
    >>> window_span(fmpz_poly([1, 1, 1])), window_span(fmpz_poly([1, 2, 1])), window_span(fmpz_poly([1]))
    (2, None, None)
    """
    length = base.length()
    if length < 2 or length > 64:
        return None
    if all(c == 1 for c in base.coeffs()):
        return length - 1
    return None


def window_power_row(span: int, exponent: int, degree: int, unbounded: int = 0) -> List:
    r"""``[x^m] (1 + x + ... + x^span)^exponent (1 - x)^(-unbounded)`` for ``m = 0..degree``.

    The configurations of ``m`` balls in ``exponent`` urns of capacity
    *span* and *unbounded* urns without a bound, as ``mpz``.  The series
    ``y = (1 - x^d)^e (1 - x)^{-f}`` (``d = span + 1``, ``f = e + unbounded``)
    satisfies ``(1 - x)(1 - x^d) y' = (f - e d x^{d-1} + (e d - f) x^d) y``, so
    its coefficients obey the three-term recurrence

    ``m c_m = (m - 1 + f) c_{m-1} + (m - d - e d) c_{m-d} + (e d - f - m + d + 1) c_{m-d-1}``

    whatever the exponent: ``O(degree)`` small multiplications and exact
    divisions, against ``O(M(degree) log e)`` for repeated squaring.  This
    is the differential-equation method for powers of series (Euler;
    J. C. P. Miller; Knuth, *TAOCP* vol. 2, 3rd ed., 1997, §4.7).  Without
    unbounded urns the result is a palindromic polynomial of degree
    ``e * span``, so only its lower half is computed and the rest mirrored.
    """
    if degree < 0:
        return []
    if span < 0 or exponent < 0 or unbounded < 0:
        raise ValueError("window_power_row needs span, exponent and unbounded >= 0")
    if span == 0 or exponent == 0:
        if unbounded:
            return binomial_row(unbounded, degree)
        return [mpz(1)] + [mpz(0)] * degree
    d = span + 1
    e = exponent
    f = exponent + unbounded
    c = [mpz(0)] * (degree + 1)
    c[0] = mpz(1)
    if unbounded:
        top = None
        last = degree
    else:
        top = e * span
        last = min(degree, top // 2)
    divexact = gmpy2.divexact
    ed = e * d
    # m < d: only the c_{m-1} term; m == d: no c_{m-d-1} term yet.
    for m in range(1, min(last, d - 1) + 1):
        c[m] = divexact((m - 1 + f) * c[m - 1], m)
    if last >= d:
        c[d] = divexact((d - 1 + f) * c[d - 1] - ed * c[0], d)
    for m in range(d + 1, last + 1):
        c[m] = divexact(
            (m - 1 + f) * c[m - 1] + (m - d - ed) * c[m - d] + (ed - f - m + d + 1) * c[m - d - 1],
            m,
        )
    if top is not None:
        for m in range(last + 1, min(degree, top) + 1):
            c[m] = c[top - m]
    return c


def miller_power(values: Sequence, exponent: int, degree: int, *, labelled: bool = False) -> List:
    r"""The coefficients of ``F(x)^exponent`` up to *degree*, for an exponent of any size.

    Parameters
    ----------
    values : sequence of int
        The coefficients ``f_0, ..., f_s`` of a polynomial ``F`` with
        ``f_0 != 0``: the ordinary series ``F = sum f_j x^j``, or with
        *labelled* the exponential one ``F = sum f_j x^j / j!``.
    exponent : int
        Any size (``2**64`` is ordinary): it enters the recurrence only as
        a multiplier.  Negative only when ``f_0 = ±1`` (the power is then a
        series with integer coefficients).
    degree : int
        The last coefficient wanted.
    labelled : bool
        Return ``k! [x^k] F^e`` (the binomial-convolution power of the
        sequence ``f``) instead of ``[x^k] F^e``.

    Returns
    -------
    list of mpz
        ``degree + 1`` exact integers (integral because ``f`` is: a power of
        an integer polynomial, or a binomial-convolution power of an integer
        sequence).

    Raises
    ------
    ValueError
        For ``f_0 = 0``, a negative exponent with ``f_0 != ±1``, or an
        empty *values*.

    Notes
    -----
    J. C. P. Miller's recurrence for the power of a series (Knuth, *The Art
    of Computer Programming*, vol. 2, 3rd ed., 1997, §4.7, eq. (9);
    Henrici, *Applied and Computational Complex Analysis*, vol. 1, §1.6):
    ``P = F^e`` satisfies ``F P' = e F' P``, so

    ``k f_0 p_k = sum_{j=1}^{min(k, s)} ((e + 1) j - k) f_j p_{k-j}``,

    and for ``N_k = k! p_k`` with ``f_j = g_j / j!`` the same identity reads
    ``k g_0 N_k = sum_j ((e + 1) j - k) C(k, j) g_j N_{k-j}``.  Every
    division is exact.  For an exponent longer than
    :data:`SPLIT_EXPONENT_BITS` bits the sum is taken as
    ``(e + 1) sum j t_j - k sum t_j``, so each coefficient costs one product
    by the exponent.  Cost:
    ``degree * min(s, degree)`` multiplications of an entry by a small
    number plus ``degree`` products by ``e + 1``, ``p_0 = f_0^e`` apart
    (callers normalise ``f_0 = 1`` for huge exponents); memory ``degree + 1``
    entries.

    Examples
    --------
    >>> [int(c) for c in miller_power([1, 1, 1], 3, 6)]   # (1 + x + x^2)^3
    [1, 3, 6, 7, 6, 3, 1]
    >>> e = 2**64   # k! [x^k] (1 + x)^e is the falling factorial e (e-1) ... (e-k+1)
    >>> [int(c) for c in miller_power([1, 1], e, 2, labelled=True)] == [1, e, e * (e - 1)]
    True
    """
    if degree < 0:
        return []
    f = [mpz(v) for v in values]
    if not f or f[0] == 0:
        raise ValueError("miller_power needs a series with a nonzero constant term")
    s = len(f) - 1
    f0 = f[0]
    if exponent < 0 and f0 not in (1, -1):
        raise ValueError("miller_power needs an exponent >= 0, or a constant term 1 or -1")
    p = [mpz(0)] * (degree + 1)
    if f0 == 1:
        p[0] = mpz(1)
    elif f0 == -1:
        p[0] = mpz(-1) if exponent & 1 else mpz(1)
    else:
        p[0] = f0 ** exponent
    e1 = exponent + 1
    divexact = gmpy2.divexact
    steps = [(j, f[j]) for j in range(1, s + 1) if f[j]]
    # With a long exponent and several terms, sum ((e + 1) j - k) t_j is taken as
    # (e + 1) sum j t_j - k sum t_j: one product by the exponent per coefficient
    # instead of one per term (measured: 2-4x faster at 1000+ bits and 3+ terms,
    # 1.3-1.8x slower with one term or a short exponent, where the extra sums cost more).
    split = len(steps) > 1 and e1.bit_length() > SPLIT_EXPONENT_BITS
    for k in range(1, degree + 1):
        total = mpz(0)
        if split:
            weighted = mpz(0)
            choose = mpz(1)
            last = 0
            for j, fj in steps:
                if j > k:
                    break
                if labelled:
                    for i in range(last + 1, j + 1):
                        choose = divexact(choose * (k - i + 1), i)
                    last = j
                    fj = fj * choose
                t = fj * p[k - j]
                total += t
                weighted += j * t
            total = e1 * weighted - k * total
        elif labelled:
            choose = mpz(1)
            for j in range(1, min(k, s) + 1):
                choose = divexact(choose * (k - j + 1), j)
                fj = f[j]
                if fj:
                    total += (e1 * j - k) * fj * choose * p[k - j]
        else:
            for j in range(1, min(k, s) + 1):
                fj = f[j]
                if fj:
                    total += (e1 * j - k) * fj * p[k - j]
        p[k] = divexact(total, k * f0)
    return p


def miller_rational_power(values: Sequence, exponent, degree: int) -> List:
    r"""The coefficients of ``F(x)^a`` up to *degree* for a rational exponent ``a`` and ``f_0 = 1``.

    Parameters
    ----------
    values : sequence of rationals
        The coefficients ``f_0 = 1, f_1, ..., f_s`` of a polynomial ``F``
        (``int``, ``Fraction``, ``mpq`` or ``fmpq``).
    exponent : int or Fraction
        ``a = p/q``, any sign and any size.
    degree : int
        The last coefficient wanted.

    Returns
    -------
    list of mpq
        ``degree + 1`` exact rationals: the binomial series
        ``F^a = sum_k C(a, k) (F - 1)^k``, which has rational coefficients
        because ``f_0 = 1`` (``F^a`` is the power series whose constant term
        is 1).

    Raises
    ------
    ValueError
        For ``f_0 != 1`` (scale by ``f_0`` first; ``f_0^a`` is the caller's
        business) or an empty *values*.

    Notes
    -----
    J. C. P. Miller's recurrence (Knuth, *The Art of Computer Programming*,
    vol. 2, 3rd ed., 1997, §4.7, eq. (9)): ``G = F^a`` satisfies
    ``F G' = a F' G``, so ``k g_k = sum_{j=1}^{min(k, s)} ((a + 1) j - k) f_j g_{k-j}``
    for any exponent, whole or not.  Cost: ``degree * min(s, degree)``
    products of GMP rationals (``mpq``, reduced by a gcd each), whose
    size grows linearly in ``k`` and in ``log |p| + log q``; memory
    ``degree + 1`` entries.

    Examples
    --------
    >>> from fractions import Fraction
    >>> [str(c) for c in miller_rational_power([1, 1], Fraction(1, 2), 4)]   # sqrt(1 + x)
    ['1', '1/2', '-1/8', '1/16', '-5/128']
    >>> [int(c) for c in miller_rational_power([1, -1], -3, 4)]              # (1 - x)^-3
    [1, 3, 6, 10, 15]
    """
    if degree < 0:
        return []
    mpq = gmpy2.mpq
    f = [mpq(int(v.numerator), int(v.denominator)) for v in values]
    if not f or f[0] != 1:
        raise ValueError("miller_rational_power needs a series with constant term 1")
    s = len(f) - 1
    a1 = mpq(int(exponent.numerator), int(exponent.denominator)) + 1
    steps = [(j, f[j]) for j in range(1, s + 1) if f[j]]
    g = [mpq(0)] * (degree + 1)
    g[0] = mpq(1)
    for k in range(1, degree + 1):
        # term by term: a product of a small rational by an entry reduces by gcds
        # with the small operand only, where a sum of entries would need gcds of two
        # large denominators (so the split of miller_power does not pay here)
        total = mpq(0)
        for j, fj in steps:
            if j > k:
                break
            total += (a1 * j - k) * fj * g[k - j]
        g[k] = total / k
    return g


def inverse(series, length: int):
    """``1 / series`` modulo ``x^length`` by Newton's iteration.

    ``g <- g + g (1 - f g)`` doubles the number of correct terms each step
    (Sieveking 1972, Kung 1974; von zur Gathen & Gerhard, *Modern Computer
    Algebra*, 3rd ed., 2013, §9.1): about three multiplications of the
    final length in all.  Works for ``fmpq_poly`` with any nonzero constant
    term and for ``fmpz_poly`` whose constant term is ``±1`` (the inverse is
    then integral); raises ``ZeroDivisionError`` for a zero constant term
    and ``ValueError`` for an integer series without a unit constant term.
    """
    kind = type(series)
    c0 = series[0]
    if c0 == 0:
        raise ZeroDivisionError("the constant term is 0: the series has no power-series inverse")
    if kind is fmpz_poly:
        if c0 not in (1, -1):
            raise ValueError("an integer series needs constant term 1 or -1 to have an integer inverse")
        g = fmpz_poly([int(c0)])
    else:
        g = kind([1 / c0])
    if length <= 1:
        return g if length == 1 else kind([])
    one = kind([1])
    k = 1
    while k < length:
        k = min(2 * k, length)
        error = one - series.truncate(k).mul_low(g, k)
        g = g + g.mul_low(error, k)
    return g


def scaled_product(factors: Iterable[fmpz_poly], degree: int, scale) -> fmpz_poly:
    """The product of series held as ``scale * S_i``, again as ``scale * prod S_i``.

    Each factor is an integer polynomial equal to *scale* times a series
    with rational coefficients (an exponential generating function times a
    common denominator, say ``n!``); after each truncated multiplication the
    extra factor *scale* is removed by one exact scalar division, so the
    coefficients stay the size of the answer instead of growing with the
    number of factors.  Balanced product tree as in :func:`product`.
    """
    items = list(factors)
    if not items:
        return fmpz_poly([int(scale)])
    length = degree + 1
    scale = int(scale)
    while len(items) > 1:
        nxt = []
        for i in range(0, len(items) - 1, 2):
            nxt.append(items[i].mul_low(items[i + 1], length) // scale)
        if len(items) % 2:
            nxt.append(items[-1])
        items = nxt
    return items[0]


def scaled_power(base: fmpz_poly, exponent: int, degree: int, scale) -> fmpz_poly:
    """``scale * S^exponent`` from ``base = scale * S``, exact up to *degree*.

    Left-to-right binary powering with truncated multiplications, each
    followed by one exact division by *scale* (see :func:`scaled_product`);
    ``O(M(degree) log exponent)``.
    """
    scale = int(scale)
    if exponent == 0:
        return fmpz_poly([scale])
    length = degree + 1
    result = base.truncate(length)
    for bit in bin(exponent)[3:]:
        result = result.mul_low(result, length) // scale
        if bit == "1":
            result = result.mul_low(base, length) // scale
    return result


def product(factors: Iterable[fmpz_poly], degree: int) -> fmpz_poly:
    """The product of *factors*, exact up to *degree*, by a balanced product tree.

    Balancing keeps the operands of each multiplication of similar size,
    which is where fast multiplication pays (FLINT ``mul_low``).
    """
    items = list(factors)
    if not items:
        return fmpz_poly([1])
    if len(items) == 1:
        return items[0]
    length = degree + 1
    while len(items) > 1:
        nxt = []
        for i in range(0, len(items) - 1, 2):
            nxt.append(items[i].mul_low(items[i + 1], length))
        if len(items) % 2:
            nxt.append(items[-1])
        items = nxt
    return items[0]


def binomial_row(r: int, degree: int) -> List:
    """``[C(m + r - 1, r - 1) for m in 0..degree]``: the series of ``(1 - x)^(-r)``.

    Each term from the previous by one small multiplication and one exact
    division (gmpy2 ``mpz``): ``C(m+r, r-1) = C(m+r-1, r-1) (m+r) / (m+1)``.
    """
    row = [mpz(0)] * (degree + 1)
    c = mpz(1)
    for m in range(degree + 1):
        row[m] = c
        c = gmpy2.divexact(c * (m + r), m + 1)
    return row


def dot_reversed(series: fmpz_poly, row: Sequence, degree: int):
    """``sum_k c_k row[degree - k]``: the coefficient of ``x^degree`` in ``series * row``."""
    total = mpz(0)
    for k, c in enumerate(series.coeffs()[: degree + 1]):
        if c:
            total += row[degree - k] * int(c)
    return total
