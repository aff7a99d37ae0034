"""Exact counts against brute force and outside references.

Sources are named beside each check.  "from memory" marks a value recalled
rather than read from the source; every such value is also cross-checked by
an independent computation (SymPy, SciPy or brute force) in the same test.
"""

from __future__ import annotations

import math
from fractions import Fraction

import pytest
import reference
import sympy
from flint import fmpz_poly
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.special import comb as scipy_comb
from sympy.functions.combinatorial.numbers import nT, partition, stirling

from enumerator import Occupancy
from enumerator.algorithms.counting import (
    multinomial,
    over_prime_power,
    partitions_at_most,
    power_primes,
    twelvefold,
)

# ---------------------------------------------------------------------------
# brute force on small random models (hypothesis picks them)
# ---------------------------------------------------------------------------

@st.composite
def small_models(draw):
    rule = draw(st.sampled_from(["MB", "BE", "FD"]))
    r = draw(st.integers(1, 5))
    n = draw(st.integers(0, 9))
    if draw(st.booleans()):
        if rule == "FD":
            a = draw(st.integers(0, 1))
            b = draw(st.sampled_from([None, 1]))
        else:
            a = draw(st.integers(0, 2))
            b = draw(st.one_of(st.none(), st.integers(a, a + 4)))
        return Occupancy(balls=n, urns=r, rule=rule, minimum=a, capacity=b)
    bounds = []
    for _ in range(r):
        if rule == "FD":
            a = draw(st.integers(0, 1))
            b = draw(st.sampled_from([None, 1]))
        else:
            a = draw(st.integers(0, 3))
            b = draw(st.one_of(st.none(), st.integers(a, a + 4)))
        bounds.append((a, b))
    return Occupancy(balls=n, bounds=bounds, rule=rule)


@settings(max_examples=300, deadline=None)
@given(small_models())
def test_counts_match_brute_force(model):
    # reference: exhaustive enumeration of the bounded box (tests/reference.py)
    assert (model.configurations(), model.microstates(), model.profiles()) == reference.counts(model)


@settings(max_examples=150, deadline=None)
@given(small_models())
def test_probabilities_match_brute_force_and_sum_to_one(model):
    exact = reference.probabilities(model)
    for k, p in exact.items():
        assert model.probability(k) == p
    if exact:
        assert sum(model.probability(k) for k in exact) == 1


def test_public_results_are_python_ints_and_fractions():
    m = Occupancy(balls=7, urns=4, rule="MB", capacity=3)
    assert type(m.configurations()) is int
    assert type(m.microstates()) is int
    assert type(m.probability((3, 2, 1, 1))) is Fraction


# ---------------------------------------------------------------------------
# closed forms against reference libraries
# ---------------------------------------------------------------------------

@pytest.mark.parametrize("n,r", [(0, 1), (1, 1), (5, 3), (10, 10), (37, 12), (200, 60)])
def test_bose_einstein_is_stars_and_bars(n, r):
    # C(n+r-1, n): Feller vol. 1, §II.5 (from memory); value from scipy.special.comb(exact=True)
    assert Occupancy(balls=n, urns=r, rule="BE").configurations() == scipy_comb(n + r - 1, n, exact=True)


@pytest.mark.parametrize("n,r", [(0, 1), (2, 5), (5, 5), (7, 30), (40, 100)])
def test_fermi_dirac_is_binomial(n, r):
    # C(r, n): Feller vol. 1, §II.5 (from memory); value from sympy.binomial
    assert Occupancy(balls=n, urns=r, rule="FD").configurations() == int(sympy.binomial(r, n))


def test_fermi_dirac_more_balls_than_urns_has_no_configuration():
    m = Occupancy(balls=6, urns=5, rule="FD")
    assert m.configurations() == 0 and m.microstates() == 0


@pytest.mark.parametrize("n,r", [(0, 3), (4, 3), (10, 7), (50, 13)])
def test_maxwell_boltzmann_is_power(n, r):
    # r^n assignments of n labelled balls (common practice)
    assert Occupancy(balls=n, urns=r, rule="MB").microstates() == r ** n


# Stirling numbers of the second kind, Abramowitz & Stegun, Handbook of
# Mathematical Functions, Table 24.4 (values from memory), each also checked
# against sympy.functions.combinatorial.numbers.stirling.
STIRLING2 = {(4, 2): 7, (5, 3): 25, (6, 3): 90, (7, 4): 350, (8, 4): 1701, (10, 5): 42525, (10, 3): 9330}


@pytest.mark.parametrize("nk,value", sorted(STIRLING2.items()))
def test_surjections_are_factorial_times_stirling(nk, value):
    n, k = nk
    assert int(stirling(n, k)) == value
    m = Occupancy(balls=n, urns=k, rule="MB", minimum=1)
    assert m.microstates() == math.factorial(k) * value


