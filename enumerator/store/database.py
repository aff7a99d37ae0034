r"""The result store: every exact result remembered in a SQL database.

What is stored
    One row per result under a canonical key: the *quantity* (``"configurations"``,
    ``"microstates"``, ``"profiles"``, or any name another module registers),
    the rule, ``n``, the bounds in the model's canonical text
    (:meth:`~enumerator.model.Occupancy.canonical_bounds`), an optional
    parameter text, and the algorithm *version*.  The value is exact text —
    decimal digits for an ``int``, ``p/q`` for a ``Fraction``, canonical JSON
    with numbers as strings for lists and dicts of them — never an SQLite
    ``INTEGER``, which is a signed 64-bit number.  Beside it: its digit count,
    the method that produced it, the nanoseconds spent and when, and a CRC-32
    of key and value so a damaged row is refused instead of served.

Where it lives (the first that applies)
    1. the location given to :func:`configure` / :func:`using` (the CLI's
       ``--store PATH-OR-URL``), else the ``ENUMERATOR_STORE`` environment
       variable;
    2. ``store/enumerator.sqlite`` in the source checkout, when the package
       runs from a checkout (``pyproject.toml`` and ``store/`` beside the
       package folder, and not inside ``site-packages``);
    3. ``enumerator.sqlite`` in the user's cache directory (platformdirs).

    A location is a file path (a directory means ``enumerator.sqlite`` in it)
    or any SQLAlchemy URL (``postgresql://...``), so a shared database works.

Bypassing it
    ``configure(enabled=False)``, the context manager :func:`bypass`, the
    environment variable ``ENUMERATOR_NO_CACHE=1`` or the CLI's
    ``--no-cache``.  The pure functions in :mod:`enumerator.counting` never
    touch the store.

Lifetime
    Rows stay until removed (:meth:`Store.clear`, ``enumerator cache clear``).
    A new algorithm version is a new key, so an old value is never served
    for it; ``cache clear --stale`` removes the superseded rows.

Many processes at once
    SQLite runs in WAL mode (readers never wait for the writer) with a busy
    timeout; every write is one short ``BEGIN IMMEDIATE`` transaction of
    ``INSERT ... ON CONFLICT DO NOTHING`` upserts, retried while another
    process holds the lock, so overlapping writers store each key once and
    never report "database is locked".
"""

from __future__ import annotations

import functools
import hashlib
import json
import logging
import numbers
import operator
import os
import random
import threading
import time
import zlib
from contextlib import contextmanager
from dataclasses import dataclass
from datetime import datetime, timezone
from fractions import Fraction
from pathlib import Path
from typing import Any, Callable, Dict, Iterable, Iterator, List, Optional, Tuple

from sqlalchemy import (
    BigInteger,
    DateTime,
    Index,
    Integer,
    String,
    Text,
    TypeDecorator,
    bindparam,
    create_engine,
    delete,
    event,
    func,
    inspect,
    select,
    update,
)
from sqlalchemy import exc as sa_exc
from sqlalchemy.engine import URL, Engine, make_url
from sqlalchemy.orm import DeclarativeBase, Mapped, Session, mapped_column

from ..core.errors import StoreError
from ..core.exact import int_text, is_exact_int, text_int

__all__ = [
    "ALGORITHM_VERSIONS",
    "ENV_NO_CACHE",
    "ENV_STORE",
    "Key",
    "SCHEMA_VERSION",
    "Store",
    "StoredEntry",
    "decode_value",
    "encode_value",
    "model_from_key",
    "register_quantity",
]

log = logging.getLogger("enumerator.store")

