"""The table of every particle number, ``Ω(n, E)`` for ``n = 0..N``: its routes and their limits.

Expected values come from outside the project: brute force written here
(every assignment of distinguishable particles to single-particle states,
``itertools.product``; the multisets and sets for bosons and fermions, from
``tests/reference.py``), and closed forms: ``n`` distinguishable particles on
a ``d``-dimensional oscillator ladder count ``[t^E] (1 - t)^{-dn} =
C(E + dn - 1, E)`` ways (stars and bars, common practice: the Einstein solid
of any statistical mechanics textbook), and on two levels ``0, 1``
``C(n, E)`` ways (the two-state paramagnet, common practice).  The MB table
is also checked against the route it took before: one row at a time
(:func:`multiplicities` for each ``n``); the single row's modular route
(evaluation modulo primes) against brute force and against the
particle-number recursion.
"""

from __future__ import annotations

import importlib
import itertools
import json
import math
from collections import Counter
from fractions import Fraction

import pytest
from cli_helpers import run
from reference import level_microstates

from enumerator.algorithms.levels import (
    System,
    harmonic_oscillator,
    harmonic_trap,
    make_spectrum,
    multiplicities,
    multiplicity_table,
    two_level,
)
from enumerator.algorithms.levels.spectra import ground_and_gap
from enumerator.core.errors import TooLarge
from enumerator.core.limits import limited

# the module (the package exports a function of the same name)
mult = importlib.import_module("enumerator.algorithms.levels.multiplicities")


def brute_force_row(spectrum, n, rule, top, capacity=None):
    """``{E: Ω}`` by listing every microstate of *n* particles (energies in units), ``E <= top`` in units.

    Keys from the row's lowest energy (the lowest microstate) to *top*, zeros included, as the
    library writes them; ``{}`` when no microstate lies at or below *top*.
    """
    states = [e for e, g in zip(spectrum.energies, spectrum.degeneracies) for _ in range(g)]
    counts = Counter(sum(states[s] for s in micro) for micro in level_microstates(len(states), n, rule, capacity))
    if not counts or min(counts) > top:
        return {}
    return {e: counts.get(e, 0) for e in range(min(counts), top + 1)}


def one_row_at_a_time(system, max_energy):
    """The route the MB table took before: :func:`multiplicities` for each particle number."""
    return [multiplicities(System(system.spectrum, m, system.rule, system.capacity), max_energy)
            for m in range(system.particles + 1)]


# --------------------------------------------------------------------------
# MB: each row the previous one times z(t)
# --------------------------------------------------------------------------
@pytest.mark.parametrize(
    "energies, degeneracies, n, top",
    [
        ("0,1,2,5", "1,2,4,1", 5, 7),  # z of 6 coefficients: FLINT's product
        ("0,3,6", "1,1,2", 5, 20),  # z = 1 + t^3 + 2 t^6, 7 coefficients and 3 terms: shifted multiples
        ("-1,1,2", "2,1,1", 5, 3),  # a negative lowest level: rows grow with n
        ("1,2", "2,3", 5, 6),  # a positive lowest level: the top rows lie above the cut
        ("0,1/2,3/2", "1,2,1", 4, 4),  # rational energies (units of 1/2)
        ("0", "3", 4, 2),  # one level
    ],
)
def test_mb_table_matches_brute_force_and_the_rows_one_at_a_time(energies, degeneracies, n, top):
    # Brute force: every assignment of n distinguishable particles (itertools.product)
    spectrum = make_spectrum(energies, degeneracies)
    system = System.create(spectrum, n, "MB")
    table = multiplicity_table(system, top)
    top_units = mult._to_units(top, spectrum.unit)
    assert len(table) == n + 1
    for m, row in enumerate(table):
        assert row == brute_force_row(spectrum, m, "MB", top_units)
    assert table == one_row_at_a_time(system, top)


@pytest.mark.parametrize("dimension, n, top", [(1, 40, 60), (3, 25, 30), (2, 300, 12)])
def test_mb_table_on_the_oscillator_ladder_is_stars_and_bars(dimension, n, top):
    # n distinguishable particles on the d-dimensional oscillator ladder:
    # Omega(n, E) = [t^E] (1 - t)^(-dn) = C(E + dn - 1, E) (stars and bars; Einstein solid, common practice)
    for spectrum in (harmonic_trap(dimension=dimension), harmonic_trap(levels=top + 1, dimension=dimension)):
        table = multiplicity_table(System.create(spectrum, n, "MB"), top)
        for m, row in enumerate(table):
            assert row == {e: math.comb(e + dimension * m - 1, e) if m else int(e == 0) for e in range(top + 1)}


