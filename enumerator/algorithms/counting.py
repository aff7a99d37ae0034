r"""Exact counts of an occupancy model: configurations, microstates (the normaliser), profiles.

Every route works on the model's urn groups (``count`` urns sharing bounds
and a weight), never on the urns one by one, so its cost is stated in ``n``,
the number of groups ``G`` and the size of the answer — ``r = 2**64`` costs
what ``r = 100`` does.  Each route estimates its cost
(:func:`counting_cost`) and calls :func:`enumerator.core.limits.check`
before computing.  Methods, cheapest first (each cited where it is used):

* closed forms — BE ``C(n+r-1, n)``, FD ``C(r, n)``, MB ``r^n`` (with
  weights ``(sum_g c_g w_g)^n``); a lower bound ``a`` shifts ``n`` by
  ``sum_g c_g a_g``; MB with ``a = 1`` is ``r! S(n, r)`` (Feller, *An
  Introduction to Probability Theory*, vol. 1, §II.5; Stanley,
  *Enumerative Combinatorics* vol. 1, §1.9, the twelvefold way);
* inclusion–exclusion for a uniform capacity,
  ``sum_j (-1)^j C(r, j) C(n - j(c+1) + r - 1, r - 1)`` (Riordan,
  *An Introduction to Combinatorial Analysis*, 1958, ch. 5), each term from
  the previous by exact small multiplications and one exact division;
* several groups — ``[x^n']`` of ``prod_g (1 - x^{s_g+1})^{c_g} (1 - x)^{-R}``:
  one sparse binomial power per distinct span, a FLINT truncated product,
  then one dot product with a row of binomials;
* the normaliser with bounds or weights — MB
  ``n! [x^n] prod_g (sum_{k=a}^{b} (w_g x)^k / k!)^{c_g}`` (Flajolet &
  Sedgewick, *Analytic Combinatorics*, 2009, §II.2), BE/FD
  ``[x^n] prod_g (sum_{k=a}^{b} (w_g x)^k)^{c_g}``, each group's power by
  FLINT or by J. C. P. Miller's recurrence (Knuth, *TAOCP* vol. 2, §4.7),
  whatever the size of its count.

All arithmetic is exact (gmpy2 / FLINT inside); public functions return
``int`` and ``fractions.Fraction`` (a normaliser with fractional weights is
a ``Fraction``).
"""

from __future__ import annotations

import math
from collections import Counter
from fractions import Fraction
from typing import Dict, List, Tuple

import gmpy2
from flint import fmpz, fmpz_poly

from ..core import series
from ..core.errors import TooLarge
from ..core.exact import coprime_fraction
from ..core.limits import (
    MULTIPLY_BITS_PER_SECOND,
    STEPS_PER_SECOND,
    Cost,
    bigint_bytes,
    check,
    product_seconds,
)
from ..core.memo import ModelMemo
from ..core.model import UrnModel, as_count
from ..core.rules import multinomial

__all__ = [
    "binomial",
    "configuration_probability",
    "configuration_weight",
    "count_configurations",
    "count_microstates",
    "count_profiles",
    "counting_cost",
    "exact_fraction",
    "multinomial",
    "over_prime_power",
    "partitions_at_most",
    "power_primes",
    "twelvefold",
]

# Working data kept per model between calls (see enumerator.core.memo).
_MEMO = ModelMemo("counting")

mpz = gmpy2.mpz

#: Largest number of integer partitions examined one by one when counting
#: the profiles of a model with differing per-urn bounds.
PROFILE_ENUMERATION_LIMIT = 2_000_000


# ---------------------------------------------------------------------------
# small exact helpers
# ---------------------------------------------------------------------------

def binomial(n: int, k: int):
    """``C(n, k)`` as an ``mpz``; 0 outside ``0 <= k <= n`` (GMP ``mpz_bin_ui``).

    Taken from its small side ``min(k, n - k)``, so ``n`` may have any size
    (``C(2^64 + 1, 2^64) = 2^64 + 1``).

    Raises
    ------
    TooLarge
        When both sides exceed a machine word: the answer would have more
        than about 10^19 bits.
    """
    if k < 0 or n < 0 or k > n:
        return mpz(0)
    small = min(k, n - k)
    if small >= 1 << 64:
        raise TooLarge("C(n, k) with both k and n - k above 2^64 has more digits than any machine holds; "
                       "make the problem smaller")
    return gmpy2.comb(n, small)


def exact_fraction(num, den) -> Fraction:
    """Return ``num / den`` in lowest terms, reduced by GMP.

    Parameters
    ----------
    num, den : int or mpz
        The numerator and a positive denominator.

    Returns
    -------
    Fraction
        The exact quotient.

    Notes
    -----
    GMP's ``mpq`` canonicalisation uses a subquadratic gcd (T. Granlund et
    al., *GNU MP manual*, "Greatest Common Divisor Algorithms"), then
    :func:`~enumerator.core.exact.coprime_fraction` wraps the pair without
    CPython's quadratic gcd: ``O(M(b) log b)`` for ``b``-bit numbers.

    Examples
    --------
    >>> exact_fraction(6, 4)
    Fraction(3, 2)
    """
    q = gmpy2.mpq(num, den)
    return coprime_fraction(q.numerator, q.denominator)


