r"""Upgrading a store written by an older schema: an ordered list of steps.

Every layout of the store's tables has a number, recorded in the store's
``enumerator_meta`` table under ``schema_version``
(:data:`~enumerator.store.schema.SCHEMA_VERSION` is the layout this code
writes).  :data:`MIGRATIONS` holds one :class:`Migration` per change of
layout: the step from version ``k`` to ``k + 1``, in order, so the steps
from any older version to the current one are a contiguous run of the list.

How a store is upgraded (:meth:`~enumerator.store.database.Store` on opening):

* a store at the current version is used as it is;
* an older store is upgraded by :func:`upgrade` inside **one** write
  transaction (SQLite ``BEGIN IMMEDIATE``): every pending step runs in
  order, each followed by the new version number, and the transaction
  commits only after the last one.  If any step fails, nothing is kept: the
  store is left exactly at its old version and the error says so.  Another
  process opening the same store waits for the lock and then finds it
  upgraded;
* an older store that cannot be written (a read-only file or URL) is
  refused with a message saying how to upgrade it; it is never read under
  the wrong layout;
* a store of a newer version than this code knows is refused.

The steps so far
    1 -> 2 (:func:`to_schema_2`): ``urns`` and the lookup tables' numbers
    become decimal text (``2**64`` urns and more), and results keyed by
    schema 1's per-urn bounds text (``"0:2,0:2,1:"``) are refiled under the
    group text (``"2x0:2,1x1:"``) with their digests and checksums
    recomputed; uniform texts (``"r*a:b"``) and their digests are unchanged.

Adding a step
    Raise :data:`~enumerator.store.schema.SCHEMA_VERSION` by one, change the
    models in :mod:`enumerator.store.schema` to the new layout, and append
    ``Migration(source=old, summary=..., apply=function)`` here, where
    ``function(connection)`` turns a store of the old layout into the new
    one with SQL on the given SQLAlchemy connection (inside the transaction;
    it must not commit).  A step may rewrite rows in Python (new key digests,
    say) but must not import the facade or the CLI, and must never leave a
    value under a key that would answer a different question: a row that
    cannot be carried over is dropped (it only holds a cache).  A process
    running the older code that opened the store before the upgrade may
    still add rows of the old layout afterwards, so new key texts must never
    coincide with old ones for a different question (such rows are then
    merely never found).  SQLite and PostgreSQL run table changes inside a
    transaction; on a backend that commits them implicitly (MySQL) an
    upgrade is not atomic.  ``tests/test_migrations.py`` shows how a step is
    tested: a store written by the previous layout, opened, read back.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass
from typing import Callable, Dict, Optional, Sequence, Tuple

from sqlalchemy import (
    BigInteger,
    Column,
    DateTime,
    Index,
    Integer,
    MetaData,
    String,
    Table,
    Text,
    inspect,
    select,
    text,
    update,
)
from sqlalchemy.engine import Connection

from ..core.errors import EnumeratorError
from ..core.exact import int_text, text_int
from ..core.model import UrnModel
from . import schema
from .keys import Key, key_digest, row_checksum, row_intact
from .schema import META_SCHEMA_VERSION, DecimalInt, Meta

__all__ = [
    "MIGRATIONS",
    "REWRITE_BATCH",
    "Migration",
    "MigrationFailed",
    "plan",
    "read_version",
    "to_schema_2",
    "upgrade",
    "write_version",
]

log = logging.getLogger("enumerator.store")


@dataclass(frozen=True)
class Migration:
    """One upgrade step: turns a store of schema *source* into one of schema ``source + 1``.

    Parameters
    ----------
    source : int
        The schema version the step starts from.
    summary : str
        One line for people: what the step changes.
    apply : callable
        ``apply(connection)`` performs the change on an SQLAlchemy
        :class:`~sqlalchemy.engine.Connection` inside the caller's transaction
        (it must not commit or roll back).
    """

    source: int
    summary: str
    apply: Callable[[Connection], None]

    @property
    def target(self) -> int:
        """The schema version after the step (``source + 1``)."""
        return self.source + 1


# ---------------------------------------------------------------------------
# 1 -> 2: numbers of any size, bounds texts by groups
# ---------------------------------------------------------------------------

#: The layout of schema 2, frozen here (the models in
#: :mod:`enumerator.store.schema` follow the newest layout; this step must
#: keep building schema 2 when they move on).
_V2 = MetaData()
_RESULTS_V2 = Table(
    "enumerator_results", _V2,
    Column("id", Integer, primary_key=True),
    Column("key_digest", String(64), nullable=False, unique=True),
    Column("quantity", String(64), nullable=False),
    Column("rule", String(8), nullable=False),
    Column("balls", DecimalInt, nullable=False),
    Column("urns", DecimalInt, nullable=False),
    Column("bounds", Text, nullable=False),
    Column("params", Text, nullable=False),
    Column("version", Integer, nullable=False),
    Column("kind", String(16), nullable=False),
    Column("value", Text, nullable=False),
    Column("digits", BigInteger, nullable=False),
    Column("checksum", BigInteger, nullable=False),
    Column("method", String(200), nullable=False),
    Column("elapsed_ns", BigInteger, nullable=False),
    Column("created_at", DateTime(timezone=True), nullable=False),
    Index("ix_enumerator_results_row", "quantity", "rule", "urns", "version"),
)
_TABLES_V2 = Table(
    "enumerator_tables", _V2,
    Column("id", Integer, primary_key=True),
    Column("name", String(200), nullable=False, unique=True),
    Column("quantity", String(64), nullable=False),
    Column("rule", String(8), nullable=False),
    Column("minimum", DecimalInt, nullable=False),
    Column("capacity", DecimalInt, nullable=True),
    Column("balls_first", DecimalInt, nullable=False),
    Column("balls_last", DecimalInt, nullable=False),
    Column("urns_first", DecimalInt, nullable=False),
    Column("urns_last", DecimalInt, nullable=False),
    Column("created_at", DateTime(timezone=True), nullable=False),
)
#: table -> the columns that schema 1 kept as BIGINT and schema 2 keeps as decimal text.
_RETYPED_V2: Dict[Table, Tuple[str, ...]] = {
    _RESULTS_V2: ("urns",),
    _TABLES_V2: ("minimum", "capacity", "balls_first", "balls_last", "urns_first", "urns_last"),
}
#: Rows read per round trip while rewriting bounds texts (per-urn texts of
#: schema 1 grow with the urns, so a batch bounds the memory, not the work).
REWRITE_BATCH = 200


def _as_text_columns(connection: Connection, table: Table, columns: Sequence[str]) -> None:
    """Turn the integer *columns* of *table* into decimal text, keeping every row and its id.

    SQLite cannot change a column's type: the table is renamed aside, made
    anew in the frozen layout (with its indexes), filled with one ``INSERT
    ... SELECT`` that casts the columns to text, and the old one dropped —
    the procedure of the SQLite documentation ("ALTER TABLE", making other
    kinds of table schema changes).  PostgreSQL changes the type in place
    (``ALTER COLUMN ... TYPE TEXT USING``); other backends are refused (the
    upgrade then fails as a whole and the store keeps schema 1).  Cost: one
    copy of the table inside the upgrade transaction.
    """
    dialect = connection.dialect.name
    quote = connection.dialect.identifier_preparer.quote
    name = table.name
    if not inspect(connection).has_table(name):
        return  # created afterwards in the current layout, like any missing table
    if dialect == "sqlite":
        aside = f"{name}_schema1"
        connection.exec_driver_sql(f"ALTER TABLE {quote(name)} RENAME TO {quote(aside)}")
        for index in inspect(connection).get_indexes(aside):
            connection.exec_driver_sql(f"DROP INDEX {quote(index['name'])}")
        present = {column["name"] for column in inspect(connection).get_columns(aside)}
        table.create(connection)
        names = [column.name for column in table.columns if column.name in present]
        chosen = [f"CAST({quote(n)} AS TEXT)" if n in columns else quote(n) for n in names]
        connection.exec_driver_sql(
            f"INSERT INTO {quote(name)} ({', '.join(map(quote, names))}) "
            f"SELECT {', '.join(chosen)} FROM {quote(aside)}"
        )
        connection.exec_driver_sql(f"DROP TABLE {quote(aside)}")
    elif dialect == "postgresql":
        for column in columns:
            connection.exec_driver_sql(
                f"ALTER TABLE {quote(name)} ALTER COLUMN {quote(column)} TYPE TEXT USING {quote(column)}::text"
            )
    else:
        raise NotImplementedError(f"changing a column's type on {dialect} (upgrade the store on SQLite or PostgreSQL)")


def _per_urn_batches(connection: Connection, batch: int):
    """Yield lists of the result rows whose bounds text is in schema 1's per-urn form (no ``*``, no ``x``).

    Keyset pagination on ``id`` (rows left unchanged are not read twice);
    the columns come back as stored text, unconverted, so a damaged row
    cannot stop the upgrade.
    """
    query = text(
        "SELECT id, key_digest, quantity, rule, balls, bounds, params, version, kind, value, digits, checksum "
        "FROM enumerator_results WHERE id > :last AND bounds NOT LIKE '%*%' AND bounds NOT LIKE '%x%' "
        "ORDER BY id LIMIT :batch"
    )
    last = -1
    while True:
        rows = connection.execute(query, {"last": last, "batch": batch}).all()
        if not rows:
            return
        yield rows
        last = rows[-1][0]


def _regrouped(row) -> Optional[Tuple[Key, str, int]]:
    """The schema-2 ``(key, digest, checksum)`` of one per-urn row, or None to leave it as it is.

    None when the row cannot be carried over faithfully: its fields do not
    read (rule, ``n``, bounds), its digest is not the one its fields give,
    or its checksum or digit count disagrees with its value.  Such a row is
    never served (no schema-2 key finds it) and ``cache verify`` reports it.
    """
    _, digest, quantity, rule, balls, bounds, params, version, kind, value, digits, checksum = row
    try:
        n = text_int(str(balls))
        old = Key(str(rule), n, str(bounds), 0)
        if key_digest(quantity, old, params, int(version)) != digest:
            return None
        if not row_intact(digest, kind, value, int(digits), int(checksum)):
            return None
        model = UrnModel.from_canonical(rule, n, bounds)
    except (EnumeratorError, ValueError, TypeError):
        return None
    key = Key.of(model)
    new_digest = key_digest(quantity, key, params, int(version))
    return key, new_digest, row_checksum(new_digest, kind, value)


def _rewrite_per_urn_keys(connection: Connection, batch: Optional[int] = None) -> Dict[str, int]:
    """File every schema-1 per-urn result under its schema-2 group text; return what happened.

    A row whose new key is already stored (the same question answered
    twice) is dropped: the store keeps one row per key.  Returns the counts
    ``rewritten``, ``merged`` (dropped as duplicates) and ``left`` (rows
    that cannot be read; see :func:`_regrouped`).
    """
    found = text("SELECT id FROM enumerator_results WHERE key_digest = :digest")
    move = text(
        "UPDATE enumerator_results SET key_digest = :digest, bounds = :bounds, urns = :urns, "
        "checksum = :checksum WHERE id = :id"
    )
    drop = text("DELETE FROM enumerator_results WHERE id = :id")
    counts = {"rewritten": 0, "merged": 0, "left": 0}
    for rows in _per_urn_batches(connection, batch or REWRITE_BATCH):
        for row in rows:
            carried = _regrouped(row)
            if carried is None:
                counts["left"] += 1
                continue
            key, digest, checksum = carried
            other = connection.execute(found, {"digest": digest}).first()
            if other is not None and other[0] != row[0]:
                connection.execute(drop, {"id": row[0]})
                counts["merged"] += 1
                continue
            connection.execute(move, {"digest": digest, "bounds": key.bounds, "urns": int_text(key.urns),
                                      "checksum": checksum, "id": row[0]})
            counts["rewritten"] += 1
    return counts


def to_schema_2(connection: Connection) -> None:
    """Schema 1 -> 2: numbers that describe a problem become decimal text; per-urn keys become group keys.

    * ``enumerator_results.urns`` and the numbers of ``enumerator_tables``
      (bounds and ranges) change from ``BIGINT`` to decimal text, so a model
      with ``2**64`` urns or more can be stored (:func:`_as_text_columns`);
    * every result whose bounds text is schema 1's per-urn form
      (``"0:2,0:2,1:"``: no ``*``, no ``x``) is filed under the model's
      canonical group text (``"2x0:2,1x1:"``,
      :meth:`~enumerator.core.model.UrnModel.canonical_bounds`) with its
      key digest and checksum recomputed, in batches
      (:func:`_rewrite_per_urn_keys`).  Rows that do not read, or whose
      checksum already disagrees, are left as they are (never served,
      reported by ``cache verify``); a checksum is never recomputed over a
      damaged value.

    Uniform texts (``"r*a:b"``) are the same in both schemas, so those rows
    and their digests stay untouched; lookup-table definitions hold no
    bounds text or digest (their cells are results with uniform texts).
    Cost: one copy of each table (SQLite) plus one pass over the per-urn rows.
    """
    for table, columns in _RETYPED_V2.items():
        _as_text_columns(connection, table, columns)
    counts = _rewrite_per_urn_keys(connection)
    log.info("enumerator: schema 2 files per-urn results by groups: %(rewritten)d rewritten, "
             "%(merged)d merged into an equal key, %(left)d unreadable left for 'cache verify'", counts)


#: The upgrade steps, oldest first: ``MIGRATIONS[i]`` upgrades schema
#: ``FIRST_SCHEMA_VERSION + i`` to the next one.
MIGRATIONS: Tuple[Migration, ...] = (
    Migration(
        1,
        "numbers of any size as decimal text; per-urn bounds texts filed under group texts",
        to_schema_2,
    ),
)


class MigrationFailed(Exception):
    """An upgrade step raised; the transaction is rolled back and the store keeps its old version.

    Attributes: *step* (the step that failed), *error* (what it raised) and
    *found* (the version the store had, and keeps).
    """

    def __init__(self, step: Migration, error: BaseException, found: int):
        self.step = step
        self.error = error
        self.found = found
        detail = " ".join(str(error).split()) or type(error).__name__
        super().__init__(f"step {step.source}->{step.target} ({step.summary}): {detail}")


def plan(found: int, target: Optional[int] = None,
         steps: Optional[Sequence[Migration]] = None) -> Tuple[Migration, ...]:
    """Return the steps that upgrade schema *found* to *target*, in order.

    Parameters
    ----------
    found : int
        The version the store records.
    target : int, optional
        The version wanted; default :data:`~enumerator.store.schema.SCHEMA_VERSION`.
    steps : sequence of Migration, optional
        The list to draw from; default :data:`MIGRATIONS`.

    Returns
    -------
    tuple of Migration
        Empty when *found* equals *target*.

    Raises
    ------
    ValueError
        When *found* is above *target* (a newer store: the caller refuses
        it), or when the list has no step, or more than one, for a version
        on the way (a defect of this code, never of the store).

    Notes
    -----
    Cost: linear in the number of steps.

    Examples
    --------
    >>> plan(1, 1)
    ()
    >>> noop = Migration(1, "nothing", lambda connection: None)
    >>> [step.target for step in plan(1, 2, [noop])]
    [2]
    """
    target = schema.SCHEMA_VERSION if target is None else target
    steps = MIGRATIONS if steps is None else steps
    if found > target:
        raise ValueError(f"schema {found} is newer than {target}; it cannot be upgraded")
    chosen = []
    for version in range(found, target):
        matching = [step for step in steps if step.source == version]
        if len(matching) != 1:
            raise ValueError(
                f"the upgrade list has {len(matching)} steps from schema {version} (it needs exactly one)"
            )
        chosen.append(matching[0])
    return tuple(chosen)


def read_version(connection: Connection, lock: bool = False) -> Optional[int]:
    """Return the schema version a store records, or None when it records none.

    Parameters
    ----------
    connection : sqlalchemy.engine.Connection
        A connection to the store.
    lock : bool
        Read with ``SELECT ... FOR UPDATE`` (inside a write transaction), so
        on a server database two processes upgrading at once take turns and
        the second finds the store upgraded.  SQLite needs no row lock: its
        ``BEGIN IMMEDIATE`` already admits one writer at a time.

    Returns
    -------
    int or None

    Raises
    ------
    ValueError
        When the recorded version is not a whole number.

    Notes
    -----
    Cost: one primary-key lookup in ``enumerator_meta``.
    """
    query = select(Meta.value).where(Meta.key == META_SCHEMA_VERSION)
    if lock:
        query = query.with_for_update()
    row = connection.execute(query).first()
    if row is None:
        return None
    try:
        return int(row[0])
    except ValueError:
        raise ValueError(f"unreadable schema version {row[0]!r}") from None


def write_version(connection: Connection, version: int) -> None:
    """Record *version* as the store's schema version (the row must exist).

    Notes
    -----
    Cost: one primary-key update in ``enumerator_meta``.
    """
    connection.execute(
        update(Meta).where(Meta.key == META_SCHEMA_VERSION).values(value=str(int(version)))
    )


def upgrade(connection: Connection, found: int, target: Optional[int] = None,
            steps: Optional[Sequence[Migration]] = None) -> Tuple[Migration, ...]:
    """Run the steps from schema *found* to *target* on *connection*, recording each new version.

    The caller owns the transaction (one write transaction around the whole
    upgrade), so either every step and version record is committed or none
    is.

    Parameters
    ----------
    connection : sqlalchemy.engine.Connection
        A connection inside a write transaction.
    found : int
        The version the store records (read inside the same transaction).
    target, steps
        As in :func:`plan`.

    Returns
    -------
    tuple of Migration
        The steps that ran (empty when the store was current).

    Raises
    ------
    MigrationFailed
        When a step raises; the caller's transaction must then be rolled
        back (leaving the store at *found*).
    ValueError
        As :func:`plan`.

    Notes
    -----
    Cost: the sum of the steps' costs, typically one pass over the
    ``enumerator_results`` rows per step that rewrites them.
    """
    pending = plan(found, target, steps)
    for step in pending:
        try:
            step.apply(connection)
        except Exception as error:  # any failure aborts the whole upgrade
            raise MigrationFailed(step, error, found) from error
        write_version(connection, step.target)
    return pending
