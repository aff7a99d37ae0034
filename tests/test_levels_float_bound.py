"""The float route for bosons: its proved error bounds, and when route ``auto`` takes it.

References, each outside the float route: numpy's summation order replayed in
plain Python (the tree of ``DOUBLE_pairwise_sum``, numpy/_core/src/umath/
loops_utils.h.src, whose depth the bounds rely on); the exact rational
Borrmann–Franke recursion of the project (``route="recursion"``: fixed-point
integers with its own precision control; P. Borrmann and G. Franke,
J. Chem. Phys. 98, 2484 (1993)); and for a small finite spectrum brute-force
enumeration of every microstate with its Boltzmann weight in mpmath.
"""

from __future__ import annotations

import math
from fractions import Fraction

import mpmath
import numpy as np
import pytest
from reference import level_microstates

from enumerator.algorithms.levels import canonical, make_system
from enumerator.algorithms.levels.bosons_float import canonical_float, canonical_float_many, pairwise_depth
from enumerator.core.errors import TooLarge

REPORTED = ("ln_partition_function", "mean_energy", "heat_capacity", "occupations")


def replayed_sum(values):
    """numpy's pairwise sum of *values*, replayed term by term, and the most roundings any term went through."""
    n = len(values)
    if n < 8:
        total = -0.0
        for x in values:
            total += x
        return total, max(n - 1, 0)
    if n <= 128:
        acc = [float(x) for x in values[:8]]
        i = 8
        while i < n - n % 8:
            for j in range(8):
                acc[j] += float(values[i + j])
            i += 8
        total = ((acc[0] + acc[1]) + (acc[2] + acc[3])) + ((acc[4] + acc[5]) + (acc[6] + acc[7]))
        depth = (i // 8 - 1) + 3
        for x in values[i:]:
            total += float(x)
        return total, depth + n % 8
    half = n // 2
    half -= half % 8
    left, dl = replayed_sum(values[:half])
    right, dr = replayed_sum(values[half:])
    return left + right, 1 + max(dl, dr)


@pytest.mark.parametrize("n", [1, 5, 8, 9, 100, 127, 128, 129, 255, 1000, 4097, 8193, 10_000, 20_001])
def test_numpy_sums_in_the_replayed_order_with_the_stated_depth(n):
    # The bounds assume this order (rows of a 2-row block too, as the float route sums them).
    rng = np.random.default_rng(n)
    x = rng.random(n) * np.exp(rng.normal(0, 8, n))
    total, depth = replayed_sum(list(x))
    assert np.add.reduce(x) == total
    block = np.empty((2, n + 3))
    block[0, :n] = x
    block[1, :n] = x[::-1]
    rows = np.add.reduce(block[:, :n], axis=1)
    assert rows[0] == total and rows[1] == replayed_sum(list(x[::-1]))[0]
    assert pairwise_depth(n) == depth


def errors(a, b):
    """Actual errors of float point *a* against exact point *b*, in the sense of the bounds."""
    return {
        "ln_partition_function": abs(a.ln_partition_function_approx - b.ln_partition_function_approx),
        "mean_energy": abs(a.mean_energy_approx / b.mean_energy_approx - 1),
        "heat_capacity": abs(a.heat_capacity_approx / b.heat_capacity_approx - 1),
        "occupations": max(abs(x / y - 1) for x, y in zip(a.occupations_approx, b.occupations_approx)),
    }


@pytest.mark.parametrize("temperature", ["0.3", "1", "3", "6", "10", "20"])
def test_float_route_is_within_its_bounds_against_the_exact_recursion(temperature):
    # 1000 bosons in the 3D trap (T_c about 9.5 spacings): the exact route at 25 digits is the reference.
    system = make_system(1000, preset="trap", rule="BE")
    (a,) = canonical(system, [temperature], digits=20, levels=4, route="float", grand=False)
    (b,) = canonical(system, [temperature], digits=25, levels=4, route="recursion", grand=False)
    assert a.route == "float" and b.route == "recursion"
    actual = errors(a, b)
    for key in REPORTED:
        assert actual[key] <= a.error_bounds[key], key
    # The level-0 variance (⟨δn_0²⟩, without the cancellation of ⟨n_0²⟩ - ⟨n_0⟩²) is bounded as well.
    *_, extras = canonical_float(system, Fraction(temperature), 4)
    var_error = abs(a.ground_occupation_variance_approx / b.ground_occupation_variance_approx - 1)
    assert var_error <= extras["all_bounds"]["ground_occupation_variance"]
    # Far tighter than the bound this route had before, u (N(N+1)/2 + 12N) (2 + 6K) with
    # K = U^2 / Var E: about 1e-6 here even at its best.
    assert a.error_bounds["heat_capacity"] < 1e-8
    assert a.error_bounds["ln_partition_function"] < 1e-11


def test_float_route_on_a_finite_spectrum_against_brute_force():
    # 7 bosons on levels 0, 1, 2, 4 (degeneracies 1, 2, 2, 3): every microstate enumerated.
    energies, degeneracies, n = [0, 1, 2, 4], [1, 2, 2, 3], 7
    system = make_system(n, energies=energies, degeneracies=degeneracies, rule="BE")
    state_energy = [e for e, g in zip(energies, degeneracies) for _ in range(g)]
    state_level = [i for i, g in enumerate(degeneracies) for _ in range(g)]
    for temperature in ("1/2", "3"):
        (a,) = canonical(system, [temperature], digits=20, route="float", grand=False)
        with mpmath.workdps(40):
            beta = 1 / mpmath.mpf(Fraction(temperature).numerator) * Fraction(temperature).denominator
            z = m1 = m2 = mpmath.mpf(0)
            occ = [mpmath.mpf(0)] * len(energies)
            for combo in level_microstates(len(state_energy), n, "BE"):
                energy = sum(state_energy[s] for s in combo)
                weight = mpmath.exp(-beta * energy)
                z += weight
                m1 += weight * energy
                m2 += weight * energy * energy
                for s in combo:
                    occ[state_level[s]] += weight
            mean = m1 / z
            heat = (m2 / z - mean * mean) * beta * beta
            checks = {
                "ln_partition_function": abs(a.ln_partition_function_approx - mpmath.log(z)),
                "mean_energy": abs(a.mean_energy_approx / mean - 1),
                "heat_capacity": abs(a.heat_capacity_approx / heat - 1),
                "occupations": max(abs(x / (y / z) - 1) for x, y in zip(a.occupations_approx, occ)),
            }
        for key in REPORTED:
            assert checks[key] <= a.error_bounds[key], key
        assert a.error_bounds["heat_capacity"] < 1e-12


def test_auto_takes_the_float_route_only_when_its_bounds_meet_the_digits():
    # 1000 bosons at k_B T = 10 spacings (about T_c): the exact recursion is estimated the slower here.
    system = make_system(1000, preset="trap", rule="BE")
    (fast,) = canonical(system, ["10"], digits=6, levels=3, grand=False)
    assert fast.route == "float"
    assert all(fast.error_bounds[key] <= 1e-6 for key in ("mean_energy", "heat_capacity", "occupations"))
    (exact,) = canonical(system, ["10"], digits=15, levels=3, grand=False)
    assert exact.route == "recursion" and exact.error_bounds is None
    # 6 digits asked, and met: the exact route at 15 digits (an independent arithmetic) agrees.
    for key, value in errors(fast, exact).items():
        assert value <= max(fast.error_bounds[key], 1e-14) and fast.error_bounds[key] <= 1e-6, key
    # 12 digits: more than this route's bounds promise here, so the exact recursion.
    (strict,) = canonical(system, ["10"], digits=12, levels=3, grand=False)
    assert strict.route == "recursion"
    # Fermions never take it, whatever the digits.
    (fermions,) = canonical(make_system(1000, preset="trap", rule="FD"), ["30"], digits=6, levels=1, grand=False)
    assert fermions.route != "float"


def test_float_bounds_stay_finite_and_small_for_ten_thousand_bosons_at_high_temperature():
    # The case (N = 10^4 in the 3D trap) at k_B T = 40, where the exact recursion takes about a
    # minute: only the bounds are checked here (against the exact route: scripts/workloads_levels.py).
    system = make_system(10_000, preset="trap", rule="BE")
    *_, extras = canonical_float(system, Fraction(40), 3)
    bounds = extras["all_bounds"]
    assert all(math.isfinite(v) for v in bounds.values())
    assert bounds["heat_capacity"] < 1e-6 and bounds["ground_occupation_variance"] < 1e-6


def test_temperatures_in_one_pass_are_each_within_their_bounds():
    # canonical_float_many shares one window across the temperatures of a pass (the largest any needs):
    # every point must still be within its own bounds of the exact recursion (25 digits), and agree with
    # the same temperature computed alone within the two bounds together.
    system = make_system(1000, preset="trap", rule="BE")
    temperatures = [Fraction(1, 2), Fraction(7), Fraction(9), Fraction(15), Fraction(40)]
    batch = canonical_float_many(system, temperatures, 3)
    for temperature, together in zip(temperatures, batch):
        (b,) = canonical(system, [temperature], digits=25, levels=3, route="recursion", grand=False)
        alone = canonical_float(system, temperature, 3)
        bounds = together[6]["all_bounds"]
        assert abs(together[0] - b.ln_partition_function_approx) <= bounds["ln_partition_function"]
        assert abs(together[1] / b.mean_energy_approx - 1) <= bounds["mean_energy"]
        assert abs(together[2] / b.heat_capacity_approx - 1) <= bounds["heat_capacity"]
        for x, y in zip(together[5], b.occupations_approx):
            assert abs(x / y - 1) <= bounds["occupations"]
        both = bounds["heat_capacity"] + alone[6]["all_bounds"]["heat_capacity"]
        assert abs(together[2] / alone[2] - 1) <= both


def test_a_temperature_beyond_the_double_range_does_not_sink_its_pass():
    # k_B T = 10^300 spacings: the one-particle sums pass the double range, so that temperature alone
    # comes back as the refusal and the route "auto" gives it to the exact recursion (equipartition:
    # C -> 3N, common practice); the others of the pass keep the float route.
    system = make_system(3, preset="trap", rule="BE")
    results = canonical_float_many(system, [Fraction(2), Fraction(10**300), Fraction(5)], 2)
    assert isinstance(results[1], TooLarge)
    assert not isinstance(results[0], TooLarge) and not isinstance(results[2], TooLarge)
    points = canonical(system, [Fraction(2), Fraction(10**300)], digits=8, levels=2)
    assert points[1].route == "recursion"
    assert abs(points[1].heat_capacity_approx - 9) < 1e-6
