"""The exact series kernel against outside references.

References: python-flint's own ``fmpz_poly`` arithmetic (full power,
``pow_trunc``) and SymPy's polynomial expansion and ``series()`` are used as
independent computations; OEIS values are named by their A-number.
"""

from __future__ import annotations

import math
from fractions import Fraction

import gmpy2
import pytest
import sympy
from flint import fmpq, fmpq_poly, fmpz_poly
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.special import comb as scipy_comb
from sympy.functions.combinatorial.numbers import stirling

from enumerator.core import series

x = sympy.Symbol("x")


def sympy_coefficients(expr, degree):
    """``[c_0..c_degree]`` of *expr* by SymPy's own series expansion (reference only)."""
    poly = sympy.series(expr, x, 0, degree + 1).removeO()
    return [poly.coeff(x, k) for k in range(degree + 1)]


# ---------------------------------------------------------------------------
# window_power_row: the three-term recurrence
# ---------------------------------------------------------------------------

@settings(max_examples=60, deadline=None)
@given(
    span=st.integers(0, 7),
    exponent=st.integers(0, 25),
    unbounded=st.integers(0, 5),
    degree=st.integers(0, 80),
)
def test_window_power_row_matches_flint_products(span, exponent, unbounded, degree):
    # Reference: FLINT's full power of the window times FLINT's product with (1 - x)^-u,
    # the latter built as the u-fold product of 1 + x + ... + x^degree.
    poly = fmpz_poly([1] * (span + 1)) ** exponent
    geometric = fmpz_poly([1] * (degree + 1))
    for _ in range(unbounded):
        poly = poly.mul_low(geometric, degree + 1)
    expected = series.coefficients(poly, degree)
    assert [int(c) for c in series.window_power_row(span, exponent, degree, unbounded)] == expected


def test_window_power_row_central_trinomial_coefficients():
    # OEIS A002426 (central trinomial coefficients, [x^n] (1 + x + x^2)^n), from memory,
    # cross-checked with SymPy's expansion.
    a002426 = [1, 1, 3, 7, 19, 51, 141, 393, 1107, 3139, 8953]
    for n, value in enumerate(a002426):
        assert int(series.window_power_row(2, n, n)[n]) == value
        assert sympy.Poly((1 + x + x**2) ** n, x).coeff_monomial(x**n) == value


def test_window_power_row_against_sympy_with_unbounded_urns():
    # Reference: SymPy series of (1 + x + x^2 + x^3)^4 / (1 - x)^3.
    expected = sympy_coefficients((1 + x + x**2 + x**3) ** 4 / (1 - x) ** 3, 30)
    assert [int(c) for c in series.window_power_row(3, 4, 30, 3)] == expected


def test_window_power_row_large_exponent_matches_pow_trunc():
    # Reference: FLINT's pow_trunc; the palindromic mirror is used past half the degree.
    base = fmpz_poly([1] * 8)
    got = series.window_power_row(7, 600, 3000)
    assert [int(c) for c in got] == series.coefficients(base.pow_trunc(600, 3001), 3000)
    # Sum of all coefficients is 8^600 (evaluate at x = 1; common practice).
    assert sum(series.window_power_row(7, 600, 7 * 600)) == 8**600


def test_window_power_row_rejects_negative_arguments():
    with pytest.raises(ValueError):
        series.window_power_row(-1, 3, 4)
    assert series.window_power_row(3, 3, -1) == []


def test_power_of_window_far_above_truncation_uses_exact_recurrence():
    # Reference: FLINT pow_trunc (power() takes the recurrence branch here).
    base = series.window(0, 5)
    assert series.coefficients(series.power(base, 4000, 500), 500) == series.coefficients(
        base.pow_trunc(4000, 501), 500
    )
    # A non-window base still goes through FLINT.
    other = fmpz_poly([1, 2, 1])
    assert series.coefficients(series.power(other, 3000, 40), 40) == series.coefficients(
        other.pow_trunc(3000, 41), 40
    )


# ---------------------------------------------------------------------------
# the original kernel functions
# ---------------------------------------------------------------------------

def test_binomial_row_matches_scipy():
    # Reference: scipy.special.comb with exact=True.
    row = series.binomial_row(7, 40)
    assert [int(v) for v in row] == [scipy_comb(m + 6, 6, exact=True) for m in range(41)]


