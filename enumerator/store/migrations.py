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

from dataclasses import dataclass
from typing import Callable, Optional, Sequence, Tuple

from sqlalchemy import select, update
from sqlalchemy.engine import Connection

from . import schema
from .schema import META_SCHEMA_VERSION, Meta

__all__ = [
    "MIGRATIONS",
    "Migration",
    "MigrationFailed",
    "plan",
    "read_version",
    "upgrade",
    "write_version",
]


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


#: The upgrade steps, oldest first: ``MIGRATIONS[i]`` upgrades schema
#: ``FIRST_SCHEMA_VERSION + i`` to the next one.  Empty while schema 1 is the
#: only layout there has been.
MIGRATIONS: Tuple[Migration, ...] = ()


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
