"""Canonical fermions by the particle–hole expansion (enumerator.algorithms.levels.particle_hole).

References beside each check: brute-force enumeration of every FD microstate
(written here), the Borrmann–Franke recursion of ``ensembles.canonical`` at
high precision (an independent route: alternating sums in fixed point), and
the closed-shell ground state of the 3D trap (shell ``e`` holds
``(e + 1)(e + 2)/2`` states, so 969 = Σ_{e<=16} fills shells 0..16; from
memory, stars and bars).
"""

from __future__ import annotations

import itertools
from fractions import Fraction

import mpmath
import pytest
from cli_helpers import one_line_error, run

from enumerator.algorithms.levels import make_system
from enumerator.algorithms.levels.ensembles import canonical
from enumerator.algorithms.levels.occupation import occupation_law
from enumerator.algorithms.levels.particle_hole import fermion_canonical, fermion_cost
from enumerator.algorithms.levels.spectra import System, harmonic_trap, make_spectrum
from enumerator.core.errors import InvalidParameters, TooLarge
from enumerator.core.limits import limited


def brute_force(energies, degeneracies, n, temperature):
    """Every FD microstate: each N-subset of the single-particle states."""
    with mpmath.workdps(60):
        states = [(i, mpmath.mpf(Fraction(e).numerator) / Fraction(e).denominator)
                  for i, (e, g) in enumerate(zip(energies, degeneracies)) for _ in range(g)]
        T = mpmath.mpf(Fraction(temperature).numerator) / Fraction(temperature).denominator
        Z = M1 = M2 = mpmath.mpf(0)
        occ = [mpmath.mpf(0)] * len(energies)
        for subset in itertools.combinations(range(len(states)), n):
            E = sum((states[s][1] for s in subset), mpmath.mpf(0))
            w = mpmath.exp(-E / T)
            Z += w
            M1 += w * E
            M2 += w * E * E
            for s in subset:
                occ[states[s][0]] += w
        U = M1 / Z
        C = (M2 / Z - U * U) / T**2
        return {"lnZ": mpmath.log(Z), "U": U, "C": C, "S": mpmath.log(Z) + U / T, "occ": [o / Z for o in occ]}


def total(values, extra=0):
    """Sum at 40 digits (the default 15 would round the 20-digit values)."""
    with mpmath.workdps(40):
        return mpmath.fsum(values) + extra


def close(a, b, tol):
    return abs(a - b) <= tol * max(1, abs(b))


@pytest.mark.parametrize(
    "energies, degeneracies, n, temperature",
    [
        (["0", "1", "2", "3"], [2, 2, 2, 2], 4, "1/2"),        # 4 fermions in 8 states, closed shell
        (["0", "1", "2", "3"], [2, 2, 2, 2], 3, "1"),          # partly filled Fermi shell
        (["0", "1/3", "1", "5/2"], [1, 3, 2, 2], 4, "3/10"),   # uneven gaps, partial shell of 3
        (["2", "0", "1", "1"], [1, 2, 2, 1], 3, "2"),          # unsorted, a repeated energy
        (["0", "1", "2"], [2, 2, 2], 6, "1"),                  # every state full
    ],
)
def test_against_brute_force(energies, degeneracies, n, temperature):
    spectrum = make_spectrum(energies, degeneracies)
    (p,) = fermion_canonical(spectrum, n, [temperature], digits=20)
    ref = brute_force(energies, degeneracies, n, temperature)  # reference: enumeration above
    assert close(p.ln_partition_function_approx, ref["lnZ"], 1e-19)
    assert close(p.mean_energy_approx, ref["U"], 1e-19)
    assert abs(p.heat_capacity_approx - ref["C"]) <= 1e-19 * max(1, ref["C"])
    assert close(p.entropy_approx, ref["S"], 1e-19)
    for got, want in zip(p.occupations_approx, ref["occ"]):
        assert abs(got - want) <= 1e-19
    assert abs(total(p.occupations_approx) - n) <= 1e-18


