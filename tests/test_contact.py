"""Multiplicities at scale and thermal contact in the library: routes, limits, summaries.

Expected values come from outside the project: ``math.comb`` (stars and bars:
an Einstein solid of N oscillators holds q quanta in C(q + N - 1, q) ways,
common practice), SymPy's partition numbers (OEIS A000041), SciPy's
beta-binomial law (two Einstein solids sharing q quanta split as a
beta-binomial of q trials with a = N_A, b = N_B, the Pólya-urn reading of
stars and bars; from memory), and brute force written here: a plain
knapsack count over the single-particle states and the enumeration of
microstates with ``itertools``.
"""

from __future__ import annotations

import importlib
import itertools
import math
from collections import Counter
from fractions import Fraction

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from enumerator.algorithms.levels import (
    System,
    einstein_solid,
    harmonic_oscillator,
    harmonic_trap,
    make_spectrum,
    multiplicities,
    multiplicity_table,
    thermal_contact,
    two_level,
)
from enumerator.core.errors import TooLarge
from enumerator.core.limits import limited

# the module (the package exports a function of the same name)
mult = importlib.import_module("enumerator.algorithms.levels.multiplicities")


def knapsack(states, n, top, capacity=None):
    """Brute force: ``{E: ways}`` for n particles in the given single-particle states (energies), E <= top.

    ``capacity`` None: BE (any number per state); 1: FD; c: at most c per state.
    A plain two-dimensional knapsack over the states, one at a time.
    """
    table = [[0] * (top + 1) for _ in range(n + 1)]
    table[0][0] = 1
    for e in states:
        new = [row[:] for row in table]
        for k in range(1, n + 1 if capacity is None else min(n, capacity) + 1):
            for m in range(k, n + 1):
                for energy in range(k * e, top + 1):
                    new[m][energy] += table[m - k][energy - k * e]
        table = new
    return table[n]


def coin_count(states, top):
    """Brute force: multisets of states (any number per state) by total energy up to top."""
    ways = [1] + [0] * top
    for e in states:
        for energy in range(e, top + 1):
            ways[energy] += ways[energy - e]
    return ways


# --------------------------------------------------------------------------
# Multiplicities: the routes against outside references
# --------------------------------------------------------------------------
@pytest.mark.parametrize("oscillators, quanta", [(1, 7), (3, 10), (50, 40), (10_000, 300)])
def test_einstein_solid_multiplicity_is_stars_and_bars(oscillators, quanta):
    # Omega(N, q) = C(q + N - 1, q): stars and bars (common practice; any statistical mechanics textbook)
    counts = multiplicities(einstein_solid(oscillators), quanta)
    assert counts == {q: math.comb(q + oscillators - 1, q) for q in range(quanta + 1)}


def test_many_bosons_on_the_oscillator_count_partitions():
    # N >= E bosons on the 1D oscillator ladder: Omega(N, E) = p(E), the partition numbers
    # (OEIS A000041), here from SymPy; this runs the one-variable (Euler transform) route.
    from sympy.functions.combinatorial.numbers import partition

    system = System.create(harmonic_oscillator(), 500, "BE")
    assert mult._plan(system, 400).route == "series"
    counts = multiplicities(system, 400)
    assert all(counts[e] == int(partition(e)) for e in (0, 1, 2, 10, 99, 100, 250, 400))


def test_ten_thousand_trap_bosons_answer_instead_of_aborting():
    # The 3D trap with N = 10^4 >= E: with one ground state taking the rest, Omega(N, E) counts
    # the multisets of excited states of energy E: brute force by a coin count over the
    # (m + 1)(m + 2)/2 states of rung m, up to E = 60.
    system = System.create(harmonic_trap(), 10_000, "BE")
    counts = multiplicities(system, 900)
    assert len(counts) == 901
    states = [m for m in range(1, 61) for _ in range(math.comb(m + 2, 2))]
    assert [counts[e] for e in range(61)] == coin_count(states, 60)


