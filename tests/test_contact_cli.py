"""``enumerator contact`` for big systems, and refusals of ``levels``/``contact`` past the limits.

Expected values come from outside the project: ``math.comb`` (stars and bars,
common practice), SciPy's beta-binomial law (two Einstein solids sharing q
quanta split as BetaBinomial(q, N_A, N_B); from memory) and brute-force
enumeration of microstates with ``itertools``.
"""

from __future__ import annotations

import itertools
import math
from collections import Counter
from fractions import Fraction

import pytest
from cli_helpers import one_line_error, run, run_json


def test_float_probabilities_beside_the_exact_ones():
    # C(q + N - 1, q) oscillator multiplicities (stars and bars, common practice)
    payload = run_json("contact", "--oscillators-a", 3, "--oscillators-b", 2, "--quanta", 4)
    assert list(payload) == ["total", "split", "most_probable", "probability", "probability_approx"]
    total = math.comb(4 + 5 - 1, 4)
    for q in range(5):
        exact = Fraction(math.comb(q + 2, q) * math.comb(4 - q + 1, 4 - q), total)
        assert payload["probability"][str(q)] == str(exact)
        assert payload["probability_approx"][str(q)] == float(exact)
    assert sum(Fraction(p) for p in payload["probability"].values()) == 1


def test_contact_of_fermions_and_bosons_matches_brute_force():
    # Brute force: enumerate both sides' microstates (sets for FD, multisets for BE)
    payload = run_json(
        "contact", "--energies-a", "0,1,2", "--degeneracies-a", "2,2,1", "--particles-a", 2, "--rule-a", "FD",
        "--energies-b", "0,1", "--degeneracies-b", "1,2", "--particles-b", 3, "--rule-b", "BE", "--energy", 5,
    )
    ca = Counter(sum(c) for c in itertools.combinations([0, 0, 1, 1, 2], 2))
    cb = Counter(sum(c) for c in itertools.combinations_with_replacement([0, 1, 1], 3))
    split = {ea: ca[ea] * cb[5 - ea] for ea in range(0, 6) if ca[ea] * cb[5 - ea]}
    total = sum(split.values())
    assert {e: int(v) for e, v in payload["split"].items() if int(v)} == {str(e): v for e, v in split.items()}
    best = max(split.values())
    assert payload["most_probable"] == min(e for e, v in split.items() if v == best)
    assert sum(Fraction(p) for p in payload["probability"].values()) == 1
    assert math.fsum(payload["probability_approx"].values()) == pytest.approx(1, abs=1e-12)
    assert Fraction(payload["probability"][str(payload["most_probable"])]) == Fraction(best, total)


def test_big_systems_are_summarised_by_default():
    # 2,001 splits: more than the listing limit.  BetaBinomial(q, N_A, N_B) from SciPy.
    from scipy.stats import betabinom

    n_a, n_b, q = 2000, 1500, 2000
    payload = run_json("contact", "--oscillators-a", n_a, "--oscillators-b", n_b, "--quanta", q)
    assert set(payload) == {"total", "most_probable", "summary"}
    assert payload["total"] == str(math.comb(q + n_a + n_b - 1, q))
    s = payload["summary"]
    law = betabinom(q, n_a, n_b)
    assert s["splits"] == q + 1 and s["listed"] is None
    assert s["most_probable"] == payload["most_probable"] == int(law.pmf(range(q + 1)).argmax())
    assert s["mean"] == str(Fraction(q * n_a, n_a + n_b))
    assert s["mean_approx"] == pytest.approx(law.mean(), rel=1e-12)
    assert s["variance_approx"] == pytest.approx(law.var(), rel=1e-12)
    assert float(Fraction(s["variance"])) == pytest.approx(law.var(), rel=1e-12)
    assert s["std_dev_approx"] == pytest.approx(law.std(), rel=1e-12)
    assert s["most_probable_probability_approx"] == pytest.approx(law.pmf(s["most_probable"]), rel=1e-10)
    assert float(Fraction(s["most_probable_probability"])) == pytest.approx(s["most_probable_probability_approx"])


