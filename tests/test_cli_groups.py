"""The command line of urn groups: run-length bounds and weights, any number of urns,
``threshold``, ``dist --moments-only``, work limits, huge values and sparse rows.

Every expected value names its outside reference beside the check.
"""

from __future__ import annotations

import json
import math
from fractions import Fraction
from itertools import product

import pytest
from cli_helpers import one_line_error, run, run_json

R64 = 2 ** 64


# ------------------------------------------------------------ groups and weights


def test_run_length_bounds_reach_the_model_as_groups():
    # 1000 urns of capacity 3 and two urns of minimum 1, BE, 4 balls: the two
    # forced balls leave 2 free balls in 1002 urns (no cap binds at 2 balls):
    # C(2 + 1001, 2) = 502503 (stars and bars, common practice).
    payload = run_json("count", "-n", 4, "--bounds", "1000x0:3,2x1:", "--rule", "BE")
    assert payload["urns"] == "1002"
    assert payload["configurations"] == str(math.comb(1003, 2)) == "502503"


def test_per_urn_and_run_length_bounds_agree():
    # The same model written per urn and in runs (DESIGN.md: groups are the per-urn list merged).
    per_urn = run_json("count", "-n", 7, "--bounds", "0:3,0:3,0:3,1:,1:", "--rule", "BE")
    grouped = run_json("count", "-n", 7, "--bounds", "3x0:3,2x1:", "--rule", "BE")
    assert per_urn == grouped


def brute_force_mb_weighted(n, weights, event):
    """P(event) for n distinguishable balls, ball -> urn i with probability w_i / sum(w) (brute force)."""
    total = sum(weights)
    p = Fraction(0)
    for assignment in product(range(len(weights)), repeat=n):
        k = [assignment.count(i) for i in range(len(weights))]
        if event(k):
            term = Fraction(1)
            for i in assignment:
                term *= Fraction(weights[i]) / total
            p += term
    return p


def test_weighted_prob_matches_brute_force():
    weights = [Fraction(1, 3)] * 2 + [Fraction(2)]
    expected = brute_force_mb_weighted(4, weights, lambda k: max(k) <= 2)  # brute force over 3^4 assignments
    payload = run_json("prob", "-n", 4, "--weights", "2x1/3,2", "--event", "max <= 2", "--no-cache")
    assert payload["probability"] == str(expected)


def test_weighted_configuration_probability_matches_the_multinomial():
    # MB with p = (1/6, 1/6, 2/3): P(1,1,2) = 4!/(1!1!2!) (1/6)(1/6)(2/3)^2 (multinomial law, Feller II.8).
    payload = run_json("prob", "-n", 4, "--weights", "1,1,4", "--config", "1,1,2", "--no-cache")
    assert payload["probability"] == str(Fraction(12) * Fraction(1, 36) * Fraction(4, 9))


def test_weights_must_be_positive_rationals():
    line = one_line_error(run("count", "-n", 3, "--weights", "2x1,-1"))
    assert "weight" in line
    one_line_error(run("count", "-n", 3, "--weights", "2x0"))
    one_line_error(run("count", "-n", 3, "--weights", "1e999999999"))


def test_urns_of_any_size_reach_the_model_without_per_urn_work():
    # BE: C(n + r - 1, n) (stars and bars); MB: r^n.
    payload = run_json("count", "-n", 10, "-r", R64, "--rule", "BE", "--no-cache")
    assert payload["urns"] == str(R64)
    assert payload["configurations"] == str(math.comb(10 + R64 - 1, 10))
    payload = run_json("count", "-n", 3, "-r", 2 ** 128, "--no-cache")
    assert payload["microstates"] == str(2 ** 384)


@pytest.mark.parametrize("text", ["1e999999999", "-3", "", "12abc", "9" * 5000])
def test_malformed_counts_are_refused_before_conversion(text):
    line = one_line_error(run("count", "-n", text, "-r", 3))
    assert "--balls" in line
    line = one_line_error(run("count", "-n", 3, "-r", text))
    assert "--urns" in line


# ------------------------------------------------------------ prob and the store


def test_prob_event_is_remembered_in_the_store(tmp_path):
    # P(no shared birthday among 23 people) = 365!/(342! 365^23) (Feller, vol. 1, II.3).
    store = tmp_path / "store.sqlite"
    expected = Fraction(math.perm(365, 23), 365 ** 23)
    first = run_json("prob", "-n", 23, "-r", 365, "--event", "max <= 1", "--store", store)
    assert first["probability"] == str(expected)
    assert store.exists()
    again = run_json("prob", "-n", 23, "-r", 365, "--event", "max<=1", "--store", store)
    assert again == {**first, "event": "max<=1"}


# ------------------------------------------------------------ threshold