@pytest.mark.parametrize(
    "energies, degeneracies, n, rule, capacity",
    [
        ("0,1,2,5", "3,2,4,1", 40, "BE", None),  # degenerate ground level: G_j = C(j + 2, 2)
        ("0,1,2,5", "3,2,4,1", 6, "FD", None),
        ("0,1,3", "2,2,3", 8, "BE", 2),  # Gentile: at most 2 per state
        ("1/2,3/2,7/2", "1,1,3", 30, "BE", None),
        ("0,2,3", "1,2,2", 3, "BE", None),  # N < D // gap: N + 1 rows
    ],
)
def test_excited_rows_route_matches_the_knapsack(energies, degeneracies, n, rule, capacity):
    # Brute force: the knapsack over single-particle states (defined above).
    spectrum = make_spectrum(energies, degeneracies)
    system = System.create(spectrum, n, rule, capacity)
    top = n * spectrum.lowest + 14
    counts = multiplicities(system, top * spectrum.unit)
    states = [e for e, g in zip(spectrum.energies, spectrum.degeneracies) for _ in range(g)]
    reference = knapsack(states, n, top, system.capacity)
    low = min(counts)
    assert counts == {e: reference[e] for e in range(low, top + 1)}


@pytest.mark.parametrize(
    "system, degree",
    [
        (System.create(harmonic_trap(), 40, "BE"), 120),
        (System.create(harmonic_trap(), 1000, "BE"), 200),
        (System.create(harmonic_trap(), 30, "FD"), 150),
        (einstein_solid(20), 300),
        (System.create(make_spectrum("0,1,2", "2,3,1"), 15, "MB"), 25),
    ],
)
def test_size_bound_is_an_upper_bound(system, degree):
    # Chernoff's bound [t^D] F <= F(tau) / tau^D (Flajolet & Sedgewick, Prop. IV.1) holds for every
    # tau, so the estimate can only err upwards: compare with the computed counts' bit lengths.
    spectrum = system.spectrum.through(degree) if not system.spectrum.finite else system.spectrum
    system = System(spectrum, system.particles, system.rule, system.capacity)
    shift = system.particles * spectrum.lowest
    counts = multiplicities(system, shift + degree)
    largest = max(v.bit_length() for v in counts.values())
    bits = mult._coefficient_bits(system, system.particles, degree)
    assert largest <= bits <= 2 * largest + 64


# --------------------------------------------------------------------------
# Refusals before any work
# --------------------------------------------------------------------------
def test_refused_before_computing(monkeypatch):
    # Nothing may be computed: the routes are replaced by tripwires.
    def tripwire(*args, **kwargs):
        raise AssertionError("computed past the limit")

    monkeypatch.setattr(mult, "_partition_polynomials_of", tripwire)
    monkeypatch.setattr(mult, "_scalar_euler", tripwire)
    monkeypatch.setattr(mult, "_mb_polynomial", tripwire)
    monkeypatch.setattr(mult, "_modular_row", tripwire)
    # 1000 trap bosons to E = 2000 fit 64 MB on the modular route (O(E) memory), but not a minute
    with limited(memory="64M", seconds=60):
        with pytest.raises(TooLarge, match=r"raise max_seconds="):
            multiplicities(System.create(harmonic_trap(), 1000, "BE"), 2000)
    with limited(memory="64M"):
        with pytest.raises(TooLarge, match="max_memory="):
            multiplicities(System.create(harmonic_trap(), 10**7, "BE"), 10**6)
        with pytest.raises(TooLarge, match="max_memory="):
            multiplicities(einstein_solid(10**6), 10**7)
    with limited(seconds=0.01):
        with pytest.raises(TooLarge, match="raise max_seconds="):
            multiplicities(System.create(harmonic_trap(), 300, "FD"), 3000)


def test_costs_grow_with_the_table():
    small = mult.multiplicity_cost(System.create(harmonic_trap(), 50, "BE"), 100)
    large = mult.multiplicity_cost(System.create(harmonic_trap(), 500, "BE"), 2000)
    assert 0 < small.memory < large.memory and 0 < small.seconds < large.seconds
    assert mult.multiplicity_cost(System.create(harmonic_trap(), 4, "FD"), 1).memory == 0  # below the ground state