@pytest.mark.parametrize(
    "spectrum, n, temperature",
    [
        (harmonic_trap(), 4, "1/2"),
        (harmonic_trap(), 20, "1"),        # closed shell 0..3
        (harmonic_trap(), 35, "7/10"),     # closed shell 0..4
        (harmonic_trap(), 13, "3"),        # partly filled shell, high temperature
        (harmonic_trap(), 10, "20"),       # far above the Fermi temperature
        (harmonic_trap(dimension=1), 10, "2"),
        (make_spectrum("0,1/3,1,5/2,4", "2,1,3,2,2"), 5, "4/5"),
    ],
)
def test_against_borrmann_franke(spectrum, n, temperature):
    """Reference: the plain recursion (ensembles.canonical, rule FD) at 30 digits."""
    (p,) = fermion_canonical(spectrum, n, [temperature], digits=20, levels=5)
    (q,) = canonical(System.create(spectrum, n, "FD"), [temperature], digits=30, levels=5, grand=False)
    assert close(p.ln_partition_function_approx, q.ln_partition_function_approx, 1e-19)
    assert close(p.mean_energy_approx, q.mean_energy_approx, 1e-19)
    assert close(p.heat_capacity_approx, q.heat_capacity_approx, 1e-19)
    assert close(p.entropy_approx, q.entropy_approx, 1e-19)
    assert close(p.free_energy_approx, q.free_energy_approx, 1e-19)
    for got, want in zip(p.occupations_approx, q.occupations_approx):
        assert abs(got - want) <= 1e-19
    # The stated bounds are honest: the difference lies within them (plus the reference's own 1e-30).
    assert abs(p.ln_partition_function_approx - q.ln_partition_function_approx) <= (
        p.errors["ln_partition_function"] + 1e-28 * abs(q.ln_partition_function_approx)
    )


@pytest.mark.parametrize("n, temperature, levels", [(20, "1", 2), (20, "1", 6), (35, "7/10", 9), (13, "3", 3)])
def test_occupation_above_the_listed_rungs(n, temperature, levels):
    """The particles beyond the listed rungs (below, at or above the Fermi shell) against the plain
    recursion (ensembles.canonical, route "recursion", 30 digits): an independent route."""
    (p,) = fermion_canonical(harmonic_trap(), n, [temperature], digits=20, levels=levels)
    (q,) = canonical(System.create(harmonic_trap(), n, "FD"), [temperature], digits=30, levels=levels, grand=False,
                     route="recursion")
    assert abs(p.occupation_above_approx - q.occupation_above_approx) <= 1e-19 * n
    assert abs(p.occupation_above_approx - q.occupation_above_approx) <= p.errors["occupations"] + 1e-28 * n


@pytest.mark.parametrize("energies, degeneracies, n, levels", [("0,1,2,3,4", "2,2,2,2,2", 4, 2),
                                                            ("2,0,1,1,3", "1,2,2,1,3", 3, 3)])
def test_occupation_above_the_listed_levels_of_a_finite_spectrum(energies, degeneracies, n, levels):
    """Reference: brute-force enumeration of every microstate (above): N less the listed occupations."""
    (p,) = fermion_canonical(make_spectrum(energies, degeneracies), n, ["1"], digits=20, levels=levels)
    ref = brute_force(energies.split(","), [int(g) for g in degeneracies.split(",")], n, "1")
    assert abs(p.occupation_above_approx - total(ref["occ"][levels:])) <= 1e-19


