"""Energy levels with degeneracies: checks against references outside the project.

References used (named beside each check):

* brute-force enumeration of microstates with ``itertools`` (assignments of
  distinguishable particles for MB, multisets of single-particle states for
  BE, with a capacity filter for intermediate statistics, sets for FD), and
  direct Boltzmann sums over them with mpmath;
* SymPy (polynomial products, partition counts, ``npartitions``);
* ``math.comb`` for stars and bars (common practice);
* D. V. Schroeder, *An Introduction to Thermal Physics* (2000), Tables 2.1,
  2.2 and Figure 2.6 (values from memory);
* thermodynamic-limit laws recalled from memory (condensate fraction of an
  ideal Bose gas in a 3D harmonic trap, the Einstein solid's temperature and
  heat capacity), with mpmath's ``zeta`` for the constants.
"""

from __future__ import annotations

import math
from collections import Counter
from fractions import Fraction

import mpmath
import pytest
import sympy
from hypothesis import given, settings
from hypothesis import strategies as st
from reference import level_microstates

from enumerator.algorithms.levels import (
    System,
    canonical,
    canonical_occupations,
    einstein_solid,
    grand_canonical,
    ground_energy,
    harmonic_oscillator,
    harmonic_trap,
    make_spectrum,
    make_system,
    microcanonical,
    multiplicities,
    multiplicity_table,
    thermal_contact,
    two_level,
)
from enumerator.core.errors import InvalidParameters, TooLarge, Unsupported
from enumerator.core.rules import Rule


# --------------------------------------------------------------------------
# Slow reference implementations (small inputs only)
# --------------------------------------------------------------------------
def states_of(spectrum):
    """One entry per single-particle state: ``(level index, energy in units)``."""
    return [
        (i, e)
        for i, (e, g) in enumerate(zip(spectrum.energies, spectrum.degeneracies))
        for _ in range(g)
    ]


def microstates(spectrum, n, rule, capacity=None):
    """Yield each microstate as the tuple of the single-particle states it uses."""
    return level_microstates(len(states_of(spectrum)), n, rule, capacity)


def brute_counts(spectrum, n, rule, capacity=None):
    """``Counter`` of total energies (in units) over all microstates."""
    energy = [e for _, e in states_of(spectrum)]
    return Counter(sum(energy[s] for s in combo) for combo in microstates(spectrum, n, rule, capacity))


def brute_canonical(spectrum, n, rule, capacity, temperature, dps=60):
    """Direct Boltzmann sums over the enumerated microstates (mpmath)."""
    with mpmath.workdps(dps):
        level = [i for i, _ in states_of(spectrum)]
        energy = [e for _, e in states_of(spectrum)]
        T = mpmath.mpf(Fraction(temperature).numerator) / Fraction(temperature).denominator
        beta = mpmath.mpf(spectrum.unit.numerator) / spectrum.unit.denominator / T
        Z = U = U2 = mpmath.mpf(0)
        occ = [mpmath.mpf(0)] * len(spectrum.energies)
        # Energies from the ground state, so that <E^2> - <E>^2 does not cancel.
        ground = min(brute_counts(spectrum, n, rule, capacity))
        for combo in microstates(spectrum, n, rule, capacity):
            E = sum(energy[s] for s in combo) - ground
            w = mpmath.exp(-beta * E)
            Z += w
            U += E * w
            U2 += E * E * w
            for s in combo:
                occ[level[s]] += w
        u = mpmath.mpf(spectrum.unit.numerator) / spectrum.unit.denominator
        mean = U / Z
        var = U2 / Z - mean * mean
        return {
            "lnZ": mpmath.log(Z) - beta * ground,
            "U": u * (mean + ground),
            "C": u * u * var / (T * T),
            "occ": [o / Z for o in occ],
        }


spectra = st.builds(
    lambda pairs: make_spectrum([e for e, _ in pairs], [g for _, g in pairs]),
    st.lists(st.tuples(st.integers(-2, 4), st.integers(1, 3)), min_size=1, max_size=3),
)
rules = st.sampled_from([("MB", None), ("BE", None), ("FD", None), ("BE", 2)])


