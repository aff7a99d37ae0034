r"""The result store: every exact result remembered in a SQL database.

What is stored
    One row per result under a canonical key (:mod:`enumerator.store.keys`):
    the *quantity* (``"configurations"``, ``"microstates"``, ``"profiles"``,
    or any name another module registers), the rule, ``n``, the bounds in
    the model's canonical text, an optional parameter text, and the
    algorithm *version*.  The value is exact text
    (:mod:`enumerator.store.codec`) — decimal digits for an ``int``, ``p/q``
    for a ``Fraction``, canonical JSON with numbers as strings for lists and
    dicts of them — never an SQLite ``INTEGER``, which is a signed 64-bit
    number.  Beside it: its digit count, the method that produced it, the
    nanoseconds spent and when, and a CRC-32 of key and value so a damaged
    row is refused instead of served.  The tables are described in
    :mod:`enumerator.store.schema`.

Where it lives
    A file path, a directory, or any SQLAlchemy URL
    (:func:`~enumerator.store.engine.resolve_location`); which one a
    computation uses is decided in :mod:`enumerator.store.context`.

Opening it
    A new store is created at the current schema version, unless it is
    opened with ``create=False`` (as the commands that only read or remove
    do): where there is no store it then reads as empty and nothing is
    made, neither folder nor file nor table.  An older store
    is upgraded in one transaction (:mod:`enumerator.store.migrations`), or
    refused, with what to do, when it cannot be written; a newer store is
    refused.  A store that cannot be written still answers reads; writes
    are then skipped and one warning says so.  An SQLite file that holds
    tables but is not a store (another application's database) is refused
    before anything in it is written; a store that lost its schema record
    is reported as damage.

Lifetime
    Rows stay until removed (:meth:`Store.clear`, ``enumerator cache clear``).
    A new algorithm version is a new key, so an old value is never served
    for it; ``cache clear --stale`` removes the superseded rows.

Many processes at once
    Every write is one short ``BEGIN IMMEDIATE`` transaction of
    ``INSERT ... ON CONFLICT DO NOTHING`` upserts, retried while another
    process holds the lock (:mod:`enumerator.store.engine`), so overlapping
    writers store each key once and never report "database is locked".
    On PostgreSQL (psycopg 3) a batch is copied into a temporary table and
    merged by one ``INSERT ... SELECT ... ON CONFLICT DO NOTHING`` in key
    order (:meth:`Store._copy_rows`), with the same outcome.
    One :class:`Store` may be shared by threads: it keeps no per-call state.
"""

from __future__ import annotations

import logging
import random
import threading
from datetime import datetime, timezone
from pathlib import Path
from typing import Any, Callable, Dict, Iterable, Iterator, List, Optional, Sequence, Tuple

from sqlalchemy import Text, and_, bindparam, delete, func, insert, inspect, literal, or_, select, type_coerce, update
from sqlalchemy import exc as sa_exc
from sqlalchemy.orm import Session

from ..core.errors import StoreError
from ..core.exact import int_text, text_int
from . import migrations, schema
from .codec import encode_value
from .engine import (
    damaged_store,
    enable_wal,
    explain_failure,
    is_cannot_open,
    is_readonly,
    make_engine,
    not_a_store,
    reading,
    resolve_location,
    retry,
    writable,
    writing,
)
from .entries import EXPORT_ENTRY_FORMATS, HARMLESS, RAW_COLUMNS, StoredEntry, check_entry, export_lines
from .keys import ALGORITHM_VERSIONS, Key, key_digest, model_from_key, row_checksum, stored_value
from .schema import Base, LookupTable, Meta, Result

__all__ = ["EXPORT_ENTRY_FORMATS", "Store", "StoredEntry"]

#: The PostgreSQL advisory lock key held while a store's schema is created or
#: upgraded (a 64-bit number no other application on the database is expected to use).
_SCHEMA_LOCK = 0x656E756D

log = logging.getLogger("enumerator.store")

#: The temporary table (one per PostgreSQL session) that a batch of new rows is copied into.
_INCOMING = "enumerator_incoming"
#: PostgreSQL's SQLSTATE insufficient_privilege (here: the database grants no TEMPORARY).
_INSUFFICIENT_PRIVILEGE = "42501"


class _NoTemporaryTables(Exception):
    """This PostgreSQL user may not create the temporary table of :meth:`Store._copy_rows`."""

#: Rows :meth:`Store.verify` reads at a time (by id).
VERIFY_BATCH = 200
#: Bytes of value text :meth:`Store.verify` reads at once (a larger single value is read alone).
VERIFY_BYTES = 32 * 2**20
#: A sample is drawn by rejection over the id range while at least one id in this many is present.
_SPARSE = 8


def _now() -> datetime:
    return datetime.now(timezone.utc)


# ---------------------------------------------------------------------------
# the store
# ---------------------------------------------------------------------------

#: Rows fetched at a time by :meth:`Store.entries` (and so ``cache export``).
ENTRY_BATCH = 500

#: Every table of the current layout.
_TABLES = frozenset(table.name for table in Base.metadata.sorted_tables)


