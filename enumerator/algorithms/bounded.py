r"""Bounded counts: the equally likely outcomes of balls in urns with given bounds.

``outcome_count(bounds, rule, n)`` is the one quantity every distribution and
every event reduces to: ``P(max <= m)`` is the count with every upper bound
lowered to ``m``, divided by the model's.  :func:`outcome_row` gives the
counts for every number of balls ``0..top`` at once.  MB counts assignments
of labelled balls, BE and FD admissible occupancy vectors.

All arithmetic is exact (gmpy2 integers, FLINT polynomials).
"""

from __future__ import annotations

from collections import Counter
from typing import List, Optional, Sequence, Tuple

import gmpy2
from flint import fmpz_poly

from ..core import series
from ..core.model import UrnModel
from ..core.rules import Rule
from .counting import count_configurations, count_microstates
from .counting_costs import check_counting_cost
from .extremes import mb_at_least

__all__ = ["outcome_count", "outcome_row"]

mpz = gmpy2.mpz
divexact = gmpy2.divexact


def outcome_count(bounds: Sequence[Tuple[int, Optional[int]]], rule, balls: int) -> int:
    """Count the equally likely outcomes of ``balls`` balls in urns with *bounds*.

    Parameters
    ----------
    bounds : sequence of (int, int or None)
        ``(a_i, b_i)`` per urn, ``b_i = None`` for no upper bound.
    rule : Rule or str
        The counting rule: labelled balls count assignments, unlabelled
        ones admissible occupancy vectors.
    balls : int
        ``n >= 0``.

    Returns
    -------
    int
        The exact count; 0 for infeasible bounds.

    Raises
    ------
    TooLarge
        When the count's estimate is past the limits.

    Notes
    -----
    This is the bounded count behind every distribution and event:
    ``P(max <= m)`` is ``outcome_count`` of the bounds with upper bounds
    lowered to ``m``, divided by the model's.

    MB bounds where most urns are unbounded are handled without expanding
    their factors: ``n! [x^n] P(x) e^{q x}`` for ``q`` free urns and a
    polynomial ``P`` of the others is ``sum_i C(n, i) N(i) q^{n-i}``
    (Flajolet & Sedgewick 2009, §II.2), one Horner pass, checked first
    against the limits with the estimate of the grouped count (the same
    FLINT powers and product).  Everything else
    is :func:`~enumerator.counting.count_microstates` of the model with
    those bounds, except uniform MB lower bounds ``a >= 2`` without upper
    bounds (:func:`mb_at_least`).

    >>> outcome_count([(0, 1)] * 3, "MB", 2)
    6
    >>> outcome_count([(2, None), (0, None)], "MB", 3)
    4
    """
    rule = Rule.parse(rule)
    bounds = tuple((int(a), None if b is None else int(b)) for a, b in bounds)
    n = int(balls)
    low = sum(a for a, _ in bounds)
    if n < low or any(b is not None and b < a for a, b in bounds):
        return 0
    if not rule.distinguishable:
        # FD's admissible vectors are BE's with the same (capped) bounds.
        return count_configurations(UrnModel(balls=n, bounds=bounds, rule=Rule.BE))
    r = len(bounds)
    free = [i for i, (a, b) in enumerate(bounds) if a == 0 and (b is None or b >= n - low)]
    uniform = all(p == bounds[0] for p in bounds)
    if uniform:
        a, b = bounds[0]
        if a >= 2 and (b is None or b >= n - (r - 1) * a):
            return int(mb_at_least(n, r, a))
        return count_microstates(UrnModel(balls=n, bounds=bounds, rule=rule))
    if not free:
        return count_microstates(UrnModel(balls=n, bounds=bounds, rule=rule))
    rest = [bounds[i] for i in range(r) if i not in set(free)]
    # the grouped normaliser's estimate prices the same FLINT powers and product
    check_counting_cost(UrnModel(balls=n, bounds=bounds, rule=rule), "microstates", "counting the assignments")
    return int(_mb_free_dot(rest, len(free), n))


