r"""Stored rows read back: their exact values, their audit against a fresh computation, their export.

A :class:`StoredEntry` is one row of ``enumerator_results`` as read back,
with its integrity already checked (:attr:`StoredEntry.intact`) and its
value decoded only when asked for.  :func:`check_entry` recomputes one
entry with the pure function registered for its quantity
(:func:`~enumerator.store.keys.register_quantity`); :func:`export_lines`
writes entries as CSV or JSON lines, every exact number in full.
"""

from __future__ import annotations

import csv
import io
import json
import time
from dataclasses import dataclass
from datetime import datetime, timezone
from typing import Any, Iterable, Iterator, List, Mapping, Optional

from ..core.errors import EnumeratorError, InvalidParameters
from ..core.exact import int_text, text_int
from .codec import decode_value, round_trip
from .keys import ALGORITHM_VERSIONS, Key, key_digest, model_from_key, recomputer, row_intact
from .schema import Result

__all__ = ["EXPORT_COLUMNS", "EXPORT_ENTRY_FORMATS", "HARMLESS", "RAW_COLUMNS", "Check", "StoredEntry",
           "check_entry", "export_lines"]

#: Formats of :func:`export_lines` (and ``enumerator cache export``).
EXPORT_ENTRY_FORMATS = ("csv", "jsonl")
#: The fields of one exported entry, in order.
EXPORT_COLUMNS = ("quantity", "rule", "balls", "urns", "bounds", "params", "version", "kind",
                  "value", "digits", "method", "seconds_approx", "created_at")


@dataclass(frozen=True)
class StoredEntry:
    """One stored row as read back (value decoded on demand, exact)."""

    quantity: str
    rule: str
    balls: int
    urns: int
    bounds: str
    params: str
    version: int
    kind: str
    text: str
    digits: int
    method: str
    elapsed_ns: int
    created_at: datetime
    intact: bool
    #: The SHA-256 key digest the row is filed under (as stored).
    digest: str = ""
    #: What could not be read in the row's other columns (``""`` when every one reads):
    #: set by :meth:`from_columns`, reported as damage by :func:`check_entry`.
    damage: str = ""
    #: True when the damage is in the key itself (``n`` or the version does not read),
    #: so nothing can be recomputed for the row.
    key_damaged: bool = False
    #: The row's id (0 when not read).
    row_id: int = 0

    @classmethod
    def from_row(cls, row: Result) -> "StoredEntry":
        """Return the entry of a ``enumerator_results`` row, its checksum and digit count checked.

        Notes
        -----
        Cost: linear in the length of the value text (the CRC-32).
        """
        return cls(
            quantity=row.quantity, rule=row.rule, balls=row.balls, urns=row.urns, bounds=row.bounds,
            params=row.params, version=row.version, kind=row.kind, text=row.value, digits=row.digits,
            method=row.method, elapsed_ns=row.elapsed_ns, created_at=row.created_at,
            intact=row_intact(row.key_digest, row.kind, row.value, row.digits, row.checksum),
            digest=row.key_digest,
        )

    @classmethod
    def from_columns(cls, columns: Mapping[str, Any]) -> "StoredEntry":
        """Return the entry of a row read as raw columns, whatever a damaged row holds.

        Parameters
        ----------
        columns : mapping
            The ``enumerator_results`` columns by name (:data:`RAW_COLUMNS`),
            with ``balls`` and ``urns`` as their stored text and
            ``created_at`` as read by :class:`~enumerator.store.schema.StoredTime`
            (``None`` when it does not read).

        Returns
        -------
        StoredEntry
            With :attr:`damage` naming every column that does not read (a
            number that is not whole, a missing text, a garbage time); such
            a column's field holds a harmless stand-in (``0``, ``""``).

        Notes
        -----
        :meth:`from_row` reads through the ORM, which stops at the first
        unreadable number; ``cache verify`` reads every row this way instead,
        so a damaged row is reported and repaired rather than stopping the
        scan.  Cost: that of :meth:`from_row`.
        """
        damage: List[str] = []
        key_damaged = False

        def whole(name: str, key: bool) -> int:
            nonlocal key_damaged
            raw = columns.get(name)
            if isinstance(raw, int) and not isinstance(raw, bool):
                return raw
            if isinstance(raw, str):
                try:
                    return text_int(raw)
                except (ValueError, TypeError):
                    pass
            damage.append(f"{name} {str(raw)[:40]!r} is not a whole number")
            key_damaged = key_damaged or key
            return 0

        def text(name: str, key: bool) -> str:
            nonlocal key_damaged
            raw = columns.get(name)
            if isinstance(raw, str):
                return raw
            damage.append(f"{name} is missing")
            key_damaged = key_damaged or key
            return ""

        quantity, rule, bounds = text("quantity", True), text("rule", True), text("bounds", True)
        params = text("params", True)
        balls, urns, version = whole("balls", True), whole("urns", False), whole("version", True)
        kind, value = text("kind", False), text("value", False)
        digits, checksum = columns.get("digits"), columns.get("checksum")
        elapsed = columns.get("elapsed_ns")
        created = columns.get("created_at")
        if not isinstance(created, datetime):
            damage.append("created_at does not read as a time")
            created = None
        digest = columns.get("key_digest")
        digest = digest if isinstance(digest, str) else ""
        intact = (isinstance(digits, int) and isinstance(checksum, int)
                  and row_intact(digest, kind, value, digits, checksum))
        return cls(
            quantity=quantity, rule=rule, balls=balls, urns=urns, bounds=bounds, params=params,
            version=version, kind=kind, text=value, digits=digits if isinstance(digits, int) else 0,
            method=columns.get("method") if isinstance(columns.get("method"), str) else "",
            elapsed_ns=elapsed if isinstance(elapsed, int) else 0, created_at=created,
            intact=intact, digest=digest, damage="; ".join(damage), key_damaged=key_damaged,
            row_id=columns.get("id") or 0,
        )

    @property
    def value(self):
        """The exact value (``int``, ``Fraction``, list or dict); ``ValueError`` if the text is unreadable."""
        return decode_value(self.kind, self.text)

    @property
    def seconds_approx(self) -> float:
        """The compute time in seconds (an approximation)."""
        return self.elapsed_ns / 1e9

    @property
    def stale(self) -> bool:
        """True when the entry's algorithm version is not its quantity's current one (it is never served)."""
        current = ALGORITHM_VERSIONS.get(self.quantity)
        return current is not None and current != self.version


