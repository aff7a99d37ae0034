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

from typing import Iterable, List, Sequence, Tuple

import gmpy2
from flint import fmpz_poly

__all__ = [
    "binomial_row",
    "coefficient",
    "coefficients",
    "from_coefficients",
    "one_minus_power",
    "power",
    "product",
    "window",
    "falling_window",
    "dot_reversed",
]

mpz = gmpy2.mpz

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
    return base.pow_trunc(exponent, degree + 1)


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
