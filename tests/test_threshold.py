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


# ---------------------------------------------------------------------------
# the no-collision searches located by proved bounds on ln P
# ---------------------------------------------------------------------------

def _be_no_collision(n, r):
    """BE: P(max <= 1) = C(r, n) / C(n + r - 1, n) = prod_{i<n} (r - i)/(r + i), written out."""
    p = Fraction(1)
    for i in range(n):
        p *= Fraction(r - i, r + i)
    return p


@pytest.mark.parametrize("rule, reference", [("MB", _no_collision), ("BE", _be_no_collision)])
@pytest.mark.parametrize("n, r", [(2, 2), (5, 365), (23, 365), (40, 80), (200, 10**6), (1000, 2**64)])
def test_log_bounds_enclose_the_birthday_product(rule, reference, n, r):
    import mpmath

    from enumerator.algorithms.threshold import _log_none_bounds

    exact = reference(n, r)  # the product written out (Feller, vol. 1, II.3)
    with mpmath.workdps(80):
        # mpmath's log of the exact rational, at 80 digits: an outside reference for ln P
        value = mpmath.log(mpmath.mpf(exact.numerator) / exact.denominator)
        for K in (1, 4, 9):
            lo, hi = _log_none_bounds(rule, n, r, K)
            assert lo <= hi
            assert mpmath.mpf(lo.numerator) / lo.denominator <= value + mpmath.mpf(10) ** -70
            assert value <= mpmath.mpf(hi.numerator) / hi.denominator + mpmath.mpf(10) ** -70


def test_64_bit_ids_until_a_collision_is_located_and_the_exact_pair_refused_with_its_size():
    import mpmath

    from enumerator.core.limits import limited

    r = 2 ** 64
    with limited(seconds=30):
        with pytest.raises(TooLarge) as caught:
            find_threshold(UrnModel(balls=0, urns=r), "balls", "max >= 2", "1e-6")
    message = str(caught.value)
    value = int(message.split("the least number of balls is ")[1].split(" ")[0].replace(",", ""))
    assert "digits each" in message and "max_seconds" in message
    # mpmath at 60 digits (an outside reference): P(collision) = 1 - exp(lgamma(r+1) - lgamma(r-n+1) - n ln r)
    with mpmath.workdps(60):
        def collision(n):
            return 1 - mpmath.exp(mpmath.loggamma(r + 1) - mpmath.loggamma(r - n + 1) - n * mpmath.log(r))
        assert collision(value) >= mpmath.mpf("1e-6") > collision(value - 1)
    # the square-root rule of thumb (common practice): n ~ sqrt(2 r p)
    assert abs(value - (2 * r * 10 ** -6) ** 0.5) < 10


@pytest.mark.parametrize("r", [1, 2, 3, 10, 59, 365, 1000])
def test_proved_location_agrees_with_a_scan_of_the_birthday_product(r):
    # brute force: the least n with 1 - prod_{i<n}(1 - i/r) >= 1/2, written out
    n = 0
    while 1 - _no_collision(n, r) < Fraction(1, 2):
        n += 1
    t = find_threshold(UrnModel(balls=0, urns=r), "balls", "max >= 2", "1/2")
    assert t.value == n
    assert t.probability == 1 - _no_collision(n, r)
    assert t.probability_before == 1 - _no_collision(n - 1, r)


def test_buckets_for_ten_thousand_keys_against_mpmath():
    import mpmath

    n = 10 ** 4
    t = find_threshold(UrnModel(balls=n, urns=1), "urns", "max <= 1", "0.999")
    with mpmath.workdps(50):
        # mpmath at 50 digits (outside reference): P(no collision) = exp(lgamma(r+1) - lgamma(r-n+1) - n ln r)
        def none(r):
            return mpmath.exp(mpmath.loggamma(r + 1) - mpmath.loggamma(r - n + 1) - n * mpmath.log(r))
        assert none(t.value) >= mpmath.mpf("0.999") > none(t.value - 1)
    assert t.evaluations == 2  # the proved location leaves only the two exact probabilities to compute


@pytest.mark.parametrize("q", ["1", "999/1000", "1/2", "1/3", "7/10", "1/1000000000", "3/1024"])
def test_log_bounds_enclose_mpmath_logarithms(q):
    import mpmath

    from enumerator.algorithms.threshold import _log_bounds

    q = Fraction(q)
    with mpmath.workdps(60):
        value = mpmath.log(mpmath.mpf(q.numerator) / q.denominator)  # mpmath at 60 digits (outside reference)
        for K in (4, 16, 64):
            lo, hi = _log_bounds(q, K)
            assert mpmath.mpf(lo.numerator) / lo.denominator <= value + mpmath.mpf(10) ** -55
            assert value <= mpmath.mpf(hi.numerator) / hi.denominator + mpmath.mpf(10) ** -55
        assert hi - lo < Fraction(1, 10 ** 15)  # 64 terms pin it down


def test_a_scan_stops_at_the_time_limit_with_the_last_value_tried():
    # P(min >= 1) for BE with unequal weights tends to a limit below 1/3 as balls grow (the weights'
    # product over the total, common practice for weighted BE), so the scan can never succeed.
    from enumerator.core.errors import TooLarge
    from enumerator.core.limits import limited
    from enumerator.core.model import UrnModel

    model = UrnModel(balls=0, weights="1,1,2,2,3,1/2", rule="BE")
    with limited(seconds=0.5), pytest.raises(TooLarge, match="within the time limit of 0.5 s") as caught:
        find_threshold(model, "balls", "min >= 1", Fraction(1, 3))
    assert "max_seconds" in caught.value.parameters


def test_varying_the_urns_starts_where_the_event_is_defined():
    # P(k3 >= 1) = 1 - (1 - 1/r)^5 under MB (complement of urn 3 missed by every ball, common
    # practice); with fewer than 3 urns there is no urn 3, so the search starts at r = 3.
    found = find_threshold(UrnModel(balls=5, urns=1), "urns", "k3 >= 1", "1/2")
    assert (found.value, found.probability, found.probability_before) == (3, 1 - Fraction(2, 3) ** 5, None)


def test_the_cli_refuses_per_urn_lists_when_the_urns_vary_and_notes_an_ignored_count():
    from cli_helpers import one_line_error, run

    message = one_line_error(run("threshold", "--vary", "urns", "-n", "23", "--bounds", "0:1,0:1",
                                 "--event", "max <= 1", "--target", "1/2"))
    assert "cannot vary" in message
    result = run("threshold", "--vary", "balls", "-n", "3", "-r", "365", "--event", "max >= 2", "--target", "1/2",
                 "--json")
    assert result.exit_code == 0 and '"value": "23"' in result.stdout  # Feller vol. 1, II.3: 23 people