def test_one_minus_power_matches_sympy_expansion():
    # Reference: SymPy's expansion of (1 - x^3)^9, truncated at degree 20.
    expected = sympy.Poly(sympy.expand((1 - x**3) ** 9), x)
    got = series.one_minus_power(3, 9, 20)
    for k in range(21):
        assert series.coefficient(got, k) == expected.coeff_monomial(x**k)


def test_falling_window_is_factorial_ratios():
    # b!/(k+a)! for k = 0..b-a (definition).
    got = series.coefficients(series.falling_window(2, 6), 4)
    assert got == [math.factorial(6) // math.factorial(k + 2) for k in range(5)]


def test_product_and_dot_reversed_and_coefficients():
    # Reference: SymPy expansion of a small product.
    factors = [series.window(0, 2), series.window(1, 3), series.window(0, 1)]
    expected = sympy.Poly(sympy.expand((1 + x + x**2) * (x + x**2 + x**3) * (1 + x)), x)
    got = series.product(factors, 10)
    assert series.coefficients(got, 10) == [expected.coeff_monomial(x**k) for k in range(11)]
    assert series.coefficient(got, 99) == 0 and series.coefficient(got, -1) == 0
    row = list(range(11))
    assert int(series.dot_reversed(got, row, 4)) == sum(
        expected.coeff_monomial(x**k) * row[4 - k] for k in range(5)
    )
    assert series.coefficients(series.from_coefficients([3, 0, 2]), 4) == [3, 0, 2, 0, 0]


# ---------------------------------------------------------------------------
# inverse, scaled products
# ---------------------------------------------------------------------------

def test_inverse_fibonacci_series():
    # OEIS A000045 (Fibonacci numbers), from memory; and f * g == 1 mod x^n.
    f = fmpz_poly([1, -1, -1])
    g = series.inverse(f, 15)
    assert series.coefficients(g, 14) == [1, 1, 2, 3, 5, 8, 13, 21, 34, 55, 89, 144, 233, 377, 610]
    assert f.mul_low(g, 15) == fmpz_poly([1])


@settings(max_examples=40, deadline=None)
@given(
    coeffs=st.lists(st.fractions(min_value=-5, max_value=5, max_denominator=6), min_size=1, max_size=6),
    length=st.integers(1, 25),
)
def test_inverse_matches_sympy_series(coeffs, length):
    # Reference: SymPy series of 1 / p(x).
    if coeffs[0] == 0:
        coeffs[0] = Fraction(1)
    p = fmpq_poly([fmpq(c.numerator, c.denominator) for c in coeffs])
    g = series.inverse(p, length)
    expr = 1 / sum(sympy.Rational(c.numerator, c.denominator) * x**k for k, c in enumerate(coeffs))
    expected = sympy_coefficients(expr, length - 1)
    got = [Fraction(int(g[k].p), int(g[k].q)) for k in range(length)]
    assert got == [Fraction(int(sympy.fraction(c)[0]), int(sympy.fraction(c)[1])) for c in expected]


def test_inverse_errors():
    with pytest.raises(ZeroDivisionError):
        series.inverse(fmpz_poly([0, 1]), 5)
    with pytest.raises(ValueError, match="constant term 1 or -1"):
        series.inverse(fmpz_poly([2, 1]), 5)
    assert series.inverse(fmpz_poly([-1, 1]), 0) == fmpz_poly([])


def test_scaled_power_counts_surjections():
    # m! [x^m] (exp(x) - 1)^k = k! S(m, k) (Stirling numbers of the second kind;
    # reference: SymPy's stirling), with every factor scaled by 30!.
    top = 30
    scale = gmpy2.fac(top)
    base = fmpz_poly([int(scale // gmpy2.fac(j + 1)) for j in range(top)])  # (exp(x)-1)/x
    k = 5
    power = series.scaled_power(base, k, top - k, scale)
    for m in range(k, top + 1):
        value = gmpy2.divexact(gmpy2.fac(m) * int(power[m - k]), scale)
        assert int(value) == math.factorial(k) * stirling(m, k)


def test_scaled_product_counts_assignments():
    # m! [x^m] exp(x)^3 = 3^m (common practice), as a product of three scaled factors.
    top = 25
    scale = gmpy2.fac(top)
    e = fmpz_poly([int(scale // gmpy2.fac(j)) for j in range(top + 1)])
    prod = series.scaled_product([e, e, e], top, scale)
    assert [gmpy2.divexact(gmpy2.fac(m) * int(prod[m]), scale) for m in range(top + 1)] == [
        3**m for m in range(top + 1)
    ]
    assert series.scaled_product([], 5, scale) == fmpz_poly([int(scale)])
    assert series.scaled_power(e, 0, 5, scale) == fmpz_poly([int(scale)])


# ---------------------------------------------------------------------------
# miller_power: J. C. P. Miller's recurrence for a power of a series
# ---------------------------------------------------------------------------

@settings(max_examples=80, deadline=None)
@given(
    values=st.lists(st.integers(-5, 5), min_size=1, max_size=6).filter(lambda v: v[0] != 0),
    exponent=st.integers(0, 12),
    degree=st.integers(0, 30),
)
def test_miller_power_matches_flint_power(values, exponent, degree):
    # Reference: FLINT's exact full power of the integer polynomial.
    expected = series.coefficients(fmpz_poly(values) ** exponent, degree)
    assert [int(c) for c in series.miller_power(values, exponent, degree)] == expected


@settings(max_examples=60, deadline=None)
@given(
    values=st.lists(st.integers(-4, 4), min_size=1, max_size=5).filter(lambda v: v[0] != 0),
    exponent=st.integers(0, 10),
    degree=st.integers(0, 16),
)
def test_miller_power_labelled_matches_rational_power(values, exponent, degree):
    # Reference: FLINT's fmpq_poly power of sum g_j x^j / j!, scaled by k!.
    egf = fmpq_poly([fmpq(v, math.factorial(j)) for j, v in enumerate(values)])
    power = egf ** exponent
    expected = [power[k] * math.factorial(k) if k <= power.degree() else 0 for k in range(degree + 1)]
    got = series.miller_power(values, exponent, degree, labelled=True)
    assert [fmpq(int(c)) for c in got] == [fmpq(e) for e in expected]


def test_miller_power_huge_exponent_against_binomials():
    # (1 + x)^e has [x^k] = C(e, k) (reference: Python math.comb), e = 2^64 + 3
    e = 2**64 + 3
    assert [int(c) for c in series.miller_power([1, 1], e, 6)] == [math.comb(e, k) for k in range(7)]
    # labelled e^x truncated at x^2, i.e. assignments of k balls to e urns holding at most 2:
    # k = 3: e^3 - e (the ones putting all three in one urn); common practice
    got = series.miller_power([1, 1, 1], e, 3, labelled=True)
    assert int(got[3]) == e**3 - e


def test_miller_power_rejects_a_zero_constant_term():
    with pytest.raises(ValueError):
        series.miller_power([0, 1], 3, 4)
    with pytest.raises(ValueError):
        series.miller_power([2, 1], -1, 4)  # 1/(2 + x) has no integer coefficients
    assert series.miller_power([1, 1], 3, -1) == []


@settings(max_examples=40, deadline=None)
@given(
    values=st.lists(st.integers(-5, 5), min_size=1, max_size=5),
    sign=st.sampled_from([1, -1]),
    exponent=st.integers(-12, -1),
    degree=st.integers(0, 12),
)
def test_miller_power_negative_exponent_matches_flint_inverse(values, sign, exponent, degree):
    # a unit constant term: F^e = (1/F)^|e|, the inverse by schoolbook long division (written
    # here) and its power by FLINT, not by the recurrence under test
    f = [sign] + values + [0] * degree
    inverse = [sign]
    for k in range(1, degree + 1):
        inverse.append(-sign * sum(f[j] * inverse[k - j] for j in range(1, k + 1)))
    expected = series.coefficients(fmpz_poly(inverse) ** -exponent, degree)
    assert [int(c) for c in series.miller_power([sign] + values, exponent, degree)] == expected


def test_miller_rational_power_against_sympy_series():
    # (1 + x - 2x^2)^(p/q) by SymPy's series() (outside reference)
    x = sympy.Symbol("x")
    for a in (Fraction(1, 2), Fraction(-2, 3), Fraction(7, 5), Fraction(-3)):
        expansion = sympy.series((1 + x - 2 * x**2) ** sympy.Rational(a.numerator, a.denominator), x, 0, 8).removeO()
        expected = [Fraction(str(expansion.coeff(x, k))) for k in range(8)]
        got = series.miller_rational_power([1, 1, -2], a, 7)
        assert [Fraction(int(c.numerator), int(c.denominator)) for c in got] == expected
    with pytest.raises(ValueError):
        series.miller_rational_power([2, 1], Fraction(1, 2), 3)
