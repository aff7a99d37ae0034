r"""Normalisers: the microstates (total weight) of a model, MB generating functions, one configuration's weight and probability.

* MB closed forms — ``r^n`` (with weights ``(sum_g c_g w_g)^n``), and with
  ``a = 1`` the surjections ``r! S(n, r)`` (Feller, *An Introduction to
  Probability Theory*, vol. 1, §II.5; Stanley, *Enumerative Combinatorics*
  vol. 1, §1.9);
* the normaliser with bounds or weights — MB
  ``n! [x^n] prod_g (sum_{k=a}^{b} (w_g x)^k / k!)^{c_g}`` (Flajolet &
  Sedgewick, *Analytic Combinatorics*, 2009, §II.2), BE/FD
  ``[x^n] prod_g (sum_{k=a}^{b} (w_g x)^k)^{c_g}``, each group's power by
  FLINT or by J. C. P. Miller's recurrence (Knuth, *TAOCP* vol. 2, §4.7),
  whatever the size of its count; a capacity near ``n`` by
  inclusion–exclusion over overfull urns (Riordan 1958, ch. 5);
* a configuration's weight (one multinomial, one power per group) and its
  probability, MB without bounds reduced by the primes of ``r`` only
  (:func:`over_prime_power`).

All arithmetic is exact (gmpy2 / FLINT inside); public functions return
``int`` and ``fractions.Fraction`` (a normaliser with fractional weights is
a ``Fraction``).
"""

from __future__ import annotations

import math
from fractions import Fraction
from typing import List, Tuple

import gmpy2
from flint import fmpz, fmpz_poly

from ..core import series
from ..core.exact import coprime_fraction
from ..core.limits import (
    Cost,
    bigint_bytes,
    check,
    product_seconds,
)
from ..core.model import UrnModel
from ..core.rules import multinomial
from .configurations import MEMO, count_configurations_mpz, exact_fraction
from .counting_costs import (
    capacity_overflow_cost,
    check_counting_cost,
    free_balls,
    integer_weights,
    log2_approx,
    log2_factorial_approx,
    mb_grouped_cost,
    mb_plan,
    merged_groups,
)

__all__ = [
    "configuration_probability",
    "configuration_weight",
    "count_microstates",
    "over_prime_power",
    "power_primes",
    "surjections",
]

mpz = gmpy2.mpz


# ---------------------------------------------------------------------------
# microstates (MB: weighted by multinomials; weighted models: the normaliser)
# ---------------------------------------------------------------------------

def surjections(n: int, r: int):
    """The number of ways to put *n* labelled balls into *r* labelled urns leaving none empty.

    Parameters
    ----------
    n, r : int
        The balls and the urns.

    Returns
    -------
    mpz
        ``r! S(n, r)``, the surjections of an *n*-set onto an *r*-set; 0
        when ``n < r``.

    Notes
    -----
    The Stirling number of the second kind by FLINT (``fmpz.stirling_s2``)
    times ``r!`` by GMP (Stanley, *Enumerative Combinatorics* vol. 1, 2nd
    ed., 2012, §1.9, the twelvefold way); the cost is FLINT's, about
    ``O(n M(n log r))``.

    Examples
    --------
    >>> surjections(4, 2), surjections(2, 3)
    (mpz(14), mpz(0))
    """
    if n < r:
        return mpz(0)
    return mpz(int(fmpz.stirling_s2(n, r))) * gmpy2.fac(r)


