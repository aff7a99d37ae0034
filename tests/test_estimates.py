"""The planner's estimates are upper bounds on memory and near the CPU time, and grow with the size.

The recorded measurements come from ``scripts/measure_estimates.py`` (CPU
time and peak RSS of a child process above the command's own start, 2 cores
under a load of 4-5, 2026-12) and from the same measurement of the route
alone; each check names its command.  No timing is measured here: the
formulas are checked against those recorded figures, and one cheap child
process measures the peak memory of a FLINT power.
"""

from __future__ import annotations

import json
import subprocess
import sys
from fractions import Fraction

import pytest

from enumerator.algorithms.counting_costs import (
    capacity_overflow_cost,
    counting_cost,
    flint_power_cost,
    log2_factorial_approx,
)
from enumerator.algorithms.levels import make_system
from enumerator.algorithms.levels.occupation import exact_law_cost
from enumerator.algorithms.threshold import exact_pair_cost
from enumerator.core.limits import decimal_seconds, gcd_seconds, multiply_seconds, product_seconds
from enumerator.core.model import UrnModel

MB = 10**6


def _nondecreasing(values):
    return all(a <= b for a, b in zip(values, values[1:]))


# ---------------------------------------------------------------- monotone in the size

def test_count_estimates_grow_with_the_balls():
    costs = [counting_cost(UrnModel(balls=n, urns=7, capacity=n // 5), "microstates")
             for n in (1000, 2000, 5000, 10000, 20000, 40000)]
    assert _nondecreasing([c.seconds for c in costs]) and _nondecreasing([c.memory for c in costs])
    grouped = [counting_cost(UrnModel(balls=n, bounds=f"7x0:{n // 5},1x0:"), "microstates")
               for n in (1000, 2000, 3000, 5000, 7000)]
    assert _nondecreasing([c.seconds for c in grouped]) and _nondecreasing([c.memory for c in grouped])


def test_flint_power_and_overflow_estimates_grow_with_each_size():
    def power(target, span, exponent):
        return flint_power_cost(target, span, exponent, exponent * log2_factorial_approx(span) + 64)

    for sizes in ([power(t, 600, 7) for t in (1000, 3000, 4200, 8000)],
                  [power(5000, s, 7) for s in (100, 400, 1000, 3000)],
                  [power(5000, 250, c) for c in (2, 3, 7, 20, 100)],
                  [capacity_overflow_cost(n, 7, 1000) for n in (2000, 5000, 10000, 20000)],
                  [capacity_overflow_cost(20000, r, 1000) for r in (7, 20, 50)]):
        assert _nondecreasing([c.seconds for c in sizes]) and _nondecreasing([c.memory for c in sizes])


def test_exact_law_and_exact_pair_estimates_grow_with_the_size():
    laws = [exact_law_cost(make_system(n, preset="trap", rule="BE"), "9/10") for n in (10, 50, 100, 200)]
    assert _nondecreasing([c.seconds for c in laws]) and _nondecreasing([c.memory for c in laws])
    pairs = [exact_pair_cost(UrnModel(balls=2**k, urns=2**(2 * k)), "urns", 2**(2 * k))[0] for k in (8, 12, 16, 20)]
    assert _nondecreasing([c.seconds for c in pairs]) and _nondecreasing([c.memory for c in pairs])


def test_measured_rates_grow_with_the_bits():
    sizes = [10**3, 10**4, 10**6, 10**8]
    for rate in (multiply_seconds, gcd_seconds, decimal_seconds, product_seconds):
        assert _nondecreasing([rate(b) for b in sizes])


# ---------------------------------------------------------------- above the recorded peaks

# (command, peak RSS above the command's start in MB of 10^6 bytes, CPU seconds), measured by
# scripts/measure_estimates.py --full (load 0.5-1.6, 2026-12-02); each estimate must be at least the peak and at
# most three times it, and within a factor 2.5 of the CPU time either way.
COUNTS = [
    # the capacity-overflow route
    (dict(balls=5000, urns=7, capacity=1000), 4.4, 0.08),
    (dict(balls=10000, urns=7, capacity=2000), 15.1, 0.38),
    (dict(balls=20000, urns=7, capacity=4000), 60.9, 1.99),
    # FLINT powers of the bounded group, then one dot product with the free urn
    (dict(balls=3000, bounds="7x0:600,1x0:"), 165.5, 0.65),
    (dict(balls=5000, bounds="7x0:1000,1x0:"), 229.0, 2.07),
    (dict(balls=7000, bounds="7x0:1400,1x0:"), 733.2, 4.8),
    # two FLINT powers and their product
    (dict(balls=4000, bounds="7x0:800,5x0:700"), 365.3, 2.58),
]


@pytest.mark.parametrize("spec, peak_mb, cpu", COUNTS)
def test_count_estimate_is_above_the_measured_peak(spec, peak_mb, cpu):
    model = UrnModel(**spec)
    cost = counting_cost(model, "configurations") + counting_cost(model, "microstates")
    assert peak_mb * MB <= cost.memory <= 3 * peak_mb * MB
    assert cpu / 2.5 <= cost.seconds <= cpu * 2.5


def test_the_reported_oom_case_is_priced_above_its_peak():
    # count -n 20000 -r 7 --capacity 4000 peaked at 6.0 GB RSS by a FLINT power of
    # 28001 coefficients of 294,000 bits; the estimate of that power must cover it
    # (measured 6.1 U, U = 1.03 GB), and the planner now takes the overflow route (measured 61 MB, 2.0 s).
    power = flint_power_cost(20000, 4000, 7, 7 * log2_factorial_approx(4000) + 64)
    assert power.memory >= 6.0e9
    route = counting_cost(UrnModel(balls=20000, urns=7, capacity=4000), "microstates")
    assert route.memory < 4 * 2**30 and route.seconds < power.seconds


@pytest.mark.parametrize("particles, peak_mb, cpu", [(100, 10.9, 1.62), (140, 29.7, 7.55), (170, 52.7, 18.1),
                                                     (200, 86.6, 40.4)])
def test_exact_law_estimate_is_above_the_measured_peak(particles, peak_mb, cpu):
    # levels --preset trap --particles N --rule BE --factor 9/10 --occupation-law 0 --json
    cost = exact_law_cost(make_system(particles, preset="trap", rule="BE"), Fraction(9, 10))
    assert peak_mb * MB <= cost.memory <= 3 * peak_mb * MB
    assert cpu / 2.5 <= cost.seconds <= cpu * 2.5


@pytest.mark.parametrize("k, peak_mb, cpu", [(16, 14.2, 1.14), (18, 60.5, 7.71), (20, 258.9, 47.05)])
def test_exact_pair_estimate_is_above_the_measured_peak(k, peak_mb, cpu):
    # threshold --vary urns -n 2^k --event "max <= 1" --target 1/2 --json; the estimate is taken at the
    # birthday approximation of the answer, r ~ n^2 / (2 ln 2) (Feller, vol. 1, §II.3): it depends on r only
    # through log2 r (the command answered 3,098,138,581 at k = 16, against 3,098,164,009 here)
    import math

    n = 2**k
    value = round(n * n / (2 * math.log(2)))
    cost, _ = exact_pair_cost(UrnModel(balls=n, urns=value), "urns", value)
    assert peak_mb * MB <= cost.memory <= 3 * peak_mb * MB
    assert cpu / 2.5 <= cost.seconds <= cpu * 2.5


# ---------------------------------------------------------------- one cheap measurement

_POWER_CHILD = r"""
import json, resource, sys
from flint import fmpz_poly
from enumerator.core import series
target, span, exponent = map(int, sys.argv[1:4])
values, c = [0] * (span + 1), 1
for k in range(span, -1, -1):          # span!/k!, the factorial-scaled exponential window
    values[k] = c
    c *= max(k, 1)
base = fmpz_poly(values)
before = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
power = series.power(base, exponent, target)
after = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
print(json.dumps({"kib": after - before, "bits": int(power[0]).bit_length()}))
"""


@pytest.mark.skipif(sys.platform != "linux", reason="ru_maxrss in KiB is Linux's")
def test_flint_power_estimate_is_above_a_measured_power():
    # (1 + x + x^2/2! + ... + x^250/250!)^20, scaled by 250!^20, up to x^5000: measured 90 MB peak
    # (4.6 U) in about 0.3 s; a child process so that the peak is this power's alone
    proc = subprocess.run([sys.executable, "-c", _POWER_CHILD, "5000", "250", "20"],
                          capture_output=True, text=True, check=True)
    report = json.loads(proc.stdout)
    # the largest coefficient is the constant term 250!^20, as the estimate assumes
    assert report["bits"] <= 20 * log2_factorial_approx(250) + 64
    cost = flint_power_cost(5000, 250, 20, 20 * log2_factorial_approx(250) + 64)
    assert report["kib"] * 1024 <= cost.memory
