"""Approximations against the exact values: known limits, orders, regimes.

Each check names its source beside it: mpmath's log-gamma and error
function, SciPy, the classical expansions in Abramowitz & Stegun and the
NIST DLMF, Robbins's bounds on Stirling's error, Cover & Thomas's type
bounds, Feller's occupancy formulas, and brute-force enumeration on small
cases (tests/reference.py).  "From memory" marks values recalled rather than
read.
"""

from __future__ import annotations

import math
from fractions import Fraction

import mpmath
import pytest
import reference
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.special import comb as scipy_comb

from enumerator import InvalidParameters, Occupancy, TooLarge
from enumerator.algorithms.asymptotics import (
    CATALOGUE,
    Point,
    apportion,
    approximation,
    compare,
    empty_urns_at_most,
    observed_order,
    parse_range,
    parse_tie,
    stirling_log_factorial,
    sweep,
)

pytestmark = pytest.mark.usefixtures("no_cache")  # pure computations: no result store (conftest.py)


def rows_of(name, vary, **fixed):
    variable, points = sweep(vary, **fixed)
    return compare(name, points, variable)


# ---------------------------------------------------------------------------
# Stirling's series
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("n", [10, 100, 1000, 10**4, 10**5])
def test_stirling_one_term_error_times_12n_tends_to_1(n):
    # ln n! from mpmath's loggamma (outside reference); the error of
    # n ln n - n + ½ ln(2πn) is 1/(12n) - 1/(360n³) + ... (A&S 6.1.41), so
    # 12n times it is 1 - 1/(30n²) + O(n^-4).
    with mpmath.workdps(60):
        scaled = (mpmath.loggamma(n + 1) - stirling_log_factorial(n, 1)) * 12 * n
        assert abs(scaled - (1 - mpmath.mpf(1) / (30 * n * n))) < mpmath.mpf(1) / n**4


@pytest.mark.parametrize("n", [1, 2, 3, 5, 10, 37, 100])
@pytest.mark.parametrize("terms", [1, 2, 3, 4])
def test_stirling_series_envelops_ln_factorial(n, terms):
    # DLMF 5.11(ii): for real n > 0 the remainder after k terms has the sign
    # of the first omitted term and is smaller in size.  ln n! exactly from
    # math.factorial through mpmath's log.
    with mpmath.workdps(50):
        exact = mpmath.log(math.factorial(n))
        error = exact - stirling_log_factorial(n, terms)
        b = mpmath.bernoulli(2 * terms)
        omitted = b / (2 * terms * (2 * terms - 1) * mpmath.mpf(n) ** (2 * terms - 1))
        assert mpmath.sign(error) == mpmath.sign(omitted)
        assert abs(error) < abs(omitted)


def test_stirling_series_at_zero_is_exact():
    # 0! = 1 (common practice): the series is not applied at 0.
    assert stirling_log_factorial(0, 3) == 0


@pytest.mark.parametrize("terms", [1, 2, 3])
def test_stirling_observed_order_matches_theory(terms):
    # Error ~ n^-(2k-1) with k terms (A&S 6.1.41; DLMF 5.11.1), urns = balls.
    result = rows_of(f"stirling{terms}", "balls=100..10000", geometric=8, urns="balls")
    assert result.order_approx == pytest.approx(2 * terms - 1, abs=0.05)


def test_stirling_exact_side_is_the_be_count():
    # C(n+r-1, n) from SciPy's exact comb (outside reference).
    result = rows_of("stirling2", "balls=5..50", step=15, urns="balls//2")
    for row in result.rows:
        n, r = row.point.balls, row.point.urns
        assert row.exact == scipy_comb(n + r - 1, n, exact=True)


def test_stirling_relative_error_of_central_count_leading_term():
    # W = C(2n-1, n) with r = n: Stirling errors 1/(12m) per factorial
    # (A&S 6.1.41) give ln(W/approx) ≈ 1/(12(2n-1)) - 1/(12n) - 1/(12(n-1)).
    n = 2000
    row = compare("stirling1", [Point(balls=n, urns=n)]).rows[0]
    predicted = abs(1 / (12 * (2 * n - 1)) - 1 / (12 * n) - 1 / (12 * (n - 1)))
    assert float(row.relative_error_approx) == pytest.approx(predicted, rel=1e-3)


def test_stirling_with_fixed_urns_does_not_converge():
    # The (r-1)! factor keeps its Stirling error when r is fixed (A&S 6.1.41):
    # ln(approx/W) = ε_2 - ε_{n+2} + ε_n -> ε_2, the error of the series at
    # r-1 = 2, so the relative error tends to the constant e^{ε_2} - 1.
    result = rows_of("stirling1", "balls=1000..100000", geometric=4, urns=3)
    assert abs(result.order_approx) < 0.05
    with mpmath.workdps(30):
        epsilon = mpmath.log(2) - stirling_log_factorial(2, 1)
    assert float(result.rows[-1].relative_error_approx) == pytest.approx(float(mpmath.exp(epsilon) - 1), rel=1e-3)