def _mb_lower_levels(a: int, c: int, target: int):
    r"""``L_c(a c + t)`` for ``t = 0..target``: assignments to ``c`` urns each holding at least ``a``.

    The series ``E = sum_{k >= a} x^k / k!`` satisfies
    ``E' = E + x^{a-1}/(a-1)!``, so ``(E^k)' = k E^k + k x^{a-1}/(a-1)! E^{k-1}``:
    ``L_k(m + 1) = k L_k(m) + k C(m, a - 1) L_{k-1}(m - a + 1)``, level by
    level from ``L_0 = [m = 0]`` (the differential-equation method, Knuth,
    *TAOCP* vol. 2, §4.7).  Cost ``O(c n')`` small multiplications, with
    ``c <= n / a``.
    """
    divexact = gmpy2.divexact
    prev = [mpz(1)] + [mpz(0)] * target      # L_0(m), m = 0 .. target
    for k in range(1, c + 1):
        base = a * k                          # level k's window is m = base .. base + target
        cur = [mpz(0)] * (target + 1)
        m = base - 1
        choose = gmpy2.comb(m, a - 1)         # C(m, a - 1), updated as m grows
        value = mpz(0)                        # L_k(base - 1) = 0
        for t in range(target + 1):
            # L_k(m + 1) from L_k(m) and L_{k-1}(m - a + 1), where m - a + 1 = a(k-1) + t
            value = k * (value + choose * prev[t])
            cur[t] = value
            m += 1
            choose = divexact(choose * m, m - a + 1)
        prev = cur
    return prev


def _labelled_factor(kind: str, a: int, s: int, v: int, c: int, target: int):
    """``(A, lam)``: the group's factor as ``sum_t lam[t] x^t / (A + t)!`` with integers ``lam``.

    ``lam[t]`` is the weighted number of assignments of ``A + t`` labelled
    balls to the group's urns (``A = a c``), with the weight ``v^{a c}``
    left out (see :func:`_mb_grouped`).
    """
    powers = [mpz(1)] * (target + 1)
    for t in range(1, target + 1):
        powers[t] = powers[t - 1] * v
    if kind == "exp":                      # v here is W = sum c v, the whole exponential's rate
        return 0, powers
    if kind == "single":
        return a, [powers[t] if t <= s else mpz(0) for t in range(target + 1)]
    if kind == "levels":
        levels = _mb_lower_levels(a, c, target)
        return a * c, [levels[t] * powers[t] for t in range(target + 1)]
    # miller: N_t = t! [x^t] (sum_{j<=s} x^j/j!)^c, any exponent
    labelled = series.miller_power([1] * (s + 1), c, target, labelled=True)
    return 0, [labelled[t] * powers[t] for t in range(target + 1)]


def _flint_factor(a: int, s: int, v: int, c: int, target: int):
    """``(P, S)``: ``P/S = (sum_{j<=s} v^j x^j / (a + j)!)^c`` up to ``x^target`` (FLINT power)."""
    window = [mpz(1)] * (s + 1)
    c_k = mpz(1)
    for j in range(s, -1, -1):   # (a+s)!/(a+j)!, from the top down
        window[j] = c_k
        c_k *= a + j
    if v != 1:
        vj = mpz(1)
        for j in range(s + 1):
            window[j] *= vj
            vj *= v
    base = fmpz_poly([int(w) for w in window])
    return series.power(base, c, target), gmpy2.fac(a + s) ** c