def _mb_bounded_part(bounds, top: int):
    """``(coeffs, shift, scale)`` with ``prod_i sum_{k=a_i}^{b_i} x^k/k! = x^shift * coeffs(x) / scale``.

    Equal bounds are grouped into one truncated power of the factorial-scaled
    window ``sum_k (b!/k!) x^{k-a}`` (FLINT), the groups multiplied with
    truncation at degree ``top - shift``; missing upper bounds are capped at
    what *top* balls allow.
    """
    shift = sum(a for a, _ in bounds)
    room = top - shift
    groups: Counter = Counter()
    for a, b in bounds:
        b = a + room if b is None else min(b, a + room)
        groups[(a, b)] += 1
    factors = []
    scale = mpz(1)
    for (a, b), e in sorted(groups.items()):
        scale *= gmpy2.fac(b) ** e
        if b > a:
            factors.append(series.power(series.falling_window(a, b), e, room))
        else:
            factors.append(fmpz_poly([int(gmpy2.fac(b) // gmpy2.fac(a)) ** e]))
    return series.product(factors, room), shift, scale


def _mb_free_dot(bounds, q: int, n: int):
    """MB assignments of ``n`` balls: urns with *bounds* plus ``q`` unbounded urns.

    ``sum_i C(n, i) N(i) q^{n-i}`` with ``N(i) = i! [x^i] P(x)`` the
    assignments of ``i`` balls to the bounded urns: a Horner pass
    ``acc <- acc q + c_i n^{(i)}`` over the scaled coefficients ``c_i`` of
    ``P`` and one exact division by the scale (``O(n)`` big operations).
    """
    if not bounds:
        return mpz(q) ** n
    poly, shift, scale = _mb_bounded_part(bounds, n)
    coeffs = poly.coeffs()
    top = min(n, shift + len(coeffs) - 1)
    if top < shift:
        return mpz(0)
    acc = mpz(0)
    falling = mpz(1)  # n (n-1) ... (n-i+1)
    for i in range(shift):
        falling *= n - i
    for i in range(shift, top + 1):
        acc = acc * q + int(coeffs[i - shift]) * falling
        falling *= n - i
    acc *= mpz(q) ** (n - top)
    return divexact(acc, scale)


def outcome_row(bounds, rule: Rule, top: int) -> List:
    """Count the outcomes of ``L = 0..top`` balls in urns with *bounds*, all ``L`` at once.

    Parameters
    ----------
    bounds : sequence of (int, int or None)
        ``(a_i, b_i)`` per urn.
    rule : Rule
        The counting rule.
    top : int
        The largest number of balls.

    Returns
    -------
    list of mpz
        Entry ``L`` is ``outcome_count(bounds, rule, L)``, exact.

    Notes
    -----
    BE/FD: the coefficients of ``prod_i (x^{a_i} + ... + x^{b_i})``, written
    as ``x^A prod_d (1 - x^d)^{e_d} (1 - x)^{-R}`` (sparse binomial powers
    times one binomial row, one FLINT product).  MB: ``L! [x^L] P(x) e^{q x}``
    for the bounded urns' EGF ``P`` and ``q`` unbounded urns — a binomial
    convolution done as one product of factorial-scaled rows (Flajolet &
    Sedgewick, *Analytic Combinatorics*, 2009, §II.2).  Cost: one FLINT
    product of length ``top`` per distinct bound, ``O(G M(top))``,
    checked first against the limits with the estimate of the grouped count
    at ``top`` balls
    (:func:`~enumerator.algorithms.counting_costs.check_counting_cost`).

    Raises
    ------
    TooLarge
        When that estimate is past the limits.
    """
    if top < 0:
        return []
    if not bounds:
        return [mpz(1)] + [mpz(0)] * top
    if not rule.distinguishable:
        shift = sum(a for a, _ in bounds)
        room = top - shift
        if room < 0:
            return [mpz(0)] * (top + 1)
        check_counting_cost(UrnModel(balls=top, bounds=bounds, rule=Rule.BE), "configurations",
                            "counting the occupancy vectors of every number of balls")
        groups: Counter = Counter()
        for a, b in bounds:
            if b is not None and b - a + 1 <= room:
                groups[b - a + 1] += 1
        numerator = series.product([series.one_minus_power(d, e, room) for d, e in sorted(groups.items())], room)
        row = fmpz_poly([int(c) for c in series.binomial_row(len(bounds), room)])
        values = [mpz(0)] * shift + [mpz(int(c)) for c in series.coefficients(numerator.mul_low(row, room + 1), room)]
        return values[: top + 1]
    def is_free(p):
        return p[0] == 0 and (p[1] is None or p[1] >= top)

    rest = [p for p in bounds if not is_free(p)]
    q = len(bounds) - len(rest)
    fac = gmpy2.fac
    if not rest:
        return [mpz(q) ** L for L in range(top + 1)]
    check_counting_cost(UrnModel(balls=top, bounds=bounds, rule=Rule.MB), "microstates",
                        "counting the assignments of every number of balls")
    poly, shift, scale = _mb_bounded_part(rest, top)
    coeffs = [0] * shift + [int(c) for c in poly.coeffs()]
    coeffs = (coeffs + [0] * (top + 1))[: top + 1]
    if q == 0:
        return [divexact(fac(L) * c, scale) for L, c in enumerate(coeffs)]
    # X_i = top! c_i / scale (integers: top! P_i), Y_j = q^j top!/j!
    ftop = fac(top)
    x_row = [int(divexact(ftop * c, scale)) if c else 0 for c in coeffs]
    y_row = [0] * (top + 1)
    y = mpz(1)
    for j in range(top, -1, -1):  # top!/j! from the top down, times q^j
        y_row[j] = y
        y *= j if j else 1
    qp = mpz(1)
    for j in range(top + 1):
        y_row[j] = int(y_row[j] * qp)
        qp *= q
    prod = fmpz_poly(x_row).mul_low(fmpz_poly(y_row), top + 1)
    square = ftop * ftop
    return [divexact(fac(L) * int(c), square) for L, c in enumerate(series.coefficients(prod, top))]