# ---------------------------------------------------------------------------
# ln W ≈ n H
# ---------------------------------------------------------------------------
@settings(max_examples=60, deadline=None)
@given(
    n=st.integers(min_value=1, max_value=400),
    pattern=st.lists(st.integers(min_value=0, max_value=6), min_size=1, max_size=5).filter(lambda p: sum(p) > 0),
)
def test_entropy_type_bounds(n, pattern):
    # Cover & Thomas, Elements of Information Theory, 2006, Thm 11.1.3:
    # (n+1)^{-|X|} e^{nH} <= W <= e^{nH} for the type class of k/n.
    row = compare("entropy", [Point(balls=n, pattern=tuple(pattern))]).rows[0]
    k = apportion(n, pattern)
    assert row.exact == reference.multinomial(k)
    with mpmath.workdps(40):
        upper = row.approx
        assert mpmath.mpf(row.exact) <= upper * (1 + mpmath.mpf(10) ** -30)
        assert mpmath.mpf(row.exact) >= upper / mpmath.mpf(n + 1) ** len(pattern)


@settings(max_examples=40, deadline=None)
@given(
    n=st.integers(min_value=20, max_value=3000),
    pattern=st.lists(st.integers(min_value=1, max_value=5), min_size=2, max_size=4),
)
def test_entropy_gap_is_the_stirling_correction(n, pattern):
    # From Stirling with Robbins's bounds 1/(12m+1) < ε_m < 1/(12m)
    # (H. Robbins, A remark on Stirling's formula, Amer. Math. Monthly 62, 1955):
    # nH - ln W = ((r-1)/2) ln(2πn) + ½ Σ ln(k_i/n) + Σ ε_{k_i} - ε_n.
    k = apportion(n, pattern)
    if min(k) == 0:
        return
    row = compare("entropy", [Point(balls=n, pattern=tuple(pattern))]).rows[0]
    with mpmath.workdps(40):
        gap = mpmath.log(row.approx) - mpmath.log(row.exact)
        main = (len(k) - 1) / mpmath.mpf(2) * mpmath.log(2 * mpmath.pi * n) + mpmath.fsum(
            mpmath.log(mpmath.mpf(v) / n) for v in k
        ) / 2
        low = sum(mpmath.mpf(1) / (12 * v + 1) for v in k) - mpmath.mpf(1) / (12 * n)
        high = sum(mpmath.mpf(1) / (12 * v) for v in k) - mpmath.mpf(1) / (12 * n + 1)
        assert low < gap - main < high


def test_entropy_relative_error_order_is_one_up_to_a_log():
    # Theory (above): relative error of ln W ~ ((r-1)/2) ln n / (n H), so the
    # fitted order over n = 100..10^4 sits below 1 by about 1/ln n.
    result = rows_of("entropy", "balls=100..10000", geometric=6, pattern="3,2,1")
    assert 0.75 < result.order_approx < 1.0
    assert result.approximation.scale == "log"


def test_apportion_largest_remainders():
    # Hamilton's method (common practice): 10 in proportion 3:2:1 is
    # 5, 3.33, 1.67 -> 5, 3, 2.
    assert apportion(10, (3, 2, 1)) == (5, 3, 2)
    assert apportion(12, (3, 2, 1)) == (6, 4, 2)
    assert apportion(2, (1, 1, 1)) == (1, 1, 0)
    assert apportion(7, (0, 1)) == (0, 7)
    with pytest.raises(InvalidParameters, match="positive entry"):
        apportion(5, (0, 0))


def test_entropy_pattern_and_urns_must_agree():
    with pytest.raises(InvalidParameters, match="pattern has 3 entries"):
        compare("entropy", [Point(balls=6, urns=2, pattern=(1, 1, 1))])
    assert compare("entropy", [Point(balls=6, urns=3)]).rows[0].exact == 90  # 6!/(2!2!2!)


# ---------------------------------------------------------------------------
# Birthday
# ---------------------------------------------------------------------------
def test_birthday_23_in_365():
    row = compare("birthday", [Point(balls=23, urns=365)]).rows[0]
    # the exact rational: 365·364·...·343 / 365^23 (Feller vol. 1, §II.3)
    assert row.exact == Fraction(math.perm(365, 23), 365**23)
    # the engine's own MB count with capacity 1 is the same falling factorial
    assert row.exact == Fraction(Occupancy(balls=23, urns=365, rule="MB", capacity=1).microstates(), 365**23)
    # well-known decimal 0.4927027656 (from memory)
    assert float(row.exact) == pytest.approx(0.4927027656, abs=1e-10)
    # exp(-253/365) by mpmath (outside reference); 253/365 = 0.693151 is just
    # above ln 2, so the approximation is just under 1/2 (from memory).
    assert float(row.approx) == pytest.approx(float(mpmath.exp(mpmath.mpf(-253) / 365)), rel=1e-15)
    assert 0.49999 < float(row.approx) < 0.5
    assert row.approx_text().startswith("0.4999982478")


