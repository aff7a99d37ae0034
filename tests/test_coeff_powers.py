"""Powers of a series with any exponent: huge whole exponents and rational ones (``coeff``).

References: SymPy's ``binomial`` and ``series()`` (outside the project's kernel);
the binomial theorem ``[x^k] (1 + x)^a = C(a, k)`` and ``[x^k] (1 - x)^(-a) =
C(a + k - 1, k)`` (common practice).
"""

from __future__ import annotations

import json
from fractions import Fraction

import pytest
import sympy
from cli_helpers import one_line_error, run
from hypothesis import given, settings
from hypothesis import strategies as st

from enumerator.algorithms.expressions import extract_coefficients, miller_cost, number_text, rational_power
from enumerator.core.errors import InvalidParameters, TooLarge
from enumerator.core.limits import limited

x = sympy.Symbol("x")


def sympy_coefficients(expr, upto):
    """``[x^0..x^upto]`` of *expr* by SymPy's series(), as Fractions."""
    expansion = sympy.series(expr, x, 0, upto + 1).removeO()
    return [Fraction(str(expansion.coeff(x, k))) for k in range(upto + 1)]


def test_huge_whole_exponents_against_sympy_binomials():
    e = 2**64
    # [x^k] (1 + x)^e = C(e, k) (binomial theorem; values by sympy.binomial)
    assert extract_coefficients("(1+x)^(2^64)", 3) == [int(sympy.binomial(e, k)) for k in range(4)]
    a = 10**12 + 1
    # [x^k] (1 - x)^(-a) = C(a + k - 1, k) (negative binomial series; sympy.binomial)
    assert extract_coefficients("(1-x)^(-10^12-1)", 4) == [int(sympy.binomial(a + k - 1, k)) for k in range(5)]
    # alternating signs for a negative exponent of 1 + x: C(-e, k) = (-1)^k C(e + k - 1, k)
    assert extract_coefficients("(1+x)^(-2^64)", 3) == [(-1) ** k * int(sympy.binomial(e + k - 1, k))
                                                       for k in range(4)]
    # a base with a constant term -1: (-1 + x)^(2^64 + 1) = -(1 - x)^(2^64 + 1)
    f = e + 1
    assert extract_coefficients("(-1+x)^(2^64+1)", 3) == [-int(sympy.binomial(f, k)) * (-1) ** k for k in range(4)]


def test_huge_exponent_of_a_trinomial_against_sympy():
    # (1 + x + 2x^2)^e to x^4: SymPy's series with e a symbol, then e = 2^70
    e = sympy.Symbol("e")
    expansion = sympy.series((1 + x + 2 * x**2) ** e, x, 0, 5).removeO()
    expected = [sympy.expand(expansion.coeff(x, k)).subs(e, 2**70) for k in range(5)]
    assert extract_coefficients("(1 + x + 2x^2)^(2^70)", 4) == expected


def test_cli_json_of_a_power_of_two_to_the_64():
    result = run("coeff", "(1+x)^(2^64)", "--upto", 3, "--json")
    assert result.exit_code == 0, result.output
    e = 2**64
    # binomial coefficients C(2^64, k) by sympy.binomial, written exactly as text
    assert json.loads(result.stdout)["coefficients"] == [str(sympy.binomial(e, k)) for k in range(4)]


@pytest.mark.parametrize("text,expr", [
    ("(1+x)^(1/2)", sympy.sqrt(1 + x)),
    ("(1-x)^(-1/2)", 1 / sympy.sqrt(1 - x)),
    ("(4+x)^(1/2)", sympy.sqrt(4 + x)),
    ("(9/4 - x + x^3)^(-3/2)", (sympy.Rational(9, 4) - x + x**3) ** sympy.Rational(-3, 2)),
    ("(-8-x)^(1/3)", -(8 + x) ** sympy.Rational(1, 3)),   # the real cube root of a negative base
    ("(x^2 + x^3)^(3/2)", x**3 * (1 + x) ** sympy.Rational(3, 2)),
    ("(1 - x - x^2)^(2/3) / (1 + x)^(1/2)", (1 - x - x**2) ** sympy.Rational(2, 3) / sympy.sqrt(1 + x)),
])
def test_rational_exponents_against_sympy_series(text, expr):
    assert extract_coefficients(text, 7) == sympy_coefficients(expr, 7)