def test_closed_shell_969_low_temperature():
    """969 fermions fill the 3D-trap shells 0..16 (from memory: Σ (e+1)(e+2)/2 = C(19, 3))."""
    (p,) = fermion_canonical(harmonic_trap(), 969, ["1/100"], digits=15)
    # Ground energy Σ_{e<=16} e (e+1)(e+2)/2 = 3 C(19, 4) = 11628 (hockey stick; computed here).
    assert p.ground_energy == sum(e * (e + 1) * (e + 2) // 2 for e in range(17)) == 11628
    # T -> 0: the first excitation costs one quantum, U - E0 ~ 153 * 171 * e^{-100}.
    assert 0 < p.excitation_energy_approx < 1e-38
    for e, occ in enumerate(p.occupations_approx):
        full = (e + 1) * (e + 2) // 2 if e <= 16 else 0
        assert abs(occ - full) < 1e-38
    assert abs(total(p.occupations_approx, p.occupation_above_approx) - 969) < 1e-12


def test_969_at_the_issue_temperatures():
    """The issue's workload: T = 0.1, 0.3, 1 (timings belong in scripts/bench.py; here the sum rules)."""
    points = fermion_canonical(harmonic_trap(), 969, ["0.1", "0.3", "1"], digits=15)
    previous = mpmath.mpf(0)
    for p in points:
        assert abs(total(p.occupations_approx, p.occupation_above_approx) - 969) < 1e-12          # particle number (exact sum rule)
        assert p.excitation_energy_approx > previous   # U rises with T
        previous = p.excitation_energy_approx
        assert p.heat_capacity_approx > 0 and p.entropy_approx > 0
        for key, bound in p.errors.items():
            assert bound >= 0, key
        # F = U - T S (thermodynamic identity, from memory)
        T = mpmath.mpf(p.temperature.numerator) / p.temperature.denominator
        assert close(p.free_energy_approx, p.mean_energy_approx - T * p.entropy_approx, 1e-13)


def test_system_input_and_refusals():
    system = System.create(harmonic_trap(), 4, "FD")
    (a,) = fermion_canonical(system, temperatures=["1/2"], digits=10)
    (b,) = fermion_canonical(harmonic_trap(), 4, ["1/2"], digits=10)
    assert a.ln_partition_function_approx == b.ln_partition_function_approx
    with pytest.raises(InvalidParameters):
        fermion_canonical(make_spectrum("0,1", "1,1"), 3, ["1"])
    with pytest.raises(InvalidParameters):
        fermion_canonical(harmonic_trap(), 4, ["0"])
    with pytest.raises(InvalidParameters):
        fermion_canonical(System.create(harmonic_trap(), 4, "BE"), temperatures=["1"])
    (empty,) = fermion_canonical(harmonic_trap(), 0, ["1"])
    assert empty.ln_partition_function_approx == 0


def test_cost_follows_the_digits_and_the_temperature():
    """The estimate counts the work at the working precision: more digits or a higher T cost more."""
    trap = harmonic_trap()
    by_digits = [fermion_cost(trap, 969, ["0.3"], d) for d in (15, 100, 300, 600)]
    for a, b in zip(by_digits, by_digits[1:]):
        assert a.seconds < b.seconds and a.memory < b.memory
    by_temperature = [fermion_cost(trap, 969, [t], 100) for t in ("0.1", "0.3", "1", "3")]
    for a, b in zip(by_temperature, by_temperature[1:]):
        assert a.seconds < b.seconds
    # several temperatures: the seconds add up
    both = fermion_cost(trap, 969, ["0.3", "1"], 100)
    assert both.seconds == pytest.approx(by_temperature[1].seconds + by_temperature[2].seconds)
    assert fermion_cost(trap, 0, ["1"]).seconds == 0


def test_sums_beyond_the_limits_are_refused_before_they_start():
    cost = fermion_cost(harmonic_trap(), 969, ["1"], 600)
    with limited(seconds=cost.seconds / 2):
        with pytest.raises(TooLarge, match="969 fermions at T = 1 to 600 digits.*lower digits="):
            fermion_canonical(harmonic_trap(), 969, ["1"], digits=600)
    # the command line: one line, exit 2, naming the options to change (it would take ~30 s CPU)
    result = run("levels", "--preset", "trap", "--particles", 969, "--rule", "FD", "--temperatures", 1,
                 "--digits", 600, "--max-seconds", 10)
    line = one_line_error(result)
    assert "--max-seconds" in line and "--digits" in line


@pytest.mark.parametrize("n, temperature, level", [(20, "0.05", 3), (35, "0.03", 6), (84, "0.1", 7), (220, "0.3", 9)])
def test_law_far_below_the_fermi_temperature_keeps_its_smallest_probabilities(n, temperature, level):
    """Every P(n_l = k), down to 1e-1042, against the plain recursion (occupation_law, route
    "recursion": alternating sums in fixed point, relative accuracy for each k; an independent
    route).  Before, the particle-hole law cut those below 10^-digits to 0."""
    system = make_system(n, preset="trap", rule="FD")
    (law,) = occupation_law(system, level, [temperature], digits=16, grand=False)
    (ref,) = occupation_law(system, level, [temperature], digits=20, grand=False, route="recursion")
    (p,) = fermion_canonical(system, temperatures=[temperature], digits=16, law_level=level, levels=1)
    # "auto" took the particle-hole route (the same numbers, rounded to 16 digits)
    assert all(abs(x - y) <= 1e-15 * y for x, y in zip(law.law, p.law))
    assert 0 < min(ref.law) < 1e-60
    for got, want in zip(law.law, ref.law):
        assert abs(got - want) <= 1e-14 * want


@pytest.mark.parametrize("temperature", ["0.000001", "1e-20"])
def test_a_closed_shell_far_below_the_gap_keeps_relative_digits(temperature):
    # 20 fermions fill the trap's shells 0..3 (1 + 3 + 6 + 10 states): E0 = 45.  The first excitations
    # lift one of the 10 particles of shell 3 to one of the 15 states of shell 4 (gap 1): 150 of them,
    # so Z e^{βE0} = 1 + 150 e^{-β} + O(e^{-2β}), U - E0 = 150 e^{-β}, C = 150 β² e^{-β} and
    # S = 150 (1 + β) e^{-β}, each to relative order e^{-β} (the low-temperature expansion; common
    # practice).  At these temperatures e^{-β} is far below 2^-prec: the values must stay relative.
    system = make_system(20, preset="trap", rule="FD")
    (point,) = canonical(system, [temperature], digits=30, levels=2)
    with mpmath.workdps(40):
        beta = 1 / mpmath.mpf(temperature)
        lead = 150 * mpmath.exp(-beta)
        assert abs(point.excitation_energy_approx / lead - 1) < 1e-28
        assert abs(point.heat_capacity_approx / (beta**2 * lead) - 1) < 1e-28
        assert abs(point.entropy_approx / ((1 + beta) * lead) - 1) < 1e-28
        assert abs(point.ln_partition_function_approx + 45 * beta) < 1e-28 * 45 * beta


def test_the_particle_hole_point_states_its_proved_bounds():
    # 40 trap fermions at T = 1, 20 digits, by the particle-hole route against the Borrmann-Franke recursion at 40
    # digits (the reference): every stated bound holds (ln Z absolute, U, C, S relative, occupations absolute).
    system = make_system(40, preset="trap", rule="FD")
    (a,) = canonical(system, ["1"], digits=20, levels=4, route="particle-hole", grand=False)
    (b,) = canonical(system, ["1"], digits=40, levels=4, route="recursion", grand=False)
    bounds = a.error_bounds
    assert a.route == "particle-hole" and set(bounds) >= {"ln_partition_function", "mean_energy", "heat_capacity",
                                                           "entropy", "occupations_absolute"}
    assert abs(a.ln_partition_function_approx - b.ln_partition_function_approx) <= bounds["ln_partition_function"]
    assert abs(a.mean_energy_approx / b.mean_energy_approx - 1) <= bounds["mean_energy"]
    assert abs(a.heat_capacity_approx / b.heat_capacity_approx - 1) <= bounds["heat_capacity"]
    assert abs(a.entropy_approx / b.entropy_approx - 1) <= bounds["entropy"]
    for x, y in zip(a.occupations_approx, b.occupations_approx):
        assert abs(x - y) <= bounds["occupations_absolute"]
    assert max(bounds.values()) < 1e-18  # 20 digits: the rounding of ln Z (about -100) is 1.7e-19
    payload = run("levels", "--preset", "trap", "--particles", "40", "--rule", "FD", "--temperatures", "1",
                  "--route", "particle-hole", "--json")
    assert "error_bound_approx" in payload.stdout
