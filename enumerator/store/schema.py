r"""The store's tables (SQLAlchemy 2.x typed declarative models) and their version.

Three tables:

``enumerator_meta``
    key/value facts about the store itself: ``schema_version`` (the layout
    of these tables, an integer written as text), ``created_by`` and
    ``created_at``;
``enumerator_results``
    one row per remembered exact value, filed under the SHA-256 digest of
    its canonical key (:mod:`enumerator.store.keys`), the value as exact
    text (:mod:`enumerator.store.codec`) and a CRC-32 of key and value;
``enumerator_tables``
    the definitions of lookup tables (:mod:`enumerator.store.tables`),
    whose cells are ordinary result rows.

The models below describe the layout of :data:`SCHEMA_VERSION`.  A change of
layout raises :data:`SCHEMA_VERSION` by one (in :mod:`enumerator.store.layout`,
which holds the layout's numbers and table names without importing
SQLAlchemy) and adds the step that upgrades a store of the previous version
to :mod:`enumerator.store.migrations`.

Exact numbers never go in an SQLite ``INTEGER`` (a signed 64-bit number;
Python's ``sqlite3`` raises ``OverflowError`` at ``2**63``): values are text,
and so is every number that describes a problem — ``n``, ``r`` (a model may
have ``2**64`` urns or more) and a lookup table's bounds and ranges
(:class:`DecimalInt`).  Only bookkeeping numbers (digit counts, checksums,
nanoseconds, versions) are SQL integers.

Layouts
    1. the first layout: ``urns`` and the lookup tables' ranges and bounds
       were ``BIGINT``; a key's bounds text was per urn (``"0:2,0:2,1:"``)
       unless all urns were equal (``"3*0:2"``).
    2. ``urns`` and the lookup tables' numbers are decimal text; bounds texts
       are written by groups (``"2x0:2,1x1:"``, weights as ``@w``), so they
       grow with the number of groups, never with the number of urns.
"""

from __future__ import annotations

import operator
from datetime import datetime
from typing import Optional

from sqlalchemy import BigInteger, DateTime, Index, Integer, String, Text, TypeDecorator
from sqlalchemy.orm import DeclarativeBase, Mapped, mapped_column

from ..core.errors import StoreError
from ..core.exact import int_text, text_int
from . import layout
from .layout import FIRST_SCHEMA_VERSION, META_SCHEMA_VERSION

__all__ = [
    "Base",
    "DecimalInt",
    "FIRST_SCHEMA_VERSION",
    "LookupTable",
    "META_SCHEMA_VERSION",
    "Meta",
    "Result",
    "SCHEMA_VERSION",
    "StoredTime",
]

# The layout's numbers live in .layout (no SQLAlchemy there, so the quick
# read of one value needs none); they stay importable from here.
#: The layout the models below describe; a store written by a newer layout is
#: refused, an older one is upgraded (:mod:`enumerator.store.migrations`).
SCHEMA_VERSION = layout.SCHEMA_VERSION


class DecimalInt(TypeDecorator):
    """An exact Python ``int`` of any size kept as decimal TEXT.

    SQLite's INTEGER is signed 64-bit (Python's sqlite3 raises OverflowError
    at ``2**63``), so exact results and even ``n`` travel as text.  The
    conversion is :mod:`enumerator.core.exact`'s (subquadratic for large
    values).
    """

    impl = Text
    cache_ok = True

    def process_bind_param(self, value, dialect):
        """Write an integer as its decimal digits (``None`` stays NULL)."""
        return None if value is None else int_text(operator.index(value))

    def process_result_value(self, value, dialect):
        """Read decimal digits back as an exact ``int`` (NULL gives ``None``).

        Raises
        ------
        StoreError
            When the stored text is not a whole number (a damaged row): the
            message says so and how to repair it.
        """
        if value is None:
            return None
        try:
            return text_int(value)
        except (ValueError, TypeError):
            raise StoreError(
                f"the store holds a damaged row (a number column holds {str(value)[:40]!r}); repair it "
                "with 'enumerator cache verify --fix --all', or delete the store file (it only holds a cache)"
            ) from None


