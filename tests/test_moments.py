"""Moments of counting statistics without the law (enumerator.algorithms.moments).

References: brute-force enumeration of every occupancy vector (slow reference,
small cases only); the classical closed forms for equal MB urns
(Feller, vol. 1, ch. IV.2, from memory: E[empty] = r (1 - 1/r)^n and
E[empty (empty - 1)] = r (r - 1) (1 - 2/r)^n); SciPy's binomial law for one
weighted urn.
"""

from __future__ import annotations

import itertools
from fractions import Fraction
from math import factorial

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from enumerator.algorithms.moments import counting_moments
from enumerator.core.errors import InvalidParameters, TooLarge, Unsupported
from enumerator.core.groups import UrnGroup, merge_groups

STATISTICS = ["empty", "occupied", "exactly:0", "exactly:1", "exactly:2", "atleast:0", "atleast:1", "atleast:2", "atleast:3"]


def _value(statistic, k):
    name, _, arg = statistic.partition(":")
    if name == "empty":
        return sum(1 for x in k if x == 0)
    if name == "occupied":
        return sum(1 for x in k if x > 0)
    if name == "exactly":
        return sum(1 for x in k if x == int(arg))
    return sum(1 for x in k if x >= int(arg))


def brute(n, rule, weights, statistic, capacity=None):
    """Mean and variance by listing every vector with its weight (slow reference)."""
    total = first = second = Fraction(0)
    for k in itertools.product(range(n + 1), repeat=len(weights)):
        if sum(k) != n or (capacity is not None and max(k) > capacity):
            continue
        weight = Fraction(1)
        if rule == "MB":
            weight = Fraction(factorial(n))
            for x, w in zip(k, weights):
                weight *= Fraction(w) ** x / factorial(x)
        v = _value(statistic, k)
        total += weight
        first += weight * v
        second += weight * v * v
    mean = first / total
    return mean, second / total - mean * mean


weights = st.lists(st.fractions(min_value=Fraction(1, 3), max_value=4, max_denominator=3), min_size=1, max_size=4)


@settings(max_examples=60, deadline=None)
@given(n=st.integers(0, 6), ws=weights, statistic=st.sampled_from(STATISTICS))
def test_weighted_mb_matches_brute_force(n, ws, statistic):
    groups = merge_groups(UrnGroup(1, 0, None, w) for w in ws)
    got = counting_moments(n, "MB", groups, statistic)
    assert (got.mean, got.variance) == brute(n, "MB", ws, statistic)


@pytest.mark.parametrize("statistic", STATISTICS)
@pytest.mark.parametrize("r", [1, 2, 3, 4])
@pytest.mark.parametrize("n", [0, 1, 2, 5])
def test_be_and_fd_match_brute_force(n, r, statistic):
    got = counting_moments(n, "BE", [UrnGroup(r)], statistic)
    assert (got.mean, got.variance) == brute(n, "BE", [1] * r, statistic)
    if n <= r:
        got = counting_moments(n, "FD", [UrnGroup(r, 0, 1)], statistic)
        assert (got.mean, got.variance) == brute(n, "FD", [1] * r, statistic, capacity=1)


def test_groups_and_urn_by_urn_give_the_same_moments():
    as_groups = [UrnGroup(3, 0, None, Fraction(2)), UrnGroup(2)]
    one_by_one = [UrnGroup(1, 0, None, Fraction(2))] * 3 + [UrnGroup(1)] * 2
    for statistic in STATISTICS:
        assert counting_moments(7, "MB", as_groups, statistic) == counting_moments(7, "MB", one_by_one, statistic)


def test_equal_mb_urns_follow_the_classical_closed_forms_at_any_size():
    # Closed forms for r equal urns (from memory, Feller vol. 1, IV.2):
    # E[empty] = r (1 - 1/r)^n, E[empty(empty-1)] = r (r-1) (1 - 2/r)^n.
    n, r = 1000, 2**64
    m = counting_moments(n, "MB", [UrnGroup(r)], "empty")
    mean = r * Fraction(r - 1, r) ** n
    second = r * (r - 1) * Fraction(r - 2, r) ** n
    assert m.mean == mean
    assert m.variance == second + mean - mean * mean
    occupied = counting_moments(n, "MB", [UrnGroup(r)], "occupied")
    assert occupied.mean == r - mean and occupied.variance == m.variance


def test_one_weighted_urn_has_a_binomial_load():
    # Reference: SciPy's binomial law (mean n p, variance n p (1 - p)) for the load of one urn;
    # 'atleast:1' of a lone urn of weight 1 among weights 1 + 3 is 1[k >= 1].
    scipy_stats = pytest.importorskip("scipy.stats")
    n, p = 9, Fraction(1, 4)
    m = counting_moments(n, "MB", [UrnGroup(1), UrnGroup(1, 0, None, Fraction(3))], "exactly:2")
    law = scipy_stats.binom(n, float(p))
    p2 = law.pmf(2)
    q2 = scipy_stats.binom(n, 0.75).pmf(2)
    assert float(m.mean) == pytest.approx(p2 + q2, rel=1e-12)


