"""The weighted MB law of the maximum by urn groups: every route against outside references.

References: brute force over every assignment of labelled balls (small
cases, written out here), the per-urn product of one exponential factor per
urn, ``prod_i sum_{j<=m} (w_i x)^j / j!`` (Feller, vol. 1, ch. IV: the
assignments with every urn holding at most ``m``), computed urn by urn by a
plain DP in this file, and, for equal weights, the unweighted per-urn route
(:func:`enumerator.algorithms.extremes.mb_max_cumulative`).
"""

from __future__ import annotations

import itertools
import math
from fractions import Fraction

import pytest

from enumerator.algorithms import group_laws
from enumerator.algorithms.extremes import mb_max_cumulative
from enumerator.core.limits import limited

pytestmark = pytest.mark.usefixtures("no_configured_store")


def _brute_force_at_most(n, weights, m):
    # every assignment of n labelled balls to the urns, weighed prod w_i, with no urn above m
    return sum(math.prod(weights[i] for i in a) for a in itertools.product(range(len(weights)), repeat=n)
               if max(a.count(i) for i in range(len(weights))) <= m)


def _per_urn_at_most(n, weights, m):
    # urn by urn: N(k) = sum_j C(k, j) w^j N_prev(k - j), j <= m (the exponential product, Feller vol. 1 ch. IV)
    row = [1] + [0] * n
    for w in weights:
        row = [sum(math.comb(k, j) * w ** j * row[k - j] for j in range(min(k, m) + 1)) for k in range(n + 1)]
    return row[n]


def _urns(groups):
    return [w for c, _, _, w in groups for _ in range(c)]


SMALL = [
    (6, [(2, 0, 6, 1), (1, 0, 6, 3)]),
    (7, [(1, 0, 7, 2), (2, 0, 7, 1), (1, 0, 7, 5)]),
    (6, [(1, 0, 6, 1), (1, 0, 6, 2), (1, 0, 6, 3), (1, 0, 6, 4), (1, 0, 6, 5)]),
]

MEDIUM = [
    (30, [(3, 0, 30, 1), (2, 0, 30, 2), (2, 0, 30, 5)]),
    (40, [(4, 0, 40, w) for w in range(1, 6)]),
    (25, [(2, 0, 25, 1), (3, 0, 25, 4), (1, 0, 25, 7), (2, 0, 25, 2)]),
]


@pytest.mark.parametrize("n, groups", SMALL)
def test_each_route_at_each_bound_equals_brute_force(n, groups):
    weights = _urns(groups)
    for m in range(1, n + 1):
        expected = _brute_force_at_most(n, weights, m)  # brute force over len(weights)^n assignments
        assert group_laws._mb_free_capped(groups, n, m) == expected
        assert group_laws._blocks_capped(groups, n, m) == expected