@settings(max_examples=15, deadline=None)
@given(
    c1=st.integers(-3, 3), c2=st.integers(-3, 3),
    p=st.integers(-5, 5).filter(bool), q=st.integers(2, 5),
)
def test_rational_powers_of_quadratics_against_sympy(c1, c2, p, q):
    a = sympy.Rational(p, q)
    text = f"(1 + ({c1})x + ({c2})x^2)^(({p})/{q})"
    assert extract_coefficients(text, 6) == sympy_coefficients((1 + c1 * x + c2 * x**2) ** a, 6)


def test_a_square_root_squared_is_the_base():
    # (1 + x)^(1/2) (1 + x)^(1/2) = 1 + x: the exact product, no rounding (algebra)
    assert extract_coefficients("(1+x)^(1/2) (1+x)^(1/2)", 6) == [1, 1, 0, 0, 0, 0, 0]
    assert extract_coefficients("((1+x)^(1/3))^3", 5) == [1, 1, 0, 0, 0, 0]


@pytest.mark.parametrize("text,message", [
    ("(2+x)^(1/2)", "the constant term 2 is not a perfect square, so its power 1/2 is irrational"),
    ("(3/4+x)^(1/3)", "the constant term 3/4 is not a perfect cube"),
    ("(-1+x)^(1/2)", "the constant term -1 is negative, so its power 1/2 (an even root) is not a real number"),
    ("2^(1/2) + x", "the constant 2 is not a perfect square"),
    ("x^(1/2)", "the exponent 1/2 is not a whole number, and x^(1/2) is not a power series"),
    ("(x + x^2)^(1/2)", "starts with x^(1/2), which is not a power series"),
])
def test_powers_without_rational_coefficients_say_why(text, message):
    with pytest.raises(InvalidParameters, match=message.replace("(", r"\(").replace(")", r"\)").replace("^", r"\^")):
        extract_coefficients(text, 3)


def test_monomials_of_towering_degree_are_zero_when_cheap_to_know():
    # x^(2^(2^65536)) and (x + x^2)^(2^65536): every term lies beyond x^3 (the degree is positive and huge)
    assert extract_coefficients("x^2^2^2^2^2^2", 3) == [0, 0, 0, 0]
    assert extract_coefficients("(x + x^2)^2^2^2^2^2", 3) == [0, 0, 0, 0]
    assert extract_coefficients("1 + x^2^2^2^2^2^2^2", 2) == [1, 0, 0]
    assert extract_coefficients("x^(10^13)", 2) == [0, 0, 0]


def test_refusals_write_huge_numbers_by_their_digit_count():
    result = run("coeff", "(1+x)^2^2^2^2^2^2", "--upto", 3)
    assert result.exit_code == 2
    line = one_line_error(result)
    assert "19,729-digit number" in line and len(line) < 300  # 2^65536 has 19,729 digits (log10)
    pole = run("coeff", "(1/x + 1)^(2^(2^16))", "--upto", 3)
    assert pole.exit_code == 2
    assert len(one_line_error(pole)) < 400 and "-digit number" in one_line_error(pole)
    assert number_text(Fraction(2**200, 3)) == "a fraction of 61 / 1 digits"  # 2^200 has 61 digits (log10)
    # a pole of order 2^65536 is named by its digit count, not written out (nor a ValueError from str(int))
    with pytest.raises(InvalidParameters, match="x to the power a negative 19,729-digit number"):
        extract_coefficients("x^-2^2^2^2^2", 3)


def test_cost_is_checked_before_computing():
    # C(2^(10^6), k) has about 10^6 k bits: 2000 terms would hold some 2 * 10^12 bits
    with pytest.raises(TooLarge, match="raising a series to the power a 301,030-digit number"):
        extract_coefficients("(1+x)^(2^(10^6))", 2000)
    with limited(memory="1M"), pytest.raises(TooLarge, match="memory"):
        extract_coefficients("(1 + x)^(1/3)", 5000)
    cost = miller_cost(5001, 2, Fraction(1, 3), 2, 1)
    assert cost.memory > 2**20


def test_rational_power_of_constants():
    # (9/4)^(-3/2) = (2/3)^3 and the real cube root of -27/8 (arithmetic)
    assert rational_power(Fraction(9, 4), Fraction(-3, 2)) == Fraction(8, 27)
    assert rational_power(Fraction(-27, 8), Fraction(1, 3)) == Fraction(-3, 2)
    assert rational_power(Fraction(1), Fraction(1, 2**80)) == 1
    with pytest.raises(InvalidParameters, match="division by zero"):
        rational_power(Fraction(0), Fraction(-1, 2))
    with pytest.raises(TooLarge, match="would have"):
        rational_power(Fraction(3), Fraction(10**9))
