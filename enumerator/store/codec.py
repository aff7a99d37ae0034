r"""Exact values to the store's text and back.

A stored value is one of three *kinds*, each one canonical text (the same
value always gives the same text, so a stored row can be checksummed and
compared byte for byte):

``int``
    the decimal digits of the integer (``"-12"``);
``fraction``
    ``"p/q"`` in lowest terms, ``"p"`` when ``q = 1`` (the text
    ``str(fractions.Fraction)`` writes);
``json``
    a list, tuple or dict of exact numbers (nested freely), as compact JSON
    in which every number is a string: an integer is its digits, a
    rational is always ``"p/q"`` (also when ``q = 1``, so a whole
    ``Fraction`` comes back a ``Fraction``).  Dict keys are integers (written
    as digits) or non-numeric strings; integer keys come first in numeric
    order, then text keys in text order.

The numbers themselves go through the project's one codec,
:mod:`enumerator.core.exact` (GMP's subquadratic radix conversion for large
values); this module only adds the kinds and the nesting.
"""

from __future__ import annotations

import json
import numbers
import operator
from fractions import Fraction
from typing import List, Tuple

from ..core.exact import int_text, is_exact_int, text_int

__all__ = ["KINDS", "decode_value", "digit_count", "encode_value", "round_trip"]

#: The kinds of stored value, in the order :func:`encode_value` tries them.
KINDS = ("int", "fraction", "json")


def digit_count(text: str) -> int:
    """Return the number of decimal digits in the integer text *text* (a sign is not a digit).

    Parameters
    ----------
    text : str
        Decimal digits, optionally after a ``-``.

    Returns
    -------
    int
        ``len(text)`` without the sign.

    Notes
    -----
    Cost: constant.

    Examples
    --------
    >>> digit_count("-120"), digit_count("7")
    (3, 1)
    """
    return len(text) - (text[:1] == "-")


def _looks_numeric(text: str) -> bool:
    """True for text that reads as an integer or ``p/q`` (such dict keys would be ambiguous)."""
    body = text[1:] if text[:1] == "-" else text
    return body.isdigit() or ("/" in text and all(_looks_numeric(p) for p in text.split("/", 1)))


def _encode_tree(value, largest: List[int]):
    """*value* with every exact number replaced by its text; *largest* tracks the widest number."""
    if value is None or isinstance(value, bool):
        return value
    if is_exact_int(value):
        text = int_text(operator.index(value))
        largest[0] = max(largest[0], digit_count(text))
        return text
    if isinstance(value, numbers.Rational):
        p, q = int_text(value.numerator), int_text(value.denominator)
        largest[0] = max(largest[0], digit_count(p), len(q))
        return f"{p}/{q}"
    if isinstance(value, (list, tuple)):
        return [_encode_tree(v, largest) for v in value]
    if isinstance(value, dict):
        int_keys, str_keys = [], []
        for k in value:
            if is_exact_int(k):
                int_keys.append(k)
            elif isinstance(k, str) and not _looks_numeric(k):
                str_keys.append(k)
            else:
                raise TypeError(
                    f"store dict keys must be integers or non-numeric strings (got {k!r})"
                )
        ordered = {}
        for k in sorted(int_keys, key=operator.index):
            ordered[int_text(operator.index(k))] = _encode_tree(value[k], largest)
        for k in sorted(str_keys):
            ordered[k] = _encode_tree(value[k], largest)
        return ordered
    raise TypeError(
        "the store keeps exact numbers (int, Fraction) and lists/dicts of them, "
        f"not {type(value).__name__}"
    )


def _decode_tree(value):
    """Invert :func:`_encode_tree` on parsed JSON."""
    if isinstance(value, str):
        if "/" in value:
            p, q = value.split("/", 1)
            return Fraction(text_int(p), text_int(q))
        return text_int(value)
    if isinstance(value, list):
        return [_decode_tree(v) for v in value]
    if isinstance(value, dict):
        return {(text_int(k) if _looks_numeric(k) else k): _decode_tree(v) for k, v in value.items()}
    return value


def encode_value(value) -> Tuple[str, str, int]:
    """Return ``(kind, text, digits)``: *value* in its one canonical stored text.

    Parameters
    ----------
    value : int, Fraction, or a list, tuple or dict of them
        ``int`` includes integer-like numbers (``mpz``, ``fmpz``, numpy
        integers); ``Fraction`` any ``numbers.Rational`` (``mpq``).  Lists,
        tuples and dicts nest freely; ``None`` and booleans may appear inside
        them.

    Returns
    -------
    kind : str
        ``"int"``, ``"fraction"`` or ``"json"`` (see the module docstring).
    text : str
        The canonical text.
    digits : int
        The number of decimal digits of the largest number inside (for a
        rational, of its numerator or denominator, whichever is longer).

    Raises
    ------
    TypeError
        For floats, text and other inexact or unknown values, and for dict
        keys that are neither integers nor non-numeric strings.

    Notes
    -----
    Cost: linear in the number of items plus the radix conversions, which
    are subquadratic in the digits (GMP, through :mod:`enumerator.core.exact`).

    Examples
    --------
    >>> encode_value(-120)
    ('int', '-120', 3)
    >>> encode_value(Fraction(6, 4))
    ('fraction', '3/2', 1)
    >>> encode_value({"mean": Fraction(3), 2: [10, 1]})
    ('json', '{"2":["10","1"],"mean":"3/1"}', 2)
    """
    if is_exact_int(value):
        text = int_text(operator.index(value))
        return "int", text, digit_count(text)
    if isinstance(value, numbers.Rational) and not isinstance(value, bool):
        p, q = int_text(value.numerator), int_text(value.denominator)
        text = p if q == "1" else f"{p}/{q}"
        return "fraction", text, max(digit_count(p), len(q))
    largest = [0]
    tree = _encode_tree(value, largest)
    return "json", json.dumps(tree, separators=(",", ":"), ensure_ascii=True), largest[0]


def decode_value(kind: str, text: str):
    """Return the exact value that :func:`encode_value` wrote as ``(kind, text)``.

    Parameters
    ----------
    kind : str
        ``"int"``, ``"fraction"`` or ``"json"``.
    text : str
        The stored text.

    Returns
    -------
    int, Fraction, list or dict
        Exact: lists come back as lists (a tuple is stored as a list), dict
        keys written as digits come back as ``int``.

    Raises
    ------
    ValueError
        For an unknown *kind* or text that is not of its kind.

    Notes
    -----
    Cost: linear in the length of *text* plus subquadratic radix conversions.

    Examples
    --------
    >>> decode_value("fraction", "3/2"), decode_value("int", "-120")
    (Fraction(3, 2), -120)
    >>> decode_value("json", '{"2":["10","1"],"mean":"3/1"}')
    {2: [10, 1], 'mean': Fraction(3, 1)}
    """
    if kind == "int":
        return text_int(text)
    if kind == "fraction":
        p, _, q = text.partition("/")
        return Fraction(text_int(p), text_int(q) if q else 1)
    if kind == "json":
        return _decode_tree(json.loads(text))
    raise ValueError(f"unknown stored value kind {kind!r}")


def round_trip(value):
    """Return *value* as the store gives it back (``decode_value(encode_value(value))``).

    Examples
    --------
    >>> round_trip((1, Fraction(2)))
    [1, Fraction(2, 1)]
    """
    kind, text, _ = encode_value(value)
    return decode_value(kind, text)
