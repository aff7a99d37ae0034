r"""What a stored value is filed under: its canonical key, digest and checksum.

A result is keyed by

* the *quantity* (``"configurations"``, ``"microstates"``, ``"profiles"``,
  or any name another module registers with :func:`register_quantity`);
* the problem (:class:`Key`): the rule, ``n``, the urns in the model's
  canonical text (:meth:`~enumerator.core.model.UrnModel.canonical_bounds`:
  ``"r*a:b"`` for one group, ``"cxa:b,..."`` for several, ``@w`` after every
  group of a weighted model; it grows with the number of groups, never with
  ``r``) and ``r`` (any size: ``2**64`` urns is one short text);
* an optional parameter text (canonical, chosen by the quantity);
* the quantity's algorithm *version* (:data:`ALGORITHM_VERSIONS`).

The row is found by the SHA-256 digest of those fields (:func:`key_digest`),
and guarded by a CRC-32 of digest, kind and value text (:func:`row_checksum`)
so a damaged row is refused instead of served (:func:`row_intact`).

Schema 1 wrote the bounds of a non-uniform model per urn (``"0:2,0:2,1:"``);
the upgrade to schema 2 refiles those rows under the group text
(:mod:`enumerator.store.migrations`).  Uniform texts, and so their digests,
are the same in both.
"""

from __future__ import annotations

import hashlib
import operator
import zlib
from dataclasses import dataclass
from typing import Any, Callable, Dict, Optional

from ..core.errors import StoreError
from ..core.exact import int_text
from ..core.model import UrnModel
from .codec import decode_value, digit_count

__all__ = [
    "ALGORITHM_VERSIONS",
    "Key",
    "key_digest",
    "model_from_key",
    "recomputer",
    "register_quantity",
    "row_checksum",
    "row_intact",
    "stored_value",
]

#: Algorithm version of each quantity.  Raise a number whenever the method
#: (or the definition) behind that quantity changes: rows keyed by the old
#: number are then never served again.  Other modules add theirs through
#: :func:`register_quantity`.
ALGORITHM_VERSIONS: Dict[str, int] = {
    "configurations": 1,
    "microstates": 1,
    "profiles": 1,
    "distribution": 1,
    "coefficient_row": 1,
}

#: quantity -> function(model, params) recomputing a stored value (for verify).
_RECOMPUTE: Dict[str, Callable[[Any, str], Any]] = {}


def register_quantity(name: str, version: int, recompute: Optional[Callable[[Any, str], Any]] = None) -> None:
    """Declare a quantity's algorithm *version* and how to recompute it.

    Parameters
    ----------
    name : str
        The quantity's key text, e.g. ``"max_load_distribution"`` (at most 64
        characters).
    version : int
        Its algorithm version (a positive integer); raise it when the method
        changes so old rows are no longer served.
    recompute : callable, optional
        ``f(model, params) -> value`` used by
        :meth:`~enumerator.store.database.Store.verify`; without it verify
        skips the quantity's rows.

    Raises
    ------
    ValueError
        When *name* is empty, not a string or longer than 64 characters.
    TypeError
        When *version* is not an integer.

    Notes
    -----
    Cost: constant.  Registering the same name again replaces its version
    (and its recomputer, when one is given).
    """
    if not isinstance(name, str) or not name or len(name) > 64:
        raise ValueError("a quantity name is a non-empty string of at most 64 characters")
    ALGORITHM_VERSIONS[name] = operator.index(version)
    if recompute is not None:
        _RECOMPUTE[name] = recompute


def recomputer(name: str) -> Optional[Callable[[Any, str], Any]]:
    """Return the function that recomputes quantity *name* (``f(model, params)``), or None.

    Notes
    -----
    Cost: one dict lookup.
    """
    return _RECOMPUTE.get(name)


def _recompute_builtin(name: str) -> Callable[[Any, str], Any]:
    def run(model, params):
        from ..algorithms import counting

        return {
            "configurations": counting.count_configurations,
            "microstates": counting.count_microstates,
            "profiles": counting.count_profiles,
        }[name](model)

    return run


for _name in ("configurations", "microstates", "profiles"):
    _RECOMPUTE[_name] = _recompute_builtin(_name)


@dataclass(frozen=True)
class Key:
    """The problem part of a canonical key: rule, ``n``, canonical bounds text, ``r`` (any size)."""

    rule: str
    balls: int
    bounds: str
    urns: int

    @classmethod
    def of(cls, model) -> "Key":
        """Return the key of an :class:`~enumerator.core.model.UrnModel`.

        Examples
        --------
        >>> from enumerator.core.model import UrnModel
        >>> Key.of(UrnModel(balls=5, urns=3, rule="BE", capacity=2))
        Key(rule='BE', balls=5, bounds='3*0:2', urns=3)
        >>> Key.of(UrnModel(balls=2, weights="2x1,3", rule="MB"))
        Key(rule='MB', balls=2, bounds='2x0:@1,1x0:@3', urns=3)
        """
        return cls(model.rule.value, model.balls, model.canonical_bounds(), model.urns)


