r"""Cost estimates of the exact counts: what a count of configurations, microstates or profiles would take.

Each counting route states its cost before computing (:func:`counting_cost`,
checked through :func:`enumerator.core.limits.check`), in ``n``, the number
of urn groups ``G`` and the size of the answer, never in the number of urns.
Also here are the pieces the estimates and the routes share: the shift
``n' = n - sum_g c_g a_g``, the integer weights, the groups merged by value
and the plan of the MB normaliser (:func:`mb_plan`).

The estimates follow the routes of :mod:`enumerator.algorithms.configurations`,
:mod:`enumerator.algorithms.normalisers` and :mod:`enumerator.algorithms.profiles`:
closed forms ``O(M(B))`` for ``B``-bit answers; inclusion–exclusion with
``O(n'/(c+1))`` terms (Riordan, *An Introduction to Combinatorial Analysis*,
1958, ch. 5); FLINT truncated products ``O(M(n' B))`` per group; J. C. P.
Miller's recurrence (Knuth, *TAOCP* vol. 2, §4.7) ``O(n' min(s, n'))``
small steps; partition rows ``O(n min(r, n))`` additions (Andrews, *The
Theory of Partitions*, 1976, Thm 3.1).  Sizes use Stirling's formula for
``log2 k!``.
"""

from __future__ import annotations

import math
from collections import Counter
from fractions import Fraction
from typing import Dict, Tuple

from ..core.limits import (
    MULTIPLY_BITS_PER_SECOND,
    STEPS_PER_SECOND,
    Cost,
    bigint_bytes,
    check,
    product_seconds,
)
from ..core.model import UrnModel
from ..core.series import FULL_POWER_RATIO

__all__ = [
    "OVERFLOW_BITS_PER_SECOND",
    "PROFILE_ENUMERATION_LIMIT",
    "capacity_overflow_cost",
    "check_counting_cost",
    "counting_cost",
    "flint_power_cost",
    "free_balls",
    "integer_weights",
    "log2_approx",
    "log2_binomial_approx",
    "log2_factorial_approx",
    "mb_grouped_cost",
    "mb_plan",
    "merged_groups",
    "partitions_cost",
]

#: Largest number of integer partitions examined one by one when counting
#: the profiles of a model with differing per-urn bounds.
PROFILE_ENUMERATION_LIMIT = 2_000_000

#: Bits per second of the steps of the capacity-overflow route
#: (:func:`capacity_overflow_cost`): measured 4.7e9 to 6.7e9 (CPU time,
#: ``n = 5000`` to ``20000``), taken a little below.
OVERFLOW_BITS_PER_SECOND = 4.0e9


# ---------------------------------------------------------------------------
# cost estimates
# ---------------------------------------------------------------------------

def log2_approx(value) -> float:
    """``log2`` of a positive int or Fraction of any size, for cost estimates.

    Parameters
    ----------
    value : int or Fraction
        Any size.

    Returns
    -------
    float
        ``log2(value)``, or 0 for values of at most 1; an int of 1000 bits
        or more counts as its bit length (off by less than one).

    Notes
    -----
    ``math.log2`` below 1000 bits, ``int.bit_length`` above (``O(1)``); a
    Fraction is the difference of its two sides, so no float ever overflows.

    Examples
    --------
    >>> log2_approx(1024), log2_approx(Fraction(8, 1)), log2_approx(Fraction(1, 8))
    (10.0, 3.0, 0.0)
    >>> log2_approx(2**2000)
    2001.0
    """
    if isinstance(value, Fraction):
        return max(0.0, log2_approx(value.numerator) - log2_approx(value.denominator))
    value = int(value)
    if value <= 1:
        return 0.0
    bits = value.bit_length()
    if bits < 1000:
        return math.log2(value)
    return float(bits)


def log2_factorial_approx(k: int) -> float:
    """An upper estimate of ``log2(k!)``, for cost estimates.

    Parameters
    ----------
    k : int
        Any size.

    Returns
    -------
    float
        ``k log2 k - k log2 e + log2(2 pi k)/2 + 1``; 0 below ``k = 2``.

    Notes
    -----
    Stirling's formula (Abramowitz & Stegun 6.1.38) plus one bit to stay
    above the true value; ``O(1)``.

    Examples
    --------
    >>> import math
    >>> 0 <= log2_factorial_approx(10) - math.log2(math.factorial(10)) <= 1.5
    True
    """
    if k < 2:
        return 0.0
    return k * math.log2(k) - k * 1.4426950408889634 + 0.5 * math.log2(2 * math.pi * k) + 1


