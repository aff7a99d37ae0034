"""Whole numbers on the command line: digits, or a power ``B^E[+-K]`` sized before it is expanded."""

import pytest
from cli_helpers import one_line_error, run, run_json

from enumerator.core.errors import InvalidParameters
from enumerator.core.groups import MAX_DIGITS, parse_count


@pytest.mark.parametrize(
    "text, value",
    [
        ("2^64", 2**64),  # 18446744073709551616, common practice (the 64-bit identifier space)
        ("2^32-1", 4294967295),  # the largest unsigned 32-bit integer, common practice
        ("10^6+5", 1000005),
        (" 3 ^ 4 ", 81),
        ("0^0", 1),  # Python's and the combinatorial convention 0^0 = 1 (common practice)
        ("365", 365),
    ],
)
def test_powers_and_digits_are_read_exactly(text, value):
    assert parse_count(text, "urns", 1) == value


@pytest.mark.parametrize("text", ["2^99999999", "10^4001", "7^100000000000000000000"])
def test_a_power_too_large_is_refused_before_it_is_expanded(text):
    with pytest.raises(InvalidParameters, match="digits"):
        parse_count(text, "urns", 1)


def test_the_digit_limit_is_the_same_for_powers_and_written_digits():
    assert parse_count(f"10^{MAX_DIGITS - 1}", "urns") == 10 ** (MAX_DIGITS - 1)
    with pytest.raises(InvalidParameters):
        parse_count("9" * (MAX_DIGITS + 1), "urns")


@pytest.mark.parametrize("text", ["2^-1", "2**64", "1e6", "2^", "^3", "2^3^2", "0x10"])
def test_other_notations_are_refused(text):
    with pytest.raises(InvalidParameters, match="power such as 2\\^64"):
        parse_count(text, "urns", 1)


def test_a_power_below_the_minimum_is_refused():
    with pytest.raises(InvalidParameters, match="at least 1"):
        parse_count("3^2-20", "urns", 1)


def test_the_cli_takes_a_power_for_urns():
    # MB count r^n, stars and bars C(n+r-1, n) for BE (common practice)
    payload = run_json("count", "-n", "3", "-r", "2^64", "--json")
    assert payload["urns"] == str(2**64)
    assert payload["microstates"] == str(2 ** 192)


def test_the_cli_refuses_a_huge_power_in_one_line():
    assert "digits" in one_line_error(run("count", "-n", "3", "-r", "2^99999999"))


def test_weights_read_powers_and_name_a_zero_denominator():
    from fractions import Fraction

    from enumerator.core.groups import parse_weight

    assert parse_weight("2^10") == 1024 and parse_weight("1/2^3") == Fraction(1, 8)
    with pytest.raises(InvalidParameters, match="the denominator of weight"):
        parse_weight("1/0")