def _mb_grouped(model: UrnModel):
    r"""The MB normaliser ``n! [x^n] prod_g (sum_{k=a_g}^{b_g} (w_g x)^k / k!)^{c_g}`` by groups.

    With ``x^{a c}`` factored out of every group, the answer is
    ``n! prod v^{a c} [x^{n'}] prod_g Y_g``.  Bounded groups give ordinary
    factors ``P/S`` (FLINT powers of the factorial-scaled window, multiplied
    by a product tree); the others give labelled factors
    ``sum_t lam[t] x^t/(A + t)!`` with small integer entries.  Two pieces
    meet in one dot product with binomial (or ``n!/m!``) weights, so a
    labelled factor is converted to an ordinary one (entries scaled by
    factorials, the costly step) only when more than two pieces remain.
    Returns an ``mpz`` or, with fractional weights, an ``mpq``.
    """
    n = model.balls
    target = free_balls(model)
    if target < 0:
        return mpz(0)
    den, _ = integer_weights(model)
    plan = mb_plan(model, target)
    lift = mpz(1)            # prod v^{a c}
    lift_den = mpz(1)        # prod (a!)^c of the fixed groups
    exp_weight = 0
    ordinary = []
    labelled = []
    for kind, a, s, v, c in plan:
        if a:
            lift *= mpz(v) ** (a * c)
        if kind == "fixed":
            lift_den *= gmpy2.fac(a) ** c
        elif kind == "exp":
            exp_weight += c * v
        elif kind == "flint":
            ordinary.append(_flint_factor(a, s, v, c, target))
        else:
            labelled.append(_labelled_factor(kind, a, s, v, c, target))
    if exp_weight:
        labelled.append(_labelled_factor("exp", 0, target, exp_weight, 1, target))
    length = target + 1
    # at most two pieces may meet in the final dot product
    while len(labelled) > (1 if ordinary else 2):
        base, lam = labelled.pop(0)
        top = gmpy2.fac(base + target)
        values = [0] * length
        ratio = mpz(1)                         # (base + target)! / (base + t)!, from the top
        for t in range(target, -1, -1):
            values[t] = int(lam[t] * ratio)
            ratio *= base + t
        ordinary.append((fmpz_poly(values), top))
    scale = mpz(1)
    poly = None
    if ordinary:
        poly = series.product([p for p, _ in ordinary], target)
        for _, sc in ordinary:
            scale *= sc
    if poly is None and not labelled:
        numerator = gmpy2.fac(n) if target == 0 else mpz(0)
    elif not labelled:
        numerator = mpz(series.coefficient(poly, target)) * gmpy2.fac(n)
    elif poly is not None:
        # n! sum_t P[target - t] / S * lam[t] / (A + t)!
        (base, lam), = labelled
        coeffs = series.coefficients(poly, target)
        numerator = mpz(0)
        ratio = gmpy2.divexact(gmpy2.fac(n), gmpy2.fac(base + target))   # n! / (A + t)! at t = target
        for t in range(target, -1, -1):
            p = coeffs[target - t]
            if p and lam[t]:
                numerator += p * lam[t] * ratio
            ratio *= base + t
    elif len(labelled) == 1:
        (base, lam), = labelled
        numerator = lam[target] * gmpy2.divexact(gmpy2.fac(n), gmpy2.fac(base + target))
    else:
        # n!/m! sum_t C(m, A + t) lam[t] mu[target - t], m = A + B + target (the fixed groups hold the rest)
        (base, lam), (other, mu) = labelled
        m = base + other + target
        numerator = mpz(0)
        choose = gmpy2.comb(m, base)
        for t in range(target + 1):
            if lam[t] and mu[target - t]:
                numerator += choose * lam[t] * mu[target - t]
            choose = gmpy2.divexact(choose * (m - base - t), base + t + 1)
        if m != n:
            numerator *= gmpy2.divexact(gmpy2.fac(n), gmpy2.fac(m))
    if numerator == 0:
        return mpz(0)
    value = gmpy2.divexact(numerator * lift, scale * lift_den)
    if den != 1:
        return gmpy2.mpq(value, mpz(den) ** n)
    return value


def _ordinary_grouped(model: UrnModel):
    r"""The BE/FD normaliser ``[x^n] prod_g (sum_{k=a_g}^{b_g} (w_g x)^k)^{c_g}`` by groups (``mpz`` or ``mpq``)."""
    n = model.balls
    target = free_balls(model)
    if target < 0:
        return mpz(0)
    den, _ = integer_weights(model)
    parts = merged_groups(model, target)
    lift = mpz(1)
    length = target + 1
    rows = []
    for (a, s, v), c in sorted(parts.items()):
        if a:
            lift *= mpz(v) ** (a * c)
        if s == 0:
            continue
        if s >= target:
            row = series.binomial_row(c, target)       # (1 - x)^(-c): C(t + c - 1, t)
        else:
            row = series.window_power_row(s, c, target)  # (1 + ... + x^s)^c by its recurrence
        if v != 1:
            vt = mpz(1)
            for t in range(length):
                row[t] *= vt
                vt *= v
        rows.append(row)
    if not rows:
        value = mpz(1) if target == 0 else mpz(0)
    elif len(rows) == 1:
        value = mpz(rows[0][target])
    else:
        # a product tree of all rows but the last, then one dot product with the last
        last = rows.pop()
        poly = series.product([fmpz_poly([int(x) for x in row]) for row in rows], target)
        value = series.dot_reversed(poly, last, target)
    value *= lift
    if den != 1 and value:
        return gmpy2.mpq(value, mpz(den) ** n)
    return value