# --------------------------------------------------------------------------
# Multiplicities
# --------------------------------------------------------------------------
def test_einstein_solid_of_three_oscillators_matches_schroeder_table_2_1():
    # Schroeder (2000), Table 2.1: three oscillators, q = 0..3 (from memory).
    assert multiplicities(einstein_solid(3), 3) == {0: 1, 1: 3, 2: 6, 3: 10}


def test_two_small_einstein_solids_match_schroeder_table_2_2():
    # Schroeder (2000), Table 2.2: N_A = N_B = 3, q = 6 (from memory).
    contact = thermal_contact(einstein_solid(3), einstein_solid(3), 6)
    assert contact.split == {0: 28, 1: 63, 2: 90, 3: 100, 4: 90, 5: 63, 6: 28}
    assert contact.total == 462
    assert contact.most_probable == 3
    assert contact.probability[3] == Fraction(100, 462)


def test_large_einstein_solids_match_schroeder_figure_2_6():
    # Schroeder (2000), Figure 2.6 table: N_A = 300, N_B = 200, q = 100 (from
    # memory): Omega_total ~ 9.26e115, peak at q_A = 60 with ~ 6.9e114, and
    # 2.8e81 microstates at q_A = 0.
    contact = thermal_contact(einstein_solid(300), einstein_solid(200), 100)
    assert contact.most_probable == 60
    assert abs(contact.total / 9.26e115 - 1) < 0.01
    assert abs(contact.split[60] / 6.9e114 - 1) < 0.01
    assert abs(contact.split[0] / 2.8e81 - 1) < 0.01
    # Stars and bars for the combined solid (common practice).
    assert contact.total == math.comb(100 + 500 - 1, 100)
    assert sum(contact.probability.values()) == 1


@settings(max_examples=30, deadline=None)
@given(st.integers(1, 60), st.integers(0, 60))
def test_einstein_solid_is_stars_and_bars(n, q):
    # C(q + N - 1, q): stars and bars (common practice); also the general MB
    # route over an explicit finite list of levels 0..q.
    counts = multiplicities(einstein_solid(n), q)
    assert counts == {e: math.comb(e + n - 1, e) for e in range(q + 1)}
    explicit = System.create(make_spectrum(list(range(q + 1))), n, "MB")
    assert multiplicities(explicit, q) == counts


@settings(max_examples=60, deadline=None)
@given(spectra, st.integers(0, 4), rules, st.integers(0, 12))
def test_multiplicities_match_brute_force(spectrum, n, rule_cap, top):
    # Brute-force enumeration of microstates (itertools).
    rule, capacity = rule_cap
    system = System.create(spectrum, n, rule, capacity)
    expected = brute_counts(spectrum, n, rule, capacity)
    counts = multiplicities(system, top)
    low = ground_energy(system)
    if low is None or low > top:
        assert counts == {} and all(e > top for e in expected)
        return
    assert min(expected) == low
    assert list(counts) == list(range(low, top + 1))
    assert counts == {e: expected.get(e, 0) for e in range(low, top + 1)}


@settings(max_examples=25, deadline=None)
@given(spectra, st.integers(0, 4), rules)
def test_whole_polynomial_without_a_maximum_energy(spectrum, n, rule_cap):
    # Brute force: every reachable energy, nothing beyond the highest.
    rule, capacity = rule_cap
    expected = brute_counts(spectrum, n, rule, capacity)
    counts = multiplicities(System.create(spectrum, n, rule, capacity))
    if not expected:
        assert counts == {}
        return
    assert min(counts) == min(expected) and max(counts) == max(expected)
    assert sum(counts.values()) == sum(expected.values())
    assert all(counts[e] == v for e, v in expected.items())


def test_bosons_match_sympy_product_of_factors():
    # SymPy: expand prod_i (sum_j C(g_i+j-1, j) x^j t^(j e_i)) and read [x^3 t^E].
    x, t = sympy.symbols("x t")
    energies, degs, n, top = [0, 1, 2, 3], [1, 3, 5, 7], 3, 9
    product = sympy.Integer(1)
    for e, g in zip(energies, degs):
        product *= sum(sympy.binomial(g + j - 1, j) * x**j * t ** (j * e) for j in range(n + 1))
    poly = sympy.Poly(sympy.expand(product), x, t)
    expected = {E: int(poly.coeff_monomial(x**n * t**E)) for E in range(top + 1)}
    system = System.create(make_spectrum(energies, degs), n, "BE")
    assert multiplicities(system, top) == expected
    assert multiplicities(system, 6) == {0: 1, 1: 3, 2: 11, 3: 32, 4: 66, 5: 122, 6: 168}