#: Environment variable naming the store (a path or an SQLAlchemy URL).
ENV_STORE = "ENUMERATOR_STORE"
#: Environment variable that, set to 1/true/yes, bypasses the store entirely.
ENV_NO_CACHE = "ENUMERATOR_NO_CACHE"
#: The file name used inside a store directory.
DEFAULT_FILENAME = "enumerator.sqlite"
#: The layout of the tables below; a store written by a newer layout is refused.
SCHEMA_VERSION = 1
#: Seconds one SQLite call waits for another process's lock (busy timeout).
BUSY_TIMEOUT = 30.0
#: Seconds a write keeps retrying, in all, before it reports the store as stuck.
LOCK_PATIENCE = 300.0

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

    :param name: the quantity's key text, e.g. ``"max_load_distribution"``.
    :param version: its algorithm version (a positive integer); raise it when
        the method changes so old rows are no longer served.
    :param recompute: ``f(model, params) -> value`` used by
        :meth:`Store.verify`; without it verify skips the quantity's rows.
    """
    if not isinstance(name, str) or not name or len(name) > 64:
        raise ValueError("a quantity name is a non-empty string of at most 64 characters")
    ALGORITHM_VERSIONS[name] = operator.index(version)
    if recompute is not None:
        _RECOMPUTE[name] = recompute


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


# ---------------------------------------------------------------------------
# exact values <-> canonical text
# ---------------------------------------------------------------------------

_int_text = int_text
_text_int = text_int
_is_int = is_exact_int


def _digit_len(text: str) -> int:
    return len(text) - (text[:1] == "-")


def _encode_json(value, largest: List[int]):
    if value is None or isinstance(value, bool):
        return value
    if _is_int(value):
        text = _int_text(operator.index(value))
        largest[0] = max(largest[0], _digit_len(text))
        return text
    if isinstance(value, numbers.Rational):
        p, q = _int_text(value.numerator), _int_text(value.denominator)
        largest[0] = max(largest[0], _digit_len(p), len(q))
        return f"{p}/{q}"
    if isinstance(value, (list, tuple)):
        return [_encode_json(v, largest) for v in value]
    if isinstance(value, dict):
        int_keys, str_keys = [], []
        for k in value:
            if _is_int(k):
                int_keys.append(k)
            elif isinstance(k, str) and not _looks_numeric(k):
                str_keys.append(k)
            else:
                raise TypeError(
                    f"store dict keys must be integers or non-numeric strings (got {k!r})"
                )
        ordered = {}
        for k in sorted(int_keys, key=operator.index):
            ordered[_int_text(operator.index(k))] = _encode_json(value[k], largest)
        for k in sorted(str_keys):
            ordered[k] = _encode_json(value[k], largest)
        return ordered
    raise TypeError(
        "the store keeps exact numbers (int, Fraction) and lists/dicts of them, "
        f"not {type(value).__name__}"
    )


def _looks_numeric(text: str) -> bool:
    body = text[1:] if text[:1] == "-" else text
    return body.isdigit() or ("/" in text and all(_looks_numeric(p) for p in text.split("/", 1)))


def _decode_json(value):
    if isinstance(value, str):
        if "/" in value:
            p, q = value.split("/", 1)
            return Fraction(_text_int(p), _text_int(q))
        return _text_int(value)
    if isinstance(value, list):
        return [_decode_json(v) for v in value]
    if isinstance(value, dict):
        return {
            (_text_int(k) if _looks_numeric(k) else k): _decode_json(v) for k, v in value.items()
        }
    return value


def encode_value(value) -> Tuple[str, str, int]:
    """Return ``(kind, text, digits)``: *value* in one canonical exact text.

    ``int`` (and ``mpz``/``fmpz``) -> ``("int", decimal digits)``; a
    ``Fraction`` -> ``("fraction", "p/q")`` (``str(Fraction)``: ``"p"`` when
    ``q = 1``); lists, tuples and dicts of them -> ``("json", ...)`` with
    numbers as JSON strings, dict keys in numeric then text order, no spaces.
    *digits* is the number of decimal digits of the largest number inside.
    Cost: linear in the digits (GMP's subquadratic radix conversion).
    """
    if _is_int(value):
        text = _int_text(operator.index(value))
        return "int", text, _digit_len(text)
    if isinstance(value, numbers.Rational) and not isinstance(value, bool):
        p, q = _int_text(value.numerator), _int_text(value.denominator)
        text = p if q == "1" else f"{p}/{q}"
        return "fraction", text, max(_digit_len(p), len(q))
    largest = [0]
    tree = _encode_json(value, largest)
    return "json", json.dumps(tree, separators=(",", ":"), ensure_ascii=True), largest[0]


def decode_value(kind: str, text: str):
    """Invert :func:`encode_value` (exact ``int``, ``Fraction``, lists, dicts)."""
    if kind == "int":
        return _text_int(text)
    if kind == "fraction":
        p, _, q = text.partition("/")
        return Fraction(_text_int(p), _text_int(q) if q else 1)
    if kind == "json":
        return _decode_json(json.loads(text))
    raise ValueError(f"unknown stored value kind {kind!r}")


# ---------------------------------------------------------------------------
# the schema (SQLAlchemy 2.x typed declarative models)
# ---------------------------------------------------------------------------

class DecimalInt(TypeDecorator):
    """An exact Python ``int`` of any size kept as decimal TEXT.

    SQLite's INTEGER is signed 64-bit (Python's sqlite3 raises OverflowError
    at ``2**63``), so exact results and even ``n`` travel as text.
    """

    impl = Text
    cache_ok = True

    def process_bind_param(self, value, dialect):
        return None if value is None else _int_text(operator.index(value))

    def process_result_value(self, value, dialect):
        return None if value is None else _text_int(value)


class Base(DeclarativeBase):
    """The declarative base of the store's tables."""


class Meta(Base):
    """Key/value facts about the store itself (``schema_version``, creator)."""

    __tablename__ = "enumerator_meta"

    key: Mapped[str] = mapped_column(String(64), primary_key=True)
    value: Mapped[str] = mapped_column(Text)

    def __repr__(self) -> str:
        return f"Meta({self.key!r}={self.value!r})"