def _common_weight(model: UrnModel):
    """The weight shared by every urn, or ``None`` when the weights differ."""
    first = model.groups[0].weight
    return first if all(g.weight == first for g in model.groups) else None


def _unweighted(model: UrnModel) -> UrnModel:
    """The same model with every weight 1."""
    return UrnModel(balls=model.balls, groups=[(g.count, g.lower, g.upper) for g in model.groups], rule=model.rule)


def _mb_unweighted(model: UrnModel):
    """The MB assignments of an unweighted model: closed forms, else :func:`_mb_grouped`."""
    n, r = model.balls, model.urns
    if model.is_uniform:
        g = model.groups[0]
        a, b = g.lower, g.upper
        if a == 0 and (b is None or b >= n):
            check(Cost(seconds=4 * product_seconds(n * log2_approx(r) + 64) * max(1.0, math.log2(n + 1)),
                       memory=4 * bigint_bytes(n * log2_approx(r) + 64)),
                  "r^n", advice="use fewer balls", parameters=["balls"])
            return mpz(r) ** n
        if a == 1 and (b is None or b >= n - r + 1):
            bits = n * log2_approx(r) + 64
            check(Cost(seconds=2 * min(r, n - r + 1) * product_seconds(bits), memory=8 * bigint_bytes(bits)),
                  "r! S(n, r)", advice="use fewer balls", parameters=["balls"])
            return surjections(n, r)
        if b is not None and b == a:
            return gmpy2.divexact(gmpy2.fac(n), gmpy2.fac(a) ** r) if n == r * a else mpz(0)
        if a == 0:
            overflow = capacity_overflow_cost(n, r, b)
            if overflow.seconds < mb_grouped_cost(model, n, n * log2_approx(r) + 64).seconds:
                check(overflow, "counting the microstates", advice="use fewer balls", parameters=["balls"])
                return _mb_capacity_overflow(n, r, b)
    check_counting_cost(model, "microstates", "counting the microstates")
    return _mb_grouped(model)