def key_digest(quantity: str, key: Key, params: str, version: int) -> str:
    """Return the SHA-256 hex digest under which a result is stored (its unique key).

    Parameters
    ----------
    quantity : str
        The quantity's name.
    key : Key
        The problem.
    params : str
        The quantity's canonical parameter text (``""`` for none).
    version : int
        The algorithm version.

    Returns
    -------
    str
        64 hexadecimal digits.

    Notes
    -----
    The fields are joined by the unit separator ``\x1f``, which none of them
    contains.  ``r`` is not hashed: the canonical bounds already fix it.
    Cost: linear in the length of the fields.
    """
    text = "\x1f".join(
        (quantity, key.rule, key.bounds, params, str(version), int_text(key.balls))
    )
    return hashlib.sha256(text.encode()).hexdigest()


def row_checksum(digest: str, kind: str, text: str) -> int:
    """Return the CRC-32 that ties a stored value's text to its key digest and kind.

    Notes
    -----
    Cost: linear in the length of *text*.
    """
    return zlib.crc32(text.encode(), zlib.crc32(f"{digest}:{kind}:".encode()))


def row_intact(digest: str, kind: str, text: str, digits: int, checksum: int) -> bool:
    """Return True when a stored row's checksum and (for an ``int``) digit count agree with its text.

    Notes
    -----
    Cost: linear in the length of *text*.  A row that is not intact is
    refused by every reader (never served as a value).
    """
    return row_checksum(digest, kind, text) == checksum and (kind != "int" or digit_count(text) == digits)


def stored_value(name: str, quantity: str, key: Key, digest: str, kind: str, text: str,
                 digits: int, checksum: int):
    """Return the value of a stored row after checking it, or refuse the row.

    Parameters
    ----------
    name : str
        The store's name (file path or URL), for the message.
    quantity, key
        What the row was looked up as, for the message.
    digest, kind, text, digits, checksum
        The row: its key digest and stored columns.

    Returns
    -------
    int, Fraction, list or dict
        The decoded value (:func:`~enumerator.store.codec.decode_value`).

    Raises
    ------
    StoreError
        When the row is not intact (:func:`row_intact`) or its text does not
        decode: a wrong value is never returned.

    Notes
    -----
    The one check every reader of a single value uses (the full store and the
    quick read), so both refuse a damaged row with the same words.  Cost:
    that of :func:`row_intact` plus the decoding.
    """
    if not row_intact(digest, kind, text, digits, checksum):
        raise StoreError(
            f"the store {name} holds a damaged entry for {quantity} of {key.rule} "
            f"n={key.balls} bounds {key.bounds} (its checksum disagrees); repair it with "
            "'enumerator cache verify --fix --all', or delete the store file (it only holds a cache)"
        )
    try:
        return decode_value(kind, text)
    except (ValueError, TypeError):
        raise StoreError(
            f"the store {name} holds a damaged, unreadable entry for {quantity} of {key.rule} "
            f"n={key.balls} bounds {key.bounds} (its value does not read as {str(kind)[:16]!r}); repair "
            "it with 'enumerator cache verify --fix --all', or delete the store file (it only holds a cache)"
        ) from None


def model_from_key(rule: str, balls: int, bounds: str):
    """Return the :class:`~enumerator.core.model.UrnModel` a stored key describes.

    Parameters
    ----------
    rule : str
        The key's rule.
    balls : int
        The key's ``n``.
    bounds : str
        The key's canonical bounds text, groups and weights included, read
        by the model's own parser (:meth:`UrnModel.from_canonical
        <enumerator.core.model.UrnModel.from_canonical>`, which also reads
        schema 1's per-urn texts).

    Returns
    -------
    UrnModel
        Built from its groups: nothing is expanded per urn.

    Raises
    ------
    InvalidParameters
        For a malformed bounds text or rule.

    Notes
    -----
    Cost: that of building the model, linear in the length of the text.

    Examples
    --------
    >>> model = model_from_key("BE", 5, "3*0:2")
    >>> model.balls, model.urns, model.canonical_bounds()
    (5, 3, '3*0:2')
    >>> model_from_key("MB", 2, "2x0:@1,1x0:@3").weighted
    True
    >>> model_from_key("BE", 1, "18446744073709551616*0:").urns == 2**64
    True
    """
    return UrnModel.from_canonical(rule, balls, bounds)
