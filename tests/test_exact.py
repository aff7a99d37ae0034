"""The exact-number codec (enumerator.core.exact) against CPython's own conversions."""

from __future__ import annotations

import sys
from fractions import Fraction

import gmpy2
import pytest
from hypothesis import given
from hypothesis import strategies as st

from enumerator.core.exact import decimal_digits, exact_text, int_text, parse_exact, text_int


@given(st.integers(min_value=-(10**2000), max_value=10**2000))
def test_int_text_is_cpythons_decimal_text(value):
    # Reference: CPython's str(int) (common practice), within its default digit limit.
    assert int_text(value) == str(value)
    assert text_int(int_text(value)) == value


@given(st.fractions(max_denominator=10**30))
def test_exact_text_is_the_text_of_str_fraction(value):
    # Reference: the Python documentation of fractions.Fraction.__str__ ("p/q", or "p" when q = 1).
    assert exact_text(value) == str(value)
    assert parse_exact(exact_text(value)) == value


def test_huge_values_convert_past_cpythons_digit_limit():
    value = 3**200_000  # 95,425 digits, far past CPython's default 4,300-digit limit
    text = int_text(value)
    old = sys.get_int_max_str_digits()
    sys.set_int_max_str_digits(0)
    try:
        assert text == str(value)
    finally:
        sys.set_int_max_str_digits(old)
    assert text_int(text) == value
    assert exact_text(Fraction(value, 2)) == f"{text}/2"


def test_gmpy2_and_other_integer_types_are_accepted_but_not_bools_or_floats():
    assert exact_text(gmpy2.mpz(12)) == "12"
    assert exact_text(gmpy2.mpq(6, 4)) == "3/2"
    with pytest.raises(TypeError):
        exact_text(True)
    with pytest.raises(TypeError):
        exact_text(0.5)


@pytest.mark.parametrize("value", [0, 1, 9, 10, 99, 100, 10**50 - 1, 10**50, -(10**7), 2**4000])
def test_decimal_digits_counts_exactly(value):
    # Reference: the length of CPython's decimal text (common practice).
    old = sys.get_int_max_str_digits()
    sys.set_int_max_str_digits(0)
    try:
        assert decimal_digits(value) == len(str(abs(value)))
    finally:
        sys.set_int_max_str_digits(old)


def test_malformed_text_is_refused():
    with pytest.raises(ValueError):
        text_int("12a")
    with pytest.raises(ValueError):
        text_int("1" * 1000 + "x")