def test_birthday_regime_r_like_n_squared():
    # ln(exact/approx) = Σ_{i<n} (ln(1 - i/r) + i/r) ≈ -n³/(6r²) (Taylor; Feller §II.3),
    # so with r = n² the relative error is 1/(6n) to first order: order 1.
    result = rows_of("birthday", "balls=50..2000", geometric=6, urns="balls*balls")
    assert result.order_approx == pytest.approx(1, abs=0.03)
    last = result.rows[-1]
    assert float(last.relative_error_approx) * 6 * last.point.balls == pytest.approx(1, rel=2e-3)


def test_birthday_with_fixed_urns_gets_worse():
    # With r fixed the neglected n³/(6r²) grows (Feller §II.3): no convergence.
    result = rows_of("birthday", "balls=5..60", step=5, urns=365)
    errors = [row.relative_error_approx for row in result.rows]
    assert errors == sorted(errors)
    assert result.order_approx < -1


def test_birthday_more_balls_than_urns_has_no_relative_error():
    # A shared urn is certain (pigeonhole): exact 0, relative error undefined.
    row = compare("birthday", [Point(balls=4, urns=3)]).rows[0]
    assert row.exact == 0
    assert row.relative_error_approx is None


# ---------------------------------------------------------------------------
# Empty urns: mean, Poisson, normal
# ---------------------------------------------------------------------------
def _empty_law_brute(n, r):
    """{i: P(exactly i empty)} by enumerating every assignment (tests/reference.py)."""
    law = {}
    model = Occupancy(balls=n, urns=r, rule="MB")
    for k, p in reference.probabilities(model).items():
        i = sum(1 for v in k if v == 0)
        law[i] = law.get(i, 0) + p
    return law


@settings(max_examples=40, deadline=None)
@given(n=st.integers(min_value=0, max_value=8), r=st.integers(min_value=1, max_value=5), j=st.integers(0, 6))
def test_empty_urns_at_most_matches_brute_force(n, r, j):
    law = _empty_law_brute(n, r)
    assert empty_urns_at_most(n, r, j) == sum(p for i, p in law.items() if i <= j)


@pytest.mark.parametrize("n,r,j", [(60, 20, 4), (60, 20, 7), (200, 90, 12), (35, 35, 30)])
def test_empty_urns_two_formulas_agree(n, r, j):
    # Feller vol. 1, §IV.2: the Stirling-number form (j < 4) and the
    # inclusion-exclusion form (j >= 4) are the same law; SymPy's Stirling
    # numbers give the first form from outside the project.
    from sympy.functions.combinatorial.numbers import stirling

    by_stirling = Fraction(
        sum(math.comb(r, i) * math.factorial(r - i) * int(stirling(n, r - i)) for i in range(j + 1)), r**n
    )
    assert empty_urns_at_most(n, r, j) == by_stirling


@settings(max_examples=30, deadline=None)
@given(n=st.integers(min_value=0, max_value=8), r=st.integers(min_value=1, max_value=5))
def test_empty_mean_is_the_brute_force_mean(n, r):
    law = _empty_law_brute(n, r)
    row = compare("empty-mean", [Point(balls=n, urns=r)]).rows[0]
    assert row.exact == sum(i * p for i, p in law.items())


def test_empty_mean_error_leading_term():
    # ln(exact/approx) = n(ln(1-1/r) + 1/r) = -n/(2r²) - n/(3r³) - ... (Taylor),
    # so the relative error times 2r²/n tends to 1; order 1 with r = n/2.
    result = rows_of("empty-mean", "balls=200..20000", geometric=5, urns="balls//2")
    assert result.order_approx == pytest.approx(1, abs=0.02)
    last = result.rows[-1]
    n, r = last.point.balls, last.point.urns
    assert float(last.relative_error_approx) * 2 * r * r / n == pytest.approx(1, rel=1e-3)


def _mp(value):
    value = Fraction(value)
    return mpmath.mpf(value.numerator) / value.denominator


def _poisson_tv(n, r):
    """Total variation distance between the exact empty-urn law and Poisson(r e^{-n/r})."""
    with mpmath.workdps(40):
        lam = r * mpmath.exp(-mpmath.mpf(n) / r)
        cumulative = [empty_urns_at_most(n, r, j) for j in range(0, min(r, 60) + 1)]
        exact = [cumulative[0]] + [b - a for a, b in zip(cumulative, cumulative[1:])]
        poisson = [mpmath.exp(-lam) * lam**i / mpmath.factorial(i) for i in range(len(exact))]
        inside = mpmath.fsum(abs(_mp(e) - p) for e, p in zip(exact, poisson))
        outside = (1 - _mp(cumulative[-1])) + (1 - mpmath.fsum(poisson))
        return float((inside + outside) / 2)