def test_splits_window_and_all():
    # BetaBinomial(q, N_A, N_B) from SciPy for the listed floats
    from scipy.stats import betabinom

    args = ("contact", "--oscillators-a", 2000, "--oscillators-b", 1500, "--quanta", 2000)
    law = betabinom(2000, 2000, 1500)
    payload = run_json(*args, "--splits", 5)
    peak = payload["most_probable"]
    assert list(payload["split"]) == [str(e) for e in range(peak - 2, peak + 3)]
    assert payload["summary"]["listed"] == [peak - 2, peak + 2]
    for e, p in payload["probability_approx"].items():
        assert p == pytest.approx(law.pmf(int(e)), rel=1e-10)
    payload = run_json(*args, "--splits", "1990..2100")  # clipped to the splits that exist
    assert list(payload["split"]) == [str(e) for e in range(1990, 2001)]
    assert payload["summary"]["listed"] == [1990, 2000]
    payload = run_json(*args, "--splits", "all")
    assert len(payload["split"]) == 2001 and "summary" not in payload
    assert sum(Fraction(p) for p in payload["probability"].values()) == 1
    payload = run_json("contact", "--oscillators-a", 3, "--oscillators-b", 3, "--quanta", 6, "--summary",
                       "--splits", "all")
    assert len(payload["split"]) == 7 and payload["summary"]["listed"] == [0, 6]


def test_summary_for_people():
    # Schroeder (2000), Figure 2.6 (from memory): N_A = 300, N_B = 200, q = 100 peaks at q_A = 60;
    # BetaBinomial mean q N_A / (N_A + N_B) = 60.
    result = run("contact", "--oscillators-a", 300, "--oscillators-b", 200, "--quanta", 100, "--summary")
    assert result.exit_code == 0, result.output
    out = " ".join(result.stdout.split())
    assert "most probable split: E_A = 60" in out
    assert "mean E_A = 60 (≈ 60)" in out
    assert "listed: none" in out and "Ω_A Ω_B" not in out
    result = run("contact", "--oscillators-a", 2000, "--oscillators-b", 2000, "--quanta", 2000)
    out = " ".join(result.stdout.split())
    assert "the 2,001 splits are not listed" in out and "--splits all" in out


@pytest.mark.parametrize("value", ["x", "0", "9..3", "1..z"])
def test_bad_splits_is_one_line(value):
    line = one_line_error(run("contact", "--oscillators-a", 3, "--oscillators-b", 3, "--quanta", 6,
                              "--splits", value))
    assert "--splits" in line


# --------------------------------------------------------------------------
# Refusals: exit 2 and one line naming a real option, never a native abort
# --------------------------------------------------------------------------
def test_ten_thousand_trap_bosons_up_to_900_answer():
    # Brute force: N >= E bosons with one ground state count the multisets of excited states;
    # the 3D trap's rung m holds (m + 1)(m + 2)/2 states: 1, 3, 12, 38 (by hand: E = 2 is one
    # particle on rung 2 (6 ways) or two on rung 1 (C(3 + 1, 2) = 6 ways)).
    payload = run_json("levels", "--preset", "trap", "--particles", 10_000, "--rule", "BE", "--max-energy", 900)
    counts = payload["multiplicity"]
    assert len(counts) == 901 and [counts[str(e)] for e in range(4)] == ["1", "3", "12", "38"]


@pytest.mark.parametrize(
    "args, option",
    [
        (["levels", "--preset", "trap", "--particles", 10_000, "--rule", "BE", "--max-energy", 900,
          "--max-memory", "1M"], "--max-memory"),
        (["levels", "--preset", "trap", "--particles", 10_000, "--rule", "BE", "--max-energy", 10**6],
         "--max-memory"),
        (["levels", "--preset", "trap", "--particles", 300, "--rule", "FD", "--max-energy", 3000,
          "--max-seconds", 1], "--max-seconds"),
        (["contact", "--oscillators-a", 10**7, "--oscillators-b", 10**7, "--quanta", 10**7], "--max-memory"),
        (["contact", "--preset-a", "trap", "--particles-a", 10_000, "--rule-a", "BE", "--oscillators-b", 10,
          "--quanta", 10**6], "--max-memory"),
    ],
)
def test_refusals_are_one_line_naming_a_real_option(args, option):
    line = one_line_error(run(*args))
    assert f"raise {option}" in line
    assert "--max-energy" in line or "share less energy" in line
    help_text = run(args[0], "--help").stdout
    assert option in help_text


def test_raising_the_limit_turns_a_refusal_into_an_answer():
    # The refusal above at 1M of memory; the same request under the default limit answers.
    args = ["levels", "--preset", "trap", "--particles", 10_000, "--rule", "BE", "--max-energy", 900]
    one_line_error(run(*args, "--max-memory", "1M"))
    assert run(*args, "--max-memory", "1G").exit_code == 0


def test_no_microstate_keeps_the_empty_maps():
    # Two fermions fit in the two states of a two-level system, four do not (by hand)
    args = ("contact", "--oscillators-a", 3, "--preset-b", "two-level", "--particles-b", 4, "--rule-b", "FD",
            "--energy", 1)
    expected = {"total": "0", "split": {}, "most_probable": None, "probability": {}, "probability_approx": {}}
    assert run_json(*args) == expected
    assert run_json(*args, "--summary") == expected
