"""Canonical quantities at the ends of the accepted temperature range: answers or one-line refusals.

Reference: equipartition, ``U -> d N k_B T`` and ``C -> d N`` for ``N``
particles in a ``d``-dimensional harmonic trap far above the level spacing
(the classical limit; common practice, e.g. Pathria & Beale, *Statistical
Mechanics*, 3rd ed., §3.8, from memory).
"""

from __future__ import annotations

import pytest
from cli_helpers import run, run_json


@pytest.mark.parametrize("rule", ["FD", "MB"])
@pytest.mark.parametrize("temperature", ["1e6", "1e100"])
def test_fermions_far_above_the_spacing_answer_at_once(rule, temperature):
    # Three particles in the 1D oscillator far above the spacing: U -> N k_B T, C -> N (equipartition, from
    # memory as above); FD's grand-canonical comparison summed millions of rungs one by one before; the
    # occupation law of level 1 (at 1e300 its formula divided by 1 - e^{-βs} rounded to 0).
    point = run_json("levels", "--particles", "3", "--preset", "harmonic", "--rule", rule,
                     "--temperatures", temperature, "--occupation-law", "1")["canonical"][0]
    assert point["heat_capacity_approx"] == pytest.approx(3, rel=1e-5)
    assert point["mean_energy_approx"] == pytest.approx(3 * float(temperature), rel=1e-5)
    assert sum(point["occupation_law_approx"].values()) == pytest.approx(1, rel=1e-12)


@pytest.mark.parametrize("temperature", ["1e100", "1e300"])
def test_bosons_far_above_the_spacing_reach_equipartition(temperature):
    point = run_json("levels", "--particles", "3", "--preset", "trap", "--rule", "BE",
                     "--temperatures", temperature)["canonical"][0]
    assert point["heat_capacity_approx"] == pytest.approx(9, rel=1e-6)
    assert point["mean_energy_approx"] == pytest.approx(9 * float(temperature), rel=1e-6)


@pytest.mark.parametrize("extra, words", [
    (("--temperatures", "1e-300"), "T = 1.0e-300"),
    (("--temperatures", "1e300", "--route", "float"), "route recursion"),
])
def test_refusals_are_one_short_line(extra, words):
    result = run("levels", "--particles", "3", "--preset", "trap", "--rule", "BE", *extra)
    assert result.exit_code == 2 and "Traceback" not in result.output
    assert result.stderr.count("\n") == 1 and words in result.stderr and len(result.stderr) < 300


def test_a_unit_step_range_must_reach_its_upper_end():
    # 0.5..0.6 in steps of 1 would silently be the single value 0.5
    result = run("levels", "--preset", "harmonic", "--particles", "3", "--rule", "BE", "--temperatures", "0.5..0.6")
    assert result.exit_code == 2 and ":K" in result.stderr and result.stderr.count("\n") == 1
    points = run_json("levels", "--preset", "harmonic", "--particles", "3", "--rule", "BE",
                      "--temperatures", "0.5..2.5")["canonical"]
    assert [p["temperature"] for p in points] == [0.5, 1.5, 2.5]


@pytest.mark.parametrize("levels", [1, 2])
@pytest.mark.parametrize("temperature", ["1e-4", "1e-5"])
def test_bosons_far_below_the_first_gap_answer_at_once(temperature, levels):
    # Ten bosons in the 3D trap at k_B T = 10^-4 and 10^-5 spacings: one particle lifted to the first
    # rung (3 states, gap 1) carries U - E0 = 3 e^{-1/T} (1 + O(e^{-1/T})) and C = β^2 3 e^{-1/T}
    # (the Boltzmann factor of the first excited states; common practice).  The precision the
    # recursion needs (β/ln 2 bits) is asked for at once, not found by doubling.  The gap is the ladder's,
    # however few levels are reported: with one (the ladder listed to rung 0) U and C came out 0.
    import mpmath

    from enumerator.algorithms.levels import canonical, make_system

    system = make_system(10, preset="trap", rule="BE")
    (point,) = canonical(system, [temperature], digits=20, levels=levels)
    with mpmath.workdps(30):
        beta = 1 / mpmath.mpf(temperature)
        expected = 3 * mpmath.exp(-beta)
        assert abs(point.excitation_energy_approx / expected - 1) < 1e-15
        assert abs(point.heat_capacity_approx / (beta**2 * expected) - 1) < 1e-15


