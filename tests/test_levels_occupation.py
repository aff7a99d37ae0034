"""The canonical law of one level's occupation, fluctuations and the canonical routes.

Expected values come from outside the library: brute-force enumeration of
every microstate (``itertools``, Boltzmann weights summed in mpmath or exact
fractions), the closed form of the canonical partition function of bosons in
a 1D harmonic trap, ``Z_N = ∏_{k<=N} (1 - x^k)^{-1}`` (partitions into at most
``N`` parts; G. E. Andrews, *The Theory of Partitions*, 1976, eq. (1.2.1),
from memory), the closed-shell ground state of fermions in the 3D trap
(shell ``e`` holds ``(e+1)(e+2)/2`` states, common practice), and the
condensate-fluctuation limit law of the 1D trap,
``⟨δn_0²⟩ -> (π²/6) (k_B T/ħω)²`` (S. Grossmann and M. Holthaus, Opt. Express
1, 262 (1997); C. Weiss and M. Wilkens, Opt. Express 1, 272 (1997); from
memory).
"""

from __future__ import annotations

import math
from fractions import Fraction

import mpmath
import pytest
from reference import level_microstates

from enumerator.algorithms.levels import (
    canonical,
    make_system,
    occupation_law,
    occupation_law_exact,
    parse_temperatures,
)
from enumerator.algorithms.levels.spectra import System, make_spectrum
from enumerator.core.errors import InvalidParameters, TooLarge
from enumerator.core.limits import limited


def brute_law(energies, degeneracies, n, rule, capacity, level, weight):
    """P(n_level = k) by enumerating every microstate; *weight(E)* is the Boltzmann weight of total energy E."""
    states = [(i, e) for i, (e, g) in enumerate(zip(energies, degeneracies)) for _ in range(g)]
    totals = {}
    for combo in level_microstates(len(states), n, rule, capacity):
        k = sum(1 for s in combo if states[s][0] == level)
        w = weight(sum(states[s][1] for s in combo))
        totals[k] = totals.get(k, 0) + w
    z = sum(totals.values())
    return {k: v / z for k, v in totals.items()}


CASES = [
    (["0", "1", "2"], [1, 2, 2], 3, "BE", None, 0),
    (["0", "1", "2"], [1, 2, 2], 3, "BE", None, 1),
    (["0", "1", "3"], [2, 2, 3], 3, "FD", None, 1),
    (["0", "1", "3"], [2, 2, 3], 4, "FD", None, 0),
    (["0", "2"], [2, 1], 3, "MB", None, 0),
    (["0", "1", "2"], [2, 1, 2], 4, "BE", 2, 0),
    (["-1", "1/2", "2"], [1, 2, 1], 3, "BE", None, 2),
]


@pytest.mark.parametrize("energies, degeneracies, n, rule, capacity, level", CASES)
def test_law_at_a_temperature_matches_brute_force(energies, degeneracies, n, rule, capacity, level):
    # Brute-force enumeration of every microstate, Boltzmann sums in mpmath (40 digits).
    system = System.create(make_spectrum(energies, degeneracies), n, rule, capacity)
    (law,) = occupation_law(system, level, ["3/4"], digits=20, grand=False)
    with mpmath.workdps(40):
        es = [mpmath.mpf(Fraction(e).numerator) / Fraction(e).denominator for e in energies]
        expected = brute_law(es, degeneracies, n, rule, capacity, level, lambda E: mpmath.exp(-E / mpmath.mpf(0.75)))
        assert len(law.law) - 1 == max(k for k in range(n + 1) if (rule != "FD" or k <= degeneracies[level])
                                       and (capacity is None or k <= capacity * degeneracies[level]))
        for k, p in enumerate(law.law):
            assert abs(p - expected.get(k, 0)) <= 1e-18 * max(expected.get(k, 0), 1e-300) or p == expected.get(k, 0)
        mean = mpmath.fsum(k * p for k, p in expected.items())
        var = mpmath.fsum((k - mean) ** 2 * p for k, p in expected.items())
        assert abs(law.mean - mean) <= 1e-18 * mean
        assert abs(law.variance - var) <= 1e-18 * var