class Store:
    """An open result store: one SQLAlchemy engine and the operations on it.

    Parameters
    ----------
    location : str or os.PathLike
        A file path, a directory (``enumerator.sqlite`` inside) or an
        SQLAlchemy URL.
    create : bool
        Make the store (its folder, file and tables) when there is none at
        *location* (the default).  With False nothing is created: where
        there is no store (no file, or a database without the store's
        tables) the Store reads as empty, stores nothing, and
        :attr:`exists` is False; the read-only commands open stores so.

    Raises
    ------
    StoreError
        When the file is not a database or is another application's
        database (left untouched), when it is damaged (the message says how
        to repair it), when the store was written by a newer schema, when
        an older store cannot be upgraded (it is read-only, or an upgrade
        step failed: it is then left as it was), or when the URL cannot be
        used.  The message names the store and what
        to do.

    Notes
    -----
    A store that cannot be written (a read-only file, directory or URL)
    still answers reads; writes are then skipped and one warning says so.
    Opening costs one read of the schema version, plus one write
    transaction when the store is new or older than this code.  A Store is
    safe to share between threads (each call takes its own connection from
    the engine's pool).
    """

    def __init__(self, location: str, create: bool = True):
        self.location = str(location)
        self.url, self.path = resolve_location(self.location)
        self.read_only = self.path is not None and not writable(self.path, make_folder=create)
        #: False when opened with ``create=False`` where there is no store (it then reads as empty).
        self.exists = True
        self._create = create
        self._warned = False
        self._warn_lock = threading.Lock()  # one warning even when threads fail together
        self._schema_ready = False
        self._select_stmt = (
            select(Result.kind, Result.value, Result.digits, Result.checksum)
            .where(Result.key_digest == bindparam("digest"))
        )
        self.engine = make_engine(self.url, self.path, self.read_only, self.name)
        # built once, up front, so threads sharing the store never race to build it
        self._insert_stmt = self._upsert(Result, Result.key_digest)
        self._copy = self._copy_plan()
        try:
            self._guard(self._initialise)
        except BaseException:
            self.engine.dispose()  # a store refused on opening keeps no file open
            raise

    # -- display ---------------------------------------------------------
    @property
    def name(self) -> str:
        """The store's file path, or its URL with any password hidden."""
        if self.path is not None:
            return str(self.path)
        return self.url.render_as_string(hide_password=True)

    def __repr__(self) -> str:
        return f"Store({self.name!r}{', read-only' if self.read_only else ''})"

    # -- transactions and failures -----------------------------------------
    def _guard(self, action, *args, **kwargs):
        """Run *action*, turning database failures into one clear StoreError."""
        try:
            return action(*args, **kwargs)
        except sa_exc.DBAPIError as error:
            raise self._translate(error) from None

    def _translate(self, error: "sa_exc.DBAPIError") -> StoreError:
        return explain_failure(error, self.name)

    def _warn_read_only(self, reason: str) -> None:
        self.read_only = True
        with self._warn_lock:
            if self._warned:
                return
            self._warned = True
        log.warning(
            "enumerator: the store %s is read-only (%s); results are computed but not "
            "saved. Point --store or ENUMERATOR_STORE at a writable place to keep them.",
            self.name, reason,
        )

    # -- schema: create, check, upgrade --------------------------------------
    def _initialise(self) -> None:
        """Make the store usable: check its schema, create or upgrade it when needed."""
        if not self._create and self.path is not None and not self.path.exists():
            self.exists = False  # no file: nothing is read, and (no connection) nothing is made
            return
        if self.read_only and self.path is not None and not self.path.exists():
            self._warn_read_only("its folder cannot be written, so it cannot be created")
            return
        try:
            present, found = self._look()
        except sa_exc.OperationalError as error:
            # a file this user may write in a folder they may not (a WAL file needs its
            # -shm and -wal beside it): read it as a store that cannot be written
            if (self.read_only or self.path is None or not self.path.exists()
                    or not (is_readonly(error) or is_cannot_open(error))):
                raise
            self._reopen_read_only()
            present, found = self._look()
        latest = schema.SCHEMA_VERSION
        if found is None and not self._create:
            self.exists = False  # a database without the store's tables: left as it is
            self.engine.dispose()
            return
        if found is not None:
            self._check_not_newer(found)
            if found == latest and _TABLES <= present:
                self._schema_ready = True
                if self.read_only:  # said once, on opening: reads are answered, writes skipped
                    self._warn_read_only("it or its folder cannot be written")
                self._enable_wal()
                return
            if found < latest and self.read_only:
                raise self._cannot_upgrade(found, "it is read-only")
        if self.read_only:
            self._warn_read_only("it cannot be created or written")
            return
        try:
            retry(self._prepare_schema)
        except sa_exc.OperationalError as error:
            if is_readonly(error) or "unable to open" in str(error).lower():
                if found is not None and found < latest:
                    raise self._cannot_upgrade(found, "it is read-only") from None
                self._warn_read_only("it cannot be created or written")
                return
            raise
        except migrations.MigrationFailed as failure:
            if isinstance(failure.error, sa_exc.DBAPIError) and is_readonly(failure.error):
                raise self._cannot_upgrade(failure.found, "it is read-only") from None
            raise self._upgrade_failed(failure) from failure
        self._schema_ready = True
        self._enable_wal()

    def _look(self) -> Tuple[set, Optional[int]]:
        """Read the store's table names and recorded schema version (None when it records none).

        Raises
        ------
        StoreError
            When an SQLite file is not an enumerator store (another
            application's database: it is left untouched) or has lost its
            schema record (damage).
        """
        with reading(self.engine) as conn:
            found_names = inspect(conn)
            present = set(found_names.get_table_names())
            if self.path is not None:
                self._refuse_foreign(present | set(found_names.get_view_names()))
            found = self._schema_version(conn) if Meta.__tablename__ in present else None
        if found is None and Meta.__tablename__ in present:
            raise damaged_store(self.name, f"its {Meta.__tablename__} table records no schema version")
        return present, found

    def _refuse_foreign(self, present: set) -> None:
        """Refuse an SQLite file that holds tables but is not an enumerator store, before anything is written.

        An empty file, or a database with no tables, becomes a new store; one
        with the store's meta table is a store (checked further by its
        version); one with some of the store's tables but not the meta table
        has lost it (damage); anything else belongs to another application.
        """
        if not present or Meta.__tablename__ in present:
            return
        if present & _TABLES:
            raise damaged_store(self.name, f"it has lost its {Meta.__tablename__} table")
        names = sorted(present)
        shown = ", ".join(names[:5]) + (f" and {len(names) - 5} more" if len(names) > 5 else "")
        raise not_a_store(self.name, f"an SQLite database of another application, with tables {shown}")

    def _reopen_read_only(self) -> None:
        """Reopen the SQLite file for reading only (writes are then skipped)."""
        self.engine.dispose()
        self.read_only = True
        self.engine = make_engine(self.url, self.path, True, self.name)

    def _prepare_schema(self) -> None:
        """In one write transaction: create a new store, or upgrade an older one, to the current schema."""
        with writing(self.engine) as conn:
            if conn.dialect.name == "postgresql":
                # one creator or upgrader at a time (SQLite's BEGIN IMMEDIATE does this
                # there); the advisory lock is released at commit or rollback
                conn.exec_driver_sql(f"SELECT pg_advisory_xact_lock({_SCHEMA_LOCK})")
            # read again under the write lock: another process may have
            # created or upgraded the store since the first look
            has_meta = inspect(conn).has_table(Meta.__tablename__)
            found = self._schema_version(conn, lock=True) if has_meta else None
            if found is None:
                Base.metadata.create_all(conn, checkfirst=True)
                from ..core.version import __version__

                conn.execute(
                    insert(Meta),
                    [
                        {"key": schema.META_SCHEMA_VERSION, "value": str(schema.SCHEMA_VERSION)},
                        {"key": "created_by", "value": f"enumerator {__version__}"},
                        {"key": "created_at", "value": _now().isoformat()},
                    ],
                )
                return
            self._check_not_newer(found)
            done = migrations.upgrade(conn, found)
            # tables the current layout has and the store lacks (only at the current version)
            Base.metadata.create_all(conn, checkfirst=True)
        if done:
            log.info("enumerator: upgraded the store %s from schema %d to %d", self.name, found, done[-1].target)

    def _schema_version(self, conn, lock: bool = False) -> Optional[int]:
        try:
            return migrations.read_version(conn, lock)
        except ValueError as error:
            raise damaged_store(self.name, f"it has an {error}") from None

    def _check_not_newer(self, version: int) -> None:
        if version > schema.SCHEMA_VERSION:
            raise StoreError(
                f"the store {self.name} uses schema version {version}, newer than this "
                f"enumerator understands ({schema.SCHEMA_VERSION}); upgrade enumerator, or choose "
                "another store with store= or ENUMERATOR_STORE"
            )

    def _cannot_upgrade(self, found: int, reason: str) -> StoreError:
        return StoreError(
            f"the store {self.name} uses schema version {found}, older than this enumerator's "
            f"({schema.SCHEMA_VERSION}), and cannot be upgraded: {reason}. Open it once with "
            "write access (any command that uses it upgrades it in place), or choose another "
            "store with store= or ENUMERATOR_STORE, or run with no_cache="
        )

    def _upgrade_failed(self, failure: "migrations.MigrationFailed") -> StoreError:
        found = failure.found
        return StoreError(
            f"upgrading the store {self.name} from schema version {found} to "
            f"{schema.SCHEMA_VERSION} failed at {failure}; nothing was changed (it is still at "
            f"schema version {found}). Choose another store with store= or ENUMERATOR_STORE, "
            "or run with no_cache=, and report the failure"
        )

    def _enable_wal(self) -> None:
        if self.path is None or self.read_only:
            return
        try:
            switched = enable_wal(self.engine)
        except sa_exc.OperationalError as error:
            if not is_cannot_open(error):
                raise
            switched = False  # the folder takes no -wal file
        if not switched:
            self._reopen_read_only()
            self._warn_read_only("its journal cannot be written")

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
        stmt = dialect_insert(model).on_conflict_do_nothing(index_elements=[unique_column])
        if backend == "postgresql":
            # psycopg reports no row count for executemany: count the new rows by RETURNING
            stmt = stmt.returning(unique_column)
        return stmt

    def _write_rows(self, rows: List[dict]) -> int:
        """Upsert *rows* in one transaction; return how many were new.

        Notes
        -----
        On PostgreSQL through psycopg 3 the rows are copied into a temporary
        table (:meth:`_copy_rows`), then merged by one ``INSERT ... SELECT
        ... ON CONFLICT DO NOTHING``; elsewhere one multi-row ``INSERT ... ON
        CONFLICT DO NOTHING`` (SQLAlchemy's insertmanyvalues).
        """
        stmt = self._insert_stmt

        def attempt():
            with writing(self.engine) as conn:
                if self._copy is not None:
                    return self._copy_rows(conn, rows)
                if stmt is not None:
                    result = conn.execute(stmt, rows)
                    if result.returns_rows:
                        return len(result.all())
                    return result.rowcount if result.rowcount is not None and result.rowcount >= 0 else len(rows)
                added = 0
                for row in rows:
                    exists = conn.execute(
                        select(Result.id).where(Result.key_digest == row["key_digest"])
                    ).first()
                    if exists is None:
                        conn.execute(insert(Result), [row])
                        added += 1
                return added

        try:
            try:
                return retry(attempt)
            except _NoTemporaryTables as refused:
                # a database that grants no TEMPORARY: write by INSERT from now on
                log.info("enumerator: the store %s allows no temporary tables (%s); writing by "
                         "INSERT instead of COPY", self.name, refused)
                self._copy = None
                return retry(attempt)
        except sa_exc.OperationalError as error:
            if is_readonly(error):
                self._warn_read_only("writing to it failed")
                return 0
            raise
        except sa_exc.IntegrityError:
            # another writer on a backend without upserts got there first
            return 0

    def _copy_plan(self) -> Optional[Tuple[tuple, str, str, str]]:
        """The statements of the PostgreSQL write path (:meth:`_copy_rows`), or None elsewhere.

        Returns ``(columns, create, copy, merge)``: the ``(name, bind
        processor)`` of every result column but ``id`` (the processors are
        the column types' own, so a row's texts are those SQLAlchemy's
        ``INSERT`` writes), and the SQL that creates the session's temporary
        table, copies into it and merges it into the results.
        """
        if self.engine.dialect.name != "postgresql" or self.engine.dialect.driver != "psycopg":
            return None
        dialect = self.engine.dialect
        quote = dialect.identifier_preparer.quote
        table = Result.__table__
        columns = tuple((column.name, column.type.bind_processor(dialect))
                        for column in table.columns if column.name != "id")
        names = ", ".join(quote(name) for name, _ in columns)
        target = quote(table.name)
        create = (f"CREATE TEMPORARY TABLE IF NOT EXISTS {_INCOMING} ON COMMIT DELETE ROWS "
                  f"AS SELECT {names} FROM {target} WITH NO DATA")
        copy = f"COPY pg_temp.{_INCOMING} ({names}) FROM STDIN"
        # in digest order: overlapping batches of concurrent writers take the unique
        # index's entries in one order, so none waits for another in a cycle (a deadlock)
        merge = (f"INSERT INTO {target} ({names}) SELECT {names} FROM pg_temp.{_INCOMING} "
                 f"ORDER BY {quote('key_digest')} ON CONFLICT ({quote('key_digest')}) DO NOTHING")
        return columns, create, copy, merge

    def _copy_rows(self, conn, rows: List[dict]) -> int:
        """Upsert *rows* on PostgreSQL (psycopg 3) inside the transaction of *conn*; return how many were new.

        Raises
        ------
        sqlalchemy.exc.DBAPIError
            The driver's failure, wrapped as SQLAlchemy wraps its own (so
            :func:`~enumerator.store.engine.retry` and the store's messages
            treat it alike).
        _NoTemporaryTables
            When this user may not create temporary tables (the transaction
            is then rolled back and the caller writes by ``INSERT``).

        Notes
        -----
        ``COPY ... FROM STDIN`` of the rows into a temporary table of the
        session (created once per connection, emptied at each commit), then
        one ``INSERT ... SELECT ... ORDER BY key_digest ON CONFLICT
        (key_digest) DO NOTHING``, whose row count is the number of new rows.
        The same semantics as the multi-row upsert it replaces (a key already
        stored, or stored meanwhile by a concurrent writer, is kept and not
        counted), with statement texts that never change: psycopg
        converts the 6,000-parameter text of a 400-row ``INSERT ...
        VALUES`` afresh for every batch, which took 60% of the client's time
        in a table build.  COPY is PostgreSQL's bulk-load path
        (PostgreSQL documentation, "Populating a Database", section 14.4).
        Cost: three statements per transaction (four on a new connection)
        and the rows' text once.
        """
        columns, create, copy_sql, merge = self._copy
        record = conn.connection  # the pooled DBAPI connection: its info lives as long as its session
        dbapi = self.engine.dialect.loaded_dbapi
        statement = create
        try:
            with record.dbapi_connection.cursor() as cursor:
                if not record.info.get(_INCOMING):
                    cursor.execute(create)
                    record.info[_INCOMING] = True
                statement = copy_sql
                with cursor.copy(copy_sql) as copy:
                    for row in rows:
                        copy.write_row([row[name] if bind is None else bind(row[name]) for name, bind in columns])
                statement = merge
                cursor.execute(merge)
                return cursor.rowcount
        except BaseException as error:
            # the table may have gone with the rolled-back transaction: create it again next time
            record.info.pop(_INCOMING, None)
            if not isinstance(error, dbapi.Error):
                raise
            if statement is create and getattr(error, "sqlstate", None) == _INSUFFICIENT_PRIVILEGE:
                raise _NoTemporaryTables(str(error)) from error
            raise sa_exc.DBAPIError.instance(statement, None, error, dbapi.Error,
                                             dialect=self.engine.dialect) from error

    def _row(self, quantity, key: Key, version, value, params, method, elapsed_ns, created_at=None) -> dict:
        digest = key_digest(quantity, key, params, version)
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
            "checksum": row_checksum(digest, kind, text),
            "method": method[:200],
            "elapsed_ns": int(elapsed_ns),
            "created_at": created_at or _now(),
        }

    # -- the public operations ---------------------------------------------
    def get(self, quantity: str, key: Key, version: int, params: str = "", default=None):
        """Return the stored value of one key, or *default* when it is not stored.

        Parameters
        ----------
        quantity : str
            The quantity's name.
        key : Key
            The problem.
        version : int
            The algorithm version (another version is another key).
        params : str
            The quantity's canonical parameter text.
        default : object
            Returned when the key is absent (or the store has no tables).

        Returns
        -------
        int, Fraction, list, dict or *default*
            The exact value as stored.

        Raises
        ------
        StoreError
            When the stored row is damaged (its checksum or digit count
            disagrees) or unreadable: a wrong value is never returned.

        Notes
        -----
        Cost: one indexed lookup by the key's SHA-256 digest, plus the
        decoding (subquadratic in the digits).
        """
        if not self._schema_ready:
            return default
        digest = key_digest(quantity, key, params, version)
        row = self._guard(self._fetch, digest)
        if row is None:
            return default
        return stored_value(self.name, quantity, key, digest, *row)

    def _fetch(self, digest: str):
        with reading(self.engine) as conn:
            return conn.execute(self._select_stmt, {"digest": digest}).first()

    def put(self, quantity: str, key: Key, version: int, value, *, params: str = "",
            method: str = "", elapsed_ns: int = 0) -> bool:
        """Store one value unless its key is already there.

        Parameters are those of :meth:`get`, and: *value* (exact), *method*
        (recorded beside it, at most 200 characters kept) and *elapsed_ns*
        (the compute time).

        Returns
        -------
        bool
            True when the row is new.

        Notes
        -----
        Cost: as :meth:`put_many` for one item.
        """
        return self.put_many([(quantity, key, version, value, params, method, elapsed_ns)]) > 0

    def put_many(self, items: Iterable[Tuple]) -> int:
        """Store many values in one transaction, keeping any key already there.

        Parameters
        ----------
        items : iterable of tuple
            ``(quantity, key, version, value, params, method, elapsed_ns)``.

        Returns
        -------
        int
            How many rows were new.  A read-only store stores nothing,
            returns 0 and warns once.

        Raises
        ------
        TypeError
            When a value is not exact (see :func:`~enumerator.store.codec.encode_value`).
        StoreError
            When the database fails otherwise.

        Notes
        -----
        One ``BEGIN IMMEDIATE`` transaction of ``INSERT ... ON CONFLICT DO
        NOTHING`` upserts, retried while another process holds the lock, so
        overlapping writers store each key once (on PostgreSQL: ``COPY``
        into a temporary table and one such upsert, :meth:`_copy_rows`).
        Cost: the encoding of the values plus one indexed insert each.
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
        """Return one row of a table: the stored ``n`` for fixed quantity, rule, bounds and version.

        Parameters
        ----------
        quantity, rule, bounds, urns, version, params
            The key fields other than ``n``.
        values : bool
            Also read the values.

        Returns
        -------
        dict or set
            With *values*, ``n -> (kind, text, digits, checksum, digest)``
            (unchecked: the caller checks with
            :func:`~enumerator.store.keys.row_intact`); without, the set of
            ``n`` (cheaper: the values are not read).

        Notes
        -----
        Cost: one indexed range scan (quantity, rule, urns, version).
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
            with reading(self.engine) as conn:
                return conn.execute(stmt).all()

        rows = self._guard(fetch)
        if not values:
            return {row[0] for row in rows}
        return {row[0]: tuple(row[1:]) for row in rows}

    # -- lookup-table cells in bounded batches (used by enumerator.store.tables) --
    @staticmethod
    def _cell_conditions(quantity: str, rule: str, version: int, bounds_after_urns: str, params: str) -> list:
        """The WHERE terms of a uniform table's cells: the key fields, and bounds == urns || *bounds_after_urns*."""
        return [
            Result.quantity == quantity, Result.rule == rule, Result.version == version,
            Result.params == params,
            type_coerce(Result.bounds, Text) == type_coerce(Result.urns, Text).concat(literal(bounds_after_urns, Text)),
        ]

    def cell_keys(self, quantity: str, rule: str, version: int, bounds_after_urns: str,
                  urns: Sequence[int], balls: range, *, after: Optional[Tuple[int, int]] = None,
                  limit: int = 20_000, params: str = "") -> List[Tuple[int, int, int, int]]:
        """Return up to *limit* stored cells of a uniform table, without their values, in order of ``(r, n)``.

        Parameters
        ----------
        quantity, rule, version, params
            The key fields shared by the table's cells.
        bounds_after_urns : str
            The bounds text after ``r`` (``"*0:"``, ``"*1:4"``): a cell of
            ``r`` urns is filed under the bounds ``str(r) + bounds_after_urns``.
        urns : sequence of int
            The ``r`` to read (one query: ``urns IN (...)``, so keep it to a
            few hundred).
        balls : range
            The ``n`` to read (a WHERE on the decimal text, see Notes).
        after : (int, int), optional
            Keyset pagination: only cells after ``(r, n)`` in the order.
        limit : int
            At most this many cells.

        Returns
        -------
        list of (int, int, int, int)
            ``(r, n, row id, digits)`` in increasing ``(r, n)``; read the
            values with :meth:`cell_values`.

        Notes
        -----
        ``n`` and ``r`` are decimal text (any size), so numeric order and
        ranges are written on the text: shorter is smaller, equal lengths
        compare as strings.  One query on the index ``(quantity, rule,
        urns, version)``; the database sorts the matching keys (a top-*limit*
        sort), so memory stays bounded by *limit* whatever the table's size.
        """
        if not self._schema_ready or not urns:
            return []
        conditions = self._cell_conditions(quantity, rule, version, bounds_after_urns, params) + [
            Result.urns.in_(list(urns)),
            _decimal_compare(Result.balls, ">=", balls.start),
            _decimal_compare(Result.balls, "<=", balls.stop - 1),
        ]
        if after is not None:
            conditions.append(or_(
                _decimal_compare(Result.urns, ">", after[0]),
                and_(Result.urns == after[0], _decimal_compare(Result.balls, ">", after[1])),
            ))
        stmt = (
            # n and r read as text and converted here (int() for the short texts they are)
            select(type_coerce(Result.urns, Text), type_coerce(Result.balls, Text), Result.id, Result.digits)
            .where(*conditions)
            .order_by(*_decimal_order(Result.urns), *_decimal_order(Result.balls))
            .limit(limit)
        )

        def fetch():
            with reading(self.engine) as conn:
                return [(_whole(r), _whole(n), row_id, digits) for r, n, row_id, digits in conn.execute(stmt)]

        return self._guard(fetch)

    def cell_values(self, ids: Sequence[int]) -> Dict[int, Tuple[str, str, int, int, str]]:
        """Return ``id -> (kind, text, digits, checksum, digest)`` for the rows *ids* (unchecked).

        Notes
        -----
        One query by primary key (``id IN (...)``); the caller bounds the
        batch (:func:`~enumerator.store.tables.table_cells` reads at most a
        few thousand values, or a few million digits, at a time) and checks
        each row with :func:`~enumerator.store.keys.row_intact`.
        """
        if not self._schema_ready or not ids:
            return {}
        stmt = select(Result.id, Result.kind, Result.value, Result.digits, Result.checksum,
                      Result.key_digest).where(Result.id.in_(list(ids)))

        def fetch():
            with reading(self.engine) as conn:
                return {row[0]: tuple(row[1:]) for row in conn.execute(stmt)}

        return self._guard(fetch)

    def count_cells(self, quantity: str, rule: str, version: int, bounds_after_urns: str,
                    urns: range, balls: range, params: str = "") -> int:
        """Return how many cells of a uniform table are stored (see :meth:`cell_keys` for the fields).

        Notes
        -----
        One ``count(*)`` query over the rows of the quantity and rule (the
        ranges are WHERE terms on the decimal text); nothing is held in
        memory.  Integrity is not checked here (``cache verify`` does).
        """
        if not self._schema_ready:
            return 0
        stmt = select(func.count()).select_from(Result).where(
            *self._cell_conditions(quantity, rule, version, bounds_after_urns, params),
            _decimal_compare(Result.urns, ">=", urns.start),
            _decimal_compare(Result.urns, "<=", urns.stop - 1),
            _decimal_compare(Result.balls, ">=", balls.start),
            _decimal_compare(Result.balls, "<=", balls.stop - 1),
        )

        def fetch():
            with reading(self.engine) as conn:
                return int(conn.execute(stmt).scalar() or 0)

        return self._guard(fetch)

    def entries(self, quantity: Optional[str] = None, stale: Optional[bool] = None) -> Iterator[StoredEntry]:
        """Yield every stored row, oldest first.

        Parameters
        ----------
        quantity : str, optional
            Only this quantity's rows.
        stale : bool, optional
            Only superseded versions (True) or only current ones (False).

        Yields
        ------
        StoredEntry
            Integrity checked (:attr:`StoredEntry.intact`), value decoded on demand.

        Raises
        ------
        StoreError
            When the database fails (a damaged file, say).

        Notes
        -----
        Streamed in batches of :data:`ENTRY_BATCH` rows (``yield_per``: a
        server-side cursor where the driver has one), so a large store
        needs the memory of one batch.  Cost: one pass over the results,
        plus a CRC-32 of each value.
        """
        if not self._schema_ready:
            return
        # plain rows (no ORM objects), fetched ENTRY_BATCH at a time from a server-side cursor
        stmt = select(*Result.__table__.columns).order_by(Result.id)
        if quantity is not None:
            stmt = stmt.where(Result.quantity == quantity)
        try:
            with reading(self.engine) as conn:
                for row in conn.execution_options(yield_per=ENTRY_BATCH).execute(stmt):
                    entry = StoredEntry.from_row(row)
                    if stale is None or entry.stale == stale:
                        yield entry
        except sa_exc.DBAPIError as error:
            raise self._translate(error) from None

    def holds_quantity(self, quantity: str) -> bool:
        """Return whether at least one row of *quantity* is stored.

        Notes
        -----
        One indexed seek (``LIMIT 1`` on the index that starts with the
        quantity); no row is read beyond the first.
        """
        if not self._schema_ready:
            return False

        def fetch():
            with reading(self.engine) as conn:
                return conn.execute(select(Result.id).where(Result.quantity == quantity).limit(1)).first()

        return self._guard(fetch) is not None

    def stored_quantities(self) -> List[str]:
        """Return the names of the quantities that have stored rows, in sorted order.

        Notes
        -----
        A loose index scan: ``min(quantity)`` above the name found last,
        one indexed seek per name on the index that starts with the
        quantity, so the cost is the number of names (times the log of the
        rows), never a pass over the results as :meth:`stats` makes.
        """
        if not self._schema_ready:
            return []
        after = select(func.min(Result.quantity)).where(Result.quantity > bindparam("after"))

        def fetch():
            names: List[str] = []
            with reading(self.engine) as conn:
                name = conn.execute(select(func.min(Result.quantity))).scalar()
                while name is not None:
                    names.append(name)
                    name = conn.execute(after, {"after": name}).scalar()
            return names

        return self._guard(fetch)

    def stats(self) -> Dict[str, Any]:
        """Return counts by quantity and rule, stale rows, the largest value, time spent, file size.

        Returns
        -------
        dict
            ``store``, ``read_only``, ``schema_version``, ``entries``,
            ``stale``, ``by_quantity`` (quantity -> rule -> count),
            ``largest_digits``, ``total_digits``, ``compute_ns``, ``tables``,
            and ``file_bytes`` (database plus WAL) for a file.

        Notes
        -----
        Cost: one grouped scan of the results.
        """
        out: Dict[str, Any] = {
            "store": self.name,
            "read_only": self.read_only,
            "schema_version": schema.SCHEMA_VERSION,
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
            with reading(self.engine) as conn:
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
            # SUM over BIGINT is NUMERIC on PostgreSQL (a Decimal): back to int
            out["largest_digits"] = max(out["largest_digits"], int(largest or 0))
            out["total_digits"] += int(total or 0)
            out["compute_ns"] += int(spent or 0)
        out["tables"] = tables
        return out

    def verify(self, sample: Optional[int] = None, seed: Optional[int] = None,
               fix: bool = False, progress: Optional[Callable[[int, int], None]] = None) -> Dict[str, Any]:
        """Recompute stored values (all, or a random *sample*) and report the wrong or damaged ones.

        Parameters
        ----------
        sample : int, optional
            Check this many rows drawn at random (all when absent or larger).
        seed : int, optional
            Seed of the draw (the same seed draws the same rows of the same store).
        fix : bool
            Replace damaged or wrong rows by the recomputed value, or remove
            them when nothing can be recomputed (the store only holds a cache).
        progress : callable, optional
            Called as ``progress(done, total)`` before each row and at the end.

        Returns
        -------
        dict
            ``checked``, ``skipped`` (no recomputer, a superseded version,
            or a recomputation refused as too large, the row itself sound),
            ``mismatches`` (one dict per damaged or wrong row: its key
            fields, ``problem`` (see
            :func:`~enumerator.store.entries.check_entry`), ``stored`` and
            ``expected`` texts, ``expected`` empty when nothing could be
            recomputed, and ``harmless``, true when the row never gives a
            wrong answer: only its time is unreadable, or nothing reads it)
            and ``fixed``.

        Raises
        ------
        StoreError
            When the file itself is damaged (the message says so and how to
            repair it).

        Notes
        -----
        Rows are read by id in batches of at most :data:`VERIFY_BATCH` rows
        and about :data:`VERIFY_BYTES` of value text, every column read
        leniently (:meth:`StoredEntry.from_columns
        <enumerator.store.entries.StoredEntry.from_columns>`), so a garbage
        number or time is reported as damage and a large store needs little
        memory; with *fix* each batch is repaired before the next is read.
        A *sample* is drawn in SQL (:meth:`_draw_ids`): only the ids drawn
        are read.  Each row is checked by
        :func:`~enumerator.store.entries.check_entry`, on the model its key
        describes (groups and weights included).  A fixed row is filed under
        the model's canonical key (a row left under an older text by an
        upgrade, or under a wrong digest, moves to it).  Only rows whose
        quantity is registered (:func:`~enumerator.store.keys.register_quantity`)
        are recomputed; a row of a quantity nobody registered is reported as
        ``unknown quantity`` (``enumerator cache verify`` registers every
        quantity the commands store).  Cost: one fresh computation per
        checked row, plus the mismatches' texts, which the report holds.
        """
        report: Dict[str, Any] = {"checked": 0, "skipped": 0, "mismatches": [], "fixed": 0}
        if not self._schema_ready:
            return report
        first, last, total = self._guard(self._id_span)
        if total == 0:
            return report
        if sample is not None and sample < total:
            drawn = self._guard(self._draw_ids, sample, seed, first, last, total)
            batches: Iterable[List[int]] = (drawn[i:i + VERIFY_BATCH] for i in range(0, len(drawn), VERIFY_BATCH))
            total = len(drawn)
        else:
            # rows a fix adds (a move to the canonical key) get ids past *last*: not checked twice
            batches = self._id_batches(first, last)
        done = 0
        for ids in batches:
            replacements = []
            for entry in self._guard(self._load_entries, ids):
                if progress is not None:
                    progress(done, total)
                done += 1
                check = check_entry(entry)
                if check is None:
                    report["skipped"] += 1
                    continue
                report["checked"] += 1
                if check.problem is None:
                    continue
                report["mismatches"].append({
                    "quantity": entry.quantity, "rule": entry.rule, "balls": entry.balls,
                    "bounds": entry.bounds, "params": entry.params, "version": entry.version,
                    "problem": check.problem, "stored": entry.text,
                    "expected": "" if check.fresh is None else encode_value(check.fresh)[1],
                    "harmless": check.problem.startswith(HARMLESS),
                })
                replacements.append((entry, check.fresh, check.elapsed_ns))
            if fix and replacements:
                report["fixed"] += self._guard(self._replace, replacements)
        if progress is not None:
            progress(done, total)
        return report

    def _id_span(self) -> Tuple[int, int, int]:
        """``(smallest id, largest id, number of rows)`` of the results (zeros when there are none)."""
        with reading(self.engine) as conn:
            first, last, count = conn.execute(select(func.min(Result.id), func.max(Result.id), func.count())).one()
        return int(first or 0), int(last or 0), int(count or 0)

    def _id_batches(self, first: int, last: int) -> Iterator[List[int]]:
        """The ids from *first* to *last*, in order, :data:`VERIFY_BATCH` at a time (keyset reads)."""
        after = first - 1
        while True:
            def fetch(after=after):
                with reading(self.engine) as conn:
                    return [row[0] for row in conn.execute(
                        select(Result.id).where(Result.id > after, Result.id <= last)
                        .order_by(Result.id).limit(VERIFY_BATCH)
                    )]

            ids = self._guard(fetch)
            if not ids:
                return
            yield ids
            after = ids[-1]

    def _draw_ids(self, k: int, seed: Optional[int], first: int, last: int, total: int) -> List[int]:
        """Draw *k* distinct row ids uniformly at random, in SQL; return them in order.

        Notes
        -----
        Rejection sampling over the id range: ids drawn uniformly from
        ``first..last`` in batches, each batch looked up with one indexed
        ``IN`` query, and the present ones kept in the order drawn until *k*
        are found, which gives every *k*-subset of the present ids the same
        chance (Devroye, *Non-Uniform Random Variate Generation*, 1986,
        ch. II.3).  Expected draws ``k * span / rows``, so when deletions
        have left the ids sparse (under one in :data:`_SPARSE` present) the
        draw is ``ORDER BY random() LIMIT k`` in SQL without a seed, or with
        one a reservoir over the ids read in batches (Vitter's Algorithm R,
        ACM TOMS 11, 1985), which reads ids only, never values.  Seeded
        draws repeat on the same store.
        """
        rng = random.Random(seed)
        span = last - first + 1
        if total * _SPARSE >= span:
            chosen: List[int] = []
            seen = set()
            while len(chosen) < k:
                need = k - len(chosen)
                candidates = [rng.randint(first, last) for _ in range(min(4096, need * span // total + 8))]
                with reading(self.engine) as conn:
                    present = {row[0] for row in conn.execute(
                        select(Result.id).where(Result.id.in_(sorted(set(candidates) - seen))))}
                for candidate in candidates:
                    if candidate in present and candidate not in seen:
                        seen.add(candidate)
                        chosen.append(candidate)
                        if len(chosen) == k:
                            break
            return sorted(chosen)
        if seed is None:
            with reading(self.engine) as conn:
                return sorted(row[0] for row in conn.execute(
                    select(Result.id).order_by(func.random()).limit(k)))
        reservoir: List[int] = []
        for i, row_id in enumerate(row_id for ids in self._id_batches(first, last) for row_id in ids):
            if i < k:
                reservoir.append(row_id)
            else:
                j = rng.randint(0, i)
                if j < k:
                    reservoir[j] = row_id
        return sorted(reservoir)

    def _load_entries(self, ids: Sequence[int]) -> List[StoredEntry]:
        """The rows *ids* as entries, read leniently, in a few reads of about :data:`VERIFY_BYTES` each."""
        raw = [type_coerce(getattr(Result, name), Text).label(name) if name in ("balls", "urns")
               else getattr(Result, name) for name in RAW_COLUMNS]
        entries: List[StoredEntry] = []
        with reading(self.engine) as conn:
            sizes = conn.execute(
                select(Result.id, func.coalesce(func.length(Result.value), 0))
                .where(Result.id.in_(list(ids))).order_by(Result.id)
            ).all()
            group: List[int] = []
            held = 0
            for position, (row_id, size) in enumerate(sizes):
                group.append(row_id)
                held += int(size)
                if held >= VERIFY_BYTES or position == len(sizes) - 1:
                    for row in conn.execute(select(*raw).where(Result.id.in_(group)).order_by(Result.id)):
                        entries.append(StoredEntry.from_columns(row._mapping))
                    group, held = [], 0
        return entries

    def _replace(self, replacements) -> int:
        """In one write transaction, put each fresh value in place of its damaged or wrong row; return how many.

        A row with nothing to put in its place (``fresh`` is None) is removed
        (the store only holds a cache); a row filed under a key that is not
        its model's canonical one moves there.
        """
        if self.read_only:
            self._warn_read_only("it cannot be repaired")
            return 0

        def this_row(entry):
            if entry.row_id:
                return Result.id == entry.row_id
            return Result.key_digest == entry.digest

        def attempt():
            with writing(self.engine) as conn:
                for entry, fresh, spent in replacements:
                    if fresh is None:  # nothing to put in its place: a cache row is dropped
                        conn.execute(delete(Result).where(this_row(entry)))
                        continue
                    key = Key.of(model_from_key(entry.rule, entry.balls, entry.bounds))
                    row = self._row(entry.quantity, key, entry.version, fresh, entry.params,
                                    "verify:" + entry.quantity, spent)
                    if row["key_digest"] != entry.digest:
                        # filed under a text that is not canonical (an older schema's) or under
                        # a wrong digest: move the answer to the key that finds it
                        conn.execute(delete(Result).where(this_row(entry)))
                        present = conn.execute(
                            select(Result.id).where(Result.key_digest == row["key_digest"])
                        ).first()
                        if present is None:
                            conn.execute(insert(Result), [row])
                            continue
                    conn.execute(
                        update(Result).where(Result.key_digest == row["key_digest"]).values(
                            urns=row["urns"], kind=row["kind"], value=row["value"], digits=row["digits"],
                            checksum=row["checksum"], method=row["method"],
                            elapsed_ns=row["elapsed_ns"], created_at=row["created_at"],
                        )
                    )
            return len(replacements)

        return retry(attempt)

    def clear(self, quantity: Optional[str] = None, stale_only: bool = False) -> int:
        """Delete stored rows: all, one quantity's, or only superseded versions.

        Parameters
        ----------
        quantity : str, optional
            Only this quantity's rows.
        stale_only : bool
            Only rows whose version is not their quantity's current one.

        Returns
        -------
        int
            How many rows were deleted.  Clearing everything also forgets
            the lookup-table definitions.

        Raises
        ------
        StoreError
            When the store is read-only (nothing is deleted).

        Notes
        -----
        One write transaction.
        """
        if not self._schema_ready:
            return 0
        if self.read_only:
            raise StoreError(
                f"the store {self.name} is read-only; nothing was cleared. Make it writable "
                "or delete the file"
            )

        def attempt():
            with writing(self.engine) as conn:
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

        return self._guard(retry, attempt)

    # -- lookup-table definitions (used by enumerator.store.tables) ------------
    def save_table(self, values: dict) -> Optional[dict]:
        """Register a table definition unless its name exists; return the stored one.

        Parameters
        ----------
        values : dict
            The ``enumerator_tables`` columns other than ``id`` and ``created_at``.

        Returns
        -------
        dict
            The definition stored under that name (an earlier one wins); on
            a read-only store, *values* itself (with a warning, once).

        Notes
        -----
        One write transaction and one read.
        """
        values = dict(values, created_at=_now())
        if not self._schema_ready or self.read_only:
            self._warn_read_only("the table definition cannot be saved")
            return dict(values)
        stmt = self._upsert(LookupTable, LookupTable.name)

        def attempt():
            with writing(self.engine) as conn:
                if stmt is not None:
                    conn.execute(stmt, [values])
                elif conn.execute(select(LookupTable.id).where(LookupTable.name == values["name"])).first() is None:
                    conn.execute(insert(LookupTable), [values])

        try:
            self._guard(retry, attempt)
        except sa_exc.IntegrityError:
            pass
        return self.table(values["name"])

    def table(self, name: str) -> Optional[dict]:
        """Return the stored definition of the table *name* (a dict of its columns), or None."""
        if not self._schema_ready:
            return None

        def fetch():
            with Session(self.engine) as session:
                row = session.scalars(select(LookupTable).where(LookupTable.name == name)).first()
                return None if row is None else _table_dict(row)

        return self._guard(fetch)

    def tables(self) -> List[dict]:
        """Return every stored table definition, by name."""
        if not self._schema_ready:
            return []

        def fetch():
            with Session(self.engine) as session:
                return [_table_dict(row) for row in session.scalars(select(LookupTable).order_by(LookupTable.name))]

        return self._guard(fetch)

    def delete_table(self, name: str) -> bool:
        """Forget a table definition (its cells stay, shared with other lookups); True if it existed."""
        if not self._schema_ready or self.read_only:
            return False

        def attempt():
            with writing(self.engine) as conn:
                return conn.execute(delete(LookupTable).where(LookupTable.name == name)).rowcount

        return bool(self._guard(retry, attempt))

    def export_lines(self, fmt: str = "jsonl") -> Iterator[str]:
        """Yield every stored row as text: ``csv`` (with a header) or ``jsonl``.

        See :func:`~enumerator.store.entries.export_lines` (the format,
        errors and cost); the rows are streamed from :meth:`entries`.
        """
        yield from export_lines(self.entries(), fmt)

    def close(self) -> None:
        """Release the engine's connections (the store reopens them if used again)."""
        self.engine.dispose()


def _whole(text: str) -> int:
    """A stored ``n`` or ``r`` (decimal text) as an int: ``int()`` for short texts, the exact codec beyond."""
    return int(text) if len(text) < 4000 else text_int(text)


def _decimal_order(column) -> tuple:
    """ORDER BY terms sorting a decimal-text column numerically (length first, then the digits)."""
    raw = type_coerce(column, Text)
    return func.length(raw), raw


def _decimal_compare(column, op: str, value: int):
    """``column op value`` for a column of canonical decimal text (no sign, no leading zeros) and an int.

    Shorter text is the smaller number; texts of equal length compare as
    strings, which for digits is numeric order.
    """
    text = int_text(value)
    raw = type_coerce(column, Text)
    width = func.length(raw)
    if op == ">=":
        return or_(width > len(text), and_(width == len(text), raw >= text))
    if op == ">":
        return or_(width > len(text), and_(width == len(text), raw > text))
    if op == "<=":
        return or_(width < len(text), and_(width == len(text), raw <= text))
    raise ValueError(f"unknown comparison {op!r}")


def _table_dict(row: LookupTable) -> dict:
    return {
        "name": row.name, "quantity": row.quantity, "rule": row.rule, "minimum": row.minimum,
        "capacity": row.capacity, "balls_first": row.balls_first, "balls_last": row.balls_last,
        "urns_first": row.urns_first, "urns_last": row.urns_last, "created_at": row.created_at,
    }
