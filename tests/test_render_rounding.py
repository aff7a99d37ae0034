"""Rounded forms of long exact values: ``render.scientific`` and ``core.exact.decimal_digits``.

Reference: Python's :mod:`decimal` module (correctly rounded division,
ROUND_HALF_EVEN) and the length of GMP's decimal text; the long-operand routes (an MPFR
enclosure, a logarithm of the top bits) must agree with them everywhere,
ties and values next to powers of ten included.
"""

from __future__ import annotations

import random
from decimal import ROUND_HALF_EVEN, Context
from fractions import Fraction

import gmpy2
import pytest

from enumerator.cli.render import scientific
from enumerator.core.exact import decimal_digits


def decimal_reference(value: Fraction, significant: int = 5) -> str:
    wide = Context(prec=9000, rounding=ROUND_HALF_EVEN, Emax=10**9, Emin=-10**9)
    quotient = wide.divide(abs(value.numerator), value.denominator)
    rounded = Context(prec=significant, rounding=ROUND_HALF_EVEN, Emax=10**9, Emin=-10**9).plus(quotient)
    _, digits, exponent = rounded.as_tuple()
    e = exponent + len(digits) - 1
    text = "".join(map(str, digits))
    sign = "-" if value < 0 else ""
    return f"{sign}{text[0]}.{text[1:]}e{'+' if e >= 0 else '-'}{abs(e)}"


def test_long_fractions_round_as_decimal_does():
    rng = random.Random(7)
    for _ in range(200):
        a = rng.randint(1, 10 ** rng.randint(1, 900))
        b = rng.randint(1, 10 ** rng.randint(1, 900))
        k = rng.randint(1300, 1600)  # numerator and denominator past 4,000 bits
        value = Fraction(a * 10 ** k + rng.randint(0, 9), b * 10 ** k) * rng.choice((1, -1))
        assert scientific(value) == decimal_reference(value)


@pytest.mark.parametrize("mantissa", [123455, 123465, 999995, 100005])
def test_exact_ties_with_long_terms(mantissa):
    # an exact tie: the enclosure straddles the boundary and the exact division decides
    scale = 7 ** 2000
    value = Fraction(mantissa * scale, 10 ** 5 * scale, _normalize=False)
    assert scientific(value) == decimal_reference(Fraction(mantissa, 10 ** 5))


def test_digit_counts_next_to_powers_of_ten():
    rng = random.Random(11)
    for k in list(range(1, 60)) + [rng.randint(100, 20000) for _ in range(40)]:
        for n in (10 ** k - 1, 10 ** k, 10 ** k + 1, rng.randint(10 ** (k - 1), 10 ** k)):
            assert decimal_digits(n) == len(gmpy2.mpz(n).digits())


def test_approx_of_long_fractions_is_the_nearest_float():
    # reference: MPFR's correctly rounded quotient of the whole fraction (gmpy2), and Python's float()
    from enumerator.cli.render import approx

    rng = random.Random(13)
    for _ in range(500):
        a = rng.randint(1, 2 ** rng.randint(4100, 5000))
        b = rng.randint(1, 2 ** rng.randint(4100, 5000))
        value = Fraction(a, b) * rng.choice((1, -1))
        with gmpy2.context(gmpy2.get_context(), precision=53, emax=1 << 30, emin=-(1 << 30)):
            expected = float(gmpy2.mpfr(gmpy2.mpq(value.numerator, value.denominator)))
        assert approx(value) == expected
    # a tie-free value next to a float: 1 + 2^-53 + tiny rounds up; written over a long denominator
    scale = 3 ** 3000
    assert approx(Fraction((2 ** 53 + 1) * scale + 1, 2 ** 53 * scale)) == float.fromhex("0x1.0000000000001p+0")