def test_contact_refused_past_the_limit_before_computing(monkeypatch):
    monkeypatch.setattr(mult, "multiplicities", lambda *a, **k: pytest.fail("computed past the limit"))
    with limited(memory="256M"):
        with pytest.raises(TooLarge, match="energy split .* max_memory="):
            thermal_contact(einstein_solid(10**6), einstein_solid(10**6), 10**6)


# --------------------------------------------------------------------------
# Thermal contact
# --------------------------------------------------------------------------
def brute_split(a_states, n_a, b_states, n_b, total, rule="BE"):
    """Brute force: enumerate the microstates of A and B (multisets of states) and count each E_A."""
    pick = itertools.combinations_with_replacement if rule == "BE" else itertools.combinations
    ca = Counter(sum(c) for c in pick(a_states, n_a))
    cb = Counter(sum(c) for c in pick(b_states, n_b))
    return {ea: ca[ea] * cb[total - ea] for ea in range(total + 1) if ca[ea] * cb[total - ea]}


@settings(max_examples=30, deadline=None)
@given(st.integers(1, 4), st.integers(1, 4), st.integers(0, 9), st.sampled_from(["BE", "FD"]))
def test_contact_split_and_peak_against_brute_force(n_a, n_b, energy, rule):
    # Brute force: every microstate of A (levels 0,1,2 with degeneracies 1,2,2) and of B
    # (levels 0,1,3 with degeneracies 2,1,1), multisets for BE, sets for FD.
    a = System.create(make_spectrum("0,1,2", "1,2,2"), n_a, rule)
    b = System.create(make_spectrum("0,1,3", "2,1,1"), n_b, rule)
    contact = thermal_contact(a, b, energy)
    expected = brute_split([0, 1, 1, 2, 2], n_a, [0, 0, 1, 3], n_b, energy, rule)
    assert {e: v for e, v in contact.split.items() if v} == expected
    assert contact.total == sum(expected.values())
    if expected:
        best = max(expected.values())
        assert contact.most_probable == min(e for e, v in expected.items() if v == best)
        assert sum(contact.probability.values()) == 1
        assert math.fsum(contact.probability_approx_of(e) for e in contact.split) == pytest.approx(1, abs=1e-12)
    else:
        assert contact.most_probable is None and contact.summary() is None


