"""The ``levels`` and ``contact`` commands: the JSON contract, tables, plots, errors.

Expected values come from outside the project: brute-force enumeration of
microstates (``itertools``) with direct mpmath Boltzmann sums, ``math.comb``
(stars and bars, common practice) and D. V. Schroeder, *An Introduction to
Thermal Physics* (2000), Figure 2.6 (from memory).
"""

from __future__ import annotations

import itertools
import math
from collections import Counter
from fractions import Fraction

import mpmath
import pytest
from cli_helpers import one_line_error, run, run_json
from reference import level_microstates


def brute_states(energies, degeneracies, n, rule):
    """Total energy of every microstate (MB assignments, BE multisets, FD sets)."""
    states = [e for e, g in zip(energies, degeneracies) for _ in range(g)]
    return [[states[s] for s in combo] for combo in level_microstates(len(states), n, rule)], states


@pytest.mark.parametrize("rule", ["MB", "BE", "FD"])
def test_levels_json_contract_matches_brute_force(rule):
    energies, degs, n, top = [0, 1, 2, 3], [1, 3, 5, 7], 3, 7
    payload = run_json(
        "levels", "--particles", n, "--energies", "0,1,2,3", "--degeneracies", "1,3,5,7",
        "--rule", rule, "--max-energy", top,
    )
    assert set(payload) == {"unit", "multiplicity"}
    assert payload["unit"] == "1"
    micro, _ = brute_states(energies, degs, n, rule)
    counts = Counter(sum(m) for m in micro)
    low = min(counts)
    assert list(payload["multiplicity"]) == [str(e) for e in range(low, top + 1)]
    assert payload["multiplicity"] == {str(e): str(counts.get(e, 0)) for e in range(low, top + 1)}


def test_levels_canonical_entries_match_direct_sums():
    # Direct Boltzmann sums over the brute-force BE microstates (mpmath).
    energies, degs, n = [0, 1, 2, 3], [1, 3, 5, 7], 3
    payload = run_json(
        "levels", "--particles", n, "--energies", "0,1,2,3", "--degeneracies", "1,3,5,7",
        "--rule", "BE", "--max-energy", 9, "--temperatures", "0.5,1,2",
    )
    assert set(payload) == {"unit", "multiplicity", "canonical"}
    assert [entry["temperature"] for entry in payload["canonical"]] == [0.5, 1.0, 2.0]
    micro, states = brute_states(energies, degs, n, "BE")
    level_of = [i for i, g in enumerate(degs) for _ in range(g)]
    combos = list(itertools.combinations_with_replacement(range(len(states)), n))
    for entry in payload["canonical"]:
        for key in ("mean_energy_approx", "heat_capacity_approx"):
            assert isinstance(entry[key], float)
        beta = 1 / mpmath.mpf(entry["temperature"])
        weights = [mpmath.exp(-beta * sum(m)) for m in micro]
        Z = mpmath.fsum(weights)
        U = mpmath.fsum(w * sum(m) for w, m in zip(weights, micro)) / Z
        U2 = mpmath.fsum(w * sum(m) ** 2 for w, m in zip(weights, micro)) / Z
        occ = [mpmath.fsum(w * sum(1 for s in c if level_of[s] == i) for w, c in zip(weights, combos)) / Z for i in range(4)]
        assert entry["mean_energy_approx"] == pytest.approx(float(U), rel=1e-12)
        assert entry["heat_capacity_approx"] == pytest.approx(float((U2 - U * U) * beta**2), rel=1e-12)
        assert entry["occupation_approx"] == pytest.approx([float(o) for o in occ], rel=1e-12)
        assert len(entry["grand_canonical_occupation_approx"]) == 4
        assert sum(entry["grand_canonical_occupation_approx"]) == pytest.approx(n, rel=1e-12)
        assert all(g > 0 for g in entry["grand_canonical_occupation_approx"])


def test_einstein_preset_is_stars_and_bars():
    # C(q + N - 1, q) (common practice).
    payload = run_json("levels", "--preset", "einstein", "--oscillators", 4, "--max-energy", 10)
    assert payload["multiplicity"] == {str(q): str(math.comb(q + 3, q)) for q in range(11)}


