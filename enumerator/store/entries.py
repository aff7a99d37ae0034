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
from typing import Any, Iterable, Iterator, Optional

from ..core.errors import EnumeratorError
from ..core.exact import int_text
from .codec import decode_value, round_trip
from .keys import ALGORITHM_VERSIONS, model_from_key, recomputer, row_intact
from .schema import Result

__all__ = ["EXPORT_COLUMNS", "EXPORT_ENTRY_FORMATS", "Check", "StoredEntry", "check_entry", "export_lines"]

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


def check_entry(entry: StoredEntry) -> Optional[Check]:
    """Recompute *entry* with its quantity's pure function and compare it with the stored value.

    Parameters
    ----------
    entry : StoredEntry
        A row read back.

    Returns
    -------
    Check or None
        None when the entry cannot be checked (its quantity has no
        recomputer, its version is superseded, or the recomputation is
        refused as too large while the row itself is sound); else the fresh
        value (``None`` when there is none), the time it took, and the
        problem found: ``"unreadable key ..."`` (the rule, ``n`` or bounds
        text do not describe a model: nothing can be recomputed),
        ``"damaged (checksum or digit count disagrees)"``, ``"unreadable
        value"``, ``"value differs from a fresh computation"`` (also when
        only the type differs, e.g. a whole ``Fraction`` against an
        ``int``), or None.

    Notes
    -----
    The model is rebuilt from the key's canonical text, groups and weights
    included (:func:`~enumerator.store.keys.model_from_key`), so grouped
    and weighted entries are recomputed for the model they were stored
    for.  Cost: one fresh computation of the quantity.
    """
    recompute = recomputer(entry.quantity)
    if recompute is None or entry.stale:
        return None
    try:
        model = model_from_key(entry.rule, entry.balls, entry.bounds)
    except EnumeratorError as error:
        return Check(f"unreadable key ({error})", None, 0)
    sound = entry.intact
    if sound:
        try:
            stored = entry.value
        except (ValueError, TypeError):
            sound = False
    t0 = time.perf_counter_ns()
    try:
        fresh = recompute(model, entry.params)
    except EnumeratorError:
        if sound:
            return None  # refused (too large, unsupported): the row cannot be checked
        fresh = None
    spent = time.perf_counter_ns() - t0
    problem = None
    if not entry.intact:
        problem = "damaged (checksum or digit count disagrees)"
    elif not sound:
        problem = "unreadable value"
    elif stored != fresh or type(stored) is not type(round_trip(fresh)):
        problem = "value differs from a fresh computation"
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