class Result(Base):
    """One remembered exact value under its canonical key."""

    __tablename__ = "enumerator_results"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    #: SHA-256 of the canonical key text; unique, so upserts deduplicate.
    key_digest: Mapped[str] = mapped_column(String(64), unique=True)
    quantity: Mapped[str] = mapped_column(String(64))
    rule: Mapped[str] = mapped_column(String(8))
    balls: Mapped[int] = mapped_column(DecimalInt)
    urns: Mapped[int] = mapped_column(BigInteger)
    bounds: Mapped[str] = mapped_column(Text)
    params: Mapped[str] = mapped_column(Text, default="")
    version: Mapped[int] = mapped_column(Integer)
    kind: Mapped[str] = mapped_column(String(16))
    value: Mapped[str] = mapped_column(Text)
    digits: Mapped[int] = mapped_column(BigInteger)
    checksum: Mapped[int] = mapped_column(BigInteger)
    method: Mapped[str] = mapped_column(String(200))
    elapsed_ns: Mapped[int] = mapped_column(BigInteger)
    created_at: Mapped[datetime] = mapped_column(DateTime(timezone=True))

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

    __tablename__ = "enumerator_tables"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    name: Mapped[str] = mapped_column(String(200), unique=True)
    quantity: Mapped[str] = mapped_column(String(64))
    rule: Mapped[str] = mapped_column(String(8))
    minimum: Mapped[int] = mapped_column(BigInteger)
    capacity: Mapped[Optional[int]] = mapped_column(BigInteger, nullable=True)
    balls_first: Mapped[int] = mapped_column(BigInteger)
    balls_last: Mapped[int] = mapped_column(BigInteger)
    urns_first: Mapped[int] = mapped_column(BigInteger)
    urns_last: Mapped[int] = mapped_column(BigInteger)
    created_at: Mapped[datetime] = mapped_column(DateTime(timezone=True))

    def __repr__(self) -> str:
        return f"LookupTable({self.name!r})"


# ---------------------------------------------------------------------------
# keys
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class Key:
    """The model part of a canonical key: rule, ``n``, canonical bounds, ``r``."""

    rule: str
    balls: int
    bounds: str
    urns: int

    @classmethod
    def of(cls, model) -> "Key":
        """The key of an :class:`~enumerator.model.Occupancy`."""
        return cls(model.rule.value, model.balls, model.canonical_bounds(), model.urns)


def _digest(quantity: str, key: Key, params: str, version: int) -> str:
    text = "\x1f".join(
        (quantity, key.rule, key.bounds, params, str(version), _int_text(key.balls))
    )
    return hashlib.sha256(text.encode()).hexdigest()


def _checksum(digest: str, kind: str, text: str) -> int:
    return zlib.crc32(text.encode(), zlib.crc32(f"{digest}:{kind}:".encode()))


def parse_canonical_bounds(text: str) -> Tuple[Tuple[int, Optional[int]], ...]:
    """Invert :meth:`Occupancy.canonical_bounds` (``"r*a:b"`` or ``"a:b,..."``)."""
    def one(item):
        a, _, b = item.partition(":")
        return int(a), (int(b) if b else None)

    if "*" in text:
        count, _, item = text.partition("*")
        return (one(item),) * int(count)
    return tuple(one(item) for item in text.split(","))


def model_from_key(rule: str, balls: int, bounds: str):
    """Rebuild the :class:`~enumerator.model.Occupancy` a stored key describes."""
    from ..core.model import UrnModel

    return UrnModel(balls=balls, bounds=parse_canonical_bounds(bounds), rule=rule)


@dataclass(frozen=True)
class StoredEntry:
    """One stored row as read back (value decoded, exact)."""

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

    @property
    def value(self):
        """The exact value (``int``, ``Fraction``, list or dict)."""
        return decode_value(self.kind, self.text)

    @property
    def seconds_approx(self) -> float:
        """The compute time in seconds (an approximation)."""
        return self.elapsed_ns / 1e9


# ---------------------------------------------------------------------------
# the store
# ---------------------------------------------------------------------------

_MISSING = object()


def _is_busy(error: BaseException) -> bool:
    text = str(getattr(error, "orig", error)).lower()
    return "locked" in text or "busy" in text


def _is_readonly(error: BaseException) -> bool:
    text = str(getattr(error, "orig", error)).lower()
    return "readonly" in text or "read-only" in text or "read only" in text


def _is_damaged(error: BaseException) -> bool:
    text = str(getattr(error, "orig", error)).lower()
    return "not a database" in text or "malformed" in text or "encrypted" in text


def _now() -> datetime:
    return datetime.now(timezone.utc)


