"""``enumerator dist`` and ``enumerator prob --event``: exact JSON, tables, one-line errors.

Expected values come from outside the project: hand counts of the 27 MB
arrangements of 3 balls in 3 cells (Feller vol. 1, ch. I; from memory), the
binomial law of one urn (``math.comb``; common practice), the birthday
problem (well known; from memory) and brute force over ``itertools.product``.
"""

from __future__ import annotations

import itertools
import math
from fractions import Fraction

import pytest
from cli_helpers import one_line_error, run, run_json


@pytest.fixture(autouse=True, scope="module")
def _private_store(tmp_path_factory):
    """Keep this module's results out of the checkout's store/."""
    with pytest.MonkeyPatch.context() as patch:
        patch.setenv("ENUMERATOR_STORE", str(tmp_path_factory.mktemp("store") / "dist.sqlite"))
        yield


# ---------------------------------------------------------------- dist

def test_dist_json_for_empty_cells():
    # 3 balls in 3 cells: 6 of 27 arrangements leave no cell empty, 18 leave one, 3 leave two
    payload = run_json("dist", "-n", 3, "-r", 3, "--stat", "empty")
    assert payload == {"statistic": "empty", "pmf": {"0": "2/9", "1": "2/3", "2": "1/9"},
                       "mean": "8/9", "variance": "26/81"}


def test_dist_json_for_one_urn_is_binomial():
    n, r = 6, 3
    payload = run_json("dist", "-n", n, "-r", r, "--stat", "urn:2")
    expected = {str(v): str(Fraction(math.comb(n, v) * (r - 1) ** (n - v), r ** n)) for v in range(n + 1)}
    assert payload["pmf"] == expected
    assert payload["mean"] == "2" and payload["variance"] == str(Fraction(n * (r - 1), r * r))


def test_dist_json_for_profiles_joins_parts_with_plus():
    payload = run_json("dist", "-n", 3, "-r", 3, "--rule", "BE", "--stat", "profile")
    assert payload == {"statistic": "profile", "pmf": {"1+1+1": "1/10", "2+1+0": "3/5", "3+0+0": "3/10"},
                       "mean": None, "variance": None}


def test_dist_json_with_per_urn_bounds_matches_brute_force():
    bounds = [(0, 2), (1, None), (0, 3)]
    n = 5
    found = {}
    for k in itertools.product(*(range(a, (n if b is None else b) + 1) for a, b in bounds)):
        if sum(k) == n:
            w = math.factorial(n) // math.prod(math.factorial(v) for v in k)
            found[max(k)] = found.get(max(k), 0) + w
    total = sum(found.values())
    payload = run_json("dist", "-n", n, "--bounds", "0:2,1:,0:3", "--stat", "max")
    assert payload["pmf"] == {str(v): str(Fraction(c, total)) for v, c in sorted(found.items())}


def test_dist_table_lists_every_value_and_the_moments():
    result = run("dist", "-n", 4, "-r", 3, "--stat", "max")
    assert result.exit_code == 0
    out = result.stdout
    assert "distribution of max" in out and "probability (exact)" in out
    for cell in ("2/3", "8/27", "1/27", "64/27", "224/729", "mean", "variance"):
        assert cell in out


@pytest.mark.parametrize("stat, message", [
    ("maximum", "Error: unknown statistic 'maximum'; choose empty, occupied, max, min, urn:I (I = 1..r), "
                "exactly:J, atleast:J or profile"),
    ("urn:7", "Error: statistic 'urn:7' names urn 7, but the model has 3 urns; use urn:1 to urn:3"),
    ("exactly:", "Error: statistic 'exactly' needs a number after a colon, exactly:J (for example 'exactly:2')"),
])
def test_dist_bad_statistics_exit_2_with_one_line(stat, message):
    assert one_line_error(run("dist", "-n", 3, "-r", 3, "--stat", stat)) == message


def test_dist_limit_is_named_and_raisable():
    error = one_line_error(run("dist", "-n", 12, "-r", 4, "--rule", "BE", "--stat", "profile", "--limit", 10))
    assert "above the limit 10" in error and "--limit" in error
    # 34 partitions of 12 into at most 4 parts (OEIS A001400; from memory)
    assert len(run_json("dist", "-n", 12, "-r", 4, "--rule", "BE", "--stat", "profile", "--limit", 34)["pmf"]) == 34


# ---------------------------------------------------------------- prob --event

def test_prob_event_json_birthday():
    payload = run_json("prob", "-n", 23, "-r", 365, "--event", "max <= 1")
    p = Fraction(math.perm(365, 23), 365 ** 23)
    assert payload == {"rule": "MB", "balls": "23", "urns": "365", "event": "max <= 1",
                       "probability": str(p), "approx": float(p)}
    assert payload["approx"] == pytest.approx(0.4927027656, abs=1e-10)  # well known; from memory


def test_prob_event_matches_brute_force_under_be():
    n, r = 5, 4
    vectors = [k for k in itertools.product(range(n + 1), repeat=r) if sum(k) == n]
    hits = [k for k in vectors if k.count(0) == 2 or k[0] >= 3]
    payload = run_json("prob", "-n", n, "-r", r, "--rule", "BE", "--event", "empty == 2 or k1 >= 3")
    assert payload["probability"] == str(Fraction(len(hits), len(vectors)))


def test_prob_event_table():
    result = run("prob", "-n", 4, "-r", 4, "--event", "max <= 1")
    assert result.exit_code == 0
    assert "event max <= 1" in result.stdout
    assert "3/32" in result.stdout  # 4!/4^4 = 24/256


def test_prob_config_still_works():
    assert run_json("prob", "-n", 3, "-r", 3, "--config", "2,0,1")["probability"] == "1/9"


@pytest.mark.parametrize("args", [[], ["--config", "1,1,1", "--event", "max <= 1"]])
def test_prob_needs_exactly_one_of_config_and_event(args):
    error = one_line_error(run("prob", "-n", 3, "-r", 3, *args))
    assert error == ('Error: give exactly one of --config (one occupancy vector, e.g. 2,0,1) '
                     'or --event (an event, e.g. "max <= 1")')


def test_prob_malformed_event_points_at_the_column():
    error = one_line_error(run("prob", "-n", 3, "-r", 3, "--event", "max <= 1 and k2 = 0"))
    assert error == ("Error: cannot read the event 'max <= 1 and k2 = 0' at column 17 (at '= 0'): "
                     "a single '=' is not a comparison; write '==' to test equality")


def test_prob_event_limit_option():
    args = ["prob", "-n", 30, "-r", 9, "--event", "empty == 1 and count(== 2) == 2"]
    error = one_line_error(run(*args, "--limit", 100))
    assert "above the limit 100" in error and "--limit" in error
    n, r = 6, 4
    vectors = [k for k in itertools.product(range(n + 1), repeat=r) if sum(k) == n]
    weight = {k: math.factorial(n) // math.prod(math.factorial(v) for v in k) for k in vectors}
    hit = sum(w for k, w in weight.items() if k.count(0) == 1 and k.count(2) == 2)
    payload = run_json("prob", "-n", n, "-r", r, "--event", "empty == 1 and count(== 2) == 2", "--limit", 1000)
    assert payload["probability"] == str(Fraction(hit, r ** n))