@pytest.mark.parametrize("n_a, n_b, quanta", [(3, 3, 6), (30, 20, 10), (300, 200, 100), (2000, 1500, 2500)])
def test_einstein_contact_is_beta_binomial(n_a, n_b, quanta):
    # Two Einstein solids sharing q quanta: E_A ~ BetaBinomial(q, N_A, N_B) (from memory; the
    # Polya-urn reading of stars and bars), law and moments from SciPy; exact moments of the
    # beta-binomial: mean q a/(a+b), variance q a b (a+b+q) / ((a+b)^2 (a+b+1)) (same source).
    from scipy.stats import betabinom

    contact = thermal_contact(einstein_solid(n_a), einstein_solid(n_b), quanta)
    law = betabinom(quanta, n_a, n_b)
    s = contact.summary()
    ab = n_a + n_b
    assert s.mean == Fraction(quanta * n_a, ab)
    assert s.variance == Fraction(quanta * n_a * n_b * (ab + quanta), ab * ab * (ab + 1))
    assert s.mean_approx == pytest.approx(law.mean(), rel=1e-12)
    assert s.variance_approx == pytest.approx(law.var(), rel=1e-12)
    assert s.std_dev_approx == pytest.approx(law.std(), rel=1e-12)
    assert s.splits == quanta + 1
    pmf = law.pmf(range(quanta + 1))
    assert contact.most_probable == int(pmf.argmax())
    assert s.most_probable_probability_approx == pytest.approx(pmf.max(), rel=1e-10)
    for e in (0, quanta // 3, contact.most_probable, quanta):
        assert contact.probability_approx_of(e) == pytest.approx(pmf[e], rel=1e-9, abs=1e-300)
    # the exact value of the peak, C(q_A + N_A - 1, q_A) C(q_B + N_B - 1, q_B) / C(q + N - 1, q)
    qa = contact.most_probable
    peak = Fraction(math.comb(qa + n_a - 1, qa) * math.comb(quanta - qa + n_b - 1, quanta - qa),
                    math.comb(quanta + ab - 1, quanta))
    assert s.most_probable_probability == peak == contact.probability_of(qa)


def test_floats_of_huge_ratios_are_near_the_exact_ones():
    # Python's correctly rounded int / int on numbers small enough for it (common practice)
    contact = thermal_contact(einstein_solid(400), einstein_solid(300), 900)
    assert contact.total.bit_length() > 1000  # the GMP path of the float conversion
    for e in (0, 1, 300, contact.most_probable, 899, 900):
        exact = contact.probability_of(e)
        assert contact.probability_approx_of(e) == pytest.approx(float(exact), rel=2.3e-16, abs=1e-320)


@settings(max_examples=25, deadline=None)
@given(st.integers(1, 4), st.integers(1, 4), st.sampled_from(["1/2", "3/2", "2/3"]), st.sampled_from(["1/2", "1/3"]),
       st.integers(0, 12))
def test_rational_contact_in_the_users_unit_against_brute_force(n_a, n_b, gap_a, gap_b, twelfths):
    # Brute force: the microstates of n_a distinguishable two-level systems of gap gap_a (tuples) and of
    # n_b bosons on levels 0, gap_b, 1 (multisets), energies as exact Fractions; total energy k/12.
    ga, gb, total = Fraction(gap_a), Fraction(gap_b), Fraction(twelfths, 12)
    a = System.create(two_level(gap_a), n_a, "MB")
    b = System.create(make_spectrum([0, gap_b, 1]), n_b, "BE")
    contact = thermal_contact(a, b, total)
    ca = Counter(sum(c, Fraction(0)) for c in itertools.product([0, ga], repeat=n_a))
    cb = Counter(sum(c, Fraction(0)) for c in itertools.combinations_with_replacement([0, gb, 1], n_b))
    expected = {ea: ca[ea] * cb[total - ea] for ea in ca if ca[ea] * cb[total - ea]}
    assert {contact.energy_of(k): v for k, v in contact.split.items() if v} == expected
    assert contact.energy_of(contact.energy) == total
    s = contact.summary()
    if not expected:
        assert s is None and contact.most_probable is None
        return
    count = sum(expected.values())
    best = max(expected.values())
    mean = sum(ea * v for ea, v in expected.items()) / count
    variance = sum((ea - mean) ** 2 * v for ea, v in expected.items()) / count
    assert s.most_probable == contact.energy_of(contact.most_probable) == min(
        ea for ea, v in expected.items() if v == best)
    assert (s.mean, s.variance) == (contact.mean, contact.variance) == (mean, variance)
    assert s.mean_approx == pytest.approx(float(mean), rel=1e-15)
    assert s.variance_approx == pytest.approx(float(variance), rel=1e-15, abs=1e-300)


# --------------------------------------------------------------------------
# The table of every particle number: the excited-rows route
# --------------------------------------------------------------------------
def _table_by_all_rows(system, max_energy):
    """The route the table took before: the particle-number recursion over all N + 1 rows."""
    top_units = mult._to_units(max_energy, system.spectrum.unit)
    n = system.particles
    degree = top_units - min(0, n * system.spectrum.lowest)
    polys = mult._partition_polynomials(system, n, degree)
    return mult._table_rows(system, top_units, lambda m, d: mult.series.coefficients(polys[m], d))


@pytest.mark.parametrize(
    "energies, degeneracies, n, rule, capacity, top",
    [
        ("0,1,2,5", "1,2,4,1", 14, "BE", None, 6),  # one ground state: prefix sums shared past the last row
        ("0,1,2,5", "3,2,4,1", 12, "BE", None, 6),  # G_j = C(j + 2, 2): three passes
        ("0,1,2,5", "3,2,4,1", 12, "FD", None, 6),  # G = (1 + x)^3
        ("0,1,3", "4,2,3", 14, "BE", 3, 5),  # Gentile: at most 3 per state
        ("0,1,2", "40,3,2", 9, "BE", None, 3),  # a ground degeneracy above the passes: one FLINT product
        ("0,1,2", "40,3,2", 9, "FD", None, 3),
        ("0,2,3", "2,2,1", 8, "BE", None, 9),  # the gap 2 halves the rows
    ],
)
def test_table_by_excited_rows_matches_the_knapsack_and_the_old_route(energies, degeneracies, n, rule, capacity,
                                                                     top):
    # Brute force: the knapsack over single-particle states (defined above), row by row; and the
    # recursion over all N + 1 rows, the route the table took before.
    spectrum = make_spectrum(energies, degeneracies)
    system = System.create(spectrum, n, rule, capacity)
    assert mult._table_plan(system, top).route == "excited-table"
    table = multiplicity_table(system, top)
    states = [e for e, g in zip(spectrum.energies, spectrum.degeneracies) for _ in range(g)]
    for m, row in enumerate(table):
        reference = knapsack(states, m, top, system.capacity)
        assert row == {e: reference[e] for e in row}
        assert sum(row.values()) == sum(reference)  # no state below the row's first key is left out
    assert table == _table_by_all_rows(system, top)


@pytest.mark.parametrize(
    "energies, degeneracies, n, rule, top",
    [("-1,1,2", "1,2,1", 8, "BE", 3), ("-1,1,2", "2,2,1", 8, "FD", -2), ("1/2,3/2,7/2", "1,1,3", 20, "BE", "15"),
     ("0", "3", 5, "BE", 2), ("2,5", "1,2", 9, "BE", 25)],
)
def test_table_by_excited_rows_on_shifted_spectra_matches_the_old_route(energies, degeneracies, n, rule, top):
    # Negative, rational and single-level spectra: the recursion over all N + 1 rows, and the one-row route
    system = System.create(make_spectrum(energies, degeneracies), n, rule)
    table = multiplicity_table(system, top)
    assert table == _table_by_all_rows(system, top)
    assert table == [multiplicities(System.create(system.spectrum, m, rule), top) for m in range(n + 1)]


def test_table_takes_only_the_rows_it_needs(monkeypatch):
    # 2,000 bosons in the 3D trap up to E = 60: 61 rows of the recursion, not 2,001.  The first
    # rows against the coin count of excited states (brute force, as above): N >= E bosons with one
    # ground state count the multisets of excited states.
    seen = []
    recursion = mult._partition_polynomials_of

    def spy(z, w, top, degree):
        seen.append(top)
        return recursion(z, w, top, degree)

    monkeypatch.setattr(mult, "_partition_polynomials_of", spy)
    system = System.create(harmonic_trap().through(60), 2000, "BE")
    table = mult.multiplicity_table(system, 60)
    assert seen == [60]
    states = [m for m in range(1, 61) for _ in range(math.comb(m + 2, 2))]
    coins = coin_count(states, 60)
    assert [table[2000][e] for e in range(61)] == coins
    assert [table[5][e] for e in range(61)] == knapsack([m for m in range(61) for _ in range(math.comb(m + 2, 2))],
                                                        5, 60)


def test_table_refused_before_computing(monkeypatch):
    monkeypatch.setattr(mult, "_partition_polynomials_of", lambda *a, **k: pytest.fail("computed past the limit"))
    system = System.create(harmonic_trap().through(300), 10**5, "BE")
    assert mult._table_plan(system, 300).route == "excited-table"
    with limited(memory="64M"):
        with pytest.raises(TooLarge, match="max_memory="):
            mult.multiplicity_table(system, 300)