class Store:
    """An open result store: one SQLAlchemy engine and the operations on it.

    :param location: a file path, a directory (``enumerator.sqlite`` inside)
        or an SQLAlchemy URL.

    Opening checks the schema: a file that is not a database, or a store
    written by a newer schema, raises :class:`~enumerator.errors.StoreError`
    naming the file and what to do.  A store that cannot be written (a
    read-only file, directory or URL) still answers reads; writes are then
    skipped and one warning says so.
    """

    def __init__(self, location: str):
        self.location = str(location)
        self.url, self.path = _resolve(self.location)
        self.read_only = False
        self._warned = False
        self._schema_ready = False
        self._lock = threading.Lock()
        self._insert_stmt = None
        self._select_stmt = (
            select(Result.kind, Result.value, Result.digits, Result.checksum)
            .where(Result.key_digest == bindparam("digest"))
        )
        self.engine = self._make_engine()
        self._guard(self._initialise)

    # -- display ---------------------------------------------------------
    @property
    def name(self) -> str:
        """The store's file path, or its URL with any password hidden."""
        if self.path is not None:
            return str(self.path)
        return self.url.render_as_string(hide_password=True)

    def __repr__(self) -> str:
        return f"Store({self.name!r}{', read-only' if self.read_only else ''})"

    # -- engine ----------------------------------------------------------
    def _make_engine(self) -> Engine:
        url = self.url
        if url.get_backend_name() != "sqlite":
            try:
                return create_engine(url, pool_pre_ping=True)
            except (sa_exc.ArgumentError, sa_exc.NoSuchModuleError, ImportError) as error:
                raise StoreError(
                    f"cannot use store URL {self.name} ({error}); give a SQLite path or an "
                    "SQLAlchemy URL whose driver is installed"
                ) from None
        if self.path is not None:
            directory = self.path.parent
            if not directory.exists():
                try:
                    directory.mkdir(parents=True, exist_ok=True)
                except OSError:
                    pass  # reported below as a read-only store
            if not self.path.exists() and not os.access(directory, os.W_OK):
                self.read_only = True
            elif self.path.exists() and not os.access(self.path, os.W_OK):
                self.read_only = True
            if self.read_only and self.path.exists():
                url = URL.create(
                    "sqlite", database=f"file:{self.path}?mode=ro", query={"uri": "true"}
                )
        engine = create_engine(url, connect_args={"timeout": BUSY_TIMEOUT, "check_same_thread": False})

        @event.listens_for(engine, "connect")
        def _on_connect(dbapi_connection, record):
            # Transactions are started by hand (below), never by pysqlite, so
            # reads run in autocommit and writes take the lock up front.
            dbapi_connection.isolation_level = None
            cursor = dbapi_connection.cursor()
            cursor.execute(f"PRAGMA busy_timeout = {int(BUSY_TIMEOUT * 1000)}")
            cursor.execute("PRAGMA synchronous = NORMAL")
            cursor.close()

        @event.listens_for(engine, "begin")
        def _on_begin(connection):
            if connection.get_execution_options().get("enumerator_write"):
                # BEGIN IMMEDIATE takes the write lock at once (waiting under
                # the busy timeout), so a transaction never has to upgrade a
                # read lock, which SQLite refuses in WAL mode without waiting.
                connection.exec_driver_sql("BEGIN IMMEDIATE")

        os.register_at_fork(after_in_child=functools.partial(engine.dispose, close=False))
        return engine

    @contextmanager
    def _reading(self):
        with self.engine.connect() as conn:
            yield conn

    @contextmanager
    def _writing(self):
        with self.engine.connect() as conn:
            conn = conn.execution_options(enumerator_write=True)
            with conn.begin():
                yield conn

    def _guard(self, action, *args, **kwargs):
        """Run *action*, turning database failures into one clear StoreError."""
        try:
            return action(*args, **kwargs)
        except sa_exc.DBAPIError as error:
            raise self._translate(error) from None

    def _translate(self, error: "sa_exc.DBAPIError") -> StoreError:
        """The one-line StoreError that tells the user what went wrong and what to do."""
        detail = " ".join(str(getattr(error, "orig", error)).split())
        if _is_damaged(error):
            return StoreError(
                f"the store {self.name} is damaged or is not an SQLite database ({detail}); "
                "it only holds a cache, so move it aside or delete it, or choose another "
                "store with --store or ENUMERATOR_STORE"
            )
        if _is_busy(error):
            return StoreError(
                f"the store {self.name} stayed locked by another process for "
                f"{LOCK_PATIENCE:.0f} s; wait for that process to finish, or run with --no-cache"
            )
        return StoreError(
            f"cannot use the store {self.name} ({detail}); check the path or URL and its "
            "permissions, choose another store with --store or ENUMERATOR_STORE, "
            "or run with --no-cache"
        )

    def _retry(self, action, *args, **kwargs):
        """Run a write, retrying while another process holds the lock."""
        deadline = time.monotonic() + LOCK_PATIENCE
        delay = 0.005
        while True:
            try:
                return action(*args, **kwargs)
            except sa_exc.OperationalError as error:
                if not _is_busy(error) or time.monotonic() > deadline:
                    raise
            time.sleep(delay * (0.5 + random.random()))
            delay = min(delay * 2, 0.25)

    def _warn_read_only(self, reason: str) -> None:
        self.read_only = True
        if not self._warned:
            self._warned = True
            log.warning(
                "enumerator: the store %s is read-only (%s); results are computed but not "
                "saved. Point --store or ENUMERATOR_STORE at a writable place to keep them.",
                self.name, reason,
            )

    # -- schema ----------------------------------------------------------
    def _initialise(self) -> None:
        if self.read_only and self.path is not None and not self.path.exists():
            self._warn_read_only("its folder cannot be written, so it cannot be created")
            return
        with self._reading() as conn:
            present = set(inspect(conn).get_table_names())
            version = self._schema_version(conn) if Meta.__tablename__ in present else None
        wanted = {t.name for t in Base.metadata.sorted_tables}
        if version is not None:
            self._check_version(version)
        if version is not None and wanted <= present:
            self._schema_ready = True
            self._enable_wal()
            return
        if self.read_only:
            self._warn_read_only("it cannot be created or written")
            return
        try:
            self._retry(self._create_schema)
        except sa_exc.OperationalError as error:
            if _is_readonly(error) or "unable to open" in str(error).lower():
                self._warn_read_only("it cannot be created or written")
                return
            raise
        self._schema_ready = True
        self._enable_wal()

    def _schema_version(self, conn) -> Optional[int]:
        row = conn.execute(select(Meta.value).where(Meta.key == "schema_version")).first()
        if row is None:
            return None
        try:
            return int(row[0])
        except ValueError:
            raise StoreError(
                f"the store {self.name} has an unreadable schema version {row[0]!r}; "
                "move it aside or delete it (it only holds a cache)"
            ) from None

    def _check_version(self, version: int) -> None:
        if version > SCHEMA_VERSION:
            raise StoreError(
                f"the store {self.name} uses schema version {version}, newer than this "
                f"enumerator understands ({SCHEMA_VERSION}); upgrade enumerator, or choose "
                "another store with --store or ENUMERATOR_STORE"
            )

    def _create_schema(self) -> None:
        with self._writing() as conn:
            Base.metadata.create_all(conn, checkfirst=True)
            version = self._schema_version(conn)
            if version is None:
                from ..core.version import __version__

                conn.execute(
                    _plain_insert(Meta),
                    [
                        {"key": "schema_version", "value": str(SCHEMA_VERSION)},
                        {"key": "created_by", "value": f"enumerator {__version__}"},
                        {"key": "created_at", "value": _now().isoformat()},
                    ],
                )
            else:
                self._check_version(version)

    def _enable_wal(self) -> None:
        if self.url.get_backend_name() != "sqlite" or self.path is None or self.read_only:
            return
        def switch():
            with self.engine.connect() as conn:
                mode = conn.exec_driver_sql("PRAGMA journal_mode").scalar()
                if str(mode).lower() != "wal":
                    conn.exec_driver_sql("PRAGMA journal_mode = WAL")
        try:
            self._retry(switch)
        except sa_exc.OperationalError as error:
            if _is_readonly(error):
                self._warn_read_only("its journal cannot be written")
                return
            raise

    # -- upserts ---------------------------------------------------------
    def _upsert(self, model, unique_column):
        """``INSERT ... ON CONFLICT (unique_column) DO NOTHING`` for this backend, or None."""
        backend = self.engine.dialect.name
        if backend == "sqlite":
            from sqlalchemy.dialects.sqlite import insert as dialect_insert
        elif backend == "postgresql":
            from sqlalchemy.dialects.postgresql import insert as dialect_insert
        else:
            return None
        return dialect_insert(model).on_conflict_do_nothing(index_elements=[unique_column])

    def _insert(self):
        if self._insert_stmt is None:
            stmt = self._upsert(Result, Result.key_digest)
            self._insert_stmt = False if stmt is None else stmt
        return self._insert_stmt

    def _write_rows(self, rows: List[dict]) -> int:
        """Upsert *rows* in one transaction; return how many were new."""
        stmt = self._insert()

        def attempt():
            with self._writing() as conn:
                if stmt is not False:
                    result = conn.execute(stmt, rows)
                    return result.rowcount if result.rowcount is not None and result.rowcount >= 0 else len(rows)
                added = 0
                for row in rows:
                    exists = conn.execute(
                        select(Result.id).where(Result.key_digest == row["key_digest"])
                    ).first()
                    if exists is None:
                        conn.execute(_plain_insert(Result), [row])
                        added += 1
                return added

        try:
            return self._retry(attempt)
        except sa_exc.OperationalError as error:
            if _is_readonly(error):
                self._warn_read_only("writing to it failed")
                return 0
            raise
        except sa_exc.IntegrityError:
            # another writer on a backend without upserts got there first
            return 0

    def _row(self, quantity, key: Key, version, value, params, method, elapsed_ns, created_at=None) -> dict:
        digest = _digest(quantity, key, params, version)
        kind, text, digits = encode_value(value)
        return {
            "key_digest": digest,
            "quantity": quantity,
            "rule": key.rule,
            "balls": key.balls,
            "urns": key.urns,
            "bounds": key.bounds,
            "params": params,
            "version": version,
            "kind": kind,
            "value": text,
            "digits": digits,
            "checksum": _checksum(digest, kind, text),
            "method": method[:200],
            "elapsed_ns": int(elapsed_ns),
            "created_at": created_at or _now(),
        }

    # -- the public operations ---------------------------------------------
    def get(self, quantity: str, key: Key, version: int, params: str = "", default=None):
        """The stored value for the key, or *default* when absent.

        Raises StoreError when the stored row is damaged (its checksum or
        digit count disagrees), never returning a wrong value.
        """
        if not self._schema_ready:
            return default
        digest = _digest(quantity, key, params, version)
        row = self._guard(self._fetch, digest)
        if row is None:
            return default
        kind, text, digits, checksum = row
        if _checksum(digest, kind, text) != checksum or (kind == "int" and _digit_len(text) != digits):
            raise StoreError(
                f"the store {self.name} holds a damaged entry for {quantity} of {key.rule} "
                f"n={key.balls} bounds {key.bounds}; run 'enumerator cache verify --fix' or "
                "delete the store file (it only holds a cache)"
            )
        try:
            return decode_value(kind, text)
        except (ValueError, TypeError):
            raise StoreError(
                f"the store {self.name} holds an unreadable entry for {quantity} of {key.rule} "
                f"n={key.balls}; run 'enumerator cache verify --fix' or delete the store file"
            ) from None

    def _fetch(self, digest: str):
        with self.engine.connect() as conn:
            return conn.execute(self._select_stmt, {"digest": digest}).first()

    def put(self, quantity: str, key: Key, version: int, value, *, params: str = "",
            method: str = "", elapsed_ns: int = 0) -> bool:
        """Store one value (kept if the key is already there); True if it was new."""
        return self.put_many([(quantity, key, version, value, params, method, elapsed_ns)]) > 0

    def put_many(self, items: Iterable[Tuple]) -> int:
        """Store ``(quantity, key, version, value, params, method, elapsed_ns)`` items in one transaction.

        Existing keys are left as they are (``INSERT ... ON CONFLICT DO
        NOTHING``); returns how many rows were new.  A read-only store
        stores nothing and returns 0.
        """
        now = _now()
        rows = [self._row(*item, created_at=now) for item in items]
        if not rows or self.read_only or not self._schema_ready:
            if rows and (self.read_only or not self._schema_ready):
                self._warn_read_only("it cannot be written")
            return 0
        return self._guard(self._write_rows, rows)

    def stored_balls(self, quantity: str, rule: str, bounds: str, urns: int, version: int,
                     params: str = "", values: bool = True):
        """One row of a table: the stored ``n`` for fixed quantity, rule, bounds, version.

        With *values*, a dict ``n -> (kind, text, digits, checksum, digest)``;
        without, just the set of ``n`` (cheaper: the values are not read).
        """
        if not self._schema_ready:
            return {} if values else set()
        columns = [Result.balls]
        if values:
            columns += [Result.kind, Result.value, Result.digits, Result.checksum, Result.key_digest]
        stmt = select(*columns).where(
            Result.quantity == quantity, Result.rule == rule, Result.urns == urns,
            Result.version == version, Result.bounds == bounds, Result.params == params,
        )

        def fetch():
            with self._reading() as conn:
                return conn.execute(stmt).all()

        rows = self._guard(fetch)
        if not values:
            return {row[0] for row in rows}
        return {row[0]: tuple(row[1:]) for row in rows}

    def entries(self, quantity: Optional[str] = None, stale: Optional[bool] = None) -> Iterator[StoredEntry]:
        """Yield every stored row (optionally one quantity, or only stale/current versions)."""
        if not self._schema_ready:
            return
        stmt = select(Result).order_by(Result.id)
        if quantity is not None:
            stmt = stmt.where(Result.quantity == quantity)

        # streamed in batches, so exporting a large store needs little memory
        try:
            with Session(self.engine) as session:
                for row in session.scalars(stmt.execution_options(yield_per=500)):
                    entry = _entry(row)
                    if stale is None or _is_stale(entry) == stale:
                        yield entry
        except sa_exc.DBAPIError as error:
            raise self._translate(error) from None

    def stats(self) -> Dict[str, Any]:
        """Counts by quantity and rule, stale rows, the largest value, time spent, file size."""
        out: Dict[str, Any] = {
            "store": self.name,
            "read_only": self.read_only,
            "schema_version": SCHEMA_VERSION,
            "entries": 0,
            "stale": 0,
            "by_quantity": {},
            "largest_digits": 0,
            "total_digits": 0,
            "compute_ns": 0,
            "tables": 0,
        }
        if self.path is not None and self.path.exists():
            out["file_bytes"] = sum(
                p.stat().st_size for p in (self.path, Path(f"{self.path}-wal")) if p.exists()
            )
        if not self._schema_ready:
            return out

        def fetch():
            with self._reading() as conn:
                groups = conn.execute(
                    select(Result.quantity, Result.rule, Result.version, func.count(),
                           func.max(Result.digits), func.sum(Result.digits), func.sum(Result.elapsed_ns))
                    .group_by(Result.quantity, Result.rule, Result.version)
                ).all()
                tables = conn.execute(select(func.count()).select_from(LookupTable)).scalar()
            return groups, tables

        groups, tables = self._guard(fetch)
        for quantity, rule, version, count, largest, total, spent in groups:
            out["entries"] += count
            if ALGORITHM_VERSIONS.get(quantity) not in (None, version):
                out["stale"] += count
            slot = out["by_quantity"].setdefault(quantity, {})
            slot[rule] = slot.get(rule, 0) + count
            out["largest_digits"] = max(out["largest_digits"], largest or 0)
            out["total_digits"] += total or 0
            out["compute_ns"] += spent or 0
        out["tables"] = tables
        return out

    def verify(self, sample: Optional[int] = None, seed: Optional[int] = None,
               fix: bool = False, progress: Optional[Callable[[int, int], None]] = None) -> Dict[str, Any]:
        """Recompute stored values (all, or a random *sample*) and report mismatches.

        Each row's checksum is checked, its value decoded and recomputed with
        the pure function registered for its quantity; rows of quantities
        without a recomputer, or of superseded versions, are counted as
        skipped.  With *fix*, damaged or wrong rows are replaced by the
        recomputed value.
        """
        if not self._schema_ready:
            return {"checked": 0, "skipped": 0, "mismatches": [], "fixed": 0}
        rows = list(self.entries())
        if sample is not None and sample < len(rows):
            rows = random.Random(seed).sample(rows, sample)
        mismatches: List[Dict[str, Any]] = []
        replacements = []
        checked = skipped = 0
        for i, entry in enumerate(rows):
            if progress is not None:
                progress(i, len(rows))
            recompute = _RECOMPUTE.get(entry.quantity)
            if recompute is None or _is_stale(entry):
                skipped += 1
                continue
            checked += 1
            model = model_from_key(entry.rule, entry.balls, entry.bounds)
            t0 = time.perf_counter_ns()
            fresh = recompute(model, entry.params)
            spent = time.perf_counter_ns() - t0
            problem = None
            if not entry.intact:
                problem = "damaged (checksum or digit count disagrees)"
            else:
                try:
                    stored = entry.value
                except (ValueError, TypeError):
                    problem = "unreadable value"
                else:
                    if stored != fresh or type(stored) is not type(_roundtrip(fresh)):
                        problem = "value differs from a fresh computation"
            if problem is not None:
                mismatches.append({
                    "quantity": entry.quantity, "rule": entry.rule, "balls": entry.balls,
                    "bounds": entry.bounds, "params": entry.params, "version": entry.version,
                    "problem": problem, "stored": entry.text, "expected": encode_value(fresh)[1],
                })
                replacements.append((entry, fresh, spent))
        if progress is not None:
            progress(len(rows), len(rows))
        fixed = 0
        if fix and replacements:
            fixed = self._guard(self._replace, replacements)
        return {"checked": checked, "skipped": skipped, "mismatches": mismatches, "fixed": fixed}

    def _replace(self, replacements) -> int:
        if self.read_only:
            self._warn_read_only("it cannot be repaired")
            return 0

        def attempt():
            with self._writing() as conn:
                for entry, fresh, spent in replacements:
                    key = Key(entry.rule, entry.balls, entry.bounds, entry.urns)
                    row = self._row(entry.quantity, key, entry.version, fresh, entry.params,
                                    "verify:" + entry.quantity, spent)
                    conn.execute(
                        update(Result).where(Result.key_digest == row["key_digest"]).values(
                            kind=row["kind"], value=row["value"], digits=row["digits"],
                            checksum=row["checksum"], method=row["method"],
                            elapsed_ns=row["elapsed_ns"], created_at=row["created_at"],
                        )
                    )
            return len(replacements)

        return self._retry(attempt)

    def clear(self, quantity: Optional[str] = None, stale_only: bool = False) -> int:
        """Delete stored rows (all, one quantity, or only superseded versions); return how many.

        Clearing everything also forgets the lookup-table definitions.
        """
        if not self._schema_ready:
            return 0
        if self.read_only:
            raise StoreError(
                f"the store {self.name} is read-only; nothing was cleared. Make it writable "
                "or delete the file"
            )

        def attempt():
            with self._writing() as conn:
                removed = 0
                if stale_only:
                    groups = conn.execute(
                        select(Result.quantity, Result.version).distinct()
                    ).all()
                    for q, v in groups:
                        if (quantity is None or q == quantity) and ALGORITHM_VERSIONS.get(q) not in (None, v):
                            removed += conn.execute(
                                delete(Result).where(Result.quantity == q, Result.version == v)
                            ).rowcount
                    return removed
                stmt = delete(Result)
                if quantity is not None:
                    stmt = stmt.where(Result.quantity == quantity)
                removed = conn.execute(stmt).rowcount
                if quantity is None:
                    conn.execute(delete(LookupTable))
                return removed

        return self._guard(self._retry, attempt)

    # -- lookup-table definitions (used by enumerator.tables) ----------------
    def save_table(self, values: dict) -> Optional[dict]:
        """Register a table definition unless its name exists; return the stored one."""
        values = dict(values, created_at=_now())
        if not self._schema_ready or self.read_only:
            self._warn_read_only("the table definition cannot be saved")
            return dict(values)
        stmt = self._upsert(LookupTable, LookupTable.name)

        def attempt():
            with self._writing() as conn:
                if stmt is not None:
                    conn.execute(stmt, [values])
                elif conn.execute(select(LookupTable.id).where(LookupTable.name == values["name"])).first() is None:
                    conn.execute(_plain_insert(LookupTable), [values])

        try:
            self._guard(self._retry, attempt)
        except sa_exc.IntegrityError:
            pass
        return self.table(values["name"])

    def table(self, name: str) -> Optional[dict]:
        """The stored definition of the table *name*, or None."""
        if not self._schema_ready:
            return None

        def fetch():
            with Session(self.engine) as session:
                row = session.scalars(select(LookupTable).where(LookupTable.name == name)).first()
                return None if row is None else _table_dict(row)

        return self._guard(fetch)

    def tables(self) -> List[dict]:
        """Every stored table definition, by name."""
        if not self._schema_ready:
            return []

        def fetch():
            with Session(self.engine) as session:
                return [_table_dict(row) for row in session.scalars(select(LookupTable).order_by(LookupTable.name))]

        return self._guard(fetch)

    def delete_table(self, name: str) -> bool:
        """Forget a table definition (its cells stay, shared with other lookups)."""
        if not self._schema_ready or self.read_only:
            return False

        def attempt():
            with self._writing() as conn:
                return conn.execute(delete(LookupTable).where(LookupTable.name == name)).rowcount

        return bool(self._guard(self._retry, attempt))

    def export_lines(self, fmt: str = "jsonl") -> Iterator[str]:
        """Yield every stored row as text: ``csv`` (with a header) or ``jsonl``.

        Exact values in full (decimal, ``p/q`` or canonical JSON); every
        exact integer in JSON is a string of digits; the compute time is the
        approximation ``seconds_approx``.
        """
        fmt = str(fmt).lower()
        if fmt not in EXPORT_ENTRY_FORMATS:
            raise ValueError(f"format must be one of {', '.join(EXPORT_ENTRY_FORMATS)} (got {fmt!r})")
        columns = ["quantity", "rule", "balls", "urns", "bounds", "params", "version", "kind",
                   "value", "digits", "method", "seconds_approx", "created_at"]
        if fmt == "csv":
            import csv
            import io

            buffer = io.StringIO()
            writer = csv.writer(buffer, lineterminator="\n")
            writer.writerow(columns)
            yield buffer.getvalue()
            for entry in self.entries():
                buffer.seek(0)
                buffer.truncate()
                writer.writerow(_export_fields(entry))
                yield buffer.getvalue()
            return
        for entry in self.entries():
            fields = _export_fields(entry)
            record = dict(zip(columns, fields))
            record["seconds_approx"] = entry.seconds_approx
            yield json.dumps(record, ensure_ascii=False) + "\n"

    def close(self) -> None:
        """Release the engine's connections."""
        self.engine.dispose()