def _mb_capacity_overflow(n: int, r: int, b: int):
    r"""MB assignments with every urn holding at most *b*, by inclusion–exclusion over overfull urns.

    With ``U = sum_{k > b} x^k / k!``, ``(e^x - U)^r = sum_j C(r, j) (-U)^j e^{(r-j) x}``, so

    ``N = sum_{j <= n/(b+1)} (-1)^j C(r, j) sum_m C(n, m) U_j(m) (r - j)^{n-m}``,

    ``U_j(m)`` the assignments of ``m`` balls to ``j`` urns each holding more
    than ``b`` (:func:`_mb_lower_levels`).  When the capacity is near ``n``
    only a few ``j`` remain: cost ``O(J^2 n)`` steps with ``J = n/(b+1)``
    (Riordan 1958, ch. 5; Flajolet & Sedgewick 2009, §II.2), against a power
    of a window of ``b`` terms whose coefficients have ``b log b`` bits.
    """
    d = b + 1
    total = mpz(r) ** n
    choose_r = mpz(1)
    for j in range(1, min(r, n // d) + 1):
        choose_r = gmpy2.divexact(choose_r * (r - j + 1), j)
        target = n - j * d
        levels = _mb_lower_levels(d, j, target)
        inner = mpz(0)
        base = mpz(r - j)
        # m = j d + t runs up; (r - j)^(n - m) runs down, so walk t from the top
        power = mpz(1)
        choose_n = gmpy2.comb(n, n)          # C(n, m) at m = n
        for t in range(target, -1, -1):
            m = j * d + t
            if levels[t]:
                inner += choose_n * levels[t] * power
            power *= base
            choose_n = gmpy2.divexact(choose_n * m, n - m + 1)
        total += -choose_r * inner if j & 1 else choose_r * inner
    return total


def _microstates(model: UrnModel):
    """The normaliser as an ``mpz`` or ``mpq`` (memoised per model)."""
    memo = MEMO.slots(model)
    if "microstates" in memo:
        return memo["microstates"]
    common = _common_weight(model)
    if common is not None:
        plain = model if common == 1 else _unweighted(model)
        if model.rule.distinguishable:
            value = _mb_unweighted(plain)
        else:
            value = count_configurations_mpz(plain)
        if common != 1 and value:
            value = gmpy2.mpq(value * mpz(common.numerator) ** model.balls, mpz(common.denominator) ** model.balls)
    else:
        check_counting_cost(model, "microstates", "computing the total weight")
        value = _mb_grouped(model) if model.rule.distinguishable else _ordinary_grouped(model)
    memo["microstates"] = value
    return value


def _public(value):
    """An ``mpz``/``mpq`` as ``int`` when integral, else as a reduced ``Fraction``."""
    if isinstance(value, type(gmpy2.mpq())):
        if value.denominator == 1:
            return int(value.numerator)
        return coprime_fraction(value.numerator, value.denominator)
    return int(value)


def count_microstates(model: UrnModel):
    r"""Return the total weight of *model*'s configurations: its number of outcomes, or the normaliser.

    Parameters
    ----------
    model : UrnModel
        The problem, with urn groups of any size and exact weights.

    Returns
    -------
    int or Fraction
        With all weights 1: the number of equally likely outcomes (MB: the
        admissible assignments of ``n`` labelled balls, the sum of
        ``n!/(k_1!...k_r!)``; BE/FD: the configurations).  With weights: MB
        ``sum_k n!/prod k_i! prod w_i^{k_i}``, BE/FD ``sum_k prod w_i^{k_i}``,
        an ``int`` when integral, else a ``Fraction`` in lowest terms.

    Raises
    ------
    TooLarge
        When the route's cost (:func:`~enumerator.algorithms.counting_costs.counting_cost`) is beyond the limits.

    Notes
    -----
    MB: ``r^n`` unbounded, ``(sum_g c_g w_g)^n`` unbounded with weights,
    ``r! S(n, r)`` with every urn occupied; otherwise
    ``n! [x^n] prod_g E_g(w_g x)^{c_g}`` with ``E_g = sum_{k=a}^{b} x^k/k!``
    (Flajolet & Sedgewick, *Analytic Combinatorics*, 2009, §II.2): the
    factor ``x^{a c}`` comes out, groups unbounded above from 0 merge into
    ``e^{W x}`` (one dot product), bounded groups are powers of the
    factorial-scaled window by FLINT (exponent up to a few times ``n``) or
    by J. C. P. Miller's recurrence (Knuth, *TAOCP* vol. 2, §4.7;
    :func:`~enumerator.core.series.miller_power`, ``O(n min(b, n))`` per
    group, any exponent), and groups with a lower bound but no upper one by
    the recurrence of :func:`_mb_lower_levels`.  BE/FD:
    ``[x^n] prod_g (sum_{k=a}^{b} (w_g x)^k)^{c_g}``, each group's power
    by the three-term recurrence of
    :func:`~enumerator.core.series.window_power_row` (or the binomial row
    of ``(1 - w x)^{-c}``).  Fractional weights are scaled to integers by
    their common denominator ``D`` and the answer divided by ``D^n``.

    Examples
    --------
    >>> count_microstates(UrnModel(balls=4, urns=3, rule="MB"))
    81
    >>> count_microstates(UrnModel(balls=4, urns=3, rule="MB", minimum=1))
    36
    >>> count_microstates(UrnModel(balls=2, weights=[1, 2], rule="MB"))   # (1 + 2)^2
    9
    >>> count_microstates(UrnModel(balls=1, weights=["1/2", "1/3"], rule="BE"))
    Fraction(5, 6)
    """
    return _public(_microstates(model))


def _check_multinomial(model: UrnModel) -> None:
    """Refuse a configuration's weight whose ``n!`` (about ``n log2 n`` bits) is beyond the limits."""
    memo = MEMO.slots(model)
    cost = memo.get("weight_cost")
    if cost is None:
        n = model.balls
        bits = log2_factorial_approx(n) + n * max(log2_approx(g.weight.numerator) + log2_approx(g.weight.denominator)
                                            for g in model.groups) + 64
        cost = memo["weight_cost"] = Cost(seconds=4 * product_seconds(bits) * max(1.0, math.log2(n + 1)),
                                          memory=6 * bigint_bytes(bits))
    check(cost, "the weight of one configuration", advice="use fewer balls", parameters=["balls"])


def _group_weight_power(model: UrnModel, view):
    """``prod_i w_i^{k_i}`` as ``(numerator, denominator)`` mpz from a :meth:`~UrnModel.configuration_groups` view."""
    num = mpz(1)
    den = mpz(1)
    for g, (counts, _) in zip(model.groups, view):
        if g.weight != 1:
            k = sum(counts)
            if k:
                num *= mpz(g.weight.numerator) ** k
                den *= mpz(g.weight.denominator) ** k
    return num, den


def _occupancies(view) -> Tuple[int, ...]:
    """The occupancies a view lists, group after group (the unlisted urns hold 0 and change no weight)."""
    if len(view) == 1:  # one group (the common case, on a hot path): its tuple as it is
        return view[0][0]
    return tuple(k for counts, _ in view for k in counts)


def configuration_weight(model: UrnModel, config):
    r"""Return the weight of the occupancy vector *config* (0 if it breaks a bound).

    Parameters
    ----------
    model : UrnModel
        The problem (at most :data:`~enumerator.core.model.PER_URN_LIMIT`
        urns: a vector has one entry per urn).
    config : sequence of int, or mapping of int to int
        One occupancy per urn, summing to ``n``; or a sparse vector
        ``{urn: count}`` (urns from 1, the others empty), at any number of urns.

    Returns
    -------
    int or Fraction
        MB ``n!/prod k_i! prod w_i^{k_i}``, BE/FD ``prod w_i^{k_i}``; with
        all weights 1, the number of equally likely outcomes with occupancy
        *config*.  An ``int`` when integral, else a ``Fraction``.

    Raises
    ------
    InvalidConfiguration
        For a malformed vector.

    Notes
    -----
    One multinomial (GMP factorials) and one power per group: ``O(M(n log n) + r)``.

    Examples
    --------
    >>> configuration_weight(UrnModel(balls=3, urns=2, rule="MB"), (2, 1))
    3
    >>> configuration_weight(UrnModel(balls=3, weights=[2, "1/2"], rule="BE"), (2, 1))
    2
    """
    view = model.configuration_groups(config)
    if not model.groups_admit(view):
        return 0
    values = _occupancies(view)
    _check_multinomial(model)
    base = model.rule.weight(values)
    if not model.weighted:
        return int(base)
    num, den = _group_weight_power(model, view)
    return _public(gmpy2.mpq(mpz(base) * num, den))


def power_primes(r: int, n: int) -> List[Tuple[int, int]]:
    """Return the prime factorisation of ``r^n`` as ``[(p, e_p n)]``.

    Parameters
    ----------
    r : int
        The base, ``r >= 1``.
    n : int
        The exponent, ``n >= 0``.

    Returns
    -------
    list of (int, int)
        Each prime ``p`` dividing ``r`` with its exponent in ``r^n``.

    Notes
    -----
    FLINT's ``fmpz.factor`` on ``r`` (small), then ``O(1)`` per prime.
    """
    return [(int(p), int(e) * n) for p, e in fmpz(r).factor()]


def over_prime_power(count, total, primes) -> Fraction:
    r"""Return ``count / total`` in lowest terms when only the primes *primes* can cancel.

    Parameters
    ----------
    count : int or mpz
        The numerator, ``>= 0`` (0 gives ``Fraction(0)``).
    total : int or mpz
        The denominator, a product of the primes in *primes* (``r^n`` for the
        MB outcomes without bounds).
    primes : list of (int, int)
        ``(p, e)``: each prime of *total* with its exponent
        (:func:`power_primes`).

    Returns
    -------
    Fraction
        The exact quotient, already reduced.

    Notes
    -----
    Each prime is removed from the numerator (GMP ``mpz_remove``) up to its
    exponent in the denominator: for a multinomial over ``r^n`` that is
    several times cheaper than a general gcd of numbers of ``n log r`` bits
    (T. Granlund et al., *GNU MP manual*, "Integer Division").  Cost
    ``O(M(n log r))`` per prime.

    Examples
    --------
    >>> over_prime_power(12, 81, power_primes(3, 4))
    Fraction(4, 27)
    """
    num, den = mpz(count), mpz(total)
    if num == 0:
        return Fraction(0)
    for p, top in primes:
        stripped, times = gmpy2.remove(num, p)
        if times > top:
            times = top
            stripped = gmpy2.divexact(num, mpz(p) ** top)
        if times:
            num = stripped
            den = gmpy2.divexact(den, mpz(p) ** times)
    return coprime_fraction(num, den)


def _reduced_mb_probability(model: UrnModel, values) -> Fraction:
    """``multinomial(k) / r^n`` in lowest terms without a big gcd (:func:`over_prime_power`)."""
    memo = MEMO.slots(model)
    fac_n = memo.get("fac_n")
    if fac_n is None:
        fac_n = memo["fac_n"] = gmpy2.fac(model.balls)
        memo["primes"] = power_primes(model.urns, model.balls)
    return over_prime_power(multinomial(values, fac_n), _microstates(model), memo["primes"])


def _mb_unbounded(model: UrnModel) -> bool:
    """True when no urn has a lower bound and none can be filled to its upper bound's limit."""
    n = model.balls
    return all(g.lower == 0 and (g.upper is None or g.upper >= n) for g in model.groups)


def configuration_probability(model: UrnModel, config) -> Fraction:
    r"""Return the exact probability of the occupancy vector *config* under *model*'s rule.

    Parameters
    ----------
    model : UrnModel
        The problem (at most :data:`~enumerator.core.model.PER_URN_LIMIT`
        urns: a vector has one entry per urn).
    config : sequence of int, or mapping of int to int
        One occupancy per urn, summing to ``n``; or a sparse vector
        ``{urn: count}`` (urns from 1, the others empty), at any number of urns.

    Returns
    -------
    Fraction
        :func:`configuration_weight` over :func:`count_microstates`; 0 for a
        well-formed vector that breaks a bound.

    Raises
    ------
    InvalidConfiguration
        For a malformed vector.

    Notes
    -----
    Equal weights cancel, so they take the unweighted routes: MB without
    bounds divides the multinomial by ``r^n`` removing only the primes of
    ``r`` (:func:`over_prime_power`); BE/FD is one over the number of
    configurations.  MB with differing weights and no bounds is the
    multinomial law ``n!/prod k_i! prod (w_i/W)^{k_i}``, ``W = sum_g c_g w_g``,
    without computing a normaliser (Feller vol. 1, §VI.9); otherwise the
    weight is divided by the normaliser.  Cost one multinomial, one power
    per group and one reduction, ``O(M(n log n) + r)``, plus the normaliser
    once per model.

    Examples
    --------
    >>> configuration_probability(UrnModel(balls=2, urns=2, rule="MB"), (1, 1))
    Fraction(1, 2)
    >>> configuration_probability(UrnModel(balls=2, urns=2, rule="BE"), (1, 1))
    Fraction(1, 3)
    >>> configuration_probability(UrnModel(balls=2, weights=[1, 3], rule="MB"), (1, 1))
    Fraction(3, 8)
    """
    view = model.configuration_groups(config)
    if not model.groups_admit(view):
        return Fraction(0)
    values = _occupancies(view)
    _check_multinomial(model)
    common = _common_weight(model)
    if common is not None:
        plain = model if common == 1 else _unweighted(model)
        if plain.rule.distinguishable:
            g = plain.groups[0]
            if plain.is_uniform and g.lower == 0 and (g.upper is None or g.upper >= plain.balls):
                return _reduced_mb_probability(plain, values)
            return exact_fraction(multinomial(values), _microstates(plain))
        return exact_fraction(1, count_configurations_mpz(plain))
    num, den = _group_weight_power(model, view)
    n = model.balls
    if model.rule.distinguishable:
        num *= multinomial(values)
        if _mb_unbounded(model):
            total = sum(g.count * g.weight for g in model.groups)
            return exact_fraction(num * mpz(total.denominator) ** n, den * mpz(total.numerator) ** n)
    z = _microstates(model)
    if isinstance(z, type(gmpy2.mpq())):
        return exact_fraction(num * z.denominator, den * z.numerator)
    return exact_fraction(num, den * z)
