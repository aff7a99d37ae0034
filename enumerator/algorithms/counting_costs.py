r"""Cost estimates of the exact counts: what a count of configurations, microstates or profiles would take.

Each counting route states its cost before computing (:func:`counting_cost`,
checked through :func:`enumerator.core.limits.check`), in ``n``, the number
of urn groups ``G`` and the size of the answer, never in the number of urns.
Also here are the pieces the estimates and the routes share: the shift
``n' = n - sum_g c_g a_g``, the integer weights, the groups merged by value
and the plan of the MB normaliser (:func:`_mb_plan`).

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

__all__ = ["PROFILE_ENUMERATION_LIMIT", "counting_cost"]

#: Largest number of integer partitions examined one by one when counting
#: the profiles of a model with differing per-urn bounds.
PROFILE_ENUMERATION_LIMIT = 2_000_000


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
    """The cost of :func:`~enumerator.algorithms.normalisers._mb_grouped`, following its plan (:func:`_mb_plan`)."""
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
    """The cost of :func:`~enumerator.algorithms.profiles._gaussian_partitions` (a row of ``total + 1`` integers, ``min(parts, total)`` passes)."""
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


def _overflow_cost(n: int, r: int, b: int) -> Cost:
    """The cost of :func:`~enumerator.algorithms.normalisers._mb_capacity_overflow`: ``r^n``, then ``sum_j (j + 2)(n - j(b+1) + 1)`` steps, ``1 <= j <= n/(b+1)``."""
    d = b + 1
    top = min(r, n // d)
    steps = sum((j + 2) * (n - j * d + 1) for j in range(1, top + 1))
    bits = n * _log2(r) + 64
    power = Cost(seconds=2 * product_seconds(bits) * max(1.0, math.log2(n + 1)), memory=4 * bigint_bytes(bits))
    if not top:
        return power
    return power + _linear_cost(2 * steps, 2 * (n - d + 1), bits + _log2_factorial(n))
