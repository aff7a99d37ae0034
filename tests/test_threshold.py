"""The size needed for a probability (enumerator.algorithms.threshold).

References: OEIS A014088 (least number of people for which the probability
that at least k share a birthday exceeds 1/2: 1, 23, 88, 187, ...; values
from memory); the birthday product prod (1 - i/r) written out in the test
(Feller, vol. 1, II.3); brute-force scans of small models.
"""

from __future__ import annotations

from fractions import Fraction

import pytest

from enumerator.algorithms.events import event_probability
from enumerator.algorithms.threshold import (
    SCAN_STEPS,
    event_direction,
    find_threshold,
    parse_probability,
)
from enumerator.core.errors import InvalidParameters, TooLarge
from enumerator.core.model import UrnModel


@pytest.mark.parametrize("shared, people", [(2, 23), (3, 88), (4, 187)])
def test_birthday_thresholds_follow_oeis_a014088(shared, people):
    # OEIS A014088 (from memory): 23 people for two sharing a birthday, 88 for three, 187 for four.
    t = find_threshold(UrnModel(balls=0, urns=365), "balls", f"max >= {shared}", "1/2")
    assert (t.value, t.method) == (people, "bisection")
    assert t.probability >= Fraction(1, 2) > t.probability_before


def _no_collision(n, r):
    """The birthday product prod_{i<n} (1 - i/r), written out (slow reference)."""
    p = Fraction(1)
    for i in range(n):
        p *= Fraction(r - i, r)
    return p


def test_buckets_for_no_collision_against_the_birthday_product():
    t = find_threshold(UrnModel(balls=30, urns=1), "urns", "max <= 1", "0.99")
    assert t.method == "bisection"
    assert _no_collision(30, t.value) >= Fraction(99, 100) > _no_collision(30, t.value - 1)
    assert t.probability == _no_collision(30, t.value)


def _smallest_by_scan(model_at, event, goal, start, stop):
    """The least value with P >= goal, trying every value (slow reference)."""
    for v in range(start, stop):
        if event_probability(model_at(v), event) >= goal:
            return v
    return None


@pytest.mark.parametrize("rule, event, target", [
    ("MB", "occupied >= 3", "1/2"),
    ("BE", "max >= 3", "1/3"),
    ("FD", "k1 >= 1", "1/2"),
    ("MB", "empty <= 1", "9/10"),
    ("BE", "count(== 1) >= 2", "1/2"),  # not proved monotone: scanned
])
def test_bisection_and_scan_agree_with_a_scan_by_hand(rule, event, target):
    base = UrnModel(balls=0, urns=5, rule=rule)
    t = find_threshold(base, "balls", event, target)
    expected = _smallest_by_scan(base.with_balls, event, parse_probability(target), 0, 6 if rule == "FD" else 40)
    assert t.value == expected
    assert t.method == ("scan" if "count(== 1)" in event else "bisection")


def test_directions_of_events():
    assert event_direction("max >= 2") == 1
    assert event_direction("empty >= 1") == -1
    assert event_direction("max >= 2 or occupied > 3") == 1
    assert event_direction("max >= 2 and empty >= 1") == 0
    assert event_direction("not (max <= 1)") == 1
    assert event_direction("count(== 2) >= 1") == 0


def test_targets_are_read_exactly_and_checked():
    assert parse_probability("1e-6") == Fraction(1, 10**6)
    assert parse_probability("2.5e-1") == Fraction(1, 4)
    for bad in ["0", "1.5", "-0.1", "1e-99999", "abc", "1/0", "", "1e999999999"]:
        with pytest.raises(InvalidParameters):
            parse_probability(bad)


def test_unreachable_targets_are_refused_clearly():
    # FD holds at most r balls: P(max >= 2) is 0 at every size
    with pytest.raises(TooLarge, match="not reached"):
        find_threshold(UrnModel(balls=0, urns=3, rule="FD"), "balls", "max >= 2", "1/2")
    # a decreasing event below the target at the start never reaches it
    with pytest.raises(TooLarge, match="never grows"):
        find_threshold(UrnModel(balls=0, urns=3), "balls", "empty >= 4", "1/2")
    assert SCAN_STEPS >= 1000


def test_varying_urns_needs_one_group():
    with pytest.raises(InvalidParameters, match="one group"):
        find_threshold(UrnModel(balls=3, bounds=[(0, 1), (0, 2)]), "urns", "max <= 1", "1/2")
