"""The maximum-load laws (enumerator.algorithms.extremes, group_laws) against outside references.

References: counts of assignments with every urn at most ``m`` by a
dynamic programme over the urns written in the test (choose which balls
each urn holds: ``C(k, j)`` ways); brute-force enumeration of every
assignment of labelled balls to weighted urns (``P = prod w_i / W^n``,
Feller, vol. 1, ch. II); SymPy's exact polynomial arithmetic for
``n! [x^n] e_m(x)^r``; and the same model written urn by urn and in groups.
"""

from __future__ import annotations

import itertools
import math
from fractions import Fraction
from math import comb, factorial

import pytest

from enumerator import Occupancy
from enumerator.algorithms import extremes
from enumerator.core.errors import TooLarge


def _capped_by_dp(n, r, m):
    """Assignments of n labelled balls to r urns, at most m each: a DP over the urns (written out)."""
    row = [1] + [0] * n
    for _ in range(r):
        row = [sum(comb(k, j) * row[k - j] for j in range(min(k, m) + 1)) for k in range(n + 1)]
    return row[n]


@pytest.mark.parametrize("n, r", [(45, 6), (64, 9), (30, 30), (23, 2)])
@pytest.mark.parametrize("costs", [(2.45, 4.5, 8.0), (100.0, 1.0, 0.01), (1e-9, 1.0, 1.0)])
def test_cumulative_maximum_in_every_regime_equals_a_dp_over_the_urns(monkeypatch, n, r, costs):
    # the plan forced into Miller's recurrence, levels, or levels with extensions
    monkeypatch.setattr(extremes, "_COST_MILLER", costs[0])
    monkeypatch.setattr(extremes, "_COST_LEVEL", costs[1])
    monkeypatch.setattr(extremes, "_COST_EXTEND", costs[2])
    cumulative = extremes.mb_max_cumulative(n, r, n)
    for m in range(-(-n // r), n + 1):
        assert cumulative[m] == _capped_by_dp(n, r, m), m  # the DP written in this test


def test_cumulative_maximum_equals_sympy_polynomial_powers():
    import sympy

    x = sympy.symbols("x")
    n, r = 30, 6
    cumulative = extremes.mb_max_cumulative(n, r, n)
    for m in (5, 8, 14, 20):
        e_m = sympy.Poly([sympy.Rational(1, factorial(j)) for j in range(m, -1, -1)], x, domain="QQ")
        # SymPy: n! [x^n] e_m(x)^r, exactly
        value = (e_m ** r).coeff_monomial(x ** n) * factorial(n)
        assert value.is_integer and int(cumulative[m]) == int(value)


def test_plan_covers_every_bound_below_half_once():
    for n, r in [(1000, 1024), (2000, 500), (10 ** 4, 1024)]:
        lo = -(-n // r)
        covered = []
        for m, D, miller, units in extremes._mb_max_plan(n, r, lo, n // 2 - 1):
            assert units > 0 and (D == 0 or not miller)
            covered.extend(range(m, m + D + 1))
        assert covered == list(range(lo, n // 2))


def _weighted_max_law(n, weights):
    """The law of the maximum for n labelled balls thrown at weighted urns, by brute force."""
    scale = math.lcm(*(Fraction(w).denominator for w in weights))
    ints = [int(Fraction(w) * scale) for w in weights]  # the same proportions, as integers
    law = {}
    for assignment in itertools.product(range(len(weights)), repeat=n):
        m = max(assignment.count(i) for i in range(len(weights)))
        law[m] = law.get(m, 0) + math.prod(ints[i] for i in assignment)
    return {m: Fraction(v, sum(ints) ** n) for m, v in law.items()}


@pytest.mark.parametrize("n, weights", [
    (6, [1, 1, 2, 2, 3]),
    (7, [Fraction(1, 3), Fraction(1, 3), 2]),
    (5, [1, 5, 5, 5]),
    (8, [1, 2]),
])
def test_weighted_max_law_equals_brute_force(n, weights):
    expected = _weighted_max_law(n, weights)  # every assignment of labelled balls, written out
    got = Occupancy(balls=n, weights=weights).distribution("max", store=None).pmf
    assert {m: Fraction(p) for m, p in got.items()} == expected


def test_max_law_is_the_same_per_urn_and_in_groups():
    # the same weighted model, urn by urn and as run-length groups
    per_urn = Occupancy(balls=9, weights=[1, 1, 1, 2, 2, 3, 3, 3])
    groups = Occupancy(balls=9, weights="3x1,2x2,3x3")
    assert per_urn.distribution("max", store=None).pmf == groups.distribution("max", store=None).pmf
    # and an unweighted model given by groups with equal bounds, against the uniform form
    uniform = Occupancy(balls=12, urns=5, capacity=4)
    grouped = Occupancy(balls=12, bounds="2x0:4,3x0:4")
    assert uniform.distribution("max", store=None).pmf == grouped.distribution("max", store=None).pmf


def test_long_laws_are_refused_under_a_short_limit_with_their_estimate():
    from enumerator.core.limits import limited

    # estimated from their plans (about 3.6 and 25 minutes of CPU), refused under a 1-minute limit before any work
    with limited(seconds=60):
        with pytest.raises(TooLarge, match="minutes"):
            Occupancy(balls=10 ** 4, urns=1024).distribution("max", store=None)
        with pytest.raises(TooLarge, match="minutes|hours"):
            Occupancy(balls=2000, weights="200x1,200x2,200x3,200x4,200x5").distribution("max", store=None)


@pytest.mark.parametrize("n, groups", [
    (6, [(2, 0, 6, 1), (1, 0, 6, 3)]),
    (7, [(1, 0, 7, 2), (2, 0, 7, 1), (1, 0, 7, 5)]),
    (7, [(3, 0, 7, 1)]),
])
def test_levels_over_weighted_groups_equal_brute_force(n, groups):
    from enumerator.algorithms.group_laws import _mb_free_capped

    weights = [w for c, _, _, w in groups for _ in range(c)]
    for m in range(1, n + 1):
        # every assignment of labelled balls with at most m per urn, weighed prod w_i (written out)
        expected = sum(math.prod(weights[i] for i in a) for a in itertools.product(range(len(weights)), repeat=n)
                       if max(a.count(i) for i in range(len(weights))) <= m)
        assert _mb_free_capped(groups, n, m) == expected


def test_weighted_max_law_takes_both_routes_and_agrees_with_brute_force(monkeypatch):
    from enumerator.algorithms import group_laws
    from enumerator.algorithms.statistics import distribution
    from enumerator.core.model import UrnModel

    weights = [1, 1, 2, 3, 3]
    expected = _weighted_max_law(7, weights)  # brute force over the 5^7 assignments
    for choice in (True, False):
        # the pure computation (no store), once by each route
        monkeypatch.setattr(group_laws, "_levels_first", lambda *args, choice=choice: choice)
        got = distribution(UrnModel(balls=7, weights=weights), "max").pmf
        assert {m: Fraction(p) for m, p in got.items()} == expected