#: Formats of :meth:`Store.export_lines`.
EXPORT_ENTRY_FORMATS = ("csv", "jsonl")


def _export_fields(entry: StoredEntry) -> list:
    created = entry.created_at
    if created is not None and created.tzinfo is None:
        created = created.replace(tzinfo=timezone.utc)  # stored in UTC; SQLite drops the zone
    created = created.isoformat() if created is not None else ""
    return [entry.quantity, entry.rule, _int_text(entry.balls), str(entry.urns), entry.bounds,
            entry.params, str(entry.version), entry.kind, entry.text, str(entry.digits),
            entry.method, f"{entry.seconds_approx:.6g}", created]


def _plain_insert(model):
    from sqlalchemy import insert

    return insert(model)


def _roundtrip(value):
    return decode_value(*encode_value(value)[:2])


def _is_stale(entry: StoredEntry) -> bool:
    current = ALGORITHM_VERSIONS.get(entry.quantity)
    return current is not None and current != entry.version


def _entry(row: Result) -> StoredEntry:
    digest = row.key_digest
    intact = _checksum(digest, row.kind, row.value) == row.checksum and (
        row.kind != "int" or _digit_len(row.value) == row.digits
    )
    return StoredEntry(
        quantity=row.quantity, rule=row.rule, balls=row.balls, urns=row.urns, bounds=row.bounds,
        params=row.params, version=row.version, kind=row.kind, text=row.value, digits=row.digits,
        method=row.method, elapsed_ns=row.elapsed_ns, created_at=row.created_at, intact=intact,
    )


