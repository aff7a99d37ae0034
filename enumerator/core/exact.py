"""Exact numbers to text and back: the project's one codec.

Every exact value that leaves the library as text — a JSON field, a stored
row, a table cell, a CSV column — goes through these functions, so they are
written one way everywhere:

- an integer is its decimal digits (``"-12"``);
- a rational is ``"p/q"`` in lowest terms, and ``"p"`` when ``q = 1`` — the
  text ``str(fractions.Fraction)`` writes.

Large integers are converted by GMP (``mpz_get_str``/``mpz_set_str`` through
gmpy2), whose radix conversion is subquadratic; CPython's ``str(int)`` is
quadratic and refuses more than 4,300 digits by default
(``sys.set_int_max_str_digits``).  A million-digit integer converts in well
under a second here.
"""

from __future__ import annotations

import math
import operator
from fractions import Fraction
from typing import Union

import gmpy2

__all__ = [
    "coprime_fraction",
    "decimal_digits",
    "exact_text",
    "int_text",
    "is_exact_int",
    "parse_exact",
    "text_int",
]

Exact = Union[int, Fraction]

# Below about 900 digits CPython's own conversion is quicker than a call into
# GMP and far inside the default int/str limit.
_SMALL = 1 << 3000
_SHORT_TEXT = 900


def is_exact_int(value) -> bool:
    """True for ``int`` and integer-like numbers (``mpz``, ``fmpz``, numpy ints), False for ``bool`` and text."""
    if isinstance(value, bool):
        return False
    if isinstance(value, int):
        return True
    if isinstance(value, (str, bytes)):
        return False
    try:
        operator.index(value)
    except TypeError:
        return False
    return True


def int_text(value) -> str:
    """Return the decimal digits of the integer *value* (any size).

    Examples
    --------
    >>> int_text(-42)
    '-42'
    >>> len(int_text(10**5000))
    5001
    """
    if type(value) is int and -_SMALL < value < _SMALL:
        return str(value)
    return gmpy2.mpz(operator.index(value) if not isinstance(value, int) else value).digits(10)


def text_int(text: str) -> int:
    """Return the ``int`` written in decimal by *text* (any length); raise ``ValueError`` otherwise.

    Examples
    --------
    >>> text_int("-42")
    -42
    """
    if len(text) < _SHORT_TEXT:
        return int(text)
    body = text.strip()
    if not body or not body.lstrip("+-").isdigit():
        raise ValueError(f"not a decimal integer: {text[:40]!r}...")
    return int(gmpy2.mpz(body, 10))


def exact_text(value: Exact) -> str:
    """Return *value* as ``"p"`` or ``"p/q"`` in lowest terms (``str(Fraction)``'s text, any size).

    Parameters
    ----------
    value : int or Fraction (or mpz, fmpz, mpq)
        An exact number; ``bool`` and floats are refused with ``TypeError``.

    Examples
    --------
    >>> exact_text(Fraction(6, 4)), exact_text(Fraction(4, 2)), exact_text(7)
    ('3/2', '2', '7')
    """
    if isinstance(value, bool):
        raise TypeError("booleans are not exact numbers")
    if is_exact_int(value):
        return int_text(value)
    try:
        p, q = value.numerator, value.denominator
    except AttributeError:
        raise TypeError(f"an exact number is an int or a Fraction, not {type(value).__name__}") from None
    if isinstance(value, float):
        raise TypeError("floats are not exact numbers; use Fraction")
    top = int_text(p)
    return top if q == 1 else f"{top}/{int_text(q)}"


def parse_exact(text: str) -> Exact:
    """Invert :func:`exact_text`: ``"p"`` gives an ``int``, ``"p/q"`` a ``Fraction``.

    Examples
    --------
    >>> parse_exact("3/2"), parse_exact("-5")
    (Fraction(3, 2), -5)
    """
    p, slash, q = text.partition("/")
    if not slash:
        return text_int(p)
    return Fraction(text_int(p), text_int(q))


#: log10(2), for :func:`decimal_digits`.
_LOG10_2 = math.log10(2)


def decimal_digits(value: int) -> int:
    """Return the number of decimal digits of ``|value|`` (1 for 0), exactly, without writing it out.

    Cost: one ``mpz_sizeinbase`` estimate (exact or one too many), settled
    by ``log10`` of the top 64 bits (float error below ``1e-7`` at any size
    that fits in memory); only a value within ``1e-6`` of a power of ten in
    ``log10`` is compared with that power, which costs a power of ten as long
    as the value.

    Examples
    --------
    >>> decimal_digits(0), decimal_digits(999), decimal_digits(-1000), decimal_digits(10**100)
    (1, 3, 4, 101)
    >>> decimal_digits(10**5000 - 1), decimal_digits(10**5000), decimal_digits(7 * 10**4999 + 3)
    (5000, 5001, 5000)
    """
    z = abs(gmpy2.mpz(operator.index(value)))
    if z < 10:
        return 1
    estimate = gmpy2.num_digits(z, 10)  # exact or one too many
    bits = z.bit_length()
    shift = max(0, bits - 64)
    log10 = math.log10(int(z >> shift)) + shift * _LOG10_2
    gap = log10 - (estimate - 1)
    if gap > 1e-6:
        return estimate
    if gap < -1e-6:
        return estimate - 1
    return estimate - 1 if z < gmpy2.mpz(10) ** (estimate - 1) else estimate


def coprime_fraction(numerator, denominator) -> Fraction:
    """Return ``Fraction(numerator, denominator)`` for a pair already in lowest terms, without a gcd.

    ``Fraction(p, q)`` recomputes ``gcd(p, q)`` with CPython's integer gcd,
    which is quadratic: for numbers of millions of digits it takes minutes.
    Callers that reduced the pair themselves (with GMP, or by removing the
    only primes the denominator can have) use this instead.

    Parameters
    ----------
    numerator, denominator : int or mpz
        Coprime, with ``denominator > 0``; not checked beyond the sign.

    Examples
    --------
    >>> coprime_fraction(3, 4)
    Fraction(3, 4)
    """
    p, q = int(numerator), int(denominator)
    if q <= 0:
        raise ValueError("the denominator must be positive")
    maker = getattr(Fraction, "_from_coprime_ints", None)  # Python 3.12+
    if maker is not None:
        return maker(p, q)
    return Fraction(p, q, _normalize=False)  # Python 3.11