def test_fermions_match_sympy_product_of_factors():
    # SymPy: expand prod_i (1 + x t^e_i)^g_i.
    x, t = sympy.symbols("x t")
    energies, degs, n = [0, 1, 2, 3], [1, 3, 5, 7], 5
    product = sympy.Integer(1)
    for e, g in zip(energies, degs):
        product *= (1 + x * t**e) ** g
    poly = sympy.Poly(sympy.expand(product), x, t)
    system = System.create(make_spectrum(energies, degs), n, "FD")
    counts = multiplicities(system)
    for E, v in counts.items():
        assert v == int(poly.coeff_monomial(x**n * t**E))
    assert sum(counts.values()) == math.comb(16, 5)  # all 5-subsets of 16 states (common practice)


def test_oscillator_bosons_are_partitions():
    # Bosons on the 1D oscillator with N >= E: partition numbers p(E),
    # OEIS A000041 (from memory), and SymPy's npartitions.
    a000041 = [1, 1, 2, 3, 5, 7, 11, 15, 22, 30, 42, 56, 77, 101, 135, 176]
    counts = multiplicities(System.create(harmonic_oscillator(), 15, "BE"), 15)
    assert [counts[e] for e in range(16)] == a000041
    counts = multiplicities(System.create(harmonic_oscillator(), 60, "BE"), 60)
    assert all(counts[e] == sympy.partition(e) for e in range(61))


@pytest.mark.parametrize("n", [1, 2, 3, 5, 8])
def test_oscillator_with_few_particles_is_partitions_into_at_most_n_parts(n):
    # SymPy's partitions(E, m=N) lists the partitions of E into at most N parts.
    # FD: remove the staircase 0, 1, ..., N-1 first (common practice).
    from sympy.utilities.iterables import partitions

    def at_most(e, m):
        return sum(1 for _ in partitions(e, m=m)) if e > 0 else int(e == 0)

    be = multiplicities(System.create(harmonic_oscillator(), n, "BE"), 30)
    assert be == {e: at_most(e, n) for e in range(31)}
    stair = n * (n - 1) // 2
    fd = multiplicities(System.create(harmonic_oscillator(), n, "FD"), stair + 25)
    assert fd == {e: at_most(e - stair, n) for e in range(stair, stair + 26)}


