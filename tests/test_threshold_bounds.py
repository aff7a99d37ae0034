"""Threshold answers located by proved bounds, with enclosures instead of exact probabilities.

References: the exact probabilities of the project's exact routes (the
falling factorial over ``r^n`` for MB, over the rising factorial for BE;
Feller, vol. 1, II.3), which every enclosure must contain; the birthday
approximation ``n ≈ sqrt(2 N p)`` for a small collision probability ``p``
among ``N`` equally likely IDs (common practice), which the 64-bit answer
must be near.
"""

from __future__ import annotations

import math
from fractions import Fraction

import pytest
from cli_helpers import run, run_json

from enumerator.algorithms import threshold as threshold_module
from enumerator.algorithms.threshold import find_threshold
from enumerator.core.model import UrnModel


@pytest.mark.parametrize("rule, vary, fixed, event, target", [
    ("MB", "balls", 2 ** 64, "max >= 2", "1e-9"),
    ("MB", "balls", 10 ** 12, "max >= 2", "1/3"),
    ("BE", "balls", 10 ** 9, "max >= 2", "0.01"),
    ("MB", "urns", 3000, "max <= 1", "0.99"),
    ("BE", "urns", 2000, "max <= 1", "0.9"),
])
def test_enclosures_hold_the_exact_probabilities(rule, vary, fixed, event, target):
    model = UrnModel(balls=0 if vary == "balls" else fixed, urns=fixed if vary == "balls" else 1, rule=rule)
    exact = find_threshold(model, vary, event, target)
    bounded = find_threshold(model, vary, event, target, exact_digits=10)
    assert bounded.value == exact.value and bounded.probability is None and bounded.evaluations == 0
    (lo, hi), before = bounded.bounds
    assert lo <= exact.probability <= hi and hi - lo <= lo * Fraction(1, 10 ** 20)
    assert before[0] <= exact.probability_before <= before[1]
    assert before[1] < Fraction(target) <= lo
    # within the limit of digits given, the probabilities are exact as before
    assert find_threshold(model, vary, event, target, exact_digits=10 ** 9) == exact


def test_sixty_four_bit_ids_at_one_in_a_million_without_exact_fractions(monkeypatch):
    def refuse(*args, **kwargs):
        raise AssertionError("no exact evaluation for a table of this size")

    monkeypatch.setattr(threshold_module, "event_probability", refuse)
    found = find_threshold(UrnModel(balls=0, urns=2 ** 64), "balls", "max >= 2", "1e-6", exact_digits=10_000)
    assert abs(found.value - math.sqrt(2 * 2 ** 64 * 1e-6)) < 10  # birthday approximation (common practice)
    assert found.digits > 10 ** 8
    result = run("threshold", "--vary", "balls", "-r", "2^64", "--event", "max >= 2", "--target", "1e-6")
    assert result.exit_code == 0, result.output
    assert "6074004" in result.stdout and "not computed" in result.stdout


def test_json_stays_exact_and_small_tables_unchanged():
    payload = run_json("threshold", "--vary", "balls", "-r", "365", "--event", "max >= 2", "--target", "1/2")
    assert payload["value"] == "23" and "/" in payload["probability"]
    # 373 balls in 10^5 urns: fractions of about 1,900 digits, computed for the table as before
    table = run("threshold", "--vary", "balls", "-r", "100000", "--event", "max >= 2", "--target", "1/2")
    assert table.exit_code == 0 and "373" in table.stdout and "evaluations" in table.stdout and "not computed" not in table.stdout


def test_urns_vary_from_the_fewest_that_hold_the_balls():
    # reference: under FD (at most one per urn) n balls need n urns, where "max <= 1" is certain
    # (common practice); with capacity 3, 10 balls need 4 urns, and P at 10 and 11 urns is the
    # ratio of bounded counts, checked here by brute force over the urn of every ball
    import itertools

    fd = run_json("threshold", "--vary", "urns", "-n", "3", "--rule", "FD", "--event", "max <= 1", "--target", "1/2")
    assert fd["value"] == "3" and fd["probability"] == "1" and fd["probability_before"] is None

    def brute(n, r, cap, top):
        total = good = 0
        for balls in itertools.product(range(r), repeat=n):
            counts = [balls.count(i) for i in range(r)]
            if max(counts) <= cap:
                total += 1
                good += max(counts) <= top
        return Fraction(good, total)

    capped = run_json("threshold", "--vary", "urns", "-n", "6", "--capacity", "3", "--event", "max <= 1",
                      "--target", "1/10")
    value = int(capped["value"])
    assert Fraction(capped["probability"]) == brute(6, value, 3, 1) >= Fraction(1, 10)
    assert Fraction(capped["probability_before"]) == brute(6, value - 1, 3, 1) < Fraction(1, 10)
    refused = run("threshold", "--vary", "urns", "-n", "10", "--minimum", "3", "--capacity", "3", "--event",
                  "max <= 3", "--target", "1/2")
    assert refused.exit_code == 2 and "no number of urns holds 10 balls" in refused.stderr
