"""Exact distributions of statistics: brute force, classical formulas, SciPy and SymPy.

The slow references here enumerate every vector of the bounded box
(``tests/reference.py``) and weigh it under the rule; keep their inputs small.
Outside references are named beside each check.
"""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
import pytest
import scipy.stats
import sympy
from hypothesis import given, settings
from hypothesis import strategies as st
from reference import box, weight
from strategies import small_models as shared_small_models

import enumerator.algorithms.extremes as extremes
import enumerator.algorithms.laws as laws
import enumerator.algorithms.statistics as statistics
from enumerator import Occupancy
from enumerator.algorithms.counting import count_configurations, count_microstates
from enumerator.algorithms.statistics import Distribution, Statistic, distribution, outcome_count, parse_statistic
from enumerator.algorithms.vocabulary import REGISTRY, STATISTICS
from enumerator.core.errors import InvalidParameters, TooLarge

STATS = ["empty", "occupied", "max", "min", "urn:1", "urn:2", "exactly:0", "exactly:1", "exactly:2",
         "atleast:1", "atleast:2", "atleast:3", "profile"]


def brute_law(model, stat: str):
    """{value: Fraction} by listing the box and weighing each vector (slow reference)."""
    s = parse_statistic(stat)
    found, total = {}, 0
    for k in box(model):
        w = weight(model, k)
        total += w
        v = s.value(k)
        found[v] = found.get(v, 0) + w
    return {v: Fraction(c, total) for v, c in sorted(found.items()) if c}


def moments(pmf):
    mean = sum(v * p for v, p in pmf.items())
    return mean, sum(v * v * p for v, p in pmf.items()) - mean * mean


def small_models():
    """Small models of every rule, free, uniform or per-urn, with at least one configuration (shared strategy)."""
    return shared_small_models(max_urns=4, max_balls=7, shapes=("free", "uniform", "per-urn"), lows=2, span=3,
                               admissible=True)
@settings(max_examples=150, deadline=None)
@given(small_models(), st.sampled_from(STATS))
def test_every_statistic_matches_brute_force(model, stat):
    if stat == "urn:2" and model.urns < 2:
        stat = "urn:1"
    law = distribution(model, stat)
    expected = brute_law(model, stat)
    assert law.pmf == expected
    assert sum(law.pmf.values()) == 1
    assert all(p > 0 for p in law.pmf.values())
    if stat == "profile":
        assert law.mean is None and law.variance is None
    else:
        assert (law.mean, law.variance) == moments(expected)


@settings(max_examples=60, deadline=None)
@given(small_models())
def test_counts_add_up_to_the_number_of_outcomes(model):
    # the outcomes are MB microstates or BE/FD configurations (the model's own counts)
    for stat in ("max", "min", "empty", "profile"):
        counts, total = statistics.statistic_counts(model, stat)
        assert total == count_microstates(model)
        assert sum(counts.values()) == total


@settings(max_examples=80, deadline=None)
@given(small_models(), st.integers(0, 7))
def test_outcome_count_is_the_brute_force_count_of_any_bounds(model, shift):
    bounds = [(a, None if b is None else b + shift % 2) for a, b in model.bounds]
    if model.rule.value == "FD":
        bounds = [(a, min(1, 1 if b is None else b)) for a, b in bounds]
    wide = Occupancy(balls=model.balls, bounds=bounds, rule=model.rule)
    expected = sum(weight(wide, k) for k in box(wide))
    assert outcome_count(bounds, model.rule, model.balls) == expected


# ---------------------------------------------------------------- the fast paths against other algorithms