@dataclass(frozen=True)
class Check:
    """What recomputing one entry found: a *problem* (None when the stored value is right).

    *fresh* is the recomputed value, or None when there is none (the key
    does not read, or a damaged row's recomputation was refused).
    """

    problem: Optional[str]
    fresh: Any
    elapsed_ns: int


#: The columns :meth:`StoredEntry.from_columns` reads, in order.
RAW_COLUMNS = ("id", "quantity", "rule", "balls", "urns", "bounds", "params", "version", "kind", "value",
               "digits", "checksum", "method", "elapsed_ns", "created_at", "key_digest")

#: How :func:`check_entry` names each kind of damage (the start of a ``problem``).
UNKNOWN_QUANTITY = "unknown quantity"
UNREADABLE_KEY = "unreadable key"
DAMAGED_VALUE = "damaged (checksum or digit count disagrees)"
UNREADABLE_VALUE = "unreadable value"
UNREADABLE_PARAMS = "unreadable parameters"
WRONG_DIGEST = "wrong digest"
WRONG_URNS = "wrong urn count"
UNREADABLE_TIME = "unreadable created_at"
WRONG_VALUE = "value differs from a fresh computation"

#: Problems that never give a wrong answer: the row's value is right (or is never served).
HARMLESS = (UNREADABLE_TIME, UNKNOWN_QUANTITY)


def _column_problem(entry: StoredEntry) -> str:
    """The problem of a row whose other columns do not all read (its key does)."""
    if entry.damage.startswith("created_at") and ";" not in entry.damage:
        return f"{UNREADABLE_TIME} ({entry.damage})"  # the value and key are sound: only the time is lost
    return f"damaged ({entry.damage})"


def _current_key_digest(entry: StoredEntry) -> str:
    return key_digest(entry.quantity, Key(entry.rule, entry.balls, entry.bounds, entry.urns),
                      entry.params, entry.version)