def test_trap_preset_reports_the_levels_up_to_the_maximum_energy():
    payload = run_json(
        "levels", "--preset", "trap", "--particles", 20, "--rule", "BE", "--max-energy", 6,
        "--temperatures", "1",
    )
    assert list(payload["multiplicity"]) == [str(e) for e in range(7)]
    (entry,) = payload["canonical"]
    assert len(entry["occupation_approx"]) == 7  # levels 0..6
    # Lower levels hold more bosons on average (common practice).
    assert entry["occupation_approx"][0] > entry["occupation_approx"][1]


def test_rational_energies_are_keyed_in_the_users_unit():
    # Two bosons on levels 0 and 1/2: totals 0, 1/2, 1, one microstate each (by hand).
    payload = run_json("levels", "--particles", 2, "--energies", "0,1/2", "--rule", "BE", "--max-energy", "1")
    assert payload == {"unit": "1/2", "multiplicity": {"0": "1", "1/2": "1", "1": "1"}}


def test_microcanonical_flag_adds_ln_omega_and_temperature():
    payload = run_json("levels", "--preset", "einstein", "--oscillators", 3, "--max-energy", 6, "--microcanonical")
    micro = payload["microcanonical"]
    assert [m["energy"] for m in micro] == [str(q) for q in range(7)]
    # ln C(q + 2, q) (stars and bars) and the central difference 2 / (ln W(q+1) - ln W(q-1)).
    assert micro[3]["ln_multiplicity_approx"] == pytest.approx(math.log(10))
    assert micro[3]["temperature_approx"] == pytest.approx(2 / (math.log(15) - math.log(6)))
    assert micro[0]["temperature_approx"] is None


def test_contact_contract_for_two_einstein_solids():
    # Schroeder (2000), Figure 2.6 (from memory): N_A = 300, N_B = 200, q = 100,
    # most probable q_A = 60; total C(599, 100) by stars and bars.
    payload = run_json("contact", "--oscillators-a", 300, "--oscillators-b", 200, "--quanta", 100)
    assert set(payload) == {"total", "split", "most_probable", "probability", "probability_approx"}
    assert payload["total"] == str(math.comb(599, 100))
    assert payload["most_probable"] == 60
    assert list(payload["split"]) == [str(q) for q in range(101)]
    assert payload["split"]["0"] == str(math.comb(199 + 100, 100))
    for q in (0, 37, 60, 100):
        expected = Fraction(math.comb(q + 299, q) * math.comb(100 - q + 199, 100 - q), math.comb(599, 100))
        assert payload["probability"][str(q)] == str(expected)
    assert sum(Fraction(p) for p in payload["probability"].values()) == 1


def test_contact_of_two_spectra_matches_brute_force():
    # Brute force: convolve the two enumerated energy histograms.
    payload = run_json(
        "contact", "--energies-a", "0,1,2", "--degeneracies-a", "1,2,1", "--particles-a", 2, "--rule-a", "FD",
        "--energies-b", "0,1", "--degeneracies-b", "2,3", "--particles-b", 3, "--rule-b", "BE", "--energy", 4,
    )
    micro_a, _ = brute_states([0, 1, 2], [1, 2, 1], 2, "FD")
    micro_b, _ = brute_states([0, 1], [2, 3], 3, "BE")
    ca, cb = Counter(sum(m) for m in micro_a), Counter(sum(m) for m in micro_b)
    split = {ea: ca[ea] * cb[4 - ea] for ea in range(min(ca), 4 - min(cb) + 1)}
    total = sum(split.values())
    assert payload["split"] == {str(e): str(v) for e, v in split.items()}
    assert payload["total"] == str(total)
    best = max(split.values())
    assert payload["most_probable"] == min(e for e, v in split.items() if v == best)
    assert payload["probability"] == {str(e): str(Fraction(v, total)) for e, v in split.items()}


def test_plots_are_png_files(tmp_path):
    levels_png = tmp_path / "levels.png"
    result = run("levels", "--preset", "trap", "--particles", 10, "--rule", "BE", "--max-energy", 8,
                 "--temperatures", "1,3", "--plot", levels_png)
    assert result.exit_code == 0, result.output
    assert levels_png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    contact_png = tmp_path / "contact.png"
    result = run("contact", "--oscillators-a", 30, "--oscillators-b", 20, "--quanta", 10, "--plot", contact_png)
    assert result.exit_code == 0, result.output
    assert contact_png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_human_output_is_tables_with_the_exact_counts():
    result = run("levels", "--particles", 3, "--energies", "0,1,2,3", "--degeneracies", "1,3,5,7",
                 "--rule", "BE", "--max-energy", 6, "--temperatures", "1")
    assert result.exit_code == 0, result.output
    assert "Multiplicities: 3 particles (BE)" in result.stdout
    assert "168" in result.stdout and "Mean level occupations at T = 1" in result.stdout
    result = run("contact", "--oscillators-a", 3, "--oscillators-b", 3, "--quanta", 6)
    assert result.exit_code == 0, result.output
    assert "most probable split: E_A = 3, probability 50/231" in result.stdout