def test_threshold_birthday_pair_is_23():
    # 23 people for a shared birthday with probability >= 1/2 (Feller, vol. 1, II.3; OEIS A033810).
    payload = run_json("threshold", "--vary", "balls", "-r", 365, "--event", "max >= 2", "--target", "0.5")
    assert set(payload) >= {"vary", "value", "probability", "probability_before"}
    assert payload["vary"] == "balls" and payload["value"] == "23"
    assert payload["probability"] == str(1 - Fraction(math.perm(365, 23), 365 ** 23))
    assert payload["probability_before"] == str(1 - Fraction(math.perm(365, 22), 365 ** 22))
    assert payload["method"] == "bisection"
    assert isinstance(payload["probability_approx"], float)


def test_threshold_three_shared_birthdays_is_88():
    # Three people sharing a birthday with probability >= 1/2 need 88 (OEIS A014088, from memory).
    payload = run_json("threshold", "--vary", "balls", "-r", 365, "--event", "max >= 3", "--target", "1/2")
    assert payload["value"] == "88"


def test_threshold_varying_urns():
    # 23 people: the least r with P(no collision) >= 1/2, prod_{i<23}(1 - i/r), is 373
    # (brute force over r below, with Python fractions).
    def no_collision(r):
        return Fraction(math.perm(r, 23), r ** 23)

    least = next(r for r in range(23, 1000) if no_collision(r) >= Fraction(1, 2))
    payload = run_json("threshold", "--vary", "urns", "-n", 23, "--event", "max <= 1", "--target", "1/2")
    assert payload["value"] == str(least) == "373"
    assert payload["probability"] == str(no_collision(373))
    assert payload["probability_before"] == str(no_collision(372))


def test_threshold_at_the_smallest_value_has_no_probability_before():
    # With 0 balls no urn is empty-violating: P(max <= 1) = 1 at n = 0 (trivially).
    payload = run_json("threshold", "--vary", "balls", "-r", 5, "--event", "max <= 1", "--target", "1")
    assert payload["value"] == "0" and payload["probability"] == "1"
    assert payload["probability_before"] is None


def test_threshold_help_says_what_is_searched_and_how():
    text = " ".join(run("threshold", "--help").stdout.split())
    assert "Bisection" in text and "scan" in text and "monotone" in text


@pytest.mark.parametrize(
    ("args", "flag"),
    [
        (["--vary", "balls", "-r", 365, "--event", "max >= 2", "--target", "2"], "--target"),
        (["--vary", "balls", "-r", 365, "--event", "max >= 2", "--target", "abc"], "--target"),
        (["--vary", "urns", "--event", "max <= 1", "--target", "0.5"], "--balls"),
        (["--vary", "sideways", "-r", 3, "--event", "max <= 1", "--target", "0.5"], "--vary"),
    ],
)
def test_threshold_errors_name_the_flags(args, flag):
    assert flag in one_line_error(run("threshold", *args))


# ------------------------------------------------------------ moments only


def test_moments_only_occupied_matches_the_closed_form():
    # E[occupied] = r (1 - (1 - 1/r)^n) (Feller, vol. 1, IV.2, from memory) and
    # Var = r(r-1)(1-2/r)^n + r(1-1/r)^n - r^2(1-1/r)^{2n} (same source).
    n, r = 23, 365
    q1, q2 = Fraction(r - 1, r), Fraction(r - 2, r)
    mean = r * (1 - q1 ** n)
    variance = r * (r - 1) * q2 ** n + r * q1 ** n - r * r * q1 ** (2 * n)
    payload = run_json("dist", "-n", n, "-r", r, "--stat", "occupied", "--moments-only", "--no-cache")
    assert list(payload) == ["statistic", "mean", "variance", "mean_approx", "variance_approx"]
    assert payload["statistic"] == "occupied"
    assert payload["mean"] == str(mean) and payload["variance"] == str(variance)
    assert payload["mean_approx"] == pytest.approx(float(mean))


@pytest.mark.parametrize("stat", ["empty", "occupied", "exactly:1", "atleast:2", "max", "min", "urn:1"])
def test_moments_only_agree_with_the_law(stat):
    # The law's own mean and variance (the pmf route) against the moments-only route.
    args = ["dist", "-n", 7, "--bounds", "2x0:3,2x0:", "--rule", "BE", "--stat", stat, "--no-cache"]
    law = run_json(*args)
    moments = run_json(*args, "--moments-only")
    assert (moments["mean"], moments["variance"]) == (law["mean"], law["variance"])


def test_moments_only_at_two_to_the_64_urns():
    # E[empty] for n balls in r urns (MB) = r (1 - 1/r)^n (Feller, vol. 1, IV.2, from memory).
    n, r = 1000, R64
    payload = run_json("dist", "-n", n, "-r", r, "--stat", "empty", "--moments-only", "--no-cache")
    assert payload["mean"] == str(r * Fraction(r - 1, r) ** n)


def test_moments_only_refuses_the_profile():
    one_line_error(run("dist", "-n", 4, "-r", 3, "--stat", "profile", "--moments-only"))


# ------------------------------------------------------------ limits


def test_max_memory_refuses_with_the_flag_named():
    line = one_line_error(run("count", "-n", 200000, "-r", 3, "--bounds", "1:,0:,0:", "--max-memory", "1K",
                              "--no-cache"))
    assert "--max-memory" in line