@pytest.mark.parametrize("energies, degeneracies, n, rule, capacity, level", CASES)
def test_exact_law_at_a_rational_factor_matches_brute_force(energies, degeneracies, n, rule, capacity, level):
    # Brute force in exact fractions: a state of energy e (in the spectrum's unit) weighs x^e.
    system = System.create(make_spectrum(energies, degeneracies), n, rule, capacity)
    unit = system.spectrum.unit
    x = Fraction(2, 5)
    law = occupation_law_exact(system, level, x)
    expected = brute_law([Fraction(e) / unit for e in energies], degeneracies, n, rule, capacity, level,
                         lambda E: x ** int(E))
    assert law.exact and law.factor == x
    assert {k: p for k, p in enumerate(law.law) if p} == expected
    assert sum(law.law) == 1
    mean = sum(k * p for k, p in expected.items())
    assert law.mean == mean
    assert law.variance == sum((k - mean) ** 2 * p for k, p in expected.items())


def closed_form_1d(n, x):
    """Z_0..Z_n of bosons on the 1D oscillator ladder, Z_M = ∏_{k<=M} (1 - x^k)^{-1} (Andrews (1.2.1), from memory)."""
    zs = [x * 0 + 1]
    for m in range(1, n + 1):
        zs.append(zs[-1] / (1 - x**m))
    return zs


def test_ground_state_law_of_1d_trap_bosons_against_the_closed_form_exactly():
    # P(n_0 >= k) = Z_{N-k}/Z_N (ground energy 0), so P(n_0 = k) = x^{N-k} Z_{N-k}/Z_N for k < N, 1/Z_N at k = N.
    n, x = 25, Fraction(1, 3)
    zs = closed_form_1d(n, x)
    law = occupation_law_exact(make_system(n, preset="harmonic", rule="BE"), 0, x)
    expected = [x ** (n - k) * zs[n - k] / zs[n] for k in range(n)] + [1 / zs[n]]
    assert list(law.law) == expected


def test_ground_state_occupation_of_1d_trap_bosons_against_the_closed_form():
    # <n_0> = Σ_{k>=1} Z_{N-k}/Z_N and the law above, at k_B T = 2 ħω (x = e^{-1/2}), 1e-12 relative.
    n = 60
    system = make_system(n, preset="harmonic", rule="BE")
    with mpmath.workdps(40):
        x = mpmath.exp(-mpmath.mpf(1) / 2)
        zs = closed_form_1d(n, x)
        mean = mpmath.fsum(zs[n - k] for k in range(1, n + 1)) / zs[n]
        expected = [x ** (n - k) * zs[n - k] / zs[n] for k in range(n)] + [1 / zs[n]]
    (point,) = canonical(system, ["2"], digits=20, levels=1)
    assert abs(point.occupations_approx[0] / mean - 1) < 1e-15
    (law,) = occupation_law(system, 0, ["2"], digits=16, grand=False)
    assert all(abs(p / q - 1) < 1e-12 for p, q in zip(law.law, expected))
    assert abs(law.mean / mean - 1) < 1e-12


@pytest.mark.parametrize(
    "preset, n, rule, capacity, level, temperature",
    [("trap", 200, "BE", None, 0, "3"), ("trap", 200, "BE", None, 2, "3"), ("trap", 20, "FD", None, 2, "1"),
     ("trap", 30, "BE", 2, 1, "1/2"), ("harmonic", 40, "MB", None, 1, "2")],
)
def test_law_sums_to_one_and_its_mean_and_variance_match_the_canonical_ones(preset, n, rule, capacity, level,
                                                                             temperature):
    # Two independent routes: the law (Z without the level) and the occupation sums of the recursion
    # (Borrmann & Franke 1993), plus, for level 0, the variance from the ratios Z_{N-m}/Z_N.
    system = make_system(n, preset=preset, rule=rule, capacity=capacity)
    (law,) = occupation_law(system, level, [temperature], digits=20)
    (point,) = canonical(system, [temperature], digits=20, levels=level + 1, route="recursion")
    with mpmath.workdps(30):
        assert abs(mpmath.fsum(law.law) - 1) < 1e-18
    assert abs(law.mean - point.occupations_approx[level]) < 1e-15 * max(1, law.mean)
    if level == 0:
        assert abs(law.variance - point.ground_occupation_variance_approx) < 1e-12 * law.variance