def test_trap_bosons_with_many_particles_match_sympy_series():
    # N >= E: every excited configuration fits, so Omega(E) = [t^E] prod_{m>=1}
    # (1 - t^m)^(-(m+1)(m+2)/2); the series by SymPy.
    t = sympy.symbols("t")
    top = 10
    gf = sympy.Integer(1)
    for m in range(1, top + 1):
        gf *= sum(sympy.binomial((m + 1) * (m + 2) // 2 + j - 1, j) * t ** (m * j) for j in range(top // m + 1))
    poly = sympy.Poly(sympy.expand(gf), t)
    counts = multiplicities(System.create(harmonic_trap(), top, "BE"), top)
    assert counts == {e: int(poly.coeff_monomial(t**e)) for e in range(top + 1)}


def test_rational_energies_use_a_common_unit():
    # The same counts as the integer spectrum 0, 1, 3 (brute force agrees above).
    spectrum = make_spectrum("0,1/2,1.5", "1,2,1")
    assert spectrum.unit == Fraction(1, 2) and spectrum.energies == (0, 1, 3)
    system = System.create(spectrum, 3, "BE")
    integer = System.create(make_spectrum([0, 1, 3], [1, 2, 1]), 3, "BE")
    assert multiplicities(system, "7/2") == multiplicities(integer, 7)


def test_negative_energies_start_at_the_ground_state():
    # Two levels -1 and +1, 4 distinguishable spins: binomial counts (common practice).
    system = System.create(make_spectrum([-1, 1]), 4, "MB")
    assert multiplicities(system, 4) == {-4: 1, -3: 0, -2: 4, -1: 0, 0: 6, 1: 0, 2: 4, 3: 0, 4: 1}
    assert multiplicities(system, -5) == {}


def test_table_rows_equal_single_rows():
    # Internal consistency of the bivariate table with the one-row function.
    spectrum = make_spectrum("0,1,2", "2,1,3")
    for rule in ("BE", "FD"):
        table = multiplicity_table(System.create(spectrum, 5, rule), 8)
        for n, row in enumerate(table):
            assert row == multiplicities(System.create(spectrum, n, rule), 8)


def test_impossible_fermion_count_has_no_states():
    system = System.create(make_spectrum([0, 1], [1, 2]), 4, "FD")
    assert ground_energy(system) is None
    assert multiplicities(system, 10) == {}
    with pytest.raises(InvalidParameters, match="do not fit"):
        canonical(system, [1])


def test_size_limit_is_an_error_that_says_what_to_change():
    with pytest.raises(TooLarge, match="lower the maximum energy"):
        multiplicities(System.create(harmonic_trap(), 100, "BE"), 2000, limit=10_000)


# --------------------------------------------------------------------------
# Thermal contact
# --------------------------------------------------------------------------
@settings(max_examples=25, deadline=None)
@given(spectra, st.integers(0, 3), rules, spectra, st.integers(0, 3), rules, st.integers(-4, 10))
def test_contact_is_the_brute_force_convolution(sa, na, ra, sb, nb, rb, energy):
    # Brute force: Omega_A(E_A) Omega_B(E - E_A) from enumerated microstates.
    a = System.create(sa, na, *ra)
    b = System.create(sb, nb, *rb)
    contact = thermal_contact(a, b, energy)
    ca, cb = brute_counts(sa, na, *ra), brute_counts(sb, nb, *rb)
    expected = sum(ca[e] * cb[energy - e] for e in ca)
    assert contact.total == expected
    if expected:
        assert sum(contact.probability.values()) == 1
        best = max(contact.split.values())
        assert contact.split[contact.most_probable] == best
        assert all(contact.split[e] < best for e in contact.split if e < contact.most_probable)
    else:
        assert contact.most_probable is None


def test_contact_of_distinguishable_systems_is_the_combined_system():
    # (sum g t^e)^N_A (sum g t^e)^N_B = (sum g t^e)^(N_A + N_B) (common practice).
    spectrum = make_spectrum("0,1,3", "2,1,2")
    contact = thermal_contact(System.create(spectrum, 4, "MB"), System.create(spectrum, 3, "MB"), 9)
    assert contact.total == multiplicities(System.create(spectrum, 7, "MB"), 9)[9]


# --------------------------------------------------------------------------
# Microcanonical
# --------------------------------------------------------------------------
def test_einstein_solid_temperature_from_finite_differences():
    # Large Einstein solid: 1/T = ln(1 + N/q) (Schroeder 2000, Problem 3.5
    # style result; from memory), in units of the quantum with k_B = 1.
    n, q = 2000, 2000
    points = {p.energy: p for p in microcanonical(einstein_solid(n), q + 1)}
    assert abs(points[q].temperature_approx - 1 / math.log(1 + n / q)) < 1e-3
    assert points[0].temperature_approx is None  # no lower neighbour
    assert abs(points[q].ln_multiplicity_approx - math.log(math.comb(q + n - 1, q))) < 1e-9


def test_two_level_system_has_negative_temperature_above_half_filling():
    # N distinguishable two-level spins: ln C(N, E) falls beyond E = N/2, so
    # dS/dE < 0 there (common practice: population inversion).
    system = make_system(particles=20, preset="two-level")
    points = {p.energy: p for p in microcanonical(system)}
    assert points[5].temperature_approx > 0
    assert points[15].temperature_approx < 0
    assert points[10].temperature_approx is None  # ln C(20, 9) = ln C(20, 11): infinite T


# --------------------------------------------------------------------------
# Canonical ensemble
# --------------------------------------------------------------------------
@settings(max_examples=25, deadline=None)
@given(spectra, st.integers(0, 4), rules, st.sampled_from(["0.2", "1", "3.5", "20"]))
def test_canonical_matches_direct_boltzmann_sums(spectrum, n, rule_cap, temperature):
    # mpmath sums of e^{-E/T} over brute-force microstates.
    rule, capacity = rule_cap
    system = System.create(spectrum, n, rule, capacity)
    if ground_energy(system) is None:
        return
    ref = brute_canonical(spectrum, n, rule, capacity, temperature)
    point = canonical(system, [temperature], digits=30)[0]
    with mpmath.workdps(40):
        tol = mpmath.mpf(10) ** -25
        scale = 1 + abs(ref["lnZ"])
        assert abs(point.ln_partition_function_approx - ref["lnZ"]) < tol * scale
        assert abs(point.mean_energy_approx - ref["U"]) < tol * (1 + abs(ref["U"]))
        assert abs(point.heat_capacity_approx - ref["C"]) < tol * (1 + abs(ref["C"]))
        T = mpmath.mpf(Fraction(temperature).numerator) / Fraction(temperature).denominator
        assert abs(point.free_energy_approx + T * ref["lnZ"]) < tol * scale * T
        assert abs(point.entropy_approx - (ref["lnZ"] + ref["U"] / T)) < tol * scale * 10
        for got, want in zip(point.occupations_approx, ref["occ"]):
            assert abs(got - want) < tol * (1 + n)


@pytest.mark.parametrize("rule", ["BE", "FD"])
@pytest.mark.parametrize("temperature", ["0.25", "2", "10"])
def test_occupations_sum_to_n_to_working_precision(rule, temperature):
    # sum_i <n_i> = N exactly in theory (common practice); 50 digits asked.
    system = System.create(harmonic_trap(levels=10), 40, rule)
    point = canonical(system, [temperature], digits=50)[0]
    assert abs(mpmath.fsum(point.occupations_approx) - 40) < mpmath.mpf(10) ** -45
    _mu, gc = point.chemical_potential_approx, point.grand_canonical_occupations_approx
    assert abs(mpmath.fsum(gc) - 40) < mpmath.mpf(10) ** -45


def test_fermions_fill_the_lowest_states_at_low_temperature():
    # T -> 0: the Fermi sea (common practice).  Five fermions in levels
    # 0, 1, 2, 3, 4 of degeneracy 2: two at 0, two at 1 and one of the two
    # states at 2; U -> 4, S -> ln 2 (two ground states), C -> 0.
    system = System.create(make_spectrum("0,1,2,3,4", "2,2,2,2,2"), 5, "FD")
    point = canonical(system, ["0.01"], digits=30)[0]
    with mpmath.workdps(40):
        for got, want in zip(point.occupations_approx, [2, 2, 1, 0, 0]):
            assert abs(got - want) < 1e-25
        assert abs(point.mean_energy_approx - 4) < 1e-25
        assert abs(point.entropy_approx - mpmath.log(2)) < 1e-25
        assert 0 <= point.heat_capacity_approx < 1e-30
        # The grand-canonical Fermi level sits at the half-filled level 2.
        assert abs(point.chemical_potential_approx - 2) < 1e-6


def test_high_temperature_limit_approaches_boltzmann():
    # Dilute limit: BE and FD occupations -> the Boltzmann (MB) ones
    # N g e^{-e/T} / z (common practice); the deviation falls as T grows.
    def deviation(rule, temperature):
        quantum = canonical(System.create(harmonic_trap(levels=None).through(12), 4, rule), [temperature], digits=20, grand=False)[0]
        classical = canonical(System.create(harmonic_trap(levels=None).through(12), 4, "MB"), [temperature], digits=20, grand=False)[0]
        return max(abs(q - c) / c for q, c in zip(quantum.occupations_approx, classical.occupations_approx))

    for rule in ("BE", "FD"):
        devs = [deviation(rule, t) for t in (2, 8, 32)]
        assert devs[0] > devs[1] > devs[2]
        assert devs[2] < 2e-3


def test_mb_trap_has_einstein_energy_and_heat_capacity():
    # 3N independent oscillators: U = 3N/(e^{1/T} - 1), C = 3N x^2 e^x/(e^x - 1)^2,
    # x = 1/T (Einstein 1907; from memory).
    n = 7
    for temperature in (Fraction(1, 3), Fraction(2), Fraction(9)):
        point = canonical(System.create(harmonic_trap(), n, "MB"), [temperature], digits=30)[0]
        with mpmath.workdps(40):
            x = mpmath.mpf(temperature.denominator) / temperature.numerator
            assert abs(point.mean_energy_approx - 3 * n / (mpmath.exp(x) - 1)) < 1e-25
            assert abs(point.heat_capacity_approx - 3 * n * x**2 * mpmath.exp(x) / (mpmath.exp(x) - 1) ** 2) < 1e-25


@pytest.mark.parametrize("rule", ["BE", "FD"])
def test_infinite_ladder_equals_a_long_truncated_ladder(rule):
    # The closed-form ladder against a finite list of levels whose missing
    # tail weighs about e^{-80}: same numbers to 25 digits (internal
    # consistency), and U against mpmath's numerical derivative of ln Z.
    n, T = 6, 1
    infinite = canonical(System.create(harmonic_trap().through(4), n, rule), [T], digits=30, grand=False)[0]
    finite = canonical(System.create(harmonic_trap(levels=80), n, rule), [T], digits=30, levels=5, grand=False)[0]
    for a, b in zip(
        (infinite.ln_partition_function_approx, infinite.mean_energy_approx, infinite.heat_capacity_approx),
        (finite.ln_partition_function_approx, finite.mean_energy_approx, finite.heat_capacity_approx),
    ):
        assert abs(a - b) < 1e-25 * (1 + abs(a))
    for a, b in zip(infinite.occupations_approx, finite.occupations_approx):
        assert abs(a - b) < 1e-25

    def lnz(beta):
        return canonical(System.create(harmonic_trap(), n, rule), [1 / beta], digits=30, grand=False)[0].ln_partition_function_approx

    with mpmath.workdps(30):
        derivative = mpmath.diff(lnz, mpmath.mpf(1), h=mpmath.mpf("1e-8"))
        assert abs(-derivative - infinite.mean_energy_approx) < 1e-12


def test_condensate_fraction_approaches_the_thermodynamic_limit():
    # Ideal bosons in a 3D isotropic trap: N_0/N -> 1 - (T/T_c)^3 with
    # k T_c = hbar omega (N / zeta(3))^(1/3) (from memory), approached as N
    # grows; the leading finite-size correction is
    # -(3 zeta(2) / (2 zeta(3)^(2/3))) (T/T_c)^2 N^(-1/3) (S. Grossmann and
    # M. Holthaus, Phys. Lett. A 208, 188 (1995); from memory).  Zeta values
    # from mpmath.
    x = mpmath.mpf("0.5")
    law = 1 - x**3
    deviations = []
    for n in (10, 100, 1000):
        tc = (n / mpmath.zeta(3)) ** (mpmath.mpf(1) / 3)
        occ = canonical_occupations(System.create(harmonic_trap(), n, "BE"), [float(x * tc)], digits=20)[0]
        fraction = occ[0] / n
        deviations.append(law - fraction)
        corrected = law - 3 * mpmath.zeta(2) / (2 * mpmath.zeta(3) ** (mpmath.mpf(2) / 3)) * x**2 * n ** (-mpmath.mpf(1) / 3)
        if n == 1000:
            assert abs(fraction - corrected) < 0.01
    assert deviations[0] > deviations[1] > deviations[2] > 0
    # roughly N^(-1/3): each tenfold N divides the deviation by about 10^(1/3)
    assert 1.5 < deviations[1] / deviations[2] < 3


def test_grand_canonical_mb_equals_canonical_mb():
    # For distinguishable particles the grand-canonical formula is exact.
    system = System.create(make_spectrum("0,1,2,5", "1,2,3,1"), 6, "MB")
    point = canonical(system, ["1.5"], digits=30)[0]
    for a, b in zip(point.occupations_approx, point.grand_canonical_occupations_approx):
        assert abs(a - b) < 1e-25


def test_bose_chemical_potential_is_below_the_lowest_level():
    # BE: mu < epsilon_0 (common practice), and the grand-canonical sum is N.
    system = System.create(make_spectrum("1,2,3", "1,2,2"), 10, "BE")
    mu, occ = grand_canonical(system, 2, digits=30)
    assert mu < 1
    assert abs(mpmath.fsum(occ) - 10) < 1e-25


def test_full_and_empty_spectra_in_the_grand_canonical_formula():
    spectrum = make_spectrum("0,1", "1,2")
    mu, occ = grand_canonical(System.create(spectrum, 3, "FD"), 1)
    assert mu is None and occ == (1, 2)
    mu, occ = grand_canonical(System.create(spectrum, 0, "BE"), 1)
    assert mu is None and occ == (0, 0)


def test_canonical_needs_a_positive_temperature():
    system = System.create(two_level(), 3, "BE")
    for bad in (0, "-1", "hot"):
        with pytest.raises(InvalidParameters):
            canonical(system, [bad])


# --------------------------------------------------------------------------
# Building spectra and systems
# --------------------------------------------------------------------------
def test_presets_and_their_parameters():
    trap = harmonic_trap(levels=4)
    assert trap.energies == (0, 1, 2, 3) and trap.degeneracies == (1, 3, 6, 10)
    assert harmonic_trap(levels=3, dimension=2).degeneracies == (1, 2, 3)
    assert harmonic_oscillator(levels=3).degeneracies == (1, 1, 1)
    assert harmonic_trap().through(3).degeneracies == (1, 3, 6, 10)
    assert two_level("1/2", (1, 3)).energies == (0, 1) and two_level("1/2", (1, 3)).unit == Fraction(1, 2)
    solid = make_system(preset="einstein", oscillators=4)
    assert solid.rule is Rule.MB and solid.particles == 4
    assert make_system(oscillators=4) == solid
    assert make_system(particles=2, preset="TRAP", rule="be").rule is Rule.BE


@pytest.mark.parametrize(
    "kwargs, error, message",
    [
        (dict(particles=2), InvalidParameters, "describe the levels"),
        (dict(energies="0,1"), InvalidParameters, "number of particles"),
        (dict(particles=2, energies="0,1", degeneracies="1"), InvalidParameters, "one degeneracy per energy"),
        (dict(particles=2, energies="0,1", degeneracies="1,0"), InvalidParameters, "degeneracy 2 must be at least 1"),
        (dict(particles=2, energies=[0, 0.5]), InvalidParameters, "must be exact"),
        (dict(particles=2, energies="0,,1"), InvalidParameters, "comma-separated"),
        (dict(particles=-1, energies="0,1"), InvalidParameters, "particles must be at least 0"),
        (dict(particles=2, energies="0,1", rule="FD", capacity=2), InvalidParameters, "FD allows at most one"),
        (dict(particles=2, energies="0,1", rule="MB", capacity=2), Unsupported, "BE"),
        (dict(particles=2, preset="moon"), InvalidParameters, "unknown preset"),
        (dict(particles=2, preset="einstein", oscillators=3), InvalidParameters, "disagree"),
        (dict(oscillators=3, rule="BE"), InvalidParameters, "distinguishable"),
        (dict(particles=2, energies="0,1", levels=3), InvalidParameters, "belongs to a preset"),
        (dict(particles=2, preset="two-level", levels=3), InvalidParameters, "takes no levels="),
    ],
)
def test_malformed_input_is_an_error_that_says_what_to_change(kwargs, error, message):
    with pytest.raises(error, match=message):
        make_system(**kwargs)


def test_infinite_ladder_needs_a_maximum_energy():
    with pytest.raises(InvalidParameters, match=r"\(max_energy=\), or make it finite with levels=") as caught:
        multiplicities(System.create(harmonic_trap(), 3, "BE"))
    # the error names the parameters it asks to change, so a front end can spell them its way
    assert caught.value.parameters == ("max_energy", "levels")
    assert "(--max-energy), or make it finite with --levels" in caught.value.spelled(
        {"max_energy": "--max-energy", "levels": "--levels"}
    )


@pytest.mark.parametrize("name", ["", ".spectra", ".multiplicities", ".ensembles", ".occupation", ".particle_hole"])
def test_module_doctests(name):
    import doctest
    import importlib

    module = importlib.import_module("enumerator.algorithms.levels" + name)
    assert doctest.testmod(module).failed == 0
