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


# --------------------------------------------------------------------------
# Energies in the user's unit (rational spectra)
# --------------------------------------------------------------------------
def _json_energy(value):
    """An energy as the JSON writes it: an integer when whole, else "p/q" text."""
    return value.numerator if value.denominator == 1 else str(value)


def test_rational_spectra_report_energies_in_the_users_unit():
    # Brute force: every microstate of A (5 distinguishable two-level systems of gap 1/2: tuples)
    # and of B (3 fermions in the states of levels 0, 1/3, 1 with degeneracies 1, 2, 2: sets),
    # energies as exact Fractions; the split, its peak, mean and variance computed from them.
    half, third = Fraction(1, 2), Fraction(1, 3)
    total = Fraction(2)
    ca = Counter(sum(c, Fraction(0)) for c in itertools.product([0, half], repeat=5))
    cb = Counter(sum(c, Fraction(0)) for c in itertools.combinations([0, third, third, 1, 1], 3))
    split = {ea: ca[ea] * cb[total - ea] for ea in ca if ca[ea] * cb[total - ea]}
    count = sum(split.values())
    best = max(split.values())
    peak = min(ea for ea, v in split.items() if v == best)
    mean = sum(ea * v for ea, v in split.items()) / count
    variance = sum((ea - mean) ** 2 * v for ea, v in split.items()) / count
    args = ("contact", "--preset-a", "two-level", "--gap-a", "1/2", "--particles-a", 5, "--rule-a", "MB",
            "--energies-b", "0,1/3,1", "--degeneracies-b", "1,2,2", "--particles-b", 3, "--rule-b", "FD",
            "--energy", 2)
    payload = run_json(*args, "--summary", "--splits", "all")
    assert payload["unit"] == "1/6"  # the grid of both spectra: lcm of the denominators 2 and 3
    assert payload["total"] == str(count)
    assert {Fraction(e): int(v) for e, v in payload["split"].items() if int(v)} == split
    # every listed key is an energy of A on the grid, written exactly ("1/2", "2", never "3")
    assert all(Fraction(e) * 6 == int(Fraction(e) * 6) for e in payload["split"])
    assert {Fraction(e): Fraction(p) for e, p in payload["probability"].items() if Fraction(p)} == {
        e: Fraction(v, count) for e, v in split.items()}
    assert payload["most_probable"] == _json_energy(peak)
    s = payload["summary"]
    assert s["most_probable"] == _json_energy(peak)
    assert s["listed"] == [0, _json_energy(total - min(cb))]  # up to E less B's ground energy, 2/3
    assert Fraction(s["mean"]) == mean and s["mean_approx"] == pytest.approx(float(mean), rel=1e-15)
    assert Fraction(s["variance"]) == variance
    assert s["std_dev_approx"] == pytest.approx(math.sqrt(variance), rel=1e-15)
    # a window of energies of A in the same unit
    window = run_json(*args, "--splits", "1/2..3/2")  # clipped to the splits that exist, up to 4/3
    assert [Fraction(e) for e in window["split"]] == [Fraction(k, 6) for k in range(3, 9)]
    assert window["summary"]["listed"] == ["1/2", "4/3"]


def test_rational_energies_in_the_table_for_people():
    # Brute force by hand: two two-level systems of gap 1/2 on each side (distinguishable), total 1/2:
    # A holds 0 (1 way) x B holds 1/2 (2 ways), or A holds 1/2 (2 ways) x B holds 0 (1 way).
    result = run("contact", "--preset-a", "two-level", "--gap-a", "1/2", "--particles-a", 2, "--rule-a", "MB",
                 "--preset-b", "two-level", "--gap-b", "1/2", "--particles-b", 2, "--rule-b", "MB",
                 "--energy", "1/2", "--summary")
    assert result.exit_code == 0, result.output
    out = " ".join(result.stdout.split())
    assert "total energy 1/2" in out and "total microstates: 4" in out
    assert "most probable split: E_A = 0, probability 1/2" in out
    assert "mean E_A = 1/4" in out and "(E_A = 0..1/2)" in out


def test_a_total_energy_off_the_grid_has_no_microstate():
    # Every energy of two gap-1/2 systems is a multiple of 1/2 (by hand), so none totals 3/4;
    # it is not rounded to 1/2.
    payload = run_json("contact", "--preset-a", "two-level", "--gap-a", "1/2", "--particles-a", 3,
                       "--preset-b", "two-level", "--gap-b", "1/2", "--particles-b", 3, "--energy", "3/4")
    assert payload["total"] == "0" and payload["most_probable"] is None
    assert not any(int(v) for v in payload["split"].values())


def test_rational_summary_is_a_scaled_hypergeometric_law():
    # N_A + N_B distinguishable two-level systems of gap 1/2 sharing E: the 2E excited systems are
    # a uniform draw without replacement, so A's excited count is hypergeometric (M = N_A + N_B,
    # n = N_A, N = 2E; from memory) and E_A = count / 2.  Law and moments from SciPy.
    from scipy.stats import hypergeom

    n_a, n_b, energy = 1500, 1000, 400
    law = hypergeom(n_a + n_b, n_a, 2 * energy)
    payload = run_json("contact", "--preset-a", "two-level", "--gap-a", "1/2", "--particles-a", n_a,
                       "--preset-b", "two-level", "--gap-b", "1/2", "--particles-b", n_b, "--energy", energy,
                       "--summary", "--splits", 3)
    s = payload["summary"]
    peak = Fraction(int(law.pmf(range(2 * energy + 1)).argmax()), 2)
    assert Fraction(s["most_probable"]) == Fraction(payload["most_probable"]) == peak
    assert s["mean_approx"] == pytest.approx(law.mean() / 2, rel=1e-12)
    assert s["variance_approx"] == pytest.approx(law.var() / 4, rel=1e-12)
    assert s["std_dev_approx"] == pytest.approx(law.std() / 2, rel=1e-12)
    assert [Fraction(e) for e in payload["split"]] == [peak - Fraction(1, 2), peak, peak + Fraction(1, 2)]
    for e, p in payload["probability_approx"].items():
        assert p == pytest.approx(law.pmf(int(2 * Fraction(e))), rel=1e-9)