def test_poisson_error_shrinks_when_lambda_is_fixed():
    # Right-hand domain: n, r -> ∞ with λ = r e^{-n/r} fixed (von Mises 1939;
    # Kolchin, Sevast'yanov & Chistyakov 1978, ch. II; Barbour, Holst & Janson
    # 1992, ch. 6): the law of the number of empty urns tends to Poisson(λ).
    # Here λ ≈ 1 (n = round(r ln r)).
    sizes = [25, 50, 100, 200, 400, 800]
    points = [Point(balls=round(r * math.log(r)), urns=r) for r in sizes]
    result = compare("poisson", points, "urns")
    errors = [float(row.relative_error_approx) for row in result.rows]
    assert errors == sorted(errors, reverse=True)
    assert errors[-1] < errors[0] / 10
    assert result.order_approx > 0.8  # ~ ln r / r: order 1 up to a log factor
    distances = [_poisson_tv(p.balls, p.urns) for p in points[::2]]
    assert distances == sorted(distances, reverse=True)
    assert distances[-1] < 0.01


def test_poisson_does_not_fit_in_the_central_domain():
    # With n/r = 1 fixed, λ = r/e -> ∞ but Var(E) ~ r(e^-1 - 2e^-2) ≈ 0.27 λ
    # (Weiss 1958): the Poisson law stays far away.
    distances = [_poisson_tv(r, r) for r in (40, 80, 160)]
    assert min(distances) > 0.3


def test_normal_order_one_half_in_the_central_domain():
    # Weiss 1958 / Rényi 1962: E is asymptotically normal for n/r fixed;
    # skewness and the O(1) offset of the mean give error ~ r^{-1/2}.
    result = rows_of("normal", "balls=200..8000", geometric=6, urns="balls//2")
    assert result.order_approx == pytest.approx(0.5, abs=0.15)
    assert float(result.rows[-1].relative_error_approx) < 0.02


@pytest.mark.parametrize("n,r", [(2000, 1000), (6000, 1000), (1000, 2000)])
def test_normal_asymptotic_variance(n, r):
    # Exact Var(E) = r(r-1)(1-2/r)^n + r(1-1/r)^n - r²(1-1/r)^{2n} (Feller
    # vol. 1, ch. IX, from memory) against the asymptotic r e^{-α}(1-(1+α)e^{-α})
    # used by the approximation (Weiss 1958): ratio 1 + O(1/r).
    mean = Fraction(r * (r - 1) ** n, r**n)
    variance = Fraction(r * (r - 1) * (r - 2) ** n, r**n) + mean - mean * mean
    with mpmath.workdps(30):
        alpha = mpmath.mpf(n) / r
        asymptotic = r * mpmath.exp(-alpha) * (1 - (1 + alpha) * mpmath.exp(-alpha))
        assert float(mpmath.mpf(variance.numerator) / variance.denominator / asymptotic) == pytest.approx(1, abs=5 / r)


def test_normal_default_j_is_floor_of_asymptotic_mean():
    row = compare("normal", [Point(balls=100, urns=50)]).rows[0]
    assert row.point.at == math.floor(50 * math.exp(-2))  # = 6
    with mpmath.workdps(30):
        # Φ from mpmath's erfc (outside reference): Φ(x) = erfc(-x/√2)/2
        alpha = mpmath.mpf(2)
        mu = 50 * mpmath.exp(-alpha)
        sigma = mpmath.sqrt(50 * mpmath.exp(-alpha) * (1 - 3 * mpmath.exp(-alpha)))
        phi = mpmath.erfc(-((6 + mpmath.mpf(1) / 2 - mu) / sigma) / mpmath.sqrt(2)) / 2
        assert abs(row.approx - phi) < mpmath.mpf(10) ** -25
    assert row.exact == empty_urns_at_most(100, 50, 6)


# ---------------------------------------------------------------------------
# Saddle point (large powers)
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("m", [10, 100, 1000])
def test_saddle_fd_is_the_central_binomial_asymptotic(m):
    # B = 1 + x, n = m, r = 2m: ζ = 1, σ² = ¼, so the saddle value is
    # 4^m / sqrt(π m), and C(2m, m) = 4^m/sqrt(πm) (1 - 1/(8m) + ...) (from memory).
    row = compare("saddle", [Point(balls=m, urns=2 * m, rule="FD")]).rows[0]
    assert row.exact == math.comb(2 * m, m)
    with mpmath.workdps(40):
        assert abs(row.approx / (mpmath.mpf(4) ** m / mpmath.sqrt(mpmath.pi * m)) - 1) < mpmath.mpf(10) ** -30
    assert float(row.relative_error_approx) * 8 * m == pytest.approx(1, abs=2 / m)