@pytest.mark.parametrize(("flag", "value"), [("--max-memory", "lots"), ("--max-seconds", "0"),
                                              ("--max-seconds", "nan")])
def test_malformed_limits_are_one_line_errors(flag, value):
    assert flag in one_line_error(run("count", "-n", 3, "-r", 3, flag, value))


def test_environment_limit_applies_and_the_option_overrides_it():
    env = {"ENUMERATOR_MAX_MEMORY": "1K"}
    args = ["dist", "-n", 3000, "-r", 1000, "--stat", "max", "--no-cache", "--json"]
    assert "ENUMERATOR_MAX_MEMORY" in one_line_error(run(*args, env=env))


# ------------------------------------------------------------ huge values


def test_huge_count_is_rounded_in_tables_and_exact_in_json():
    # MB microstates 10^n (r^n): a million and one digits.
    n = 1_000_000
    result = run("count", "-n", n, "-r", 10, "--no-cache")
    assert result.exit_code == 0, result.output
    assert "1.0000e+1000000 (1,000,001 digits)" in result.stdout
    line = [x for x in result.stdout.splitlines() if x.startswith("microstates")]
    assert line == ["microstates: 1,000,001 digits in all, too many to write here; --json prints the value exactly"]
    payload = run_json("count", "-n", n, "-r", 10, "--no-cache")
    digits = payload["microstates"]
    assert len(digits) == n + 1 and digits[0] == "1" and set(digits[1:]) == {"0"}


def test_rounding_is_exact_and_half_even():
    from enumerator.cli.render import human, scientific

    # Exact references: decimal arithmetic by hand.
    assert scientific(123455) == "1.2346e+5"  # a tie after the odd 5: rounds up to the even 6
    assert scientific(123465) == "1.2346e+5"  # a tie after the even 6: stays
    assert scientific(99999999) == "1.0000e+8"
    assert scientific(Fraction(-2, 3)) == "-6.6667e-1"
    assert scientific(3 ** 1000) == "1.3221e+477"  # mpmath at 30 digits: 1.32207081948...e+477
    assert human(10 ** 40) == "1.0000e+40 (41 digits)"
    assert human(10 ** 39) == str(10 ** 39)


# ------------------------------------------------------------ sparse rows


def test_sample_with_huge_r_is_sparse():
    result = run("sample", "-n", 3, "-r", R64, "--size", 4, "--seed", 1)
    assert result.exit_code == 0, result.output
    lines = result.stdout.splitlines()
    assert lines[0] == "draw,occupied" and len(lines) == 5
    for index, line in enumerate(lines[1:], start=1):
        draw, pairs = line.split(",")
        assert int(draw) == index
        cells = [tuple(map(int, p.split(":"))) for p in pairs.split()]
        assert sum(k for _, k in cells) == 3 and all(1 <= u <= R64 for u, _ in cells)


def test_sparse_sample_equals_the_dense_rows():
    # The same seed gives the same draws (the group sampler's rows), dense or sparse.
    dense = run("sample", "-n", 6, "-r", 4, "--size", 5, "--seed", 9, "--method", "groups", "--format", "jsonl")
    sparse = run("sample", "-n", 6, "-r", 4, "--size", 5, "--seed", 9, "--sparse", "--format", "jsonl")
    assert dense.exit_code == 0 and sparse.exit_code == 0, dense.output + sparse.output
    rows = [json.loads(line) for line in dense.stdout.splitlines()]
    pairs = [json.loads(line) for line in sparse.stdout.splitlines()]
    assert [[[i + 1, k] for i, k in enumerate(row) if k] for row in rows] == pairs


def test_list_with_huge_r_is_sparse_and_ranked():
    # FD, 2 balls in 2^64 urns: lexicographic order puts the last two urns first.
    payload = run_json("list", "-n", 2, "-r", R64, "--rule", "FD", "--limit", 2)
    assert payload["sparse"] is True and payload["listed"] == "2"
    assert payload["configurations"] == [[[R64 - 1, 1], [R64, 1]], [[R64 - 2, 1], [R64, 1]]]


def test_list_sparse_matches_dense():
    dense = run("list", "-n", 3, "-r", 3, "--rule", "BE", "--format", "jsonl")
    sparse = run("list", "-n", 3, "-r", 3, "--rule", "BE", "--format", "jsonl", "--sparse")
    rows = [json.loads(line) for line in dense.stdout.splitlines()]
    pairs = [json.loads(line) for line in sparse.stdout.splitlines()]
    assert [[[i + 1, k] for i, k in enumerate(row) if k] for row in rows] == pairs


def test_list_beyond_the_limits_is_refused_up_front():
    line = one_line_error(run("list", "-n", 5, "-r", 50000, "--json"))
    assert "--start" in line and "--max-seconds" in line
    line = one_line_error(run("list", "-n", 5, "-r", R64))
    assert "--start" in line