def test_mb_table_on_a_ladder_of_spacing_two_keeps_the_odd_energies_empty():
    # The 1D ladder 0, 1, 2, ... written in units of 1/2 (spacing 2 units): Omega(n, E) = C(E + n - 1, E)
    # at whole E and 0 between (stars and bars, common practice); and brute force on the listed rungs.
    spectrum = harmonic_oscillator().rescaled(Fraction(1, 2))
    assert spectrum.ladder is not None and spectrum.ladder.spacing == 2
    table = multiplicity_table(System.create(spectrum, 6, "MB"), "9/2")
    for m, row in enumerate(table):
        assert row == {k: (math.comb(k // 2 + m - 1, k // 2) if m else int(k == 0)) if k % 2 == 0 else 0
                       for k in range(10)}
        assert row == brute_force_row(spectrum.through(9), m, "MB", 9)


def test_mb_table_on_two_levels_is_binomial():
    # n distinguishable particles on two single states 0 and 1: Omega(n, E) = C(n, E) (two-state
    # paramagnet, common practice)
    table = multiplicity_table(System.create(two_level(), 30, "MB"), 30)
    for m, row in enumerate(table):
        assert row == {e: math.comb(m, e) for e in range(31)}


def test_mb_table_many_particles_few_levels_against_the_rows_one_at_a_time():
    # Larger than brute force can list: the old route (one truncated power per row) is the reference,
    # and the last row's total is the number of assignments with energy <= top, here checked by
    # the multinomial sum over occupations (n0, n1, n2) with n1 + 3 n2 <= top (common practice).
    spectrum = make_spectrum("0,1,3", "2,1,4")
    n, top = 120, 40
    system = System.create(spectrum, n, "MB")
    table = multiplicity_table(system, top)
    assert table == one_row_at_a_time(system, top)
    expected = sum(
        math.factorial(n) // (math.factorial(n - a - b) * math.factorial(a) * math.factorial(b))
        * 2 ** (n - a - b) * 4 ** b
        for a in range(n + 1) for b in range(n + 1 - a) if a + 3 * b <= top
    )
    assert sum(table[n].values()) == expected


@pytest.mark.parametrize("rule, capacity", [("BE", None), ("FD", None), ("BE", 2)])
def test_identical_particle_tables_match_brute_force(rule, capacity):
    # The BE/FD/Gentile table beside the MB one: brute force over multisets, sets and capped multisets
    spectrum = make_spectrum("0,1,2,4", "2,1,2,1")
    table = multiplicity_table(System.create(spectrum, 5, rule, capacity), 6)
    for m, row in enumerate(table):
        assert row == brute_force_row(spectrum, m, rule, 6, capacity if rule == "BE" else None)


def test_mb_table_plan_bounds_every_row():
    # The plan's bound on the size of a coefficient holds for every cell of the table (the cells
    # themselves are the reference), and its memory grows with the table.
    system = System.create(harmonic_trap(levels=30), 60, "MB")
    plan = mult._mb_table_plan(system, 50)
    table = multiplicity_table(system, 50)
    assert max(v.bit_length() for row in table for v in row.values()) <= plan.bits
    bigger = mult._mb_table_plan(System.create(harmonic_trap(levels=30), 120, "MB"), 50)
    assert bigger.cost.memory > plan.cost.memory and bigger.cost.seconds > plan.cost.seconds


def test_mb_table_refused_before_computing(monkeypatch):
    monkeypatch.setattr(mult, "_mb_table_rows", lambda *a, **k: pytest.fail("computed past the limit"))
    system = System.create(harmonic_trap(), 10**4, "MB")
    with limited(memory="64M"):
        with pytest.raises(TooLarge, match="max_memory="):
            multiplicity_table(system, 300)
    with pytest.raises(TooLarge, match="limit="):
        multiplicity_table(system, 300, limit=10**5)


def test_mb_table_rows_are_produced_one_at_a_time():
    # The rows come from a generator: the first rows exist before the last is computed.
    system = System.create(make_spectrum("0,1,2", "1,1,1"), 50, "MB")
    rows = mult._mb_table_rows(system, 10)
    first = next(rows)
    assert first == {e: int(e == 0) for e in range(11)}
    # three states: Omega(1, E) = 1 for E = 0, 1, 2 (brute force: one particle, one state each)
    assert next(rows) == {e: int(e <= 2) for e in range(11)}
    assert len(list(itertools.islice(rows, 100))) == 49


# --------------------------------------------------------------------------
# One row, Omega(N, E) for every E: evaluation modulo primes
# --------------------------------------------------------------------------
@pytest.mark.parametrize(
    "energies, degeneracies, n, rule, capacity, top",
    [
        ("0,1,2,5", "1,2,4,1", 4, "BE", None, 9),  # one ground state, N below the excited rows
        ("0,1,2,5", "3,2,4,1", 4, "BE", None, 8),  # G_j = C(j + 2, 2)
        ("0,1,2,5", "3,2,4,1", 9, "BE", None, 5),  # N above the 6 rows: G_{N-m} weighs every row
        ("0,1,2,5", "3,2,4,1", 5, "FD", None, 10),  # G = (1 + x)^3
        ("0,1,3", "2,2,3", 5, "BE", 2, 9),  # Gentile: at most 2 per state
        ("0,2,3", "1,2,1", 4, "BE", None, 11),  # the gap 2: K = 5 points
        ("-1,1/2,2", "2,2,2", 4, "BE", None, "5/2"),  # negative and rational energies
    ],
)
def test_modular_row_matches_brute_force(energies, degeneracies, n, rule, capacity, top):
    # Brute force: every multiset / set of single-particle states (tests/reference.py)
    spectrum = make_spectrum(energies, degeneracies)
    system = System.create(spectrum, n, rule, capacity)
    top_units = mult._to_units(top, spectrum.unit)
    degree = top_units - n * spectrum.lowest
    plan = mult._plan(system, degree)
    coeffs = mult._modular_row(system, degree, plan.bits)
    expected = brute_force_row(spectrum, n, rule, top_units, capacity if rule == "BE" else None)
    low = min(expected)
    shift = n * spectrum.lowest
    assert coeffs[: low - shift] == [0] * (low - shift)
    assert {shift + e: v for e, v in enumerate(coeffs) if shift + e >= low} == expected
    # through the planner: with only the modular route's memory allowed the row takes that route
    whole = mult._coefficient_bits(system, n, degree)  # the size bound of Omega(N, E) the primes must hold
    lean = mult._modular_cost(spectrum, degree, ground_and_gap(spectrum)[1], whole)
    assert mult._plan(system, degree, rows=n + 1).cost.memory > lean.memory  # the recursion's table
    with limited(memory=lean.memory):
        assert mult._plan(system, degree).route == "modular"
        assert multiplicities(system, top) == expected


@pytest.mark.parametrize("n, top, rule, capacity", [(60, 120, "BE", None), (20, 160, "FD", None),
                                                    (30, 120, "BE", 3)])
def test_modular_row_matches_the_recursion_in_the_trap(n, top, rule, capacity):
    # The particle-number recursion over the excited rows (Newton's identities) is the reference
    # here, beyond brute force; coefficients of hundreds of bits need several primes.
    system = System.create(harmonic_trap(), n, rule, capacity)
    plan = mult._plan(system, top)
    recursion = mult.series.coefficients(mult._excited_recursion(system, min(n, top), top), top)
    assert mult._modular_row(system, top, plan.bits) == recursion
    assert max(recursion).bit_length() > 2 * 31


def test_modular_row_takes_more_primes_when_the_bound_falls_short():
    # A size bound of 1 bit: the first primes cannot hold the answer, the check sees it and takes more.
    system = System.create(harmonic_trap(), 30, "BE")
    recursion = mult.series.coefficients(mult._excited_recursion(system, 30, 70), 70)
    assert max(recursion).bit_length() > 64
    assert mult._modular_row(system, 70, 1.0) == recursion


def test_modular_route_chosen_when_the_recursion_does_not_fit(monkeypatch):
    # 80 trap bosons up to E = 160: the recursion's table is estimated at about 8 MB; with 1 MB
    # allowed the planner takes the modular route, and the answer is the recursion's (the reference).
    system = System.create(harmonic_trap(), 80, "BE")
    reference = mult.series.coefficients(mult._excited_recursion(system, 80, 160), 160)
    with limited(memory="1M"):
        plan = mult._plan(system, 160)
        assert plan.route == "modular" and plan.cost.memory < 2**20
        assert mult._plan(system, 160, rows=81).cost.memory > 2**20
        monkeypatch.setattr(mult, "_partition_polynomials_of", lambda *a, **k: pytest.fail("recursion ran"))
        row = multiplicities(system, 160)
    assert row == dict(enumerate(reference))
    # N >= E bosons on one ground state count the multisets of excited states (coin counting, brute
    # force), here up to E = N = 80.
    states = [m for m in range(1, 81) for _ in range(math.comb(m + 2, 2))]
    ways = [1] + [0] * 80
    for e in states:
        for energy in range(e, 81):
            ways[energy] += ways[energy - e]
    assert [row[e] for e in range(81)] == ways


def test_levels_cli_takes_the_modular_route_within_a_small_memory_limit():
    # The CLI's multiplicities under a memory limit that only the modular route meets: the
    # recursion's values (the reference); and a refusal in one line when no route fits.
    system = System.create(harmonic_trap(), 80, "BE")
    reference = mult.series.coefficients(mult._excited_recursion(system, 80, 160), 160)
    args = ("levels", "--preset", "trap", "--particles", 80, "--rule", "BE", "--max-energy", 160,
            "--max-memory", "1M")
    result = run(*args, "--json")
    assert result.exit_code == 0, result.output
    assert json.loads(result.stdout)["multiplicity"] == {str(e): str(v) for e, v in enumerate(reference)}
    refused = run(*args, "--max-seconds", "0.001")
    assert refused.exit_code == 2 and len(refused.stderr.strip().splitlines()) == 1, refused.output
    assert "--max-seconds" in refused.stderr