@pytest.mark.parametrize("n, r", [(60, 7), (41, 3), (100, 20), (37, 37), (50, 2), (30, 100), (9, 1)])
@pytest.mark.parametrize("costs", [(2.45, 4.5, 8.0), (100.0, 1.0, 0.01), (100.0, 1.0, 1e9), (1e-9, 1.0, 1.0)])
def test_mb_maximum_in_every_regime_equals_the_egf_power(monkeypatch, n, r, costs):
    # Miller's recurrence, the level recursion with and without extensions and the
    # one-term inclusion-exclusion, each forced by the cost model, against
    # counting's truncated-EGF power (FLINT) for the same bounded counts.
    monkeypatch.setattr(extremes, "_COST_MILLER", costs[0])
    monkeypatch.setattr(extremes, "_COST_LEVEL", costs[1])
    monkeypatch.setattr(extremes, "_COST_EXTEND", costs[2])
    cumulative = extremes.mb_max_cumulative(n, r, n)
    lo = -(-n // r)
    assert sorted(cumulative) == list(range(lo, n + 1))
    for m, value in cumulative.items():
        assert value == count_microstates(Occupancy(balls=n, urns=r, rule="MB", capacity=m))


@pytest.mark.parametrize("n, r", [(40, 6), (25, 5), (13, 2), (50, 24)])
def test_mb_at_least_equals_the_egf_power(n, r):
    for m in range(0, n // r + 2):
        expected = count_microstates(Occupancy(balls=n, urns=r, rule="MB", minimum=m)) if n >= r * m else 0
        assert extremes.mb_at_least(n, r, m) == expected


def test_be_maximum_rows_equal_the_capacity_counts():
    for n, r, a in [(30, 4, 0), (40, 6, 2), (9, 9, 1)]:
        lo = max(a, -(-n // r))
        rows = extremes.be_max_cumulative(n, r, a, lo, n)
        for m, value in rows.items():
            expected = count_configurations(Occupancy(balls=n, urns=r, rule="BE", capacity=m, minimum=a))
            assert value == expected


def test_maximum_with_a_capacity_stops_at_the_capacity():
    model = Occupancy(balls=30, urns=8, rule="MB", capacity=6)
    law = distribution(model, "max")
    assert max(law.pmf) == 6 and min(law.pmf) == 4
    # brute-force-free check: P(max <= 5) is the capacity-5 count over the capacity-6 one
    below = Fraction(count_microstates(Occupancy(balls=30, urns=8, rule="MB", capacity=5)),
                     count_microstates(model))
    assert law.pmf[6] == 1 - below


# ---------------------------------------------------------------- outside references

def feller_empty(n: int, r: int, m: int) -> Fraction:
    """P(exactly m of r cells empty) for n balls, Feller vol. 1, ch. IV, eq. (2.4) (from memory):
    C(r, m) sum_k (-1)^k C(r-m, k) (1 - (m+k)/r)^n."""
    return math.comb(r, m) * sum(
        (-1) ** k * math.comb(r - m, k) * Fraction(r - m - k, r) ** n for k in range(r - m + 1)
    )


@pytest.mark.parametrize("n, r", [(7, 5), (20, 7), (40, 10), (10, 30), (100, 60)])
def test_empty_cells_follow_the_classical_formula(n, r):
    law = distribution(Occupancy(balls=n, urns=r, rule="MB"), "empty")
    expected = {m: feller_empty(n, r, m) for m in range(r + 1) if feller_empty(n, r, m)}
    assert law.pmf == expected


@pytest.mark.parametrize("n, r", [(1, 1), (5, 3), (25, 10), (500, 100), (2000, 333)])
def test_mean_and_variance_of_empty_cells(n, r):
    # E = r (1 - 1/r)^n (Feller vol. 1, ch. IV; common practice), and
    # Var = r (1-1/r)^n + r (r-1) (1-2/r)^n - r^2 (1-1/r)^(2n) (from memory)
    law = distribution(Occupancy(balls=n, urns=r, rule="MB"), "empty")
    q1, q2 = Fraction(r - 1, r), Fraction(r - 2, r)
    assert law.mean == r * q1 ** n
    assert law.variance == r * q1 ** n + r * (r - 1) * q2 ** n - r * r * q1 ** (2 * n)


@pytest.mark.parametrize("n, r", [(12, 5), (30, 12), (200, 50)])
def test_occupied_cells_are_surjections_counted_by_sympy_stirling(n, r):
    # P(occupied = j) = C(r, j) j! S(n, j) / r^n, with SymPy's Stirling numbers of the second kind
    law = distribution(Occupancy(balls=n, urns=r, rule="MB"), "occupied")
    for j in range(r + 1):
        s2 = int(sympy.functions.combinatorial.numbers.stirling(n, j))
        assert law.probability(j) == Fraction(math.comb(r, j) * math.factorial(j) * s2, r ** n)


@pytest.mark.parametrize("n, r", [(10, 4), (57, 9), (300, 7)])
def test_one_urn_under_mb_is_binomial_per_scipy(n, r):
    # the occupancy of one urn is Binomial(n, 1/r) (scipy.stats.binom)
    law = distribution(Occupancy(balls=n, urns=r, rule="MB"), "urn:2")
    for v in range(n + 1):
        reference = scipy.stats.binom.pmf(v, n, 1 / r)
        assert float(law.probability(v)) == pytest.approx(reference, rel=1e-9, abs=1e-300)
    assert law.mean == Fraction(n, r)
    assert law.variance == Fraction(n * (r - 1), r * r)


@pytest.mark.parametrize("n, r", [(10, 4), (40, 9), (200, 3)])
def test_one_urn_under_be_is_beta_binomial_per_scipy(n, r):
    # BE is uniform over compositions: Dirichlet-multinomial with all alphas 1, so one
    # urn is BetaBinomial(n, 1, r - 1) (scipy.stats.betabinom)
    law = distribution(Occupancy(balls=n, urns=r, rule="BE"), "urn:1")
    for v in range(n + 1):
        reference = scipy.stats.betabinom.pmf(v, n, 1, r - 1)
        assert float(law.probability(v)) == pytest.approx(reference, rel=1e-9)


@pytest.mark.parametrize("n, r", [(5, 3), (12, 6), (100, 30)])
def test_empty_cells_under_be(n, r):
    # P(m empty) = C(r, m) C(n-1, r-m-1) / C(n+r-1, n) (Feller vol. 1, ch. II.11; from memory)
    law = distribution(Occupancy(balls=n, urns=r, rule="BE"), "empty")
    for m in range(r):
        assert law.probability(m) == Fraction(math.comb(r, m) * math.comb(n - 1, r - m - 1), math.comb(n + r - 1, n))


def test_fd_leaves_exactly_r_minus_n_urns_empty():
    law = distribution(Occupancy(balls=4, urns=9, rule="FD"), "empty")
    assert law.pmf == {5: Fraction(1)}
    assert law.variance == 0


def test_birthday_problem_through_the_maximum():
    # P(23 birthdays all distinct) = 365!/(342! 365^23) = 0.4927027656... (well known; from memory)
    law = distribution(Occupancy(balls=23, urns=365, rule="MB"), "max")
    assert law.probability(1) == Fraction(math.perm(365, 23), 365 ** 23)
    assert float(law.probability(1)) == pytest.approx(0.4927027656, abs=1e-10)
    assert law.probability(23) == Fraction(365, 365 ** 23)


def test_three_balls_in_three_cells_profiles():
    # Feller vol. 1, ch. I: of the 27 MB arrangements, 3 put all balls in one cell,
    # 18 give the pattern (2, 1, 0) and 6 put one ball in each cell (from memory);
    # under BE each of the 10 vectors counts once.
    mb = distribution(Occupancy(balls=3, urns=3, rule="MB"), "profile")
    assert mb.pmf == {(1, 1, 1): Fraction(6, 27), (2, 1, 0): Fraction(18, 27), (3, 0, 0): Fraction(3, 27)}
    be = distribution(Occupancy(balls=3, urns=3, rule="BE"), "profile")
    assert be.pmf == {(1, 1, 1): Fraction(1, 10), (2, 1, 0): Fraction(6, 10), (3, 0, 0): Fraction(3, 10)}


def test_number_of_profiles_is_the_partition_count():
    # partitions of 12 into at most 4 parts: 34 (OEIS A001400, a(12) = 34; from memory)
    law = distribution(Occupancy(balls=12, urns=4, rule="BE"), "profile")
    assert len(law.pmf) == 34
    assert all(len(p) == 4 and list(p) == sorted(p, reverse=True) and sum(p) == 12 for p in law.pmf)


def test_exactly_and_at_least_agree_with_each_other_on_a_larger_model():
    # count(>= J) - count(>= J+1) is count(== J) in distribution: the means must agree
    model = Occupancy(balls=300, urns=40, rule="MB")
    at2, at3, ex2 = (distribution(model, s) for s in ("atleast:2", "atleast:3", "exactly:2"))
    assert ex2.mean == at2.mean - at3.mean
    # E[#urns with exactly 2] = r C(n, 2) (1/r)^2 (1 - 1/r)^(n-2) (binomial occupancy; common practice)
    assert ex2.mean == 40 * math.comb(300, 2) * Fraction(1, 40) ** 2 * Fraction(39, 40) ** 298


def test_per_urn_bounds_with_many_groups_fall_back_to_listing(monkeypatch):
    model = Occupancy(balls=6, bounds=[(0, 3), (1, 4), (0, None), (2, 5)], rule="MB")
    monkeypatch.setattr(laws, "GROUP_TUPLE_LIMIT", 1)
    assert distribution(model, "exactly:2").pmf == brute_law(model, "exactly:2")
    with pytest.raises(TooLarge, match="raise limit="):
        distribution(model, "exactly:2", limit=3)


def test_large_mb_maximum_is_exact_and_sums_to_one():
    law = distribution(Occupancy(balls=400, urns=60, rule="MB"), "max")
    assert sum(law.pmf.values()) == 1
    assert sorted(law.pmf) == list(range(7, 401))
    assert law.probability(400) == Fraction(60, 60 ** 400)
    # above n/2 only one urn can reach m: P(max = m) = r C(n, m) (r-1)^(n-m) / r^n (common practice)
    for m in (201, 250, 399):
        assert law.probability(m) == Fraction(60 * math.comb(400, m) * 59 ** (400 - m), 60 ** 400)


# ---------------------------------------------------------------- errors and API

def test_statistic_names():
    assert parse_statistic(" Urn : 3 ") == Statistic("urn", 3)
    assert parse_statistic("ATLEAST:0").name == "atleast:0"
    assert [parse_statistic(s).name for s in ("empty", "max", "profile")] == ["empty", "max", "profile"]


@pytest.mark.parametrize("text, message", [
    ("maximum", "unknown statistic 'maximum'; choose empty, occupied, max, min, urn:I (I = 1..r), "
                "exactly:J, atleast:J or profile"),
    ("max:2", "statistic 'max' takes no number (got 'max:2'); write just 'max'"),
    ("urn", "statistic 'urn' needs a number after a colon, urn:I (for example 'urn:1')"),
    ("urn:0", "urns are numbered from 1 (got 'urn:0'); write urn:1 for the first urn"),
    ("exactly:-1", "the number in statistic 'exactly:-1' must be a whole number >= 0 (for example 'exactly:2')"),
    ("atleast:x", "the number in statistic 'atleast:x' must be a whole number >= 0 (for example 'atleast:2')"),
])
def test_malformed_statistics_are_rejected(text, message):
    with pytest.raises(InvalidParameters) as info:
        distribution(Occupancy(balls=3, urns=3), text)
    assert str(info.value) == message


def test_urn_beyond_the_model_is_rejected():
    with pytest.raises(InvalidParameters, match=r"names urn 4, but the model has 3 urns; use urn:1 to urn:3"):
        distribution(Occupancy(balls=3, urns=3), "urn:4")


def test_model_without_configurations_has_no_distribution():
    with pytest.raises(InvalidParameters, match="admits no configuration"):
        distribution(Occupancy(balls=9, urns=2, rule="BE", capacity=4), "max")


def test_too_many_profiles_name_the_limit():
    with pytest.raises(TooLarge, match=r"has 34 occupancy profiles, above the limit 10; raise limit= or") as caught:
        distribution(Occupancy(balls=12, urns=4, rule="BE"), "profile", limit=10)
    assert caught.value.parameters == ("limit",)


def test_distribution_object():
    law = distribution(Occupancy(balls=2, urns=2, rule="MB"), "urn:1")
    assert isinstance(law, Distribution)
    assert law.statistic == "urn:1"
    assert law.support == [0, 1, 2]
    assert law.probability(1) == Fraction(1, 2) and law.probability(5) == 0
    assert distribution(Occupancy(balls=3, urns=3), "profile").probability([2, 1, 0]) == Fraction(2, 3)


@pytest.mark.parametrize("n, r, c", [(40, 6, 1), (40, 6, 3), (25, 5, 4), (13, 2, 2), (9, 9, 0)])
def test_capped_binomial_moments_give_the_minimum_by_inclusion_exclusion(n, r, c):
    # sum_t (-1)^t B_t = outcomes with no urn holding c or fewer = min >= c + 1,
    # checked against counting's EGF power with a uniform minimum
    moments = extremes.mb_capped_moments(n, r, c)
    alternating = sum(-b if t & 1 else b for t, b in enumerate(moments))
    expected = count_microstates(Occupancy(balls=n, urns=r, rule="MB", minimum=c + 1)) if n >= r * (c + 1) else 0
    assert alternating == expected
    assert moments[0] == r ** n


# ---------------------------------------------------------------- the registry of statistics

def test_registry_lists_every_statistic_once_in_the_documented_order():
    assert STATISTICS == ("empty", "occupied", "max", "min", "urn:I", "exactly:J", "atleast:J", "profile")
    assert set(REGISTRY) == {"empty", "occupied", "max", "min", "urn", "exactly", "atleast", "profile", "count"}


@pytest.mark.parametrize("name", STATS + ["count"])
def test_registry_block_values_equal_the_values_row_by_row(name):
    # Reference: the entry's value on each vector of a brute-force box.
    model = Occupancy(balls=5, urns=3, rule="BE")
    stats = [Statistic("count", (op, 1)) for op in ("==", "!=", "<", "<=", ">", ">=")] if name == "count" \
        else [parse_statistic(name)]
    rows = list(box(model))
    block = np.array(rows, dtype=np.int64)
    for stat in stats:
        values = stat.block_value(block)
        assert [tuple(v) if stat.kind == "profile" else int(v) for v in values] == [stat.value(k) for k in rows]


@settings(max_examples=25, deadline=None)
@given(model=small_models(), op=st.sampled_from(["==", "!=", "<", "<=", ">", ">="]), j=st.integers(-1, 3))
def test_count_conditions_follow_their_canonical_route(model, op, j):
    # count(op j) has no name in dist, but its route (exactly/atleast or a constant) must
    # agree with the brute-force law of its values.
    stat = Statistic("count", (op, j))
    counts, total = statistics.statistic_counts(model, stat)
    law = {v: Fraction(c, total) for v, c in sorted(counts.items())}
    found, whole = {}, 0
    for k in box(model):
        w = weight(model, k)
        whole += w
        found[stat.value(k)] = found.get(stat.value(k), 0) + w
    assert law == {v: Fraction(c, whole) for v, c in sorted(found.items()) if c}


def test_marks_and_event_spellings_come_from_the_registry():
    assert [REGISTRY[k].marking(REGISTRY[k].least and 2) for k in ("empty", "occupied")] == [
        ("exactly", 0), ("atleast", 1)]
    assert Statistic("urn", 3).event_text == "k3" and Statistic("count", ("<=", 2)).event_text == "count(<= 2)"
    assert Statistic("count", ("<=", 2)).name == "count(<= 2)"
    with pytest.raises(InvalidParameters, match="unknown statistic 'count'"):
        parse_statistic("count")


# ---------------------------------------------------------------- weights and groups, any number of urns

def brute_weighted_law(model, stat: str):
    """{value: Fraction}: every vector of the box weighed by the rule and by prod w_i^k_i (slow reference)."""
    s = parse_statistic(stat)
    weights = model.weights
    found, total = {}, Fraction(0)
    for k in box(model):
        w = Fraction(weight(model, k))
        for wi, v in zip(weights, k):
            w *= wi ** v
        total += w
        v = s.value(k)
        found[v] = found.get(v, 0) + w
    return {v: c / total for v, c in sorted(found.items()) if c}


@st.composite
def weighted_models(draw):
    """Small models with rational weights and per-urn bounds, with at least one configuration."""
    rule = draw(st.sampled_from(["MB", "BE", "FD"]))
    r = draw(st.integers(1, 4))
    n = draw(st.integers(0, 6))
    bounds = []
    for _ in range(r):
        if rule == "FD":
            bounds.append((draw(st.sampled_from([0, 0, 1])), 1))
        else:
            a = draw(st.integers(0, 1))
            bounds.append((a, draw(st.sampled_from([None, a + 1, a + 2]))))
    weights = [draw(st.sampled_from([1, 2, 3, Fraction(1, 2), Fraction(2, 3)])) for _ in range(r)]
    model = Occupancy(balls=n, bounds=bounds, weights=weights, rule=rule)
    if not any(True for _ in box(model)):
        model = Occupancy(balls=n, urns=r, weights=weights, rule="BE")
    return model


@settings(max_examples=150, deadline=None)
@given(weighted_models(), st.sampled_from(STATS))
def test_every_statistic_of_a_weighted_model_matches_brute_force(model, stat):
    if stat == "urn:2" and model.urns < 2:
        stat = "urn:1"
    law = distribution(model, stat)
    expected = brute_weighted_law(model, stat)
    assert law.pmf == expected
    if stat != "profile":
        assert (law.mean, law.variance) == moments(expected)


@settings(max_examples=100, deadline=None)
@given(small_models(), st.sampled_from([s for s in STATS if s != "profile"]))
def test_the_group_routes_agree_with_the_per_urn_routes(model, stat):
    # forcing every model onto the group routes (grouped generating functions)
    # must give the per-urn routes' exact law
    if stat == "urn:2" and model.urns < 2:
        stat = "urn:1"
    per_urn = distribution(model, stat)
    with pytest.MonkeyPatch.context() as patch:
        patch.setattr(laws, "PER_URN_ROUTES", 0)
        by_groups = distribution(model, stat)
    assert by_groups == per_urn


@pytest.mark.parametrize("stat", ["empty", "occupied", "max", "min", "urn:4", "exactly:1", "atleast:2", "profile"])
def test_a_model_in_groups_equals_the_same_model_per_urn(stat):
    # weights "3x2,2x1/2" and bounds "3x0:2,2x1:" written urn by urn
    grouped = Occupancy(balls=6, bounds="3x0:2,2x1:", weights="3x2,2x1/2", rule="MB")
    per_urn = Occupancy(balls=6, bounds=[(0, 2)] * 3 + [(1, None)] * 2,
                        weights=[2, 2, 2, Fraction(1, 2), Fraction(1, 2)], rule="MB")
    assert distribution(grouped, stat) == distribution(per_urn, stat)
    assert distribution(grouped, stat).pmf == brute_weighted_law(per_urn, stat)


def falling(r: int, u: int) -> int:
    out = 1
    for i in range(u):
        out *= r - i
    return out


@pytest.mark.parametrize("r", [16384, 65536, 2 ** 64, 3 ** 50])
def test_occupied_urns_at_any_number_of_urns_follow_stirling_numbers(r):
    # P(occupied = u) = r^(u) S(n, u) / r^n (Feller, vol. 1, ch. II.5); S(n, u) from
    # SymPy, the Stirling numbers of the second kind (OEIS A008277)
    n = 10
    law = distribution(Occupancy(balls=n, urns=r, rule="MB"), "occupied")
    expected = {u: Fraction(falling(r, u) * int(sympy.functions.combinatorial.numbers.stirling(n, u)), r ** n)
                for u in range(1, n + 1)}
    assert law.pmf == expected
    empty = distribution(Occupancy(balls=n, urns=r, rule="MB"), "empty")
    assert empty.pmf == {r - u: p for u, p in sorted(expected.items(), reverse=True)}


def test_bell_numbers_count_the_occupied_urns_of_n_balls_in_many_urns():
    # sum_u S(n, u) = B_n, the Bell numbers (OEIS A000110: 1, 1, 2, 5, 15, 52, 203, 877, 4140)
    bell = [1, 1, 2, 5, 15, 52, 203, 877, 4140]
    r = 2 ** 70
    for n, b in enumerate(bell):
        if n == 0:
            continue
        law = distribution(Occupancy(balls=n, urns=r, rule="MB"), "occupied")
        assert sum(p * r ** n / falling(r, u) for u, p in law.pmf.items()) == b


def test_be_occupied_urns_at_a_huge_number_of_urns():
    # BE: P(occupied = u) = C(r, u) C(n - 1, u - 1) / C(n + r - 1, n) (Feller, vol. 1, ch. II.5)
    n, r = 8, 2 ** 40
    law = distribution(Occupancy(balls=n, urns=r, rule="BE"), "occupied")
    total = math.comb(n + r - 1, n)
    assert law.pmf == {u: Fraction(math.comb(r, u) * math.comb(n - 1, u - 1), total) for u in range(1, n + 1)}


def test_one_urn_of_a_huge_weighted_model_is_binomial():
    # MB: k_I ~ Binomial(n, w_I / W); SciPy's binomial pmf as a float reference
    n = 12
    model = Occupancy(balls=n, weights="1099511627776x1,3,1099511627776x2", rule="MB")
    index = 1099511627777  # the urn of weight 3
    law = distribution(model, f"urn:{index}")
    W = 1099511627776 * 3 + 3
    p = Fraction(3, W)
    assert law.pmf == {v: math.comb(n, v) * p ** v * (1 - p) ** (n - v) for v in range(n + 1)}
    assert float(law.pmf[1]) == pytest.approx(scipy.stats.binom.pmf(1, n, float(p)), rel=1e-9)
    assert law.mean == n * p and law.variance == n * p * (1 - p)


def test_max_and_min_of_a_huge_model():
    # n = 4 balls in r urns: max == 1 is the no-collision probability r^(4)/r^4 (Feller, vol. 1, II.3)
    r = 2 ** 64
    law = distribution(Occupancy(balls=4, urns=r, rule="MB"), "max")
    assert law.pmf[1] == Fraction(falling(r, 4), r ** 4)
    assert sum(law.pmf.values()) == 1
    assert distribution(Occupancy(balls=4, urns=r, rule="MB"), "min").pmf == {0: Fraction(1)}


def test_a_law_beyond_the_limits_is_refused_before_it_starts():
    with pytest.raises(TooLarge, match="the law of max") as info:
        distribution(Occupancy(balls=100000, urns=1000, rule="MB"), "max")
    assert "max_memory" in info.value.parameters or "max_seconds" in info.value.parameters


def test_statistic_numbers_are_refused_before_conversion():
    with pytest.raises(InvalidParameters, match="limited to 4,000 digits"):
        parse_statistic("urn:" + "9" * 5000)


@pytest.mark.parametrize("n, r, rule, stat", [
    (10 ** 12, 2 ** 64, "MB", "occupied"),  # the total alone would be 64 * 10^12 bits
    (10 ** 9, 2 ** 64, "MB", "max"),
    (10 ** 7, 3, "MB", "urn:2"),  # 10^7 values of 1.6 * 10^7 bits each
    (10 ** 9, 5, "BE", "min"),
])
def test_answers_too_large_to_hold_are_refused_not_attempted(n, r, rule, stat):
    with pytest.raises(TooLarge, match="raise max_memory=|raise max_seconds="):
        distribution(Occupancy(balls=n, urns=r, rule=rule), stat)


def test_fermi_dirac_occupied_urns_at_2_64():
    # FD: every ball alone in its urn, so occupied == n surely
    law = distribution(Occupancy(balls=5000, urns=2 ** 64, rule="FD"), "occupied")
    assert law.pmf == {5000: 1}