def log2_binomial_approx(top: int, k: int) -> float:
    """An upper estimate of ``log2 C(top, k)``, for cost estimates.

    Parameters
    ----------
    top, k : int
        Any size; *k* and ``top - k`` give the same estimate.

    Returns
    -------
    float
        ``k log2(e top / k) + 1`` with ``k`` the smaller side; 0 when that
        side is empty.

    Notes
    -----
    From ``C(top, k) <= (e top / k)^k`` (Knuth, *TAOCP* vol. 1, 3rd ed.,
    1997, §1.2.6, exercise 67); ``O(1)``.

    Examples
    --------
    >>> import math
    >>> math.log2(math.comb(100, 3)) <= log2_binomial_approx(100, 3) == log2_binomial_approx(100, 97)
    True
    """
    k = min(k, top - k)
    if k <= 0:
        return 0.0
    return k * (math.log2(top / k) + 1.4426950408889634) + 1


def _linear_cost(steps: float, entries: float, bits: float) -> Cost:
    """*steps* big-by-small operations on numbers of *bits* bits, keeping *entries* of them."""
    seconds = steps * (1.0 / STEPS_PER_SECOND + bits / MULTIPLY_BITS_PER_SECOND)
    return Cost(seconds=seconds, memory=int(entries) * bigint_bytes(bits))


def _series_cost(length: int, bits: float, products: float) -> Cost:
    """*products* truncated FLINT products of series of *length* coefficients of *bits* bits.

    Memory ``12 U``, ``U = length bits / 8``: the factors, the packed
    integers of Kronecker substitution, GMP's FFT scratch and the product.
    Measured (MB count, peak RSS above the interpreter, two FLINT powers and
    their product: ``-n 4000 --bounds 7x0:800,5x0:700``: ``U`` = 37 MB,
    peak 9.9 U; ``-n 8000 --bounds 7x0:1600,5x0:1400``: ``U`` = 166 MB,
    peak 9.0 U).  The estimate said ``4 U`` before.
    """
    total = max(1.0, length * (bits + 2 * math.log2(length + 1)))
    return Cost(seconds=products * product_seconds(total), memory=12 * bigint_bytes(total))


def free_balls(model: UrnModel) -> int:
    """The balls left once every urn holds its lower bound: ``n' = n - sum_g c_g a_g``.

    Parameters
    ----------
    model : UrnModel
        The problem.

    Returns
    -------
    int
        ``n'``, negative when the lower bounds alone need more than ``n`` balls.

    Notes
    -----
    The shift that turns lower bounds into a problem without them (Feller,
    *An Introduction to Probability Theory*, vol. 1, §II.5); one pass over
    the groups, ``O(G)``.

    Examples
    --------
    >>> free_balls(UrnModel(balls=10, bounds="2x1:3,1x0:", rule="BE"))
    8
    """
    return model.balls - sum(g.count * g.lower for g in model.groups)