@pytest.mark.parametrize("args, words", [
    (("--particles", "3", "--energies", "0,1", "--rule", "BE", "--max-energy", "1e400"), "10^400 steps"),
    (("--particles", "3", "--energies", "0,1e400", "--rule", "BE"), "10^400 steps"),
    (("--preset", "harmonic", "--particles", "3", "--rule", "BE", "--max-energy", "99999999999999999999"),
     "10^19 rungs"),
])
def test_multiplicities_beyond_any_limit_are_refused_in_one_line(args, words):
    # These were an OverflowError in the estimate's floats, or a MemoryError listing 10^20 rungs (exit 1).
    result = run("levels", *args)
    assert result.exit_code == 2 and result.stderr.count("\n") == 1 and words in result.stderr


def test_canonical_results_on_a_level_beyond_the_double_range():
    # Levels 0 and 10^400, three distinguishable particles: the upper level is out of reach at T = 1, so
    # U = 3 · 10^400 e^{-10^400} to leading order (each particle independently; common practice) -- written
    # beyond the double range in JSON, and the multiplicities, refused on their size, are named as left out.
    # Bosons would need 10^400 / ln 2 bits in the recursion: refused in one line.
    import json

    refused = run("levels", "--particles", "3", "--energies", "0,1e400", "--rule", "BE", "--temperatures", "1")
    assert refused.exit_code == 2 and refused.stderr.count("\n") == 1 and "raise the temperature" in refused.stderr
    result = run("levels", "--particles", "3", "--energies", "0,1e400", "--rule", "MB", "--temperatures", "1",
                 "--json")
    assert result.exit_code == 0
    payload = json.loads(result.stdout, parse_float=str)  # the number's text (Decimal's exponent range is too short)
    assert "10^400 steps" in payload["multiplicity_omitted"]
    u = payload["canonical"][0]["mean_energy_approx"]
    import mpmath

    with mpmath.workdps(440):  # e^{-10^400} to 30 digits needs the argument to 430
        expected = 3 * mpmath.mpf(10) ** 400 * mpmath.exp(-mpmath.mpf(10) ** 400)
        assert abs(mpmath.mpf(u) / expected - 1) < 1e-12


def test_reported_levels_are_planned():
    # 10^6 reported levels were computed (and 10^20 ran out of memory) before any plan; 64,000 take about
    # 2 s at 10 particles, linear in the levels (the lowest level was recomputed per level: quadratic).
    for count in ("1000000", "99999999999999999999"):
        result = run("levels", "--preset", "trap", "--particles", "10", "--rule", "BE", "--temperatures", "1",
                     "--report-levels", count, "--max-seconds", "5")
        assert result.exit_code == 2 and result.stderr.count("\n") == 1
        assert "report fewer levels" in result.stderr


def test_few_digits_asked_still_give_every_digit_of_a_double():
    # 6 digits on the exact recursion were rounded in binary to ~20 bits (9999.38671875 for 9999.3874...), and
    # the occupations with the rest above them missed N by 1e-3; the recursion now computes at least 17 digits.
    # Reference: the same system at 30 digits (the recursion itself at higher precision).
    import json

    low = json.loads(run("levels", "--preset", "trap", "--particles", "2000", "--rule", "BE", "--temperatures", "2",
                         "--digits", "6", "--route", "recursion", "--json").stdout)["canonical"][0]
    high = json.loads(run("levels", "--preset", "trap", "--particles", "2000", "--rule", "BE", "--temperatures", "2",
                          "--digits", "30", "--route", "recursion", "--json").stdout)["canonical"][0]
    for key in ("mean_energy_approx", "heat_capacity_approx", "entropy_approx"):
        assert low[key] == pytest.approx(high[key], rel=1e-15)
    assert sum(low["occupation_approx"]) + low["occupation_above_approx"] == pytest.approx(2000, rel=1e-15)


@pytest.mark.parametrize("rule", ["MB", "BE", "FD"])
def test_a_degeneracy_beyond_the_double_range(rule):
    # Levels 0 (one state) and 1 (G = 10^400 - 1 states), three particles at T = 1: the upper level wins, and
    # distinguishable particles are independent with P(level 0) = p = 1/(1 + G/e), so C = 3 p (1 - p) (the
    # two-level system; common practice).  FD and BE agree with MB to leading order: at most one particle
    # can sit in the single lower state, and two or more there weigh p^2 relatively.  The bound on ln Z
    # overflowed a float, and MB's z2/z - (z1/z)^2 lost the variance entirely (C = 0).
    import json

    import mpmath

    g = "9" * 400
    result = run("levels", "--energies", "0,1", "--degeneracies", f"1,{g}", "--particles", "3", "--rule", rule,
                 "--temperatures", "1", "--json")
    assert result.exit_code == 0, result.stderr
    point = json.loads(result.stdout, parse_float=str)["canonical"][0]
    with mpmath.workdps(30):
        p = 1 / (1 + mpmath.mpf(int(g)) / mpmath.e)
        expected = 3 * p * (1 - p)
        assert abs(mpmath.mpf(point["heat_capacity_approx"]) / expected - 1) < 1e-10
