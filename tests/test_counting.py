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
from strategies import small_models as shared_small_models
from sympy.functions.combinatorial.numbers import nT, partition, stirling

from enumerator import Occupancy
from enumerator.algorithms.counting import (
    configuration_probability,
    configuration_weight,
    count_configurations,
    count_microstates,
    count_profiles,
    counting_cost,
    multinomial,
    over_prime_power,
    partitions_at_most,
    power_primes,
    twelvefold,
)
from enumerator.core.errors import TooLarge
from enumerator.core.limits import Cost, limited
from enumerator.core.model import UrnModel

# ---------------------------------------------------------------------------
# brute force on small random models (hypothesis picks them)
# ---------------------------------------------------------------------------

def small_models():
    """Small uniform or per-urn models of every rule (the shared strategy, at this module's sizes)."""
    return shared_small_models(max_urns=5, max_balls=9, shapes=("uniform", "per-urn"), lows=2, span=4)
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

    n, r = 50000, 3000
    exact = Occupancy(balls=n, urns=r, rule="BE").configurations()
    with mpmath.workdps(60):  # not mp.dps = 60: that leaked into every later test
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


# ---------------------------------------------------------------------------
# urn groups and weights
# ---------------------------------------------------------------------------

WEIGHTS = [1, 1, 2, 3, Fraction(1, 2), Fraction(2, 3)]


def _per_urn_series(model):
    """Slow reference: the generating function built urn by urn with Fractions (a per-urn DP).

    MB: ``n! [x^n] prod_i sum_{k=a_i}^{b_i} (w_i x)^k / k!``; BE/FD: the same
    without the factorials.  One polynomial multiplication per urn, so keep
    the urns few.
    """
    n = model.balls
    labelled = model.rule.value == "MB"
    row = [Fraction(1)] + [Fraction(0)] * n
    configurations = [1] + [0] * n
    for (a, b), w in zip(model.bounds, model.weights):
        top = n if b is None else min(b, n)
        factor = {k: w ** k / (math.factorial(k) if labelled else 1) for k in range(a, top + 1)}
        row = [sum(row[m - k] * f for k, f in factor.items() if k <= m) for m in range(n + 1)]
        configurations = [sum(configurations[m - k] for k in factor if k <= m) for m in range(n + 1)]
    total = row[n] * (math.factorial(n) if labelled else 1)
    return configurations[n], total


def _brute_weights(model):
    """Slow reference: every admissible vector with its weight, by exhaustive enumeration."""
    out = {}
    for k in reference.box(model):
        w = Fraction(reference.weight(model, k))
        for ki, wi in zip(k, model.weights):
            w *= wi ** ki
        out[k] = w
    return out


@st.composite
def grouped_models(draw, max_urns=5, max_balls=8):
    rule = draw(st.sampled_from(["MB", "BE", "FD"]))
    groups = []
    urns = 0
    for _ in range(draw(st.integers(1, 3))):
        count = draw(st.integers(1, max(1, max_urns - urns)))
        urns += count
        if rule == "FD":
            a, b = draw(st.integers(0, 1)), 1
        else:
            a = draw(st.integers(0, 2))
            b = draw(st.one_of(st.none(), st.integers(a, a + 3)))
        groups.append((count, a, b, draw(st.sampled_from(WEIGHTS))))
        if urns >= max_urns:
            break
    return UrnModel(balls=draw(st.integers(0, max_balls)), groups=groups, rule=rule)


@settings(max_examples=250, deadline=None)
@given(grouped_models())
def test_weighted_groups_match_brute_force(model):
    # reference: exhaustive enumeration of the box, weights multiplied in Fractions
    weights = _brute_weights(model)
    total = sum(weights.values(), Fraction(0))
    assert count_configurations(model) == len(weights)
    assert count_microstates(model) == total
    for k, w in weights.items():
        assert configuration_weight(model, k) == w
        assert configuration_probability(model, k) == w / total
    if weights:
        assert sum(configuration_probability(model, k) for k in weights) == 1


@settings(max_examples=80, deadline=None)
@given(grouped_models())
def test_grouped_model_equals_the_same_model_per_urn(model):
    # the same urns given one by one (bounds and weights lists) must give the same answers
    per_urn = UrnModel(balls=model.balls, bounds=list(model.bounds), weights=list(model.weights), rule=model.rule)
    assert count_configurations(per_urn) == count_configurations(model)
    assert count_microstates(per_urn) == count_microstates(model)
    assert count_profiles(per_urn) == count_profiles(model)


@st.composite
def many_bounded_urns(draw):
    """A large group of bounded urns (count above 4 (n + 1): Miller's recurrence) and a small model beside it."""
    n = draw(st.integers(3, 6))
    big = (draw(st.integers(30, 60)), 0, draw(st.integers(1, 2)), draw(st.sampled_from(WEIGHTS)))
    rest = draw(grouped_models(max_urns=3, max_balls=4))
    return UrnModel(balls=n, groups=[big] + [(g.count, g.lower, g.upper, g.weight) for g in rest.groups],
                    rule=draw(st.sampled_from(["MB", "BE"])))