def test_closed_shell_fermions_freeze_into_their_ground_state():
    # 20 fermions in the 3D trap fill shells 0..3 (1 + 3 + 6 + 10 states; common practice): E_0 = 3 + 12 + 30.
    system = make_system(20, preset="trap", rule="FD")
    (law,) = occupation_law(system, 3, ["1/20"], digits=16, grand=False)
    assert len(law.law) == 11  # 0..10 fermions in the 10 states of shell 3
    assert law.law[10] > 1 - 1e-6
    (point,) = canonical(system, ["1/20"], digits=20, levels=4)
    assert abs(point.mean_energy_approx - 45) < 1e-5
    assert [round(float(x), 6) for x in point.occupations_approx] == [1, 3, 6, 10]


def test_condensate_fluctuations_of_the_1d_trap_approach_the_limit_law():
    # ⟨δn_0²⟩ -> (π²/6) (T/ħω)² below the crossover (Grossmann & Holthaus 1997; Weiss & Wilkens 1997,
    # from memory); the approach is ~ 1/T, so a 5% band at T = 10.  The grand-canonical variance
    # ⟨n_0⟩(⟨n_0⟩ + 1) is ~ N² instead (the "grand-canonical catastrophe", same sources).
    system = make_system(1000, preset="harmonic", rule="BE")
    (law,) = occupation_law(system, 0, ["10"], digits=16)
    limit = mpmath.pi**2 / 6 * 100
    assert abs(law.variance / limit - 1) < 0.05
    gm = law.grand_canonical_mean_approx
    assert abs(law.grand_canonical_variance_approx - gm * (gm + 1)) < 1e-10 * gm * gm
    assert law.grand_canonical_variance_approx > 1000 * law.variance


def test_exact_law_is_refused_before_it_would_exceed_the_limits():
    # The rational recursion on a ladder grows like N^2 digits (common practice): refused up front.
    system = make_system(3000, preset="trap", rule="BE")
    with limited(seconds=5), pytest.raises(TooLarge, match="exact occupation law"):
        occupation_law_exact(system, 0, "1/2")


def test_bad_levels_and_factors_are_errors_that_say_what_to_change():
    system = make_system(3, energies="0,1", rule="BE")
    with pytest.raises(InvalidParameters, match="levels 0..1"):
        occupation_law(system, 2, ["1"])
    with pytest.raises(InvalidParameters, match="between 0 and 1"):
        occupation_law_exact(system, 0, "3/2")


def test_particle_hole_route_agrees_with_the_recursion_at_high_precision():
    # Two independent methods (alternating recursion in fixed point; positive particle-hole sums in balls).
    system = make_system(35, preset="trap", rule="FD")
    for temperature in ("1/2", "2"):
        (a,) = canonical(system, [temperature], digits=30, levels=6, route="recursion", grand=False)
        (b,) = canonical(system, [temperature], digits=30, levels=6, route="particle-hole", grand=False)
        assert b.route == "particle-hole" and a.route == "recursion"
        for x, y in [(a.ln_partition_function_approx, b.ln_partition_function_approx),
                     (a.mean_energy_approx, b.mean_energy_approx), (a.heat_capacity_approx, b.heat_capacity_approx),
                     (a.entropy_approx, b.entropy_approx)]:
            assert abs(x - y) <= mpmath.mpf(10) ** -27 * abs(x)
        assert all(abs(x - y) < mpmath.mpf(10) ** -27 * 100 for x, y in zip(a.occupations_approx, b.occupations_approx))
        assert abs(a.occupation_above_approx - b.occupation_above_approx) < mpmath.mpf(10) ** -25
        assert abs(a.ground_occupation_variance_approx - b.ground_occupation_variance_approx) < mpmath.mpf(10) ** -25
        assert a.ground_energy == b.ground_energy == 3 + 2 * 6 + 3 * 10 + 4 * 15  # 35 = 1+3+6+10+15: shells 0..4 full
        assert abs(a.excitation_energy_approx - b.excitation_energy_approx) <= mpmath.mpf(10) ** -27 * b.excitation_energy_approx


def test_auto_route_takes_particle_hole_far_below_the_fermi_temperature():
    # 969 fermions fill shells 0..16 of the 3D trap (Σ_{e<=16} (e+1)(e+2)/2 = 969, common practice).
    system = make_system(969, preset="trap", rule="FD")
    (p,) = canonical(system, ["1/10"], digits=15, levels=18)
    assert p.route == "particle-hole"
    # Shell e is full up to holes that cost at least 17 - e quanta: at most g_e g_17 e^{-(17-e)/T} missing.
    for e, x in enumerate(p.occupations_approx[:17]):
        g = (e + 1) * (e + 2) // 2
        assert 0 <= g - x <= g * 171 * math.exp(-(17 - e) * 10)
    assert abs(sum(p.occupations_approx) + p.occupation_above_approx - 969) < 1e-9