@pytest.mark.parametrize(
    "args, message",
    [
        (["levels", "--particles", 3, "--energies", "0,x", "--max-energy", 3], "Error: energy 2 ('x') is not a number"),
        (["levels", "--energies", "0,1", "--max-energy", 3], "Error: give the number of particles (--particles N)"),
        (["levels", "--particles", 2, "--preset", "moon"], "Error: unknown preset 'moon'"),
        (["levels", "--particles", 2, "--preset", "trap"], "Error: an infinite ladder of levels needs a maximum energy"),
        (["levels", "--particles", 2, "--energies", "0,1", "--rule", "FD", "--capacity", 2], "Error: FD allows at most one particle per state"),
        (["levels", "--particles", 2, "--energies", "0,1", "--temperatures", "-1"], "Error: temperature must be positive"),
        (["levels", "--particles", 2, "--energies", "0,1", "--degeneracies", "1,2,3"], "Error: give one degeneracy per energy"),
        (["contact", "--oscillators-a", 3, "--quanta", 6], "Error: describe the levels"),
    ],
)
def test_bad_input_exits_2_with_one_line(args, message):
    result = run(*args)
    assert result.exit_code == 2
    lines = result.stderr.strip().splitlines() if result.stderr else result.output.strip().splitlines()
    assert len(lines) == 1
    assert lines[0].startswith(message)


def test_occupation_law_contract_at_temperatures():
    # Bosons in the 3D trap, no --max-energy (canonical results use the whole ladder).  The law must sum
    # to 1 and its mean must equal the canonical occupation of the same level (Borrmann & Franke 1993
    # occupation sums, an independent route); the grand-canonical variance of a single state is
    # <n>(<n> + 1) (Pathria & Beale, ch. 6).
    payload = run_json("levels", "--preset", "trap", "--particles", 40, "--rule", "BE",
                       "--temperatures", "1,2", "--occupation-law", 0)
    assert "multiplicity" not in payload
    assert [e["temperature"] for e in payload["canonical"]] == [1.0, 2.0]
    for entry in payload["canonical"]:
        law = entry["occupation_law_approx"]
        assert list(law) == [str(k) for k in range(41)]
        assert all(isinstance(p, float) and p >= 0 for p in law.values())
        assert math.fsum(law.values()) == pytest.approx(1, abs=1e-14)
        mean = entry["occupation_mean_approx"]
        assert mean == pytest.approx(entry["occupation_approx"][0], rel=1e-12)
        assert mean == pytest.approx(math.fsum(int(k) * p for k, p in law.items()), rel=1e-12)
        var = math.fsum((int(k) - mean) ** 2 * p for k, p in law.items())
        assert entry["occupation_variance_approx"] == pytest.approx(var, rel=1e-9)
        assert entry["occupation_variance_approx"] == pytest.approx(entry["ground_occupation_variance_approx"], rel=1e-9)
        gm = entry["grand_canonical_occupation_mean_approx"]
        assert entry["grand_canonical_occupation_variance_approx"] == pytest.approx(gm * (gm + 1), rel=1e-12)
        assert math.fsum(entry["occupation_approx"]) + entry["occupation_above_approx"] == pytest.approx(40, rel=1e-12)
        assert "occupation_law" not in entry


def test_exact_occupation_law_at_a_rational_factor():
    # Bosons on the 1D oscillator ladder: Z_M = prod_{k<=M} (1 - x^k)^-1 (partitions into at most M
    # parts; Andrews 1976, from memory), P(n_0 = k) = x^{N-k} Z_{N-k} / Z_N for k < N and 1/Z_N at k = N.
    n, x = 6, Fraction(1, 2)
    z = [Fraction(1)]
    for m in range(1, n + 1):
        z.append(z[-1] / (1 - x**m))
    expected = [x ** (n - k) * z[n - k] / z[n] for k in range(n)] + [1 / z[n]]
    payload = run_json("levels", "--preset", "harmonic", "--particles", n, "--rule", "BE", "--factor", "1/2",
                       "--occupation-law", 0)
    (entry,) = payload["canonical"]
    assert entry["factor"] == "1/2"
    assert entry["temperature"] == pytest.approx(1 / math.log(2), rel=1e-15)
    assert entry["occupation_law"] == {str(k): str(p) for k, p in enumerate(expected)}
    mean = sum(k * p for k, p in enumerate(expected))
    assert entry["occupation_mean"] == str(mean)
    assert entry["occupation_variance"] == str(sum((k - mean) ** 2 * p for k, p in enumerate(expected)))
    assert entry["occupation_law_approx"]["6"] == pytest.approx(float(expected[6]), rel=1e-15)