# ---------------------------------------------------------------------------
# cost estimates
# ---------------------------------------------------------------------------

def _log2(value) -> float:
    """``log2`` of a positive int or Fraction of any size (0 for values below 1)."""
    if isinstance(value, Fraction):
        return max(0.0, _log2(value.numerator) - _log2(value.denominator))
    value = int(value)
    if value <= 1:
        return 0.0
    bits = value.bit_length()
    if bits < 1000:
        return math.log2(value)
    return float(bits)


def _log2_factorial(k: int) -> float:
    """``log2(k!)`` by Stirling's formula (an upper estimate, exact enough for costs)."""
    if k < 2:
        return 0.0
    return k * math.log2(k) - k * 1.4426950408889634 + 0.5 * math.log2(2 * math.pi * k) + 1


def _log2_binomial(top: int, k: int) -> float:
    """An upper estimate of ``log2 C(top, k)``: ``k log2(e top / k)`` with ``k`` the smaller side."""
    k = min(k, top - k)
    if k <= 0:
        return 0.0
    return k * (math.log2(top / k) + 1.4426950408889634) + 1


def _linear_cost(steps: float, entries: float, bits: float) -> Cost:
    """*steps* big-by-small operations on numbers of *bits* bits, keeping *entries* of them."""
    seconds = steps * (1.0 / STEPS_PER_SECOND + bits / MULTIPLY_BITS_PER_SECOND)
    return Cost(seconds=seconds, memory=int(entries) * bigint_bytes(bits))


def _series_cost(length: int, bits: float, products: float) -> Cost:
    """*products* truncated FLINT products of series of *length* coefficients of *bits* bits."""
    total = max(1.0, length * (bits + 2 * math.log2(length + 1)))
    return Cost(seconds=products * product_seconds(total), memory=4 * bigint_bytes(total))


def _shift_target(model: UrnModel) -> int:
    """``n' = n - sum_g c_g a_g``: the balls left once every urn holds its lower bound."""
    return model.balls - sum(g.count * g.lower for g in model.groups)