def test_ordered_bell_numbers_from_surjection_counts():
    # OEIS A000670 (Fubini numbers): 1, 1, 3, 13, 75, 541, 4683, 47293, 545835
    fubini = [1, 1, 3, 13, 75, 541, 4683, 47293, 545835]
    for n, expected in enumerate(fubini):
        total = 1 if n == 0 else sum(
            Occupancy(balls=n, urns=k, rule="MB", minimum=1).microstates() for k in range(1, n + 1)
        )
        assert total == expected


def test_central_trinomial_coefficients():
    # OEIS A002426: [x^n](1+x+x^2)^n = 1, 1, 3, 7, 19, 51, 141, 393, 1107, 3139, 8953
    a002426 = [1, 1, 3, 7, 19, 51, 141, 393, 1107, 3139, 8953]
    for n, expected in enumerate(a002426):
        urns = max(n, 1)
        assert Occupancy(balls=n, urns=urns, rule="BE", capacity=2).configurations() == (expected if n else 1)


def test_textbook_two_balls_three_cells():
    # Feller vol. 1, §II.5, the three statistics for r = 3 cells and n = 2
    # balls (from memory): 9 MB arrangements, 6 BE, 3 FD.
    assert Occupancy(balls=2, urns=3, rule="MB").microstates() == 9
    assert Occupancy(balls=2, urns=3, rule="BE").configurations() == 6
    assert Occupancy(balls=2, urns=3, rule="FD").configurations() == 3
    # MB: the vector (1, 1, 0) has 2 of the 9 assignments; BE: 1 of 6.
    assert Occupancy(balls=2, urns=3, rule="MB").probability((1, 1, 0)) == Fraction(2, 9)
    assert Occupancy(balls=2, urns=3, rule="BE").probability((1, 1, 0)) == Fraction(1, 6)
    assert Occupancy(balls=2, urns=3, rule="FD").probability((1, 1, 0)) == Fraction(1, 3)


def test_multinomial_probability_against_scipy():
    # scipy.stats.multinomial.pmf, to float precision
    from scipy.stats import multinomial as scipy_multinomial

    m = Occupancy(balls=12, urns=4, rule="MB")
    for k in [(3, 3, 3, 3), (12, 0, 0, 0), (5, 4, 2, 1), (0, 6, 6, 0)]:
        exact = m.probability(k)
        assert float(exact) == pytest.approx(scipy_multinomial.pmf(k, n=12, p=[0.25] * 4), rel=1e-12)


def test_uniform_minimum_shifts_the_balls():
    # with a uniform lower bound a, n -> n - r a (common practice)
    m = Occupancy(balls=20, urns=4, rule="BE", minimum=3)
    assert m.configurations() == math.comb(20 - 12 + 3, 3)
    assert Occupancy(balls=11, urns=4, rule="BE", minimum=3).configurations() == 0


# ---------------------------------------------------------------------------
# large counts checked by an independent method
# ---------------------------------------------------------------------------

def test_thousand_digit_capacity_count_against_flint_power():
    # inclusion–exclusion (enumerator) against the coefficient of a full
    # polynomial power computed by FLINT (python-flint fmpz_poly)
    n, r, c = 4000, 1500, 5
    ours = Occupancy(balls=n, urns=r, rule="BE", capacity=c).configurations()
    theirs = int((fmpz_poly([1] * (c + 1)) ** r)[n])
    assert ours == theirs
    assert len(str(ours)) > 1000


def test_thousand_digit_surjections_against_inclusion_exclusion():
    # r! S(n, r) = sum_j (-1)^j C(r, j) (r - j)^n  (Abramowitz & Stegun 24.1.4)
    n, r = 1500, 400
    ours = Occupancy(balls=n, urns=r, rule="MB", minimum=1).microstates()
    theirs = sum((-1) ** j * math.comb(r, j) * (r - j) ** n for j in range(r + 1))
    assert ours == theirs
    assert len(str(ours)) > 1000


def test_thousand_digit_bounded_mb_against_sympy_poly():
    # MB with capacity: n! [x^n] (sum_{k<=c} x^k/k!)^r with SymPy's exact
    # rational Poly arithmetic as the independent method
    n, r, c = 700, 150, 6
    x = sympy.symbols("x")
    egf = sympy.Poly(sum(x ** k / sympy.factorial(k) for k in range(c + 1)), x, domain="QQ")
    coefficient = (egf ** r).coeff_monomial(x ** n)
    theirs = coefficient * sympy.factorial(n)
    ours = Occupancy(balls=n, urns=r, rule="MB", capacity=c).microstates()
    assert ours == int(theirs)
    assert len(str(ours)) > 1000


def test_per_urn_bounds_against_flint_product_tree():
    # the benchmark's shape: r = 300 urns, upper bound (i mod 10) + 1
    bounds = [(0, (i % 10) + 1) for i in range(300)]
    polys = [fmpz_poly([1] * (b + 1)) for _, b in bounds]
    product = fmpz_poly([1])
    for p in polys:
        product *= p
    assert Occupancy(balls=800, bounds=bounds, rule="BE").configurations() == int(product[800])