@pytest.mark.parametrize("n, groups", MEDIUM)
def test_blocks_and_levels_equal_the_per_urn_product(n, groups):
    weights = _urns(groups)
    for m in range(1, n // 2 + 2):
        expected = _per_urn_at_most(n, weights, m)  # the per-urn exponential product (Feller vol. 1 ch. IV)
        assert group_laws._blocks_capped(groups, n, m) == expected
        assert group_laws._mb_free_capped(groups, n, m) == expected


@pytest.mark.parametrize("n, groups", SMALL + MEDIUM)
def test_extensions_from_every_base_equal_the_per_urn_product(n, groups):
    weights = _urns(groups)
    expected = {m: _per_urn_at_most(n, weights, m) for m in range(1, n + 1)}  # per-urn product, as above
    for m in range(1, n):
        D = min(4, n - m)
        value, tails = group_laws._mb_free_levels(groups, n, m, extensions=D)
        assert value == expected[m]
        vtails = group_laws._extension_tails(n, m, tails)
        for d in range(1, D + 1):
            assert group_laws._mb_free_extend(groups, n, m, d, vtails) == expected[m + d]


@pytest.mark.parametrize("n, groups", [MEDIUM[1], (30, [(3, 0, 30, w) for w in (1, 2, 3, 5, 4)])])
def test_every_cut_and_every_row_route_equals_the_per_urn_product(n, groups):
    import itertools as it

    weights = _urns(groups)
    for m in (1, 2, 3, 5, 8, n // 3, n // 2):
        expected = _per_urn_at_most(n, weights, m)  # the per-urn exponential product (Feller vol. 1 ch. IV)
        for blocks in group_laws._partitions(groups):
            for hows in it.product(("levels", "miller", "rows"), repeat=len(blocks)):
                assert group_laws._blocks_capped(groups, n, m, blocks, list(hows)) == expected, (m, blocks, hows)


def test_miller_rows_of_a_block_equal_the_per_urn_product_for_every_ball_number():
    block = [(3, 0, 20, 2), (3, 0, 20, 5), (3, 0, 20, 1)]
    for m in (1, 2, 4, 7):
        row = group_laws._miller_block_row(block, 20, m)
        # per-urn product of the 9 urns, entry by entry (Feller vol. 1 ch. IV)
        assert row == [_per_urn_at_most(k, _urns(block), m) for k in range(21)]


def test_equal_weights_give_the_unweighted_law():
    # 12 urns of weight 3 in four groups: weights scale every assignment of n balls by 3^n, so
    # A_m = 3^n times the unweighted count of mb_max_cumulative (the per-urn route for 12 urns)
    n = 36
    groups = [(2, 0, n, 3), (3, 0, n, 3), (4, 0, n, 3), (3, 0, n, 3)]
    unweighted = mb_max_cumulative(n, 12, n)
    for m in range(3, n // 2 + 1):
        assert group_laws._blocks_capped(groups, n, m) == 3 ** n * unweighted[m]
        assert group_laws._mb_free_capped(groups, n, m) == 3 ** n * unweighted[m]
    value, tails = group_laws._mb_free_levels(groups, n, 8, extensions=5)
    vtails = group_laws._extension_tails(n, 8, tails)
    assert [group_laws._mb_free_extend(groups, n, 8, d, vtails) for d in range(1, 6)] == \
        [3 ** n * unweighted[m] for m in range(9, 14)]


def _law(model):
    from enumerator.algorithms.statistics import distribution

    return {m: Fraction(p) for m, p in distribution(model, "max").pmf.items()}


@pytest.mark.parametrize("route", ["levels", "blocks", "rows", "planned"])
def test_the_whole_law_by_each_route_equals_the_per_urn_product(monkeypatch, route):
    from enumerator.core.model import UrnModel

    n, text = 24, "3x1,2x2,2x3,1x5,2x4"
    weights = [1, 1, 1, 2, 2, 3, 3, 5, 4, 4]
    total = sum(weights) ** n
    cumulative = {m: _per_urn_at_most(n, weights, m) for m in range(0, n + 1)}  # per-urn product
    expected = {m: Fraction(cumulative[m] - cumulative[m - 1], total)
                for m in range(1, n + 1) if cumulative[m] != cumulative[m - 1]}
    if route == "levels":
        monkeypatch.setattr(group_laws, "_levels_first", lambda *args, **kw: True)
    elif route != "planned":
        monkeypatch.setattr(group_laws, "_levels_first", lambda *args, **kw: False)
        monkeypatch.setattr(group_laws, "_per_bound_route",
                            lambda groups, n, m, free, bits, route=route: (route, group_laws.Cost()))
    assert _law(UrnModel(balls=n, weights=text)) == expected


def test_the_plan_prices_every_bound_before_computing():
    groups = [(200, 0, 2000, w) for w in range(1, 6)]
    bits = 2000 * math.log2(3000)
    plan = group_laws._max_plan(groups, 2000, 1, 999, True, bits)
    # the steps cover m = 1..999 once each, in order: a levels step at m serves m..m+D
    covered = [m + d for m, D, _, _ in plan for d in range(D + 1)]
    assert covered == list(range(1, 1000))
    assert {route for _, _, route, _ in plan} <= {"levels", "blocks", "rows"}
    assert all(cost.seconds > 0 and math.isfinite(cost.seconds) for *_, cost in plan)


def test_a_law_beyond_the_limits_is_refused_with_its_estimate():
    from enumerator.core.errors import TooLarge
    from enumerator.core.model import UrnModel

    with limited(seconds=5):
        with pytest.raises(TooLarge, match="the law of max for 2000 balls in 1000 urns"):
            _law(UrnModel(balls=2000, weights="200x1,200x2,200x3,200x4,200x5"))