def test_unsupported_models_and_bad_statistics_say_what_to_do():
    with pytest.raises(Unsupported, match="use the law"):
        counting_moments(3, "MB", [UrnGroup(3, 0, 2)], "empty")
    with pytest.raises(Unsupported, match="use the law"):
        counting_moments(3, "BE", [UrnGroup(2), UrnGroup(1, 0, None, Fraction(2))], "empty")
    with pytest.raises(InvalidParameters, match="counting statistics"):
        counting_moments(3, "MB", [UrnGroup(3)], "max")
    with pytest.raises(InvalidParameters, match="whole number"):
        counting_moments(3, "MB", [UrnGroup(3)], "exactly:1e9")


def test_work_beyond_the_limits_is_refused_before_it_starts():
    with pytest.raises(TooLarge, match="exact products"):
        counting_moments(10**12, "MB", [UrnGroup(2**64)], "empty")


# ---------------------------------------------------------------- statistic_moments: every numeric statistic, any model

def _brute_any(model, statistic):
    """Mean and variance of any registry statistic by listing the box with weights (slow reference)."""
    from reference import box, weight

    from enumerator.algorithms.statistics import parse_statistic

    stat = parse_statistic(statistic)
    total = first = second = Fraction(0)
    for k in box(model):
        w = Fraction(weight(model, k))
        for wi, v in zip(model.weights, k):
            w *= wi ** v
        v = stat.value(k)
        total += w
        first += w * v
        second += w * v * v
    mean = first / total
    return mean, second / total - mean * mean


@st.composite
def bounded_weighted_models(draw):
    from reference import box

    from enumerator import Occupancy

    rule = draw(st.sampled_from(["MB", "BE", "FD"]))
    r = draw(st.integers(1, 4))
    n = draw(st.integers(0, 6))
    bounds = []
    for _ in range(r):
        if rule == "FD":
            bounds.append((draw(st.sampled_from([0, 0, 1])), 1))
        else:
            a = draw(st.integers(0, 1))
            bounds.append((a, draw(st.sampled_from([None, a + 1, a + 3]))))
    ws = [draw(st.sampled_from([1, 2, Fraction(1, 2), 3])) for _ in range(r)]
    model = Occupancy(balls=n, bounds=bounds, weights=ws, rule=rule)
    if not any(True for _ in box(model)):
        model = Occupancy(balls=n, urns=r, weights=ws, rule="BE")
    return model


ANY = ["empty", "occupied", "exactly:0", "exactly:1", "exactly:2", "atleast:1", "atleast:2", "max", "min", "urn:1"]


@settings(max_examples=150, deadline=None)
@given(bounded_weighted_models(), st.sampled_from(ANY))
def test_statistic_moments_match_brute_force_on_bounded_weighted_models(model, statistic):
    from enumerator.algorithms.statistics import statistic_moments

    got = statistic_moments(model, statistic)
    assert isinstance(got.mean, Fraction) and isinstance(got.variance, Fraction)
    assert (got.mean, got.variance) == _brute_any(model, statistic)


def test_statistic_moments_of_bounded_urns_at_any_number_of_urns():
    # 2^64 urns holding at most 1 ball (FD-like under MB), n = 5: every vector is a set of 5 urns
    # hit by 5! assignments, so occupied is always 5 and empty always r - 5.
    from enumerator import Occupancy
    from enumerator.algorithms.statistics import statistic_moments

    r = 2 ** 64
    model = Occupancy(balls=5, urns=r, capacity=1, rule="MB")
    got = statistic_moments(model, "empty")
    assert (got.mean, got.variance) == (r - 5, 0)
    # capacity 2, n = 3: P(some urn holds 2) = 1 - r^(3) / (r^3 - r): exactly:2 is 0 or 1
    model = Occupancy(balls=3, urns=r, capacity=2, rule="MB")
    p = 1 - Fraction(r * (r - 1) * (r - 2), r ** 3 - r)
    got = statistic_moments(model, "exactly:2")
    assert (got.mean, got.variance) == (p, p * (1 - p))


def test_statistic_moments_agree_with_the_closed_moments_and_the_law():
    # the closed binomial-moment route and the law give the same numbers on a model both can answer
    from enumerator import Occupancy
    from enumerator.algorithms.statistics import distribution, statistic_moments

    model = Occupancy(balls=7, weights="2x3,3x1", rule="MB")
    for statistic in ("empty", "occupied", "exactly:2", "atleast:2"):
        law = distribution(model, statistic)
        got = statistic_moments(model, statistic)
        assert (got.mean, got.variance) == (law.mean, law.variance)


def test_profile_has_no_moments():
    from enumerator import Occupancy
    from enumerator.algorithms.statistics import statistic_moments

    with pytest.raises(InvalidParameters, match="no mean or variance"):
        statistic_moments(Occupancy(balls=3, urns=2), "profile")