def test_mpmath_log_of_a_large_binomial():
    # mpmath.loggamma as an independent, approximate route: ln C(n+r-1, n)
    import mpmath

    mpmath.mp.dps = 60
    n, r = 50000, 3000
    exact = Occupancy(balls=n, urns=r, rule="BE").configurations()
    approx = mpmath.loggamma(n + r) - mpmath.loggamma(n + 1) - mpmath.loggamma(r)
    assert abs(mpmath.log(exact) - approx) < mpmath.mpf(10) ** -40


# ---------------------------------------------------------------------------
# profiles and the twelvefold way
# ---------------------------------------------------------------------------

def test_profiles_are_partitions_into_at_most_r_parts():
    # OEIS A000041 partition numbers p(n), n = 0..15, when r >= n
    a000041 = [1, 1, 2, 3, 5, 7, 11, 15, 22, 30, 42, 56, 77, 101, 135, 176]
    for n, p in enumerate(a000041):
        assert Occupancy(balls=n, urns=max(n, 1), rule="BE").profiles() == p
        assert int(partition(n)) == p


def test_profiles_at_most_r_parts_against_sympy():
    # sympy nT(n, k) counts partitions of n into exactly k parts
    for n in range(0, 25):
        for r in range(1, 8):
            expected = sum(int(nT(n, k)) for k in range(0, r + 1)) if n else 1
            assert partitions_at_most(n, r) == expected


def test_profiles_with_capacity_gaussian_binomial():
    # partitions in an r x c box: coefficient of the Gaussian binomial
    # [r + c choose r]_q; checked against sympy's brute partitions
    from sympy.utilities.iterables import partitions

    for n, r, c in [(6, 3, 3), (10, 4, 4), (7, 5, 2), (12, 3, 5)]:
        expected = sum(1 for p in partitions(n, m=r, k=c))
        assert Occupancy(balls=n, urns=r, rule="BE", capacity=c).profiles() == expected


def _ways(n, r):
    return {(w["balls"], w["urns"], w["per_urn"]): w["count"] for w in twelvefold(n, r)}


@pytest.mark.parametrize("n,r", [(0, 1), (1, 1), (3, 5), (5, 3), (6, 6), (9, 4), (12, 7)])
def test_twelvefold_way_against_sympy(n, r):
    # Stanley, Enumerative Combinatorics vol. 1, §1.9 (the table's formulas,
    # from memory); values from SymPy's binomial, stirling, bell and nT
    w = _ways(n, r)
    assert w[("labelled", "labelled", "any")] == r ** n
    assert w[("labelled", "labelled", "at_most_one")] == int(sympy.ff(r, n))
    assert w[("labelled", "labelled", "at_least_one")] == int(sympy.factorial(r) * stirling(n, r))
    assert w[("unlabelled", "labelled", "any")] == int(sympy.binomial(n + r - 1, n))
    assert w[("unlabelled", "labelled", "at_most_one")] == int(sympy.binomial(r, n))
    assert w[("unlabelled", "labelled", "at_least_one")] == (int(sympy.binomial(n - 1, r - 1)) if n else 0)
    assert w[("labelled", "unlabelled", "any")] == sum(int(stirling(n, k)) for k in range(0, r + 1))
    assert w[("labelled", "unlabelled", "at_most_one")] == (1 if n <= r else 0)
    assert w[("labelled", "unlabelled", "at_least_one")] == int(stirling(n, r))
    assert w[("unlabelled", "unlabelled", "any")] == (sum(int(nT(n, k)) for k in range(1, r + 1)) if n else 1)
    assert w[("unlabelled", "unlabelled", "at_most_one")] == (1 if n <= r else 0)
    assert w[("unlabelled", "unlabelled", "at_least_one")] == (int(nT(n, r)) if n else 0)


def test_twelvefold_bell_numbers():
    # OEIS A000110 Bell numbers: 1, 1, 2, 5, 15, 52, 203, 877, 4140, 21147, 115975
    a000110 = [1, 1, 2, 5, 15, 52, 203, 877, 4140, 21147, 115975]
    for n, b in enumerate(a000110):
        assert _ways(n, max(n, 1))[("labelled", "unlabelled", "any")] == b


def test_twelvefold_has_twelve_entries_in_order():
    ways = twelvefold(4, 2)
    assert len(ways) == 12
    assert len({(w["balls"], w["urns"], w["per_urn"]) for w in ways}) == 12


def test_multinomial_helper_matches_sympy():
    assert int(multinomial([3, 2, 1])) == int(sympy.multinomial_coefficients(3, 6)[(3, 2, 1)])


@pytest.mark.parametrize("count, r, n", [(12, 3, 4), (0, 2, 5), (96, 2, 5), (1, 6, 3), (360, 6, 3), (7, 1, 9)])
def test_over_prime_power_is_the_reduced_fraction(count, r, n):
    # Reference: Python's Fraction (gcd reduction) on the same quotient.
    assert over_prime_power(count, r ** n, power_primes(r, n)) == Fraction(count, r ** n)