@settings(max_examples=60, deadline=None)
@given(many_bounded_urns())
def test_many_urns_few_balls_against_a_per_urn_product(model):
    # reference: the per-urn product (_per_urn_series)
    configurations, total = _per_urn_series(model)
    assert count_configurations(model) == configurations
    assert count_microstates(model) == total


@pytest.mark.parametrize("rule, groups, n", [
    # Miller's recurrence: many bounded urns from 0 (exponent above 4 (n + 1))
    ("MB", [(40, 0, 2, 1), (3, 1, None, 1)], 5),
    ("MB", [(60, 0, 1, Fraction(2, 3)), (2, 0, None, 3)], 6),
    # a lower bound without an upper one, several urns (the level recursion)
    ("MB", [(3, 2, None, 1), (2, 0, 3, 2)], 9),
    ("MB", [(2, 1, None, Fraction(1, 2)), (2, 1, None, 3), (1, 0, None, 5)], 8),
    # weighted BE/FD rows: bounded, unbounded and capped groups
    ("BE", [(30, 0, 2, 2), (4, 1, None, Fraction(1, 3))], 7),
    ("FD", [(25, 0, 1, Fraction(3, 2)), (10, 1, 1, 2), (5, 0, 1, 1)], 14),
])
def test_group_routes_against_a_per_urn_product(rule, groups, n):
    # reference: the generating function multiplied out urn by urn (_per_urn_series)
    model = UrnModel(balls=n, groups=groups, rule=rule)
    configurations, total = _per_urn_series(model)
    assert count_configurations(model) == configurations
    assert count_microstates(model) == total


def test_results_are_int_when_integral_and_fraction_otherwise():
    m = UrnModel(balls=3, weights=[1, 2], rule="MB")
    assert type(count_microstates(m)) is int and count_microstates(m) == 27   # (1 + 2)^3
    half = UrnModel(balls=3, weights=["1/2", "1/2"], rule="BE")
    # equal weights: the count times w^n (4 configurations, each of weight 1/8)
    assert count_microstates(half) == Fraction(1, 2)
    assert type(configuration_weight(half, (2, 1))) is Fraction


def test_weighted_mb_without_bounds_is_the_multinomial_law():
    # reference: scipy.stats.multinomial.pmf with p_i = w_i / sum w, to float precision
    from scipy.stats import multinomial as scipy_multinomial

    weights = [1, 2, 3, Fraction(1, 2)]
    m = UrnModel(balls=9, weights=weights, rule="MB")
    p = [float(w / sum(weights)) for w in weights]
    for k in [(3, 3, 3, 0), (0, 0, 9, 0), (2, 2, 4, 1)]:
        assert float(configuration_probability(m, k)) == pytest.approx(scipy_multinomial.pmf(k, n=9, p=p), rel=1e-12)
    assert count_microstates(m) == sum(weights) ** 9      # (sum w)^n, common practice


# -- any number of urns ---------------------------------------------------------

HUGE = [2**32, 2**64, 3**50]


@pytest.mark.parametrize("r", HUGE)
def test_closed_forms_at_huge_urn_counts(r):
    # reference: Python math.comb and integer powers
    n = 10
    assert count_configurations(UrnModel(balls=n, urns=r, rule="BE")) == math.comb(n + r - 1, n)
    assert count_configurations(UrnModel(balls=n, urns=r, rule="FD")) == math.comb(r, n)
    assert count_microstates(UrnModel(balls=n, urns=r, rule="MB")) == r ** n
    assert count_configurations(UrnModel(balls=n, urns=r, rule="BE", minimum=0, capacity=1)) == math.comb(r, n)
    w = Fraction(3, 2)
    assert count_microstates(UrnModel(balls=n, groups=[(r, 0, None, w), (5, 0, None, 1)], rule="MB")) == (r * w + 5) ** n


def _capacity_by_partitions(n, r, c, labelled):
    """Reference: sum over the partitions lambda of n with parts <= c of the vectors with that profile.

    r (r-1) ... (r - l + 1) / prod m_i! vectors have profile lambda (l parts,
    m_i parts equal to i), each with weight n!/prod lambda_j! under MB.
    """
    from sympy.utilities.iterables import partitions

    total = 0
    for part in partitions(n, k=c):
        length = sum(part.values())
        vectors = math.perm(r, length)
        for times in part.values():
            vectors //= math.factorial(times)
        weight = math.factorial(n)
        for size, times in part.items():
            weight //= math.factorial(size) ** times
        total += vectors * (weight if labelled else 1)
    return total


@pytest.mark.parametrize("r", HUGE)
def test_capacity_at_huge_urn_counts_against_profiles(r):
    # reference: the profile sum above (sympy partitions, math.perm)
    n, c = 10, 3
    assert count_configurations(UrnModel(balls=n, urns=r, rule="BE", capacity=c)) == _capacity_by_partitions(n, r, c, False)
    assert count_microstates(UrnModel(balls=n, urns=r, rule="MB", capacity=c)) == _capacity_by_partitions(n, r, c, True)