class StoredTime(TypeDecorator):
    """A timestamp with its time zone that reads back as ``None`` when the stored text is not one.

    SQLite keeps a timestamp as text, so a damaged or hand-edited row may
    hold anything there; SQLAlchemy's own reader raises ``ValueError`` on it,
    which would stop every scan of the table at that row.  Read through this
    type, a garbage time is ``None``, which
    :func:`~enumerator.store.entries.check_entry` reports as damage.  The
    column's SQL type is unchanged (``TIMESTAMP WITH TIME ZONE`` on
    PostgreSQL, which refuses garbage itself).
    """

    impl = DateTime(timezone=True)
    cache_ok = True

    def result_processor(self, dialect, coltype):
        """The driver's reader of timestamps, giving ``None`` for a value it cannot read."""
        inner = super().result_processor(dialect, coltype)
        if inner is None:
            return None

        def process(value):
            try:
                return inner(value)
            except (ValueError, TypeError, OverflowError):
                return None

        return process


class Base(DeclarativeBase):
    """The declarative base of the store's tables."""


class Meta(Base):
    """Key/value facts about the store itself (``schema_version``, creator)."""

    __tablename__ = layout.META_TABLE

    key: Mapped[str] = mapped_column(String(64), primary_key=True)
    value: Mapped[str] = mapped_column(Text)

    def __repr__(self) -> str:
        return f"Meta({self.key!r}={self.value!r})"


class Result(Base):
    """One remembered exact value under its canonical key."""

    __tablename__ = layout.RESULTS_TABLE

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    #: SHA-256 of the canonical key text; unique, so upserts deduplicate.
    key_digest: Mapped[str] = mapped_column(String(64), unique=True)
    quantity: Mapped[str] = mapped_column(String(64))
    rule: Mapped[str] = mapped_column(String(8))
    balls: Mapped[int] = mapped_column(DecimalInt)
    #: ``r``, any size (a model may have ``2**64`` urns), as decimal text.
    urns: Mapped[int] = mapped_column(DecimalInt)
    bounds: Mapped[str] = mapped_column(Text)
    params: Mapped[str] = mapped_column(Text, default="")
    version: Mapped[int] = mapped_column(Integer)
    kind: Mapped[str] = mapped_column(String(16))
    value: Mapped[str] = mapped_column(Text)
    digits: Mapped[int] = mapped_column(BigInteger)
    checksum: Mapped[int] = mapped_column(BigInteger)
    method: Mapped[str] = mapped_column(String(200))
    elapsed_ns: Mapped[int] = mapped_column(BigInteger)
    created_at: Mapped[datetime] = mapped_column(StoredTime)

    __table_args__ = (
        Index("ix_enumerator_results_row", "quantity", "rule", "urns", "version"),
    )

    def __repr__(self) -> str:
        return (
            f"Result({self.quantity} {self.rule} n={self.balls} bounds={self.bounds!r} "
            f"v{self.version}: {self.digits} digits)"
        )


class LookupTable(Base):
    """A named grid of balls x urns whose cells live in ``enumerator_results``."""

    __tablename__ = layout.LOOKUP_TABLE

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    name: Mapped[str] = mapped_column(String(200), unique=True)
    quantity: Mapped[str] = mapped_column(String(64))
    rule: Mapped[str] = mapped_column(String(8))
    minimum: Mapped[int] = mapped_column(DecimalInt)
    capacity: Mapped[Optional[int]] = mapped_column(DecimalInt, nullable=True)
    balls_first: Mapped[int] = mapped_column(DecimalInt)
    balls_last: Mapped[int] = mapped_column(DecimalInt)
    urns_first: Mapped[int] = mapped_column(DecimalInt)
    urns_last: Mapped[int] = mapped_column(DecimalInt)
    created_at: Mapped[datetime] = mapped_column(StoredTime)

    def __repr__(self) -> str:
        return f"LookupTable({self.name!r})"