@pytest.mark.parametrize("n", [50, 200, 800])
def test_saddle_mb_without_effective_bound_is_stirling(n):
    # Flajolet & Sedgewick 2009, Thm VIII.8 with B = e^x (capacity n is no
    # bound): ζ = n/r, σ² = ζ, and the estimate is r^n n!/(n^n e^{-n} sqrt(2πn))
    # = r^n e^{ε_n}, so the relative error is e^{ε_n} - 1 with
    # ε_n = ln n! - stirling1(n) ≈ 1/(12n).
    row = compare("saddle", [Point(balls=n, urns=n // 2, rule="MB", capacity=n)]).rows[0]
    assert row.exact == (n // 2) ** n
    with mpmath.workdps(60):
        epsilon = mpmath.loggamma(n + 1) - stirling_log_factorial(n, 1)
        predicted = mpmath.exp(epsilon) - 1
        # the truncated tail of e^x beyond x^n/n! is far below 1e-30 here
        assert abs(row.relative_error_approx - abs(predicted)) < mpmath.mpf(10) ** -20


@pytest.mark.parametrize("rule,capacity,minimum,tie", [
    ("BE", 3, 0, "balls//2"),
    ("BE", 5, 1, "balls//3"),
    ("MB", 2, 0, "balls"),
    ("MB", 4, 1, "balls//2"),
])
def test_saddle_order_one(rule, capacity, minimum, tie):
    # Thm VIII.8: relative error O(1/r) for n/r in a compact subinterval.
    result = rows_of("saddle", "balls=120..12000", geometric=6, urns=tie, rule=rule,
                     capacity=capacity, minimum=minimum)
    assert result.order_approx == pytest.approx(1, abs=0.05)


@settings(max_examples=25, deadline=None)
@given(r=st.integers(min_value=1, max_value=4), c=st.integers(min_value=1, max_value=3),
       rule=st.sampled_from(["BE", "MB"]), data=st.data())
def test_saddle_exact_side_is_brute_force(r, c, rule, data):
    if c * r < 2:
        return
    n = data.draw(st.integers(min_value=1, max_value=c * r - 1))
    row = compare("saddle", [Point(balls=n, urns=r, rule=rule, capacity=c)]).rows[0]
    configurations, microstates, _ = reference.counts(Occupancy(balls=n, urns=r, rule=rule, capacity=c))
    assert row.exact == (microstates if rule == "MB" else configurations)
    assert row.relative_error_approx < 1


def test_saddle_needs_an_interior_ratio_and_a_capacity():
    with pytest.raises(InvalidParameters, match="minimum\\*urns < balls < capacity\\*urns"):
        compare("saddle", [Point(balls=6, urns=3, capacity=2)])
    with pytest.raises(InvalidParameters, match="give capacity="):
        compare("saddle", [Point(balls=6, urns=3)])
    with pytest.raises(InvalidParameters, match="FD allows at most one"):
        compare("saddle", [Point(balls=2, urns=3, rule="FD", capacity=2)])


# ---------------------------------------------------------------------------
# Boltzmann (geometric) law
# ---------------------------------------------------------------------------
@settings(max_examples=30, deadline=None)
@given(n=st.integers(min_value=0, max_value=7), r=st.integers(min_value=1, max_value=4), j=st.integers(0, 8))
def test_boltzmann_exact_is_the_brute_force_mean_profile(n, r, j):
    model = Occupancy(balls=n, urns=r, rule="BE")
    vectors = list(reference.box(model))
    mean = Fraction(sum(sum(1 for v in k if v == j) for k in vectors), len(vectors) * r)
    row = compare("boltzmann", [Point(balls=n, urns=r, at=j)]).rows[0]
    assert row.exact == mean


def test_boltzmann_empty_fraction_closed_form():
    # Feller vol. 1, §II.5 (from memory): under BE a given cell is empty with
    # probability (r-1)/(n+r-1); the geometric law says r/(n+r), so the
    # relative error is n/((r-1)(n+r)) exactly; order 1 with n/r fixed.
    result = rows_of("boltzmann", "balls=100..10000", geometric=5, urns="balls//2")
    for row in result.rows:
        n, r = row.point.balls, row.point.urns
        assert row.exact == Fraction(r - 1, n + r - 1)
        with mpmath.workdps(40):
            assert abs(row.relative_error_approx - mpmath.mpf(n) / ((r - 1) * (n + r))) < mpmath.mpf(10) ** -30
    assert result.order_approx == pytest.approx(1, abs=0.02)


# ---------------------------------------------------------------------------
# Honest numbers, orders, sweeps and ties
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("name,point", [
    ("stirling3", Point(balls=5000, urns=5000)),
    ("birthday", Point(balls=300, urns=90000)),
    ("entropy", Point(balls=3000, pattern=(5, 3, 1))),
    ("saddle", Point(balls=900, urns=400, rule="MB", capacity=3)),
    ("normal", Point(balls=3000, urns=1000)),
    ("boltzmann", Point(balls=4000, urns=1000, at=3)),
])
def test_errors_survive_doubling_the_precision(name, point):
    # The printed error must be the approximation's, not rounding: recompute
    # at twice the digits and compare (common practice in numerical analysis).
    entry = approximation(name)
    row = compare(name, [point]).rows[0]
    checked = entry.check(point)
    with mpmath.workdps(2 * row.dps):
        value = entry.approximate(checked)
        exact = mpmath.mpf(Fraction(row.exact).numerator) / Fraction(row.exact).denominator
        if entry.scale == "log":
            again = abs(mpmath.log(value) - mpmath.log(exact)) / abs(mpmath.log(exact))
        else:
            again = abs(value - exact) / exact
        assert abs(row.relative_error_approx / again - 1) < mpmath.mpf(10) ** -10
        # the decimal string carries the approximation to its shown digits
        shown = mpmath.mpf(row.approx_text())
        assert abs(shown / value - 1) < mpmath.mpf(10) ** -18


def test_observed_order_of_exact_power_laws():
    xs = [10, 20, 40, 80]
    assert observed_order(xs, [3.0 / x**2 for x in xs]) == pytest.approx(2, abs=1e-12)
    assert observed_order(xs, [x**0.5 for x in xs]) == pytest.approx(-0.5, abs=1e-12)
    assert observed_order([10], [0.1]) is None
    assert observed_order([10, 20], [0.1, 0]) is None
    assert observed_order([10, 10], [0.1, 0.2]) is None
    # below float range: logs come from mpmath
    assert observed_order([10, 100], [mpmath.mpf("1e-400"), mpmath.mpf("1e-402")]) == pytest.approx(2)


def test_single_point_has_no_order():
    assert compare("birthday", [Point(balls=23, urns=365)]).order_approx is None


def test_every_catalogue_entry_names_its_source():
    for name, entry in CATALOGUE.items():
        assert entry.name == name
        assert entry.source and entry.quantity and entry.formula
        assert type(entry).__doc__ and any(str(y) in type(entry).__doc__ for y in range(1700, 2030))
        assert entry.scale in ("linear", "log")


def test_unknown_approximation():
    with pytest.raises(InvalidParameters, match="unknown approximation 'stirling9'; choose one of stirling1"):
        approximation("stirling9")


@pytest.mark.parametrize("text,value,expected", [
    ("balls/2", 10, 5),
    ("balls//2", 11, 5),
    ("balls*balls", 7, 49),
    ("2*balls+1", 3, 7),
    ("2*(balls+1)", 3, 8),
    ("balls - 3 - 2", 10, 5),       # left to right
    ("balls*3/2", 4, 6),            # exact division: no early rounding
    ("balls//3*3", 10, 9),
    ("-balls+20", 5, 15),
    ("--balls", 5, 5),
    ("365", 1, 365),
    (" ( balls ) ", 4, 4),
])
def test_tie_arithmetic(text, value, expected):
    assert parse_tie(text, "balls")(value) == expected


@pytest.mark.parametrize("text,message", [
    ("balls/2", "is 11/2 at balls=11, not a whole number; use // to round down"),
    ("urns*2", "mentions 'urns' at column 1; only balls may appear"),
    ("__import__('os')", "mentions '__import__'"),
    ("balls**2", "column 7: expected a number"),
    ("balls+", "column 7: expected a number"),
    ("(balls", "expected '\\)'"),
    ("balls 2", "unexpected text after the expression"),
    ("balls/0", "divides by zero at balls=11"),
    ("1.5*balls", "column 2"),
    ("", "empty"),
])
def test_tie_errors(text, message):
    with pytest.raises(InvalidParameters, match=message):
        parse_tie(text, "balls")(11)


def test_sweeps():
    variable, points = sweep("balls=10..40", step=10, urns="balls//2")
    assert variable == "balls"
    assert [(p.balls, p.urns) for p in points] == [(10, 5), (20, 10), (30, 15), (40, 20)]
    _, points = sweep("balls=10..1000", geometric=3, urns=365)
    assert [p.balls for p in points] == [10, 100, 1000]
    _, points = sweep("balls=1..4", geometric=10, urns=2)  # rounding duplicates dropped
    assert [p.balls for p in points] == [1, 2, 3, 4]
    _, points = sweep("balls=10..1000", urns=3)  # default: 10 log-spaced points
    assert len(points) == 10 and points[0].balls == 10 and points[-1].balls == 1000
    variable, points = sweep("urns=10..30", step=10, balls="urns*3")
    assert variable == "urns" and [(p.balls, p.urns) for p in points] == [(30, 10), (60, 20), (90, 30)]
    _, points = sweep(None, balls=23, urns=365)
    assert points == [Point(balls=23, urns=365)]


@pytest.mark.parametrize("kwargs,error,message", [
    (dict(vary="balls=10-100", urns=3), InvalidParameters, "must look like balls=10..1000"),
    (dict(vary="colour=1..3", urns=3), InvalidParameters, "vary= names one of"),
    (dict(vary="balls=100..10", urns=3), InvalidParameters, "START 100 is above STOP 10"),
    (dict(vary="balls=1..10", urns=3, balls=4), InvalidParameters, "balls is varied by vary="),
    (dict(vary="balls=1..10", urns=3, step=1, geometric=3), InvalidParameters, "not both"),
    (dict(vary="balls=0..10", urns=3, geometric=3), InvalidParameters, "START must be at least 1"),
    (dict(vary=None, urns=3), InvalidParameters, "give balls= N"),
    (dict(vary=None, balls=3, urns="balls"), InvalidParameters, "mentions 'balls'"),
    (dict(vary=None, balls=3, step=2), InvalidParameters, "need vary="),
    (dict(vary="balls=1..10", urns="balls-5"), InvalidParameters, "urns is -4 at balls=1"),
    (dict(vary="balls=1..10000000", urns=3, step=1), TooLarge, "10000000 points, above 10000"),
])
def test_sweep_errors(kwargs, error, message):
    vary = kwargs.pop("vary")
    with pytest.raises(error, match=message):
        sweep(vary, **kwargs)


@pytest.mark.parametrize("call, parameters", [
    (lambda: sweep("balls=3-9", urns=3), ("vary",)),
    (lambda: sweep("colour=1..3", urns=3), ("vary",)),
    (lambda: sweep("balls=100..10", urns=3), ("vary",)),
    (lambda: sweep("balls=1..10", urns=3, balls=4), ("vary",)),
    (lambda: parse_tie("balls", "balls")(None), ("vary",)),
    (lambda: compare("birthday", [Point(balls=3)]), ("urns",)),
])
def test_errors_name_library_parameters_not_flags(call, parameters):
    with pytest.raises(InvalidParameters) as caught:
        call()
    error = caught.value
    assert "--" not in str(error)
    assert error.parameters == parameters
    assert all(f"{name}=" in str(error) for name in parameters)
    # a front end spells them its own way (the CLI: --vary, --urns)
    spelled = error.spelled({name: f"--{name}" for name in parameters})
    assert all(f"--{name}" in spelled and f"{name}=" not in spelled for name in parameters)


def test_parse_range():
    assert parse_range(" balls = 10 .. 1000 ") == ("balls", 10, 1000)


# ---------------------------------------------------------------------------
# Grand-canonical against exact canonical occupations
# ---------------------------------------------------------------------------
def _canonical_brute(n, r, j, t, rule):
    """<k_j> with weight t^(sum i k_i) over every BE (or FD) vector, by enumeration."""
    model = Occupancy(balls=n, urns=r, rule=rule)
    top = bottom = Fraction(0)
    for k in reference.box(model):
        weight = t ** sum(i * v for i, v in enumerate(k))
        top += k[j] * weight
        bottom += weight
    return top / bottom


@settings(max_examples=30, deadline=None)
@given(n=st.integers(1, 6), r=st.integers(2, 5), rule=st.sampled_from(["BE", "FD"]),
       t=st.sampled_from([Fraction(1, 2), Fraction(1, 3), Fraction(2, 3), Fraction(9, 10)]), data=st.data())
def test_canonical_exact_side_is_brute_force(n, r, rule, t, data):
    if rule == "FD" and n >= r:
        return
    j = data.draw(st.integers(0, r - 1))
    row = compare("grand-canonical", [Point(balls=n, urns=r, rule=rule, at=j, factor=t)]).rows[0]
    assert row.exact == _canonical_brute(n, r, j, t, rule)


@pytest.mark.parametrize("rule,n,r", [("BE", 30, 30), ("FD", 12, 25)])
def test_canonical_exact_side_matches_levels_recursion(rule, n, r):
    # enumerator.algorithms.levels evaluates the Borrmann–Franke recursion in mpmath at a
    # temperature; T = 1/ln 2 given to 60 digits is t = 1/2 to that accuracy.
    from enumerator.algorithms import levels

    with mpmath.workdps(70):
        temperature = Fraction(mpmath.nstr(1 / mpmath.log(2), 60))
    system = levels.System.create(levels.harmonic_oscillator(r), n, rule)
    occupations = levels.canonical_occupations(system, [temperature], digits=40)[0]
    for j in (0, 1, n // 2):
        row = compare("grand-canonical", [Point(balls=n, urns=r, rule=rule, at=j)]).rows[0]
        with mpmath.workdps(40):
            assert abs(_mp(row.exact) - occupations[j]) < mpmath.mpf(10) ** -30


def test_grand_canonical_side_is_the_bose_einstein_formula():
    # Pathria & Beale 2011, ch. 6: <n_i> = 1/(z^{-1} t^{-i} - 1) with the
    # fugacity z fixed by sum_i <n_i> = N; solved here with mpmath.findroot.
    n, r = 20, 12
    row = compare("grand-canonical", [Point(balls=n, urns=r, at=2, factor=Fraction(1, 3))]).rows[0]
    with mpmath.workdps(50):
        t = mpmath.mpf(1) / 3
        def total(z):
            return mpmath.fsum(1 / (t ** -i / z - 1) for i in range(r)) - n
        z = mpmath.findroot(total, (mpmath.mpf(n) / (n + 1) - mpmath.mpf("0.05"), 1 - mpmath.mpf(10) ** -6),
                            solver="anderson")
        assert abs(row.approx - 1 / (t ** -2 / z - 1)) < mpmath.mpf(10) ** -30


def test_ensembles_converge_for_bosons_not_for_fermions_at_fixed_temperature():
    # Fugacity 1 - O(1/N) (derivation in the GrandCanonical docstring):
    # ground level order 2, excited level order 1; 1D fermions at fixed T keep
    # an O(1) number fluctuation, so they do not converge.
    ground = rows_of("grand-canonical", "balls=10..160", geometric=5, urns="balls")
    assert ground.order_approx == pytest.approx(2, abs=0.1)
    excited = rows_of("grand-canonical", "balls=10..160", geometric=5, urns="balls", at=1)
    assert excited.order_approx == pytest.approx(1, abs=0.1)
    fermi = rows_of("grand-canonical", "balls=10..80", geometric=4, urns="balls*2", at="balls", rule="FD")
    assert abs(fermi.order_approx) < 0.05
    assert float(fermi.rows[-1].relative_error_approx) > 0.05


@pytest.mark.parametrize("point,error,message", [
    (Point(balls=5, urns=5, rule="MB"), InvalidParameters, "equals the canonical one exactly"),
    (Point(balls=5, urns=5, at=5), InvalidParameters, "give at= below urns"),
    (Point(balls=5, urns=5, rule="FD"), InvalidParameters, "fill 5 levels completely"),
    (Point(balls=5, urns=5, factor="3/2"), InvalidParameters, "strictly between 0 and 1"),
    (Point(balls=5, urns=5, factor="half"), InvalidParameters, "factor must be a fraction like 1/2"),
])
def test_grand_canonical_errors(point, error, message):
    with pytest.raises(error, match=message):
        compare("grand-canonical", [point])


def test_grand_canonical_beyond_the_limit_is_a_skipped_row():
    # N^3 r log2(q) = 5000^4 "bit operations" of the exact recursion: hours at the measured rate
    result = compare("grand-canonical", [Point(balls=10, urns=10), Point(balls=5000, urns=5000)])
    small, big = result.rows
    assert small.error is None and big.exact is None
    assert isinstance(big.error, TooLarge)
    assert "above the limit" in big.skipped and "use smaller parameters" in big.skipped


# ---------------------------------------------------------------------------
# Cross-checks with enumerator.algorithms.statistics (another route through the engine)
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("n,r", [(40, 12), (200, 60), (500, 100)])
def test_empty_urn_quantities_match_the_statistics_module(n, r):
    # statistics.distribution(..., "empty") uses binomial moments and an
    # inverse binomial transform, not the formulas used here (Feller §IV.2).
    from enumerator.algorithms.statistics import distribution

    law = distribution(Occupancy(balls=n, urns=r, rule="MB"), "empty")
    cumulative = Fraction(0)
    for j in range(0, 12):
        cumulative += law.probability(j)
        assert empty_urns_at_most(n, r, j) == cumulative
    assert compare("empty-mean", [Point(balls=n, urns=r)]).rows[0].exact == law.mean
    mean = law.mean
    # Var = r(r-1)(1-2/r)^n + mean - mean² (Feller vol. 1, ch. IX, from memory)
    assert law.variance == Fraction(r * (r - 1) * (r - 2) ** n, r**n) + mean - mean * mean


@pytest.mark.parametrize("n,r,j", [(30, 10, 0), (30, 10, 2), (100, 40, 5)])
def test_boltzmann_exact_matches_the_statistics_module(n, r, j):
    from enumerator.algorithms.statistics import distribution

    model = Occupancy(balls=n, urns=r, rule="BE")
    mean_count = distribution(model, f"exactly:{j}").mean
    row = compare("boltzmann", [Point(balls=n, urns=r, at=j)]).rows[0]
    assert row.exact == mean_count / r
    assert row.exact == distribution(model, "urn:1").probability(j)


@pytest.mark.parametrize("name", ["", ".sweeps", ".formulas", ".catalogue", ".comparison"])
def test_module_doctests(name):
    import doctest
    import importlib

    module = importlib.import_module("enumerator.algorithms.asymptotics" + name)
    assert doctest.testmod(module).failed == 0