def test_groups_at_huge_urn_counts_against_profiles():
    # two groups of 2^64 urns with capacities 3 and 2: by the profile sum the
    # whole is a model with capacity 3 minus the vectors putting 3 balls in the
    # second group; instead check it against splitting the balls between the
    # groups (reference: sum_k C(n, k) A(k) B(n - k) under MB, A(k) B(n-k) under BE)
    r, n = 2**64, 9
    m = UrnModel(balls=n, groups=[(r, 0, 3), (r, 0, 2)], rule="MB")
    split = sum(math.comb(n, k) * _capacity_by_partitions(k, r, 3, True) * _capacity_by_partitions(n - k, r, 2, True)
                for k in range(n + 1))
    assert count_microstates(m) == split
    be = m.with_rule("BE")
    split = sum(_capacity_by_partitions(k, r, 3, False) * _capacity_by_partitions(n - k, r, 2, False)
                for k in range(n + 1))
    assert count_configurations(be) == split


def test_profiles_at_huge_urn_counts_are_partition_numbers():
    # OEIS A000041: p(10) = 42, p(30) = 5604
    assert count_profiles(UrnModel(balls=10, urns=2**64, rule="BE")) == 42
    assert count_profiles(UrnModel(balls=30, urns=2**64, rule="MB")) == 5604


def test_twelvefold_at_huge_urn_counts():
    # references: Python integers and math.comb; OEIS A000110 Bell(10) = 115975,
    # OEIS A000041 p(10) = 42
    n, r = 10, 2**64
    w = _ways(n, r)
    assert w[("labelled", "labelled", "any")] == r ** n
    assert w[("labelled", "labelled", "at_most_one")] == math.perm(r, n)
    assert w[("labelled", "labelled", "at_least_one")] == 0
    assert w[("unlabelled", "labelled", "any")] == math.comb(n + r - 1, n)
    assert w[("labelled", "unlabelled", "any")] == 115975
    assert w[("labelled", "unlabelled", "at_least_one")] == 0
    assert w[("unlabelled", "unlabelled", "any")] == 42


def test_surjections_by_groups_against_stirling_numbers():
    # OEIS A008277 (Stirling numbers of the second kind), row n = 8:
    # 1, 127, 966, 1701, 1050, 266, 28, 1; the urns are split into two groups
    # with different (ineffective) capacities so the grouped route is used
    a008277 = [1, 127, 966, 1701, 1050, 266, 28, 1]
    n = 8
    for k, s in enumerate(a008277, start=1):
        groups = [(1, 1, None)] + ([(k - 1, 1, n + 5)] if k > 1 else [])
        assert count_microstates(UrnModel(balls=n, groups=groups, rule="MB")) == math.factorial(k) * s


def test_mb_with_one_occupied_urn_and_large_n():
    # n = 20000, bounds 1:,0:,0: under MB: 3^n - 2^n (inclusion–exclusion, common practice)
    n = 20000
    m = UrnModel(balls=n, bounds="1:,0:,0:", rule="MB")
    assert counting_cost(m, "microstates").memory < 2**30
    assert count_microstates(m) == 3**n - 2**n


# -- refusing before computing ------------------------------------------------

def test_cost_is_stated_without_computing():
    cost = counting_cost(UrnModel(balls=10**7, urns=50, rule="MB", capacity=3), "microstates")
    assert isinstance(cost, Cost) and cost.seconds > 0 and cost.memory > 0
    small = counting_cost(UrnModel(balls=10, urns=2**64, rule="MB", capacity=3), "microstates")
    assert small.memory < 10**6
    with pytest.raises(Exception, match="configurations, microstates or profiles"):
        counting_cost(UrnModel(balls=1, urns=1), "energy")


def test_work_beyond_the_limits_is_refused():
    with limited(memory="1M"):
        with pytest.raises(TooLarge, match="max_memory="):
            count_microstates(UrnModel(balls=200000, urns=500, rule="MB", capacity=700))
        with pytest.raises(TooLarge, match="max_memory="):
            count_profiles(UrnModel(balls=200000, urns=5, rule="BE"))


def test_twelvefold_refuses_a_billion_balls_before_computing():
    # 3^(10^9) has 477 million digits, and the partition rows would need 10^9 entries
    with pytest.raises(TooLarge, match="use fewer balls"):
        twelvefold(10**9, 3)


@pytest.mark.parametrize("n, r, c", [(40, 6, 30), (25, 4, 13), (60, 3, 45), (12, 9, 7)])
def test_mb_capacity_near_n_against_a_per_urn_product(n, r, c):
    # few urns can overflow (inclusion–exclusion over them); reference: _per_urn_series
    model = UrnModel(balls=n, urns=r, rule="MB", capacity=c)
    assert count_microstates(model) == _per_urn_series(model)[1]


def test_mb_capacity_one_below_n_at_large_n():
    # at most one urn can exceed n - 2: r^n - r (1 + n (r - 1)) (inclusion–exclusion, common practice)
    n, r = 20000, 10000
    assert count_microstates(UrnModel(balls=n, urns=r, rule="MB", capacity=n - 2)) == r**n - r * (1 + n * (r - 1))