def test_occupations_and_what_lies_above_sum_to_n():
    system = make_system(100, preset="trap", rule="BE")
    (p,) = canonical(system, ["3"], digits=20, levels=4)
    with mpmath.workdps(30):
        assert abs(mpmath.fsum(p.occupations_approx) + p.occupation_above_approx - 100) < 1e-15
    assert p.occupation_above_approx > 1


def test_einstein_solid_has_no_grand_canonical_fields():
    (p,) = canonical(make_system(oscillators=5), ["1"], digits=15, levels=3)
    assert p.chemical_potential_approx is None and p.grand_canonical_occupations_approx is None


def test_grand_canonical_heat_capacity_of_mb_equals_the_canonical_one():
    # Distinguishable particles: the grand-canonical gas at fixed mean N is N independent particles,
    # C = N β² Var(ε) either way (common practice).
    system = make_system(7, energies="0,1,3", degeneracies="1,2,1", rule="MB")
    (p,) = canonical(system, ["1/2"], digits=20)
    assert abs(p.grand_canonical_heat_capacity_approx - p.heat_capacity_approx) < 1e-15 * p.heat_capacity_approx
    assert abs(p.grand_canonical_mean_energy_approx - p.mean_energy_approx) < 1e-15 * p.mean_energy_approx


def test_temperature_lists_and_ranges():
    assert parse_temperatures("1..4") == [1, 2, 3, 4]
    linear = parse_temperatures("0.1..20:40")
    assert len(linear) == 40 and linear[0] == Fraction(1, 10) and linear[-1] == 20
    assert len(set(b - a for a, b in zip(linear, linear[1:]))) == 1
    geometric = parse_temperatures("0.01..100:5:log")
    assert [float(t) for t in geometric] == pytest.approx([0.01, 0.1, 1, 10, 100], rel=1e-12)
    assert parse_temperatures("1/2, 2..3") == [Fraction(1, 2), 2, 3]
    for bad in ("1..", "3..1", "1..2:0", "1..2:3:ln", "0..2", "a"):
        with pytest.raises(InvalidParameters):
            parse_temperatures(bad)
    assert math.isclose(float(parse_temperatures("1..1:1")[0]), 1)


@pytest.mark.parametrize("level", [1, 3, 4])
def test_particle_hole_law_agrees_with_the_recursion_law(level):
    # 34 fermions in the 3D trap: shells 0..3 hold 20, shell 4 holds the other 14 of its 15 states
    # (common practice), so levels 1, 3, 4 are below, below and at the Fermi shell; level 5 is above.
    # Two independent routes (positive particle-hole sums in balls; alternating recursion in fixed point).
    from enumerator.algorithms.levels.occupation import _law_at
    from enumerator.algorithms.levels.particle_hole import fermion_canonical

    system = make_system(34, preset="trap", rule="FD")
    for lev in (level, 5):
        (p,) = fermion_canonical(system, temperatures=["1/2"], digits=25, law_level=lev, levels=1)
        law, _bits = _law_at(system, lev, Fraction(1, 2), 25)
        assert len(p.law) == len(law)
        assert max(abs(a - b) for a, b in zip(law, p.law)) < mpmath.mpf(10) ** -24
        assert p.errors["law"] < mpmath.mpf(10) ** -25


def test_fermion_law_far_below_the_fermi_temperature_is_quick_and_normalised():
    # 969 fermions fill shells 0..16 (common practice); at T = 0.3 the recursion would need ~56000 bits.
    (law,) = occupation_law(make_system(969, preset="trap", rule="FD"), 16, ["0.3"], digits=15)
    assert len(law.law) == 154  # 0..153 fermions in the 153 states of shell 16
    with mpmath.workdps(30):
        assert abs(mpmath.fsum(law.law) - 1) < 1e-14
    (point,) = canonical(make_system(969, preset="trap", rule="FD"), ["0.3"], digits=15, levels=17)
    assert abs(law.mean - point.occupations_approx[16]) < 1e-12