def integer_weights(model: UrnModel):
    """The weights of the groups brought to one denominator.

    Parameters
    ----------
    model : UrnModel
        The problem.

    Returns
    -------
    tuple of (int, list of int)
        ``(D, [v_g])``: the least common denominator ``D`` of the weights
        and the integer weights ``v_g = D w_g``, in the order of
        ``model.groups``; ``(1, [1, ...])`` for an unweighted model.

    Notes
    -----
    ``math.lcm`` over the denominators, ``O(G)`` operations on numbers of
    the weights' size.

    Examples
    --------
    >>> from enumerator.core.groups import UrnGroup
    >>> halves_thirds = [UrnGroup(2, 0, None, Fraction(1, 2)), UrnGroup(1, 0, None, Fraction(1, 3))]
    >>> integer_weights(UrnModel(balls=3, groups=halves_thirds))
    (6, [3, 2])
    """
    if not model.weighted:
        return 1, [1] * len(model.groups)
    den = 1
    for g in model.groups:
        den = math.lcm(den, g.weight.denominator)
    return den, [g.weight.numerator * (den // g.weight.denominator) for g in model.groups]


def merged_groups(model: UrnModel, target: int):
    """The groups merged by value, whatever their order.

    Parameters
    ----------
    model : UrnModel
        The problem.
    target : int
        The free balls ``n'`` (:func:`free_balls`).

    Returns
    -------
    dict
        ``{(a, s, v): count}``: the lower bound ``a``, the room ``s`` above
        it made tight (at most *target*) and the integer weight ``v`` (see
        :func:`integer_weights`), with the number of urns sharing them.

    Notes
    -----
    Products over groups do not depend on the order of the urns, so equal
    groups anywhere in the model form one power (Flajolet & Sedgewick,
    *Analytic Combinatorics*, 2009, §II.2).  Cost ``O(G)``.

    Examples
    --------
    >>> merged_groups(UrnModel(balls=5, bounds="2x0:2,1x0:,3x0:2", rule="BE"), 5)
    {(0, 2, 1): 5, (0, 5, 1): 1}
    """
    _, ints = integer_weights(model)
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
    target = free_balls(model)
    if target <= 0:
        return Cost()
    r = model.urns
    bits = log2_binomial_approx(target + r - 1, target) + 64
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
    target = free_balls(model)
    if target < 0:
        return Cost()
    n = model.balls
    den, ints = integer_weights(model)
    total_weight = sum(g.count * v for g, v in zip(model.groups, ints))
    if not model.rule.distinguishable:
        if not model.weighted:
            return _configurations_cost(model)
        bits = log2_binomial_approx(target + model.urns - 1, target) + target * log2_approx(max(ints)) + 64
        parts = merged_groups(model, target)
        # one row per group (a three-term recurrence or a binomial row), a product tree, one dot product
        rows = _linear_cost(3 * (target + 1) * len(parts), (len(parts) + 1) * (target + 1), bits)
        return rows + _series_cost(target + 1, bits, max(0, len(parts) - 2))
    bits = n * log2_approx(total_weight) + n * log2_approx(den) + 64
    if len(model.groups) == 1 and model.groups[0].lower == 0 and (
        model.groups[0].upper is None or model.groups[0].upper >= n
    ):
        return Cost(seconds=2 * product_seconds(bits) * max(1.0, math.log2(n + 1)), memory=4 * bigint_bytes(bits))
    grouped = mb_grouped_cost(model, target, bits)
    g = model.groups[0]
    if len(model.groups) == 1 and g.lower == 0 and g.upper is not None:
        overflow = capacity_overflow_cost(n, g.count, g.upper)
        if overflow.seconds < grouped.seconds:
            return overflow
    return grouped


def mb_grouped_cost(model: UrnModel, target: int, bits: float) -> Cost:
    """The cost of the grouped MB normaliser, following its plan (:func:`mb_plan`).

    Parameters
    ----------
    model : UrnModel
        The problem.
    target : int
        The free balls ``n'`` (:func:`free_balls`).
    bits : float
        The estimated size of the answer in bits.

    Returns
    -------
    Cost
        Seconds and bytes of
        :func:`~enumerator.algorithms.normalisers.count_microstates` on its
        grouped route: per merged group a row by a recurrence or a FLINT
        power, the rows multiplied together, then one coefficient.

    Notes
    -----
    ``n! [x^n] prod_g (sum_{k=a}^{b} (w_g x)^k / k!)^{c_g}`` (Flajolet &
    Sedgewick, *Analytic Combinatorics*, 2009, §II.2): a FLINT power costs
    ``O(M(n' B) log c)``, J. C. P. Miller's recurrence (Knuth, *TAOCP*
    vol. 2, §4.7) ``O(n' min(s, n'))`` small steps.

    Examples
    --------
    >>> mb_grouped_cost(UrnModel(balls=10, bounds="2x1:3,1x0:"), 8, 64).seconds < 1
    True
    """
    n = model.balls
    plan = mb_plan(model, target)
    wide = bits + log2_factorial_approx(n)
    cost = Cost()
    labelled = 0
    ordinary = 0
    product_bits = 0.0   # the product's coefficients: each FLINT factor keeps its (a+s)!^c scale
    for kind, a, s, v, c in plan:
        if kind in ("fixed", "exp"):
            labelled += kind == "exp"
            continue
        if kind == "flint":
            ordinary += 1
            fw_bits = c * log2_factorial_approx(a + s) + c * s * log2_approx(v) + 64
            cost = cost + flint_power_cost(target, s, c, fw_bits)
            product_bits += fw_bits
            continue
        labelled += 1
        steps = {"single": 1, "levels": 3 * c, "miller": 3 * min(s, target)}[kind] * (target + 1)
        cost = cost + _linear_cost(steps, 2 * (target + 1), bits)
    converted = max(0, labelled - (1 if ordinary else 2))
    pieces = ordinary + converted
    if converted:
        cost = cost + _linear_cost(converted * (target + 1), target + 1, wide)
    if pieces > 1:
        product_bits += converted * wide
        cost = cost + _series_cost(target + 1, max(product_bits, bits), pieces)
    return cost + _linear_cost(3 * (target + 1), 2, wide)


def flint_power_cost(target: int, span: int, exponent: int, bits: float) -> Cost:
    """The cost of a FLINT power of a window of *span* + 1 terms, as :func:`enumerator.core.series.power` takes it.

    Parameters
    ----------
    target : int
        The truncation degree ``n'``.
    span : int
        The degree of the base.
    exponent : int
        The power ``c``.
    bits : float
        The largest coefficient of the power, in bits.

    Returns
    -------
    Cost
        Seconds and bytes.  The power is the full one, of ``c s + 1``
        coefficients, while ``c s`` is at most
        :data:`~enumerator.core.series.FULL_POWER_RATIO` times ``n' + 1``
        (then FLINT's binary powering), else truncated at ``n' + 1``
        coefficients.  With ``L`` that length and ``U = L B / 8`` bytes
        (every coefficient at the largest size ``B``, as Kronecker
        substitution packs them), memory is ``10 U`` (``5 U`` for a square):
        the last operands, the packed integers, GMP's FFT scratch and the
        result.  GMP's FFT takes memory in steps of its transform length,
        so the measured multiple of ``U`` varies from 4.4 to 9.2 with the
        size: the estimate is 1.1 to 2.3 times the measured peak.  Seconds ``2 log2(c + 1)`` nominal products
        (:func:`~enumerator.core.limits.product_seconds`) of ``L B`` bits.

    Notes
    -----
    Binary powering with Kronecker substitution (Schönhage 1982; W. Hart,
    FLINT, ICMS 2010).  Measured (peak RSS above the interpreter, CPU time;
    the power alone, ``a = 0``, ``v = 1``; 2 cores under a load of 4-5;
    ``n', c, s``: ``U`` and the multiple of ``U`` measured):
    ``5000, 7, 1000``: 52 MB, 4.4 U, 1.75 s;
    ``7000, 7, 1400``: 108 MB, 6.8 U, 5.0 s;
    ``8000, 7, 1600``: 144 MB, 5.5 U, 6.6 s;
    ``5000, 3, 3000``: 102 MB, 6.9 U, 2.8 s;
    ``5000, 20, 250``: 21 MB, 4.6 U, 0.34 s;
    ``5000, 2, 4000``: 84 MB, 2.9 U, 1.2 s;
    ``3000, 7, 600``: 17 MB, 9.2 U, 0.49 s;
    ``4000, 7, 800``: 32 MB, 5.8 U, 1.0 s;
    ``4000, 5, 700``: 12 MB, 4.4 U, 0.28 s;
    and the whole ``count -n N -r 7 --capacity N/5`` (MB, the power being
    its peak): ``N = 10000``: 234 MB, 6.4 U, 13.1 s; ``N = 20000``:
    1.03 GB, 6.1 U (6.0 GB RSS), 36.5 s.  The estimate before (``4 U``
    with ``L = n' + 1``) said 150 MB, 667 MB and 2.9 GB for ``N = 5000,
    10000, 20000`` against 219 MB, 1.43 GB and 6.0 GB measured; now
    525 MB, 2.3 GB and 10.3 GB (and those counts take the
    capacity-overflow route, :func:`capacity_overflow_cost`, whose
    estimate no longer overstates it 30-fold: 1.9 s and 60 MB at
    ``N = 20000``).

    Examples
    --------
    >>> small, large = flint_power_cost(5000, 1000, 7, 6e4), flint_power_cost(10000, 2000, 7, 1.3e5)
    >>> small.memory < large.memory and small.seconds < large.seconds
    True
    """
    full = exponent * span
    length = full + 1 if full <= FULL_POWER_RATIO * (target + 1) else target + 1
    size = max(1.0, length * (bits + 2 * math.log2(length + 1)))
    copies = 10 if exponent >= 3 else 5
    seconds = 2 * max(1.0, math.log2(exponent + 1)) * product_seconds(size)
    return Cost(seconds=seconds, memory=copies * bigint_bytes(size))


def partitions_cost(total: int, parts: int, largest) -> Cost:
    """The cost of counting the partitions of *total* into at most *parts* parts, each at most *largest*.

    Parameters
    ----------
    total, parts : int
        The number partitioned and the most parts.
    largest : int or None
        The largest part, ``None`` for no limit.

    Returns
    -------
    Cost
        Seconds and bytes of the Gaussian-binomial row of
        :func:`~enumerator.algorithms.profiles.partitions_at_most` and
        :func:`~enumerator.algorithms.profiles.count_profiles`: a row of
        ``total + 1`` integers of ``O(sqrt(total))`` bits, ``min(parts,
        total)`` passes (two with a largest part), or the
        Hardy–Ramanujan–Rademacher formula when every partition fits.

    Notes
    -----
    Andrews, *The Theory of Partitions*, 1976, Thm 3.1; the size of
    ``p(n)`` from the Hardy–Ramanujan asymptotic ``log2 p(n) ~ pi
    sqrt(2n/3) / ln 2``.

    Examples
    --------
    >>> partitions_cost(0, 3, None)
    Cost(seconds=0.0, memory=0)
    >>> partitions_cost(10**4, 50, 20).seconds < partitions_cost(10**4, 50, None).seconds * 3
    True
    """
    if total <= 0:
        return Cost()
    if largest is not None:
        total = min(total, max(0, parts * largest - total))
        parts = min(parts, largest)
    # log2 p(n) ~ pi sqrt(2n/3) / ln 2; with at most `parts` parts also at most log2 C(n + parts - 1, parts - 1)
    bits = min(3.71 * math.sqrt(total), log2_binomial_approx(total + parts - 1, parts - 1)) + 64
    if parts >= total and (largest is None or largest >= total):
        return Cost(seconds=product_seconds(bits) * 64 + total / STEPS_PER_SECOND, memory=8 * bigint_bytes(bits))
    passes = min(parts, total) * (2 if largest is not None else 1)
    return Cost(seconds=passes * (total + 1) * (1 + bits / 2000) / STEPS_PER_SECOND,
                memory=(total + 1) * (bigint_bytes(bits) + 8))


def _profiles_cost(model: UrnModel) -> Cost:
    n, r = model.balls, model.urns
    if model.is_uniform:
        g = model.groups[0]
        return partitions_cost(n - r * g.lower, r, None if g.upper is None else g.upper - g.lower)
    largest = max(top for _, _, top, _ in model.effective_groups())
    budget = partitions_cost(n, r, max(largest, 0))
    return budget + Cost(seconds=PROFILE_ENUMERATION_LIMIT * len(model.groups) / STEPS_PER_SECOND)


def check_counting_cost(model: UrnModel, quantity: str, what: str) -> None:
    """Refuse a count whose :func:`counting_cost` is beyond the active limits.

    Parameters
    ----------
    model : UrnModel
        The problem.
    quantity : {"configurations", "microstates", "profiles"}
        The count.
    what : str
        The work, as the refusal names it ("counting the configurations").

    Raises
    ------
    TooLarge
        Past the limits (:func:`enumerator.core.limits.check`), saying what
        the work would take and advising fewer balls, fewer distinct urn
        groups or smaller weights (parameter ``balls``).

    Notes
    -----
    One estimate, ``O(G)``; the routes of
    :mod:`~enumerator.algorithms.configurations`,
    :mod:`~enumerator.algorithms.normalisers` and
    :mod:`~enumerator.algorithms.profiles` call it before computing.

    Examples
    --------
    >>> check_counting_cost(UrnModel(balls=10, urns=2**64, rule="BE"), "configurations", "counting")
    """
    check(counting_cost(model, quantity), what,
          advice="use fewer balls, fewer distinct urn groups or smaller weights",
          parameters=["balls"])


def mb_plan(model: UrnModel, target: int):
    """How the MB normaliser computes each merged group's factor.

    Parameters
    ----------
    model : UrnModel
        The problem.
    target : int
        The free balls ``n'`` (:func:`free_balls`).

    Returns
    -------
    list of tuple
        ``(kind, a, s, v, c)`` per merged group (:func:`merged_groups`),
        sorted by ``(a, s, v)``.  Kinds: ``"fixed"`` (``s = 0``: a
        constant), ``"exp"`` (no bounds: merged into ``e^{W x}``),
        ``"single"`` (one urn), ``"levels"`` (a lower bound and no upper
        one), ``"flint"`` (a bounded power by FLINT) and ``"miller"`` (a
        bounded power with a huge exponent, by J. C. P. Miller's recurrence,
        Knuth, *TAOCP* vol. 2, §4.7).

    Notes
    -----
    Shared by the normaliser and its estimate (:func:`mb_grouped_cost`), so
    that both follow one plan; ``O(G log G)``.

    Examples
    --------
    >>> mb_plan(UrnModel(balls=10, bounds="2x1:3,1x0:"), 8)
    [('exp', 0, 8, 1, 1), ('flint', 1, 2, 1, 2)]
    """
    plan = []
    for (a, s, v), c in sorted(merged_groups(model, target).items()):
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


def capacity_overflow_cost(n: int, r: int, b: int) -> Cost:
    """The cost of the MB normaliser of *r* urns of capacity *b* by inclusion–exclusion over overfull urns.

    Parameters
    ----------
    n, r, b : int
        The balls, the urns and their common capacity.

    Returns
    -------
    Cost
        Seconds and bytes of ``r^n`` and then ``S = sum_j (j + 2)(n - j(b+1)
        + 1)`` steps, ``1 <= j <= n/(b+1)``, each a few operations on
        numbers of at most ``B = n log2 r`` bits (the terms of ``r^n``):
        ``2 S`` small steps plus ``S B`` bits at
        :data:`OVERFLOW_BITS_PER_SECOND`; memory two rows of ``n - b``
        numbers averaging ``B/2`` bits, and a kilobyte per entry of
        allocator slack.

    Notes
    -----
    The route counts the maps that overfill ``j`` chosen urns (Riordan, *An
    Introduction to Combinatorial Analysis*, 1958, ch. 5); it pays when the
    capacity is near ``n``, so that few terms remain.  Measured (the route
    alone: CPU time, peak RSS above the interpreter; 2 cores under a load of
    4-5; ``n, r, b``): ``5000, 7, 1000``: 0.086 s, 5 MB (estimate 0.16 s,
    11 MB); ``10000, 7, 2000``: 0.38 s, 16 MB (0.59 s, 37 MB); ``20000, 7,
    4000``: 1.9 s, 60 MB (2.3 s, 129 MB); ``6000, 20, 600``: 0.60 s, 12 MB (1.05 s,
    23 MB); ``20000, 50, 1000``: 36 s, 189 MB (49 s, 288 MB); ``3000, 100,
    60``: 1.9 s, 8 MB (7.3 s, 10 MB).  The estimate before (``S`` big-by-small products on
    numbers of ``B + log2 n!`` bits) said 12 s at ``10000, 7, 2000``, so
    the grouped route (a FLINT power: 13 s, 1.4 GB) was taken instead.

    Examples
    --------
    >>> capacity_overflow_cost(10, 3, 4).seconds < 1
    True
    """
    d = b + 1
    top = min(r, n // d)
    # Σ_{j=1}^{top} (j + 2)(n + 1 - j d), in closed form (the sum itself took seconds at n = 10^7)
    t = top
    steps = (n + 1) * (t * (t + 1) // 2 + 2 * t) - d * (t * (t + 1) * (2 * t + 1) // 6 + t * (t + 1))
    bits = n * log2_approx(r) + 64
    power = Cost(seconds=2 * product_seconds(bits) * max(1.0, math.log2(n + 1)), memory=4 * bigint_bytes(bits))
    if not top:
        return power
    rows = Cost(seconds=steps * (2.0 / STEPS_PER_SECOND + bits / OVERFLOW_BITS_PER_SECOND),
                memory=(n - d + 1) * (bigint_bytes(bits) + 1024))
    return power + rows