def test_einstein_solid_entries_have_no_grand_canonical_fields():
    payload = run_json("levels", "--preset", "einstein", "--oscillators", 4, "--temperatures", "0.5..2:4")
    assert len(payload["canonical"]) == 4
    for entry in payload["canonical"]:
        assert not any("chemical" in key or "grand" in key for key in entry)
        # MB: U = N / (e^{1/T} - 1) for oscillators from their ground state (Einstein 1907, common practice).
        assert entry["mean_energy_approx"] == pytest.approx(4 / math.expm1(1 / entry["temperature"]), rel=1e-12)


def test_fermions_far_below_the_fermi_temperature_in_json():
    payload = run_json("levels", "--preset", "trap", "--particles", 969, "--rule", "FD", "--temperatures",
                       "0.1,0.3,1", "--digits", 15)
    assert [e["route"] for e in payload["canonical"]] == ["particle-hole"] * 3
    # Closed shells 0..16 (common practice): E_0 = Σ_e e (e+1)(e+2)/2.
    e0 = sum(e * (e + 1) * (e + 2) // 2 for e in range(17))
    low = payload["canonical"][0]
    assert 0 < low["mean_energy_approx"] - e0 < 1
    assert low["heat_capacity_approx"] > 0
    for entry in payload["canonical"]:
        assert entry["ground_energy"] == str(e0)
        assert entry["excitation_energy_approx"] == pytest.approx(entry["mean_energy_approx"] - e0, rel=1e-9)


def test_law_plot_and_thermo_plot_are_png_files(tmp_path):
    png = tmp_path / "law.png"
    result = run("levels", "--preset", "trap", "--particles", 30, "--rule", "BE", "--temperatures", "1..3:3",
                 "--occupation-law", 0, "--plot", png)
    assert result.exit_code == 0, result.output
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert "Occupation law of level 0" in result.stdout and "k_B T in the energy unit" in result.stdout


def test_temperature_ranges_linear_and_log():
    payload = run_json("levels", "--preset", "einstein", "--oscillators", 2, "--temperatures", "1..3")
    assert [e["temperature"] for e in payload["canonical"]] == [1.0, 2.0, 3.0]
    payload = run_json("levels", "--preset", "einstein", "--oscillators", 2, "--temperatures", "1..100:3:log")
    assert [e["temperature"] for e in payload["canonical"]] == pytest.approx([1.0, 10.0, 100.0], rel=1e-12)
    payload = run_json("levels", "--preset", "einstein", "--oscillators", 2, "--temperatures", "0.1..20:40")
    temps = [e["temperature"] for e in payload["canonical"]]
    assert len(temps) == 40 and temps[0] == 0.1 and temps[-1] == 20.0


def test_canonical_run_survives_a_multiplicity_table_beyond_the_limits():
    # Only canonical results asked on a finite spectrum: a refused Omega table is named, not fatal.
    args = ("levels", "--particles", 300, "--energies", "0,1,2,3,4,5,6,7,8,9", "--degeneracies",
            "1,3,5,7,9,11,13,15,17,19", "--rule", "BE", "--temperatures", 2, "--max-seconds", "5")
    payload = run_json(*args)
    assert "multiplicity" not in payload and "--max-seconds" in payload["multiplicity_omitted"]
    assert len(payload["canonical"]) == 1
    result = run(*args[:-4], "--max-energy", 2700, "--max-seconds", "5")
    assert result.exit_code == 2 and "--max-seconds" in result.stderr


@pytest.mark.parametrize(
    "args, message",
    [
        (["--occupation-law", 0], "Error: --occupation-law needs --temperatures or --factor"),
        (["--temperatures", "3..1"], "Error: the range '3..1' runs downwards"),
        (["--temperatures", "1", "--factor", "1/2"], "Error: give --temperatures or --factor, not both"),
        (["--factor", "2"], "Error: the Boltzmann factor"),
        (["--temperatures", "1", "--occupation-law", 5], "Error: level 5 does not exist"),
        (["--temperatures", "1", "--route", "particle-hole"], "Error: the particle-hole route is for fermions"),
    ],
)
def test_thermal_options_fail_with_one_line(args, message):
    result = run("levels", "--particles", 2, "--energies", "0,1", "--rule", "BE", *args)
    assert result.exit_code == 2, result.output
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith(message), lines


# --------------------------------------------------------------------------
# The render module on its own (enumerator.cli.render_levels)
# --------------------------------------------------------------------------
def test_contact_payload_encodes_exact_values():
    from enumerator.algorithms.levels import einstein_solid, thermal_contact
    from enumerator.cli.render_contact import contact_payload

    # C(3 + q - 1, q) oscillator multiplicities, stars and bars (common practice)
    payload = contact_payload(thermal_contact(einstein_solid(3), einstein_solid(3), 6))
    assert payload == {
        "total": "462",
        "split": {"0": "28", "1": "63", "2": "90", "3": "100", "4": "90", "5": "63", "6": "28"},
        "most_probable": 3,
        "probability": {"0": "2/33", "1": "3/22", "2": "15/77", "3": "50/231", "4": "15/77", "5": "3/22", "6": "2/33"},
        "probability_approx": {"0": 2 / 33, "1": 3 / 22, "2": 15 / 77, "3": 50 / 231, "4": 15 / 77, "5": 3 / 22,
                               "6": 2 / 33},
    }


def test_levels_payload_lists_every_energy_as_a_string_and_its_unit():
    from enumerator.algorithms.levels import System, make_spectrum, multiplicities
    from enumerator.cli.render_levels import levels_payload

    # Two bosons on levels 0 and 2: totals 0, 2, 4 once each (by hand)
    system = System.create(make_spectrum("0,2"), 2, "BE")
    payload = levels_payload(system, multiplicities(system, 4))
    assert payload == {"unit": "1", "multiplicity": {"0": "1", "1": "0", "2": "1", "3": "0", "4": "1"}}
    halves = System.create(make_spectrum("0,1/2,1.5", "1,2,1"), 3, "BE")
    assert levels_payload(halves, multiplicities(halves, 2))["unit"] == "1/2"


def test_render_doctests():
    import doctest

    import enumerator.cli.render_levels as module

    assert doctest.testmod(module).failed == 0


def test_canonical_recursion_beyond_the_limits_is_refused_before_it_starts():
    result = run("levels", "--preset", "trap", "--particles", 100000, "--rule", "BE", "--temperatures", 10,
                 "--max-seconds", 60)
    assert result.exit_code == 2
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and "--max-seconds" in lines[0] and "--route float" in lines[0]


def test_a_boltzmann_factor_reaches_the_particle_hole_route():
    # x = 1/1000 is k_B T = 1/ln 1000 ~ 0.145: far below the Fermi temperature of 969 fermions.
    payload = run_json("levels", "--preset", "trap", "--particles", 969, "--rule", "FD", "--factor", "1/1000",
                       "--digits", 15)
    (entry,) = payload["canonical"]
    assert entry["route"] == "particle-hole" and entry["factor"] == "1/1000"
    assert entry["temperature"] == pytest.approx(1 / math.log(1000), rel=1e-15)


def test_temperatures_beyond_the_float_range_are_refused_in_one_line():
    # the *_approx fields are doubles, so k_B T must stay inside their range (common practice: IEEE 754)
    for text in ("1e400", "1e-400"):
        message = one_line_error(run("levels", "--preset", "two-level", "--particles", "2", "--temperatures", text))
        assert "outside 1e-300..1e300" in message


def test_sizes_that_would_run_away_are_refused_in_one_line():
    # each would otherwise run for minutes or exhaust memory before printing anything
    base = ["levels", "--particles", "3", "--temperatures", "1"]
    assert "beyond 64" in one_line_error(run(*base, "--preset", "trap", "--dimension", "99999"))
    assert "beyond 10,000" in one_line_error(run(*base, "--preset", "harmonic", "--digits", "99999999"))
    assert "--max-memory" in one_line_error(run(*base, "--preset", "harmonic", "--rule", "BE",
                                                "--occupation-law", "99999999999"))