def test_float_route_for_bosons_agrees_with_the_exact_recursion_within_its_bound():
    # The exact fixed-point recursion (an independent arithmetic) at 20 digits is the reference.
    system = make_system(800, preset="trap", rule="BE")
    for temperature in ("3", "12"):
        (a,) = canonical(system, [temperature], digits=20, levels=3, route="float", grand=False)
        (b,) = canonical(system, [temperature], digits=20, levels=3, grand=False)
        bounds = a.error_bounds
        assert a.route == "float" and bounds["heat_capacity"] < 1e-5
        assert abs(a.ln_partition_function_approx - b.ln_partition_function_approx) <= bounds["ln_partition_function"]
        assert abs(a.mean_energy_approx / b.mean_energy_approx - 1) <= bounds["mean_energy"]
        assert abs(a.heat_capacity_approx / b.heat_capacity_approx - 1) <= bounds["heat_capacity"]
        for x, y in zip(a.occupations_approx, b.occupations_approx):
            assert abs(x / y - 1) <= bounds["occupations"]
        # The bounds are worst cases; the actual agreement is far closer (measured, not promised).
        assert abs(a.heat_capacity_approx / b.heat_capacity_approx - 1) < 1e-9
    with pytest.raises(InvalidParameters, match="float route is for bosons"):
        canonical(make_system(10, preset="trap", rule="FD"), ["1"], route="float")


def test_grand_canonical_far_above_the_spacing_is_the_classical_gas():
    # k_B T = 10^4 spacings: N = Σ g/(e^{β(ε-μ)} - 1) ≈ e^{βμ} Z_1 with Z_1 = (1 - e^{-β})^-3 (the classical
    # limit, Pathria & Beale ch. 7, common practice); the next correction is e^{2βμ} Z_1(2β)/2, ~1e-11 here.
    from enumerator.algorithms.levels import grand_canonical

    mu, _occ = grand_canonical(make_system(50, preset="trap", rule="BE"), 10_000, digits=20, levels=1)
    with mpmath.workdps(30):
        z1 = (1 - mpmath.exp(-mpmath.mpf(1) / 10_000)) ** -3
        classical = 10_000 * mpmath.log(50 / z1)
    assert abs(mu / classical - 1) < 1e-9


def test_condensate_fluctuations_of_the_3d_trap_follow_the_limit_law():
    # Well below T_c the canonical ⟨δn_0²⟩ of the isotropic 3D trap is Σ_excited n̄(n̄+1) to leading orders:
    # ζ(2) t³ from the (m²/2)-part of the degeneracy and (3/2) t² (ln t + const) from its (3m/2)-part,
    # t = k_B T/ħω (H. D. Politzer, Phys. Rev. A 54, 5048 (1996); M. Holthaus, E. Kalinowski and
    # K. Kirsten, Ann. Phys. 270, 198 (1998); from memory).  So (⟨δn_0²⟩ - ζ(2) t³)/(1.5 t²) - ln t
    # must be flat in t; 6000 bosons (T_c ~ 17) by the float route, t = 3..9.
    system = make_system(6000, preset="trap", rule="BE")
    points = canonical(system, ["3", "6", "9"], digits=15, levels=1, grand=False, route="float")
    rest = []
    for p in points:
        t = float(p.temperature)
        var = float(p.ground_occupation_variance_approx)
        assert 1 < var / (float(mpmath.zeta(2)) * t**3) < 2.5
        rest.append((var - float(mpmath.zeta(2)) * t**3) / (1.5 * t * t) - math.log(t))
    assert max(rest) - min(rest) < 0.1


def test_law_estimate_follows_the_digits():
    """1000 trap bosons at T = 5: the law takes 0.044 s CPU at 15 digits and 4.0 s at 10000 (measured,
    occupation._law_cost's docstring): the base loops multiply CPython integers of ~34000 bits.  Under a
    1.5 s limit the first runs and the second is refused before it starts (its estimate said 0.7 s before)."""
    system = make_system(1000, preset="trap", rule="BE")
    with limited(seconds=1.5):
        (law,) = occupation_law(system, 0, ["5"], digits=15, grand=False)
        assert len(law.law) == 1001
        with pytest.raises(TooLarge, match="max_seconds"):
            occupation_law(system, 0, ["5"], digits=10000, grand=False)