def check_entry(entry: StoredEntry) -> Optional[Check]:
    """Recompute *entry* with its quantity's pure function and compare it with the stored value.

    Parameters
    ----------
    entry : StoredEntry
        A row read back.

    Returns
    -------
    Check or None
        None when the entry cannot be checked and shows no damage (its
        quantity has no recomputer, its version is superseded, or the
        recomputation is refused as too large while the row itself is
        sound); else the fresh value (``None`` when there is none: the row
        can only be removed), the time it took, and the problem found, or
        None.  Every problem is damage, named by how it starts:

        * ``"unknown quantity"``: no quantity of that name is registered
          (nothing reads the row);
        * ``"unreadable key ..."``: ``n``, the version, the rule or the
          bounds text does not read (nothing can be recomputed);
        * ``"damaged (checksum or digit count disagrees)"``;
        * ``"unreadable value ..."``: the text is not of its kind;
        * ``"unreadable parameters ..."``: the recomputer cannot read the
          parameter text (nothing can be recomputed);
        * ``"wrong digest"``: the row is filed under a digest that is not
          its key's;
        * ``"wrong urn count"``: ``urns`` disagrees with the bounds text;
        * ``"unreadable created_at"``: the value is right, its time is not;
        * ``"value differs from a fresh computation"`` (also when only the
          type differs, e.g. a whole ``Fraction`` against an ``int``).

    Notes
    -----
    The model is rebuilt from the key's canonical text, groups and weights
    included (:func:`~enumerator.store.keys.model_from_key`), so grouped
    and weighted entries are recomputed for the model they were stored
    for.  Cost: one fresh computation of the quantity.
    """
    if entry.quantity not in ALGORITHM_VERSIONS and not entry.key_damaged:
        return Check(f"{UNKNOWN_QUANTITY} {entry.quantity[:64]!r} (nothing registers it, so nothing reads "
                     "the row)", None, 0)
    if entry.key_damaged:
        return Check(f"{UNREADABLE_KEY} ({entry.damage})", None, 0)
    if entry.stale:
        return None
    recompute = recomputer(entry.quantity)
    filed_right = entry.digest == _current_key_digest(entry)
    if recompute is None:
        if entry.intact and filed_right and not entry.damage:
            return None  # sound, but nothing here can recompute it
        # damaged, and nothing to put in its place: a cache row is dropped
        problem = DAMAGED_VALUE if not entry.intact else (WRONG_DIGEST if not filed_right else
                                                          _column_problem(entry))
        return Check(problem + "; no recomputer is registered for the quantity", None, 0)
    try:
        model = model_from_key(entry.rule, entry.balls, entry.bounds)
    except EnumeratorError as error:
        return Check(f"{UNREADABLE_KEY} ({error})", None, 0)
    sound = entry.intact
    unreadable = ""
    if sound:
        try:
            stored = entry.value
        except (ValueError, TypeError) as error:
            sound, unreadable = False, str(error)[:80]
    t0 = time.perf_counter_ns()
    try:
        fresh = recompute(model, entry.params)
    except (InvalidParameters, ValueError, TypeError, KeyError, IndexError) as error:
        # the parameter text does not read (a damaged row): nothing can be recomputed
        return Check(f"{UNREADABLE_PARAMS} ({' '.join(str(error).split())[:120]})", None, 0)
    except EnumeratorError:
        if sound and filed_right and not entry.damage:
            return None  # refused (too large, unsupported): the row cannot be checked
        fresh = None
    spent = time.perf_counter_ns() - t0
    problem = None
    if not entry.intact:
        problem = DAMAGED_VALUE
    elif not sound:
        problem = f"{UNREADABLE_VALUE} ({unreadable})" if unreadable else UNREADABLE_VALUE
    elif not filed_right:
        problem = f"{WRONG_DIGEST} (the row is filed under a digest its key does not have)"
    elif model.urns != entry.urns:
        problem = f"{WRONG_URNS} ({entry.urns} stored, {model.urns} in the bounds text)"
    elif entry.damage:
        problem = _column_problem(entry)
    elif stored != fresh or type(stored) is not type(round_trip(fresh)):
        problem = WRONG_VALUE
    return Check(problem, fresh, spent)


def _export_fields(entry: StoredEntry) -> list:
    created = entry.created_at
    if created is not None and created.tzinfo is None:
        created = created.replace(tzinfo=timezone.utc)  # stored in UTC; SQLite drops the zone
    created = created.isoformat() if created is not None else ""
    return [entry.quantity, entry.rule, int_text(entry.balls), int_text(entry.urns), entry.bounds,
            entry.params, str(entry.version), entry.kind, entry.text, str(entry.digits),
            entry.method, f"{entry.seconds_approx:.6g}", created]


def export_lines(entries: Iterable[StoredEntry], fmt: str = "jsonl") -> Iterator[str]:
    """Yield *entries* as lines of text: ``csv`` (after a header) or ``jsonl``.

    Parameters
    ----------
    entries : iterable of StoredEntry
        Consumed lazily, one at a time.
    fmt : str
        ``"csv"`` or ``"jsonl"`` (any case).

    Yields
    ------
    str
        One line each, ending in ``\n``: the fields :data:`EXPORT_COLUMNS`.
        Exact values in full (decimal, ``p/q`` or canonical JSON); in JSON
        every exact integer is a string of digits and the compute time is
        the float ``seconds_approx`` (an approximation, as its name says).

    Raises
    ------
    ValueError
        For another *fmt* (when the first line is asked for).

    Notes
    -----
    Cost: linear in the total length of the values; memory for one entry.
    """
    fmt = str(fmt).lower()
    if fmt not in EXPORT_ENTRY_FORMATS:
        raise ValueError(f"format must be one of {', '.join(EXPORT_ENTRY_FORMATS)} (got {fmt!r})")
    if fmt == "csv":
        buffer = io.StringIO()
        writer = csv.writer(buffer, lineterminator="\n")
        writer.writerow(EXPORT_COLUMNS)
        yield buffer.getvalue()
        for entry in entries:
            buffer.seek(0)
            buffer.truncate()
            writer.writerow(_export_fields(entry))
            yield buffer.getvalue()
        return
    for entry in entries:
        record = dict(zip(EXPORT_COLUMNS, _export_fields(entry)))
        record["seconds_approx"] = entry.seconds_approx
        yield json.dumps(record, ensure_ascii=False) + "\n"