def _table_dict(row: LookupTable) -> dict:
    return {
        "name": row.name, "quantity": row.quantity, "rule": row.rule, "minimum": row.minimum,
        "capacity": row.capacity, "balls_first": row.balls_first, "balls_last": row.balls_last,
        "urns_first": row.urns_first, "urns_last": row.urns_last, "created_at": row.created_at,
    }


def _resolve(location: str) -> Tuple[URL, Optional[Path]]:
    """Turn a path or URL into ``(SQLAlchemy URL, file path or None)``."""
    text = location.strip()
    if not text:
        raise StoreError("the store location is empty; give a file path or a database URL")
    if "://" in text:
        try:
            url = make_url(text)
        except sa_exc.ArgumentError:
            raise StoreError(
                f"the store URL {text!r} is not a valid SQLAlchemy URL; write it like "
                "sqlite:///path/to/file.sqlite or postgresql://user@host/db"
            ) from None
        path = None
        if url.get_backend_name() == "sqlite" and url.database and url.database != ":memory:":
            database = url.database
            if database.startswith("file:"):
                database = database[5:].split("?", 1)[0]
            path = Path(database).expanduser().resolve()
        return url, path
    path = Path(text).expanduser()
    if path.is_dir():
        path = path / DEFAULT_FILENAME
    path = path.resolve()
    return URL.create("sqlite", database=str(path)), path
