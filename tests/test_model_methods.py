"""The Occupancy methods that route through the result store give exactly
what the pure library functions give, on a first (computing) call and on a
second (stored) call."""

from __future__ import annotations

from fractions import Fraction

import pytest

from enumerator import Occupancy, store
from enumerator.algorithms.generating import coefficient_row
from enumerator.algorithms.statistics import distribution


@pytest.fixture
def private_store(tmp_path):
    with store.using(str(tmp_path / "s.sqlite")):
        yield


@pytest.mark.parametrize("stat", ["max", "min", "empty", "urn:2", "exactly:1", "profile"])
@pytest.mark.parametrize("rule", ["MB", "BE"])
def test_distribution_through_the_store_equals_the_pure_one(private_store, stat, rule):
    pure = distribution(Occupancy(balls=7, urns=4, rule=rule, capacity=4), stat)
    first = Occupancy(balls=7, urns=4, rule=rule, capacity=4).distribution(stat)
    again = Occupancy(balls=7, urns=4, rule=rule, capacity=4).distribution(stat)
    for law in (first, again):
        assert law.pmf == pure.pmf and list(law.pmf) == list(pure.pmf)
        assert (law.mean, law.variance) == (pure.mean, pure.variance)
    assert sum(again.pmf.values()) == 1


def test_coefficient_row_through_the_store(private_store):
    m = Occupancy(balls=5, urns=3, rule="MB", capacity=2)
    assert m.coefficient_row(6) == coefficient_row(m, 6)
    # entry k is the count for k balls (brute force: MB microstates via the model)
    assert Occupancy(balls=9, urns=3, rule="MB", capacity=2).coefficient_row(6) == [
        Occupancy(balls=k, urns=3, rule="MB", capacity=2).microstates() for k in range(7)
    ]


def test_event_probability_method():
    # the birthday problem, 23 people and 365 days: 365!/(342! 365^23); its
    # decimal 0.4927027656... is well known (from memory)
    p = Occupancy(balls=23, urns=365, rule="MB").event_probability("max <= 1")
    import math

    assert p == Fraction(math.perm(365, 23), 365 ** 23)
    assert abs(float(p) - 0.4927027656) < 1e-10