def _integer_weights(model: UrnModel):
    """``(D, [v_g])``: the least common denominator of the weights and the integer weights ``D w_g``."""
    if not model.weighted:
        return 1, [1] * len(model.groups)
    den = 1
    for g in model.groups:
        den = math.lcm(den, g.weight.denominator)
    return den, [g.weight.numerator * (den // g.weight.denominator) for g in model.groups]


def _merged(model: UrnModel, target: int):
    """The groups merged by value, whatever their order: ``{(a, s, v): count}``.

    ``s`` is the room above the lower bound, made tight (at most *target*);
    ``v`` the integer weight (see :func:`_integer_weights`).  Products over
    groups do not depend on the order of the urns, so equal groups anywhere
    in the model form one power.  Cost ``O(G)``.
    """
    _, ints = _integer_weights(model)
    out: Dict[Tuple[int, int, int], int] = {}
    for g, v in zip(model.groups, ints):
        s = target if g.upper is None else min(g.upper - g.lower, target)
        key = (g.lower, s, v)
        out[key] = out.get(key, 0) + g.count
    return out


def counting_cost(model: UrnModel, quantity: str = "configurations") -> Cost:
    r"""Estimate the time and memory of one count of *model*, before computing it.

    Parameters
    ----------
    model : UrnModel
        The problem.
    quantity : {"configurations", "microstates", "profiles"}
        The count.

    Returns
    -------
    Cost
        Seconds and bytes of the route the count would take (rough: a factor
        of a few either way), stated in ``n``, the number of groups and the
        size of the answer, never in the number of urns.

    Raises
    ------
    InvalidParameters
        For an unknown *quantity*.

    Notes
    -----
    The routes and their costs, with ``n'`` the balls above the lower
    bounds, ``G`` the distinct groups and ``B`` the bits of the entries:
    closed forms ``O(M(B))``; inclusion–exclusion ``O(n'/(c+1))`` terms of
    ``O(c)`` small steps; sparse binomial powers and one FLINT product per
    group, ``O(G M(n' B))``; MB and weighted normalisers add per group a
    power by FLINT (``O(M(n' B) log c)``) or by Miller's recurrence
    (``O(n' min(s, n'))`` small steps); profiles ``O(min(r, n) M(n))``.
    Used by the counting functions themselves (through
    :func:`enumerator.core.limits.check`) and available to planners.

    Examples
    --------
    >>> counting_cost(UrnModel(balls=10, urns=2**64, rule="BE")).memory < 10**6
    True
    """
    from ..core.errors import InvalidParameters

    if quantity == "configurations":
        return _configurations_cost(model)
    if quantity == "microstates":
        return _microstates_cost(model)
    if quantity == "profiles":
        return _profiles_cost(model)
    raise InvalidParameters(
        f"quantity must be configurations, microstates or profiles (got {quantity!r})",
        parameters=["quantity"],
    )


def _configurations_cost(model: UrnModel) -> Cost:
    target = _shift_target(model)
    if target <= 0:
        return Cost()
    r = model.urns
    bits = _log2_binomial(target + r - 1, target) + 64
    steps = Counter()
    for g in model.groups:
        if g.upper is not None and g.upper - g.lower < target:
            steps[g.upper - g.lower + 1] += g.count
    if not steps:
        return Cost(seconds=product_seconds(bits) * 4, memory=8 * bigint_bytes(bits))
    if model.is_uniform:
        d = next(iter(steps))
        terms = min(r, target // d) + 1
        return _linear_cost(terms * (d + 2), 4, bits)
    sparse = sum(target // d + 1 for d in steps)
    row = _linear_cost(target + 1 + sparse, 2 * (target + 1), bits)
    return row + _series_cost(target + 1, bits, len(steps))


def _microstates_cost(model: UrnModel) -> Cost:
    target = _shift_target(model)
    if target < 0:
        return Cost()
    n = model.balls
    den, ints = _integer_weights(model)
    total_weight = sum(g.count * v for g, v in zip(model.groups, ints))
    if not model.rule.distinguishable:
        if not model.weighted:
            return _configurations_cost(model)
        bits = _log2_binomial(target + model.urns - 1, target) + target * _log2(max(ints)) + 64
        parts = _merged(model, target)
        # one row per group (a three-term recurrence or a binomial row), a product tree, one dot product
        rows = _linear_cost(3 * (target + 1) * len(parts), (len(parts) + 1) * (target + 1), bits)
        return rows + _series_cost(target + 1, bits, max(0, len(parts) - 2))
    bits = n * _log2(total_weight) + n * _log2(den) + 64
    if len(model.groups) == 1 and model.groups[0].lower == 0 and (
        model.groups[0].upper is None or model.groups[0].upper >= n
    ):
        return Cost(seconds=2 * product_seconds(bits) * max(1.0, math.log2(n + 1)), memory=4 * bigint_bytes(bits))
    grouped = _mb_grouped_cost(model, target, bits)
    g = model.groups[0]
    if len(model.groups) == 1 and g.lower == 0 and g.upper is not None:
        overflow = _overflow_cost(n, g.count, g.upper)
        if overflow.seconds < grouped.seconds:
            return overflow
    return grouped


def _mb_grouped_cost(model: UrnModel, target: int, bits: float) -> Cost:
    """The cost of :func:`_mb_grouped`, following its plan (:func:`_mb_plan`)."""
    n = model.balls
    plan = _mb_plan(model, target)
    wide = bits + _log2_factorial(n)
    cost = Cost()
    labelled = 0
    ordinary = 0
    for kind, a, s, v, c in plan:
        if kind in ("fixed", "exp"):
            labelled += kind == "exp"
            continue
        if kind == "flint":
            ordinary += 1
            fw_bits = c * _log2_factorial(a + s) + target * _log2(v) + 64
            cost = cost + _series_cost(target + 1, fw_bits, 2 * max(1.0, math.log2(c + 1)))
            continue
        labelled += 1
        steps = {"single": 1, "levels": 3 * c, "miller": 3 * min(s, target)}[kind] * (target + 1)
        cost = cost + _linear_cost(steps, 2 * (target + 1), bits)
    converted = max(0, labelled - (1 if ordinary else 2))
    pieces = ordinary + converted
    if converted:
        cost = cost + _linear_cost(converted * (target + 1), target + 1, wide)
    if pieces > 1:
        cost = cost + _series_cost(target + 1, wide if converted else bits, pieces)
    return cost + _linear_cost(3 * (target + 1), 2, wide)


def _partitions_cost(total: int, parts: int, largest) -> Cost:
    """The cost of :func:`_gaussian_partitions` (a row of ``total + 1`` integers, ``min(parts, total)`` passes)."""
    if total <= 0:
        return Cost()
    if largest is not None:
        total = min(total, max(0, parts * largest - total))
        parts = min(parts, largest)
    # log2 p(n) ~ pi sqrt(2n/3) / ln 2; with at most `parts` parts also at most log2 C(n + parts - 1, parts - 1)
    bits = min(3.71 * math.sqrt(total), _log2_binomial(total + parts - 1, parts - 1)) + 64
    if parts >= total and (largest is None or largest >= total):
        return Cost(seconds=product_seconds(bits) * 64 + total / STEPS_PER_SECOND, memory=8 * bigint_bytes(bits))
    passes = min(parts, total) * (2 if largest is not None else 1)
    return Cost(seconds=passes * (total + 1) * (1 + bits / 2000) / STEPS_PER_SECOND,
                memory=(total + 1) * (bigint_bytes(bits) + 8))


def _profiles_cost(model: UrnModel) -> Cost:
    n, r = model.balls, model.urns
    if model.is_uniform:
        g = model.groups[0]
        return _partitions_cost(n - r * g.lower, r, None if g.upper is None else g.upper - g.lower)
    largest = max(top for _, _, top, _ in model.effective_groups())
    budget = _partitions_cost(n, r, max(largest, 0))
    return budget + Cost(seconds=PROFILE_ENUMERATION_LIMIT * len(model.groups) / STEPS_PER_SECOND)


def _check(model: UrnModel, quantity: str, what: str) -> None:
    check(counting_cost(model, quantity), what,
          advice="use fewer balls, fewer distinct urn groups or smaller weights",
          parameters=["balls"])


# ---------------------------------------------------------------------------
# configurations (BE counting; also the set MB weights)
# ---------------------------------------------------------------------------

def _uniform_capacity_count(r: int, n: int, span: int):
    """Vectors of ``r`` entries in ``0..span`` summing to ``n`` (exact ``mpz``).

    Inclusion–exclusion over the urns forced above ``span`` (Riordan 1958,
    ch. 5):  ``sum_j (-1)^j C(r, j) C(n - j s + r - 1, r - 1)``, ``s = span+1``.
    The term ratio is a product of ``s + 1`` small factors, so term ``j + 1``
    comes from term ``j`` by one multiplication by a short integer and one
    exact division, ``O(J s)`` word operations per digit in all with
    ``J = min(r, n // s)`` terms; the symmetry ``n -> r span - n`` halves ``J``.
    Nothing loops over the urns: ``r = 2**64`` costs what ``r = 100`` does.
    """
    if n < 0 or n > r * span:
        return mpz(0)
    if span == 0:
        return mpz(1) if n == 0 else mpz(0)
    n = min(n, r * span - n)
    if span >= n:
        return gmpy2.comb(n + r - 1, min(n, r - 1))
    if span == 1:
        return gmpy2.comb(r, n)
    s = span + 1
    terms = min(r, n // s)
    m = n + r - 1
    term = gmpy2.comb(m, min(n, r - 1))  # C(m, r - 1), taken from its small side
    plus = term
    minus = mpz(0)
    perm = math.perm
    divexact = gmpy2.divexact
    k = r - 1
    for j in range(terms):
        # C(r, j+1)/C(r, j) = (r-j)/(j+1);  C(m-s, k)/C(m, k) = (m-k)_s / (m)_s
        num = (r - j) * perm(m - k, s)
        den = (j + 1) * perm(m, s)
        term = divexact(term * num, den)
        m -= s
        if j & 1:
            plus += term
        else:
            minus += term
    return plus - minus


def _grouped_product_count(target: int, model: UrnModel) -> "mpz":
    """``[x^{n'}] prod_g (1 - x^{s_g+1})^{c_g} (1 - x)^{-R}`` for urn groups.

    Each group's factor ``x^{a}(1 - x^{d})/(1 - x)`` (``d = b - a + 1``,
    raised to the group's count) puts its numerator into one binomial power
    ``(1 - x^d)^e`` per distinct ``d`` (sparse, built term by term with
    ``C(e, i)`` updated incrementally, ``i <= n'/d``); the product of the
    distinct ones is a FLINT truncated product, and ``(1 - x)^{-R}``
    contributes the binomial row ``C(m + R - 1, R - 1)``, so the answer is
    one dot product.  Cost ``O(G M(n'))`` for ``G`` distinct bounds plus
    ``O(n')`` big operations; never a pass over the urns.
    """
    R = model.urns
    steps: Counter = Counter()
    top = 0
    bounded = True
    for g in model.groups:
        if g.upper is None:
            bounded = False
            continue
        d = g.upper - g.lower + 1
        top += g.count * (d - 1)
        if d <= target:
            steps[d] += g.count
    if bounded and target > top:
        return mpz(0)
    if not steps:
        return binomial(target + R - 1, target)
    numerators = [series.one_minus_power(d, e, target) for d, e in sorted(steps.items())]
    numerator = series.product(numerators, target)
    row = series.binomial_row(R, target)
    return series.dot_reversed(numerator, row, target)


def _configurations(model: UrnModel):
    memo = _MEMO.slots(model)
    if "configurations" in memo:
        return memo["configurations"]
    target = _shift_target(model)
    r = model.urns
    if target < 0:
        value = mpz(0)
    else:
        _check(model, "configurations", "counting the configurations")
        if model.is_uniform:
            b = model.groups[0].upper
            if b is None:
                value = binomial(target + r - 1, target)
            else:
                value = _uniform_capacity_count(r, target, b - model.groups[0].lower)
        else:
            value = _grouped_product_count(target, model)
    memo["configurations"] = value
    return value


def count_configurations(model: UrnModel) -> int:
    r"""Return the number of admissible occupancy vectors of *model*, exact.

    Parameters
    ----------
    model : UrnModel
        The problem (urn groups of any size; weights do not change the count).

    Returns
    -------
    int
        The number of vectors ``k`` with ``a_i <= k_i <= b_i`` and sum ``n``.

    Raises
    ------
    TooLarge
        When :func:`counting_cost` is beyond the active limits.

    Notes
    -----
    After the shift ``n' = n - sum_g c_g a_g``: one group without a capacity
    is ``C(n' + r - 1, n')`` (stars and bars, Feller vol. 1, §II.5); one
    group with a capacity is inclusion–exclusion with ``O(n'/(c+1))``
    incrementally updated terms (Riordan 1958, ch. 5); several groups are
    ``[x^{n'}] prod_g (1 - x^{s_g+1})^{c_g} (1 - x)^{-R}`` by sparse binomial
    powers, one FLINT truncated product and a dot product with a binomial
    row.  Cost polynomial in ``n'`` and the number of groups, whatever ``r``.

    Examples
    --------
    >>> count_configurations(UrnModel(balls=4, urns=3, rule="BE"))
    15
    >>> count_configurations(UrnModel(balls=4, urns=3, rule="BE", capacity=2))
    6
    >>> count_configurations(UrnModel(balls=2, urns=2**64, rule="FD")) == 2**63 * (2**64 - 1)
    True
    """
    return int(_configurations(model))


# ---------------------------------------------------------------------------
# microstates (MB: weighted by multinomials; weighted models: the normaliser)
# ---------------------------------------------------------------------------

def _mb_surjections(n: int, r: int):
    """``r! S(n, r)`` (maps onto all ``r`` urns) via FLINT's Stirling numbers."""
    if n < r:
        return mpz(0)
    return mpz(int(fmpz.stirling_s2(n, r))) * gmpy2.fac(r)


def _mb_plan(model: UrnModel, target: int):
    """How each merged group's factor is computed: ``(kind, a, s, v, c)`` in a fixed order.

    Kinds: ``"fixed"`` (``s = 0``: a constant), ``"exp"`` (no bounds: merged
    into ``e^{W x}``), ``"single"`` (one urn), ``"levels"`` (a lower bound and
    no upper one), ``"flint"`` (a bounded power by FLINT) and ``"miller"`` (a
    bounded power with a huge exponent, by Miller's recurrence).
    """
    plan = []
    for (a, s, v), c in sorted(_merged(model, target).items()):
        if s == 0:
            kind = "fixed"
        elif a == 0 and s == target:
            kind = "exp"
        elif c == 1:
            kind = "single"
        elif s == target:
            kind = "levels"
        elif a > 0 or c <= 4 * (target + 1):
            kind = "flint"
        else:
            kind = "miller"
        plan.append((kind, a, s, v, c))
    return plan


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
    target = _shift_target(model)
    if target < 0:
        return mpz(0)
    den, _ = _integer_weights(model)
    plan = _mb_plan(model, target)
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
    target = _shift_target(model)
    if target < 0:
        return mpz(0)
    den, _ = _integer_weights(model)
    parts = _merged(model, target)
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
            check(Cost(seconds=4 * product_seconds(n * _log2(r) + 64) * max(1.0, math.log2(n + 1)),
                       memory=4 * bigint_bytes(n * _log2(r) + 64)),
                  "r^n", advice="use fewer balls", parameters=["balls"])
            return mpz(r) ** n
        if a == 1 and (b is None or b >= n - r + 1):
            bits = n * _log2(r) + 64
            check(Cost(seconds=2 * min(r, n - r + 1) * product_seconds(bits), memory=8 * bigint_bytes(bits)),
                  "r! S(n, r)", advice="use fewer balls", parameters=["balls"])
            return _mb_surjections(n, r)
        if b is not None and b == a:
            return gmpy2.divexact(gmpy2.fac(n), gmpy2.fac(a) ** r) if n == r * a else mpz(0)
        if a == 0:
            overflow = _overflow_cost(n, r, b)
            if overflow.seconds < _mb_grouped_cost(model, n, n * _log2(r) + 64).seconds:
                check(overflow, "counting the microstates", advice="use fewer balls", parameters=["balls"])
                return _mb_capacity_overflow(n, r, b)
    _check(model, "microstates", "counting the microstates")
    return _mb_grouped(model)


def _overflow_cost(n: int, r: int, b: int) -> Cost:
    """The cost of :func:`_mb_capacity_overflow`: ``r^n``, then ``sum_j (j + 2)(n - j(b+1) + 1)`` steps, ``1 <= j <= n/(b+1)``."""
    d = b + 1
    top = min(r, n // d)
    steps = sum((j + 2) * (n - j * d + 1) for j in range(1, top + 1))
    bits = n * _log2(r) + 64
    power = Cost(seconds=2 * product_seconds(bits) * max(1.0, math.log2(n + 1)), memory=4 * bigint_bytes(bits))
    if not top:
        return power
    return power + _linear_cost(2 * steps, 2 * (n - d + 1), bits + _log2_factorial(n))


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
    memo = _MEMO.slots(model)
    if "microstates" in memo:
        return memo["microstates"]
    common = _common_weight(model)
    if common is not None:
        plain = model if common == 1 else _unweighted(model)
        if model.rule.distinguishable:
            value = _mb_unweighted(plain)
        else:
            value = _configurations(plain)
        if common != 1 and value:
            value = gmpy2.mpq(value * mpz(common.numerator) ** model.balls, mpz(common.denominator) ** model.balls)
    else:
        _check(model, "microstates", "computing the total weight")
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
        When the route's cost (:func:`counting_cost`) is beyond the limits.

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
    memo = _MEMO.slots(model)
    cost = memo.get("weight_cost")
    if cost is None:
        n = model.balls
        bits = _log2_factorial(n) + n * max(_log2(g.weight.numerator) + _log2(g.weight.denominator)
                                            for g in model.groups) + 64
        cost = memo["weight_cost"] = Cost(seconds=4 * product_seconds(bits) * max(1.0, math.log2(n + 1)),
                                          memory=6 * bigint_bytes(bits))
    check(cost, "the weight of one configuration", advice="use fewer balls", parameters=["balls"])


def _group_weight_power(model: UrnModel, values):
    """``prod_i w_i^{k_i}`` as ``(numerator, denominator)`` mpz, walking the groups (``O(r)``)."""
    num = mpz(1)
    den = mpz(1)
    start = 0
    for g in model.groups:
        count = g.count
        if g.weight != 1:
            k = sum(values[start:start + count])
            if k:
                num *= mpz(g.weight.numerator) ** k
                den *= mpz(g.weight.denominator) ** k
        start += count
    return num, den


def configuration_weight(model: UrnModel, config):
    r"""Return the weight of the occupancy vector *config* (0 if it breaks a bound).

    Parameters
    ----------
    model : UrnModel
        The problem (at most :data:`~enumerator.core.model.PER_URN_LIMIT`
        urns: a vector has one entry per urn).
    config : sequence of int
        One occupancy per urn, summing to ``n``.

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
    values = model.check_configuration(config)
    if not model._within_bounds(values):
        return 0
    _check_multinomial(model)
    base = model.rule.weight(values)
    if not model.weighted:
        return int(base)
    num, den = _group_weight_power(model, values)
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
    memo = _MEMO.slots(model)
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
    config : sequence of int
        One occupancy per urn, summing to ``n``.

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
    values = model.check_configuration(config)
    if not model._within_bounds(values):
        return Fraction(0)
    _check_multinomial(model)
    common = _common_weight(model)
    if common is not None:
        plain = model if common == 1 else _unweighted(model)
        if plain.rule.distinguishable:
            g = plain.groups[0]
            if plain.is_uniform and g.lower == 0 and (g.upper is None or g.upper >= plain.balls):
                return _reduced_mb_probability(plain, values)
            return exact_fraction(multinomial(values), _microstates(plain))
        return exact_fraction(1, _configurations(plain))
    num, den = _group_weight_power(model, values)
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


# ---------------------------------------------------------------------------
# profiles (urns unlabelled)
# ---------------------------------------------------------------------------

def _gaussian_partitions(total: int, parts: int, largest) -> int:
    """Partitions of *total* into at most *parts* parts, each at most *largest*.

    The coefficient of ``q^total`` in the Gaussian binomial
    ``[parts + largest choose parts]_q = prod_{i=1}^{parts} (1 - q^{largest+i})/(1 - q^i)``
    (Andrews, *The Theory of Partitions*, 1976, Thm 3.1); ``largest=None``
    drops the numerator.  Each factor ``1/(1 - q^i)`` is the running sum
    ``p[m] += p[m - i]`` and each ``1 - q^s`` the difference
    ``p[m] -= p[m - s]`` on one row of ``total + 1`` integers: ``O(total
    min(parts, total))`` additions of numbers of ``O(sqrt(total))`` bits.
    With room for every partition it is ``p(total)`` by FLINT's
    Hardy–Ramanujan–Rademacher formula.
    """
    if total < 0:
        return 0
    if total == 0:
        return 1
    if largest is not None and total > parts * largest:
        return 0
    if largest is not None:
        # conjugation symmetry keeps the shorter product
        total = min(total, parts * largest - total)
        if total == 0:
            return 1
        if largest < parts:
            parts, largest = largest, parts
    if parts >= total and (largest is None or largest >= total):
        # every partition of total fits: p(total) by Hardy–Ramanujan–Rademacher (FLINT)
        return int(fmpz(total).partitions_p())
    length = total + 1
    row = [0] * length
    row[0] = 1
    for i in range(1, min(parts, total) + 1):
        for m in range(i, length):
            row[m] += row[m - i]
    if largest is not None:
        for i in range(1, parts + 1):
            step = largest + i
            if step > total:
                break
            for m in range(total, step - 1, -1):
                row[m] -= row[m - step]
    return row[total]


def partitions_at_most(total: int, parts: int) -> int:
    """The number of partitions of *total* into at most *parts* parts (OEIS A008284 row sums)."""
    return _gaussian_partitions(total, parts, None)


def _groups_matching(values: List[int], zeros: int, groups) -> bool:
    """Can the multiset *values* plus *zeros* zeros be placed one per urn within the groups' bounds?

    Greedy interval–point matching with multiplicities: take the values in
    increasing order and give each the open interval with the smallest upper
    end (Glover, *Maximum matching in a convex bipartite graph*, 1967).  A
    group is one interval of ``count`` urns, so the cost is
    ``O((len(values) + G) log G)`` whatever the number of urns.
    """
    import heapq

    intervals = sorted((g.lower, math.inf if g.upper is None else g.upper, g.count) for g in groups)
    runs = ([(0, zeros)] if zeros else []) + [(v, 1) for v in sorted(values)]
    heap: list = []
    i = 0
    for v, need in runs:
        while i < len(intervals) and intervals[i][0] <= v:
            low, up, count = intervals[i]
            heapq.heappush(heap, [up, count])
            i += 1
        while need:
            if not heap or heap[0][0] < v:
                return False
            top = heap[0]
            take = min(need, top[1])
            top[1] -= take
            need -= take
            if top[1] == 0:
                heapq.heappop(heap)
    return not heap and i == len(intervals)


def count_profiles(model: UrnModel) -> int:
    r"""Return the number of distinct occupancy profiles (sorted vectors) of *model*.

    Parameters
    ----------
    model : UrnModel
        The problem (weights do not change the admissible vectors).

    Returns
    -------
    int
        The number of multisets ``{k_1, ..., k_r}`` of admissible vectors.

    Raises
    ------
    TooLarge
        When the route's cost is beyond the limits, or differing bounds
        would examine more than :data:`PROFILE_ENUMERATION_LIMIT` partitions.

    Notes
    -----
    Uniform bounds ``a..b``: partitions of ``n - r a`` into at most ``r``
    parts each at most ``b - a``, the coefficient of a Gaussian binomial
    (Andrews, *The Theory of Partitions*, 1976, Thm 3.1), ``O(min(r, n))``
    FLINT products of length ``n``; with ``r >= n`` and no capacity, the
    partition number by FLINT's Hardy–Ramanujan–Rademacher formula.
    Differing bounds: partitions of ``n`` into at most ``r`` parts tested
    one by one with an interval matching over the groups.

    Examples
    --------
    >>> count_profiles(UrnModel(balls=5, urns=3, rule="BE"))
    5
    >>> count_profiles(UrnModel(balls=10, urns=2**64, rule="BE"))   # p(10), OEIS A000041
    42
    """
    memo = _MEMO.slots(model)
    if "profiles" in memo:
        return memo["profiles"]
    n, r = model.balls, model.urns
    _check(model, "profiles", "counting the profiles")
    if model.is_uniform:
        g = model.groups[0]
        value = _gaussian_partitions(n - r * g.lower, r, None if g.upper is None else g.upper - g.lower)
    else:
        value = _profiles_by_enumeration(model)
    memo["profiles"] = value
    return value


def _profiles_by_enumeration(model: UrnModel) -> int:
    n, r = model.balls, model.urns
    eff = model.effective_groups()
    if any(top < low for _, low, top, _ in eff):
        return 0
    largest = max(top for _, _, top, _ in eff)
    budget = _gaussian_partitions(n, r, largest)
    if budget > PROFILE_ENUMERATION_LIMIT:
        raise TooLarge(
            f"counting profiles with differing per-urn bounds examines {budget} partitions, "
            f"above the limit {PROFILE_ENUMERATION_LIMIT}; use uniform bounds or fewer balls",
            parameters=["balls"],
        )
    if n == 0:
        return 1 if _groups_matching([], r, model.groups) else 0
    if budget == 0:
        return 0
    from sympy.utilities.iterables import partitions

    found = 0
    # sympy yields one empty dict when no partition exists; budget > 0 rules that out
    for part in partitions(n, m=min(r, n), k=largest):
        values = [v for v, times in part.items() for _ in range(times)]
        if _groups_matching(values, r - len(values), model.groups):
            found += 1
    return found


# ---------------------------------------------------------------------------
# the twelvefold way
# ---------------------------------------------------------------------------

def _stirling2(n: int, k: int) -> int:
    """``S(n, k)`` by FLINT; 0 when ``k > n`` (whatever the size of ``k``)."""
    if k > n:
        return 1 if n == k == 0 else 0
    return int(fmpz.stirling_s2(n, k))


def _set_partitions_at_most(n: int, r: int) -> int:
    """``sum_{k<=r} S(n, k)``: partitions of an ``n``-set into at most ``r`` blocks.

    Bell number when ``r >= n`` (FLINT); otherwise
    ``(1/r!) sum_{i=0}^{r} C(r, i) D_{r-i} i^n`` with ``D_m`` the derangement
    numbers, which follows from ``S(n,k) = (1/k!) sum_j (-1)^j C(k,j)(k-j)^n``
    (Abramowitz & Stegun 24.1.4) by exchanging the sums.
    """
    if n == 0:
        return 1
    if r >= n:
        return int(fmpz.bell_number(n))
    derangements = [mpz(1)]
    for m in range(1, r + 1):
        derangements.append(m * derangements[-1] + (-1) ** m)
    total = mpz(0)
    c = mpz(1)
    for i in range(r + 1):
        if i:
            total += c * derangements[r - i] * mpz(i) ** n
        c = c * (r - i) // (i + 1)
    return int(gmpy2.divexact(total, gmpy2.fac(r)))


#: The order of :func:`twelvefold`'s entries.
WAYS_ORDER = [
    (balls, urns, per_urn)
    for balls in ("labelled", "unlabelled")
    for urns in ("labelled", "unlabelled")
    for per_urn in ("any", "at_most_one", "at_least_one")
]


def _twelvefold_cost(n: int, r: int) -> Cost:
    """The cost of :func:`twelvefold`: its largest numbers (about ``n log2 r`` bits), their
    powers, Stirling and Bell numbers, and the partition rows, with their decimal output."""
    power_bits = n * _log2(r) + 64
    small = min(n, r)
    big = Cost(seconds=2 * product_seconds(power_bits) * max(1.0, math.log2(n + 1)),
               memory=12 * bigint_bytes(power_bits))
    cost = big                                               # r^n, r^(n), the decimal text
    if n >= r:
        stirling_bits = n * _log2(r) + 64
        cost = cost + Cost(seconds=2 * min(r, n - r + 1) * product_seconds(stirling_bits),
                           memory=8 * bigint_bytes(stirling_bits))
        cost = cost + big.times(r)                           # sum of S(n, k), k <= r: r powers
    else:
        bell_bits = n * _log2(n) + 64
        cost = cost + Cost(seconds=n * product_seconds(bell_bits), memory=8 * bigint_bytes(bell_bits))
    cost = cost + Cost(seconds=product_seconds(_log2_binomial(n + r, small) + 64) * 8)
    cost = cost + _partitions_cost(n, r, None)
    if n >= r:
        cost = cost + _partitions_cost(n - r, r, None)
    return cost


def twelvefold(balls, urns) -> List[Dict[str, object]]:
    """The twelve counts of the twelvefold way for ``n`` balls and ``r`` urns.

    Balls labelled or not × urns labelled or not × any / at most one / at
    least one ball per urn (Stanley, *Enumerative Combinatorics* vol. 1,
    2nd ed., 2012, §1.9, Table 1.1):

    ======== ======== ============= ============== ==============
    balls    urns     any           at most one    at least one
    ======== ======== ============= ============== ==============
    labelled labelled ``r^n``       ``r^(n)``      ``r! S(n,r)``
    unlab.   labelled ``C(n+r-1,n)`` ``C(r,n)``    ``C(n-1,r-1)``
    labelled unlab.   ``sum S(n,k)`` ``[n<=r]``    ``S(n,r)``
    unlab.   unlab.   ``p_{<=r}(n)`` ``[n<=r]``    ``p_{<=r}(n-r)``
    ======== ======== ============= ============== ==============

    Parameters
    ----------
    balls : int
        ``n >= 0``.
    urns : int
        ``r >= 1``, any size.

    Returns
    -------
    list of dict
        ``{"balls", "urns", "per_urn", "count"}`` in :data:`WAYS_ORDER`,
        counts exact ``int``.

    Raises
    ------
    InvalidParameters
        For a negative or non-integer *balls* or *urns*.
    TooLarge
        When the whole table is beyond the limits (checked before any entry
        is computed: ``n = 10^9`` balls in 3 urns gives numbers of 477
        million digits and partition rows of ``10^9`` entries).

    Notes
    -----
    Every sum is bounded by ``min(n, r)``: ``S(n, r) = 0`` and
    ``r! S(n, r) = 0`` for ``r > n``, the Bell number ``B_n`` (FLINT) for
    ``r >= n``, the partition number ``p(n)`` (FLINT's
    Hardy–Ramanujan–Rademacher) for ``r >= n``; otherwise ``r`` powers for
    ``sum_{k<=r} S(n, k)`` and ``O(n min(r, n))`` additions for
    ``p_{<=r}(n)``.  The estimate is :func:`_twelvefold_cost`.

    Examples
    --------
    >>> [w["count"] for w in twelvefold(3, 2)][:3]
    [8, 0, 6]
    """
    n = as_count(balls, "balls")
    r = as_count(urns, "urns", 1)
    check(_twelvefold_cost(n, r), f"the twelvefold way for {n} balls and {r} urns",
          advice="use fewer balls", parameters=["balls"])
    fits = 1 if n <= r else 0
    values = {
        ("labelled", "labelled", "any"): int(mpz(r) ** n),
        ("labelled", "labelled", "at_most_one"): math.perm(r, n),
        ("labelled", "labelled", "at_least_one"): int(_mb_surjections(n, r)),
        ("unlabelled", "labelled", "any"): math.comb(n + r - 1, n),
        ("unlabelled", "labelled", "at_most_one"): math.comb(r, n),
        ("unlabelled", "labelled", "at_least_one"): (math.comb(n - 1, r - 1) if n >= 1 else 0),
        ("labelled", "unlabelled", "any"): _set_partitions_at_most(n, r),
        ("labelled", "unlabelled", "at_most_one"): fits,
        ("labelled", "unlabelled", "at_least_one"): _stirling2(n, r),
        ("unlabelled", "unlabelled", "any"): partitions_at_most(n, r),
        ("unlabelled", "unlabelled", "at_most_one"): fits,
        ("unlabelled", "unlabelled", "at_least_one"): partitions_at_most(n - r, r) if n >= r else 0,
    }
    return [
        {"balls": b, "urns": u, "per_urn": p, "count": values[(b, u, p)]}
        for (b, u, p) in WAYS_ORDER
    ]
