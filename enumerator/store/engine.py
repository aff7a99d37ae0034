r"""Talking to the database: locations, the engine, transactions, locks and failures.

Locations
    A store location is a file path (a directory means
    :data:`DEFAULT_FILENAME` inside it) or any SQLAlchemy URL
    (``postgresql://...``), so a shared database works
    (:func:`resolve_location`).

Many processes at once
    SQLite runs in WAL mode (readers never wait for the writer) with a busy
    timeout of :data:`BUSY_TIMEOUT`; every write is one short ``BEGIN
    IMMEDIATE`` transaction (:func:`writing`), retried while another process
    holds the lock (:func:`retry`, for up to :data:`LOCK_PATIENCE` seconds),
    so overlapping writers never report "database is locked".

Read-only stores
    A file that cannot be written (or whose folder cannot be, when it does
    not exist yet) is opened with SQLite's ``mode=ro``, or ``immutable=1``
    when it is someone else's WAL file (:func:`writable`,
    :func:`make_engine`, :func:`~enumerator.store.quick.connect_read_only`);
    the caller then answers reads and skips writes.

Failures
    :func:`is_busy`, :func:`is_readonly` and :func:`is_damaged` classify a
    driver error, so the store can turn it into one line that says what to do.
"""

from __future__ import annotations

import os
import random
import time
import weakref
from contextlib import contextmanager
from pathlib import Path
from typing import Iterator, Optional, Tuple

from sqlalchemy import create_engine, event
from sqlalchemy import exc as sa_exc
from sqlalchemy.engine import URL, Connection, Engine, make_url
from sqlalchemy.pool import NullPool

from ..core.errors import StoreError
from .layout import DEFAULT_FILENAME, file_path
from .quick import connect_read_only, file_kind

__all__ = [
    "BUSY_TIMEOUT",
    "DEFAULT_FILENAME",
    "LOCK_PATIENCE",
    "enable_wal",
    "damaged_store",
    "explain_failure",
    "is_busy",
    "is_cannot_open",
    "is_damaged",
    "is_readonly",
    "is_rolled_back",
    "make_engine",
    "not_a_store",
    "reading",
    "resolve_location",
    "retry",
    "writable",
    "writing",
]

#: Seconds one SQLite call waits for another process's lock (busy timeout).
BUSY_TIMEOUT = 30.0
#: Seconds a write keeps retrying, in all, before it reports the store as stuck.
LOCK_PATIENCE = 300.0

#: Execution option that marks a connection whose transaction must take the write lock first.
_WRITE_OPTION = "enumerator_write"


def resolve_location(location: str) -> Tuple[URL, Optional[Path]]:
    """Turn a store location into ``(SQLAlchemy URL, SQLite file path or None)``.

    Parameters
    ----------
    location : str
        A file path, a directory (:data:`DEFAULT_FILENAME` inside it) or an
        SQLAlchemy URL (``sqlite:///...``, ``postgresql://...``).

    Returns
    -------
    url : sqlalchemy.engine.URL
    path : pathlib.Path or None
        The resolved SQLite file, or None for an in-memory or non-SQLite store.

    Raises
    ------
    StoreError
        For an empty location or a malformed URL.

    Notes
    -----
    Cost: one ``stat`` of the path.
    """
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
    path = file_path(text)
    return URL.create("sqlite", database=str(path)), path


def writable(path: Path, make_folder: bool = True) -> bool:
    """Return True when the SQLite file *path* can be written (or created, with its folder).

    Parameters
    ----------
    path : pathlib.Path
        The file.
    make_folder : bool
        Create a missing folder first (a failure counts as not writable).
        Without, nothing is created: the answer is whether the nearest
        folder that exists could take the missing ones and the file.

    Notes
    -----
    Cost: at most one ``mkdir`` and two ``access`` calls (without
    *make_folder*, one ``stat`` per missing folder level).
    """
    if path.exists():
        return os.access(path, os.W_OK)
    directory = path.parent
    if not make_folder:
        while not directory.exists() and directory.parent != directory:
            directory = directory.parent
        return directory.is_dir() and os.access(directory, os.W_OK)
    if not directory.exists():
        try:
            directory.mkdir(parents=True, exist_ok=True)
        except OSError:
            pass  # reported as not writable below
    return os.access(directory, os.W_OK)


def make_engine(url: URL, path: Optional[Path], read_only: bool, name: str) -> Engine:
    """Create the engine of a store: pragmas, hand-started transactions, a fork-safe pool.

    Parameters
    ----------
    url : sqlalchemy.engine.URL
        Where the store lives.
    path : pathlib.Path or None
        Its SQLite file, if any.
    read_only : bool
        Open an existing SQLite file for reading only
        (:func:`~enumerator.store.quick.connect_read_only`: ``mode=ro``, or
        ``immutable=1`` where this user may not create the file's
        shared-memory index).
    name : str
        The store's name for error messages.

    Returns
    -------
    sqlalchemy.engine.Engine

    Raises
    ------
    StoreError
        When the URL's driver is not installed or the URL is unusable.

    Notes
    -----
    SQLite connections run in autocommit (``isolation_level = None``):
    reads take no lock, and a write transaction is started by hand with
    ``BEGIN IMMEDIATE`` (:func:`writing`), which takes the write lock at once
    under the busy timeout instead of upgrading a read lock (which SQLite
    refuses in WAL mode without waiting).  After ``fork`` the child drops its
    inherited connections (never sharing a SQLite handle with its parent).
    Cost: no connection is opened until first use.
    """
    if url.get_backend_name() != "sqlite":
        try:
            engine = create_engine(url, pool_pre_ping=True)
        except (sa_exc.ArgumentError, sa_exc.NoSuchModuleError, ImportError) as error:
            raise StoreError(
                f"cannot use store URL {name} ({error}); give a SQLite path or an "
                "SQLAlchemy URL whose driver is installed"
            ) from None
        _drop_connections_after_fork(engine)
        return engine
    if read_only and path is not None and path.exists():
        # mode=ro, or immutable=1 for someone else's WAL file (quick.connect_read_only):
        # nothing is written, no -shm or -wal file is left in the owner's folder
        # NullPool: a connection per use, so an immutable reader (which trusts its page
        # cache) never reads pages the owner has changed since it opened the file
        engine = create_engine(
            URL.create("sqlite", database=str(path)),
            creator=lambda: connect_read_only(path, BUSY_TIMEOUT), poolclass=NullPool,
        )
    else:
        engine = create_engine(url, connect_args={"timeout": BUSY_TIMEOUT, "check_same_thread": False})

    @event.listens_for(engine, "connect")
    def _on_connect(dbapi_connection, record):
        dbapi_connection.isolation_level = None
        cursor = dbapi_connection.cursor()
        cursor.execute(f"PRAGMA busy_timeout = {int(BUSY_TIMEOUT * 1000)}")
        cursor.execute("PRAGMA synchronous = NORMAL")
        cursor.close()

    @event.listens_for(engine, "begin")
    def _on_begin(connection):
        if connection.get_execution_options().get(_WRITE_OPTION):
            connection.exec_driver_sql("BEGIN IMMEDIATE")

    _drop_connections_after_fork(engine)
    return engine


def _drop_connections_after_fork(engine: Engine) -> None:
    """After ``fork``, the child forgets the connections it inherited and opens its own when first used.

    A weak reference, so the fork hook (which cannot be unregistered) does not
    keep every engine ever made alive.
    """
    ref = weakref.ref(engine)

    def _after_fork_in_child():
        alive = ref()
        if alive is not None:
            alive.dispose(close=False)

    os.register_at_fork(after_in_child=_after_fork_in_child)


@contextmanager
def reading(engine: Engine) -> Iterator[Connection]:
    """Yield a connection for reads (autocommit on SQLite: no lock is held between statements)."""
    with engine.connect() as conn:
        yield conn


@contextmanager
def writing(engine: Engine) -> Iterator[Connection]:
    """Yield a connection inside one write transaction (``BEGIN IMMEDIATE`` on SQLite).

    The transaction commits when the block ends normally and rolls back when
    it raises.
    """
    with engine.connect() as conn:
        conn = conn.execution_options(**{_WRITE_OPTION: True})
        with conn.begin():
            yield conn


def retry(action, *args, **kwargs):
    """Run the write *action*, retrying while another process holds the lock.

    Waits with jittered exponential back-off (5 ms doubling to 250 ms) for
    up to :data:`LOCK_PATIENCE` seconds in all, then lets the last
    ``OperationalError`` through; any other error is raised at once.  A
    transaction PostgreSQL rolled back to break a deadlock or a
    serialization conflict (:func:`is_rolled_back`) is retried the same way.
    """
    deadline = time.monotonic() + LOCK_PATIENCE
    delay = 0.005
    while True:
        try:
            return action(*args, **kwargs)
        except sa_exc.OperationalError as error:
            if not (is_busy(error) or is_rolled_back(error)) or time.monotonic() > deadline:
                raise
        time.sleep(delay * (0.5 + random.random()))
        delay = min(delay * 2, 0.25)


def _driver_text(error: BaseException) -> str:
    return str(getattr(error, "orig", error)).lower()


def is_busy(error: BaseException) -> bool:
    """True when *error* says another process holds the database lock."""
    text = _driver_text(error)
    return "locked" in text or "busy" in text


#: SQLSTATEs of a transaction the server rolled back so that another could go on
#: (serialization_failure, deadlock_detected): running it again is the remedy.
_ROLLED_BACK_STATES = frozenset({"40001", "40P01"})


def is_rolled_back(error: BaseException) -> bool:
    """True when PostgreSQL rolled the transaction back to break a deadlock or a serialization conflict."""
    return getattr(getattr(error, "orig", error), "sqlstate", None) in _ROLLED_BACK_STATES


def is_readonly(error: BaseException) -> bool:
    """True when *error* says the database cannot be written."""
    text = _driver_text(error)
    return "readonly" in text or "read-only" in text or "read only" in text


#: Driver words that mean the file or its tables are damaged (SQLITE_CORRUPT, SQLITE_NOTADB,
#: a truncated file, a table or column gone).  Not "disk I/O error": SQLite also says
#: that when it may not open a file beside the database, a permissions problem.
_DAMAGE_WORDS = (
    "not a database", "malformed", "encrypted", "corrupt", "no such table", "no such column",
    "datatype mismatch",
)


def is_damaged(error: BaseException) -> bool:
    """True when *error* says the file is not an SQLite database, is damaged or truncated, or lost a table."""
    text = _driver_text(error)
    return any(word in text for word in _DAMAGE_WORDS)


def is_cannot_open(error: BaseException) -> bool:
    """True when *error* says SQLite could not open the file (or a file beside it: ``-wal``, ``-shm``)."""
    return "unable to open" in _driver_text(error)


def damaged_store(name: str, what: str) -> StoreError:
    """Return the StoreError for a store file that is damaged: it says so and how to repair it.

    Parameters
    ----------
    name : str
        The store's path or URL.
    what : str
        What is wrong, in a few words (the driver's words, say).
    """
    return StoreError(
        f"the store {name} is damaged ({what}); it only holds a cache, so move it aside or "
        "delete it (the next command starts a new one), or choose another store with store= "
        "or ENUMERATOR_STORE"
    )


def not_a_store(name: str, what: str, maybe_damaged: bool = False) -> StoreError:
    """Return the StoreError for a file that is not an enumerator store (nothing in it was changed).

    Parameters
    ----------
    name : str
        The file's path.
    what : str
        What the file holds instead, in a few words.
    maybe_damaged : bool
        The file might be a store whose header was destroyed (it is not an
        SQLite file at all): the message then also says how to repair that.
    """
    return StoreError(
        f"{name} is not an enumerator store ({what}); it was left untouched. Choose another "
        "store with store= or ENUMERATOR_STORE (a new file name or an empty folder), or run "
        "with no_cache="
        + ("; if it is a store of yours that was damaged, delete it (it only holds a cache)"
           if maybe_damaged else "")
    )


def explain_failure(error: BaseException, name: str) -> StoreError:
    """Return the one-line StoreError that says what went wrong with the store *name* and what to do.

    Parameters
    ----------
    error : sqlalchemy.exc.DBAPIError
        The driver's failure.
    name : str
        The store's path or URL (without a password).

    Returns
    -------
    StoreError
        For a damaged file (it says it is damage and how to repair it), a
        file that is not an SQLite database (left untouched), a lock held
        too long, or anything else (the driver's own words in parentheses).
    """
    detail = " ".join(str(getattr(error, "orig", error)).split())
    if is_damaged(error):
        path = Path(name)
        if path.is_absolute() and file_kind(path) == "other":
            return not_a_store(name, f"not an SQLite database: {detail}", maybe_damaged=True)
        return damaged_store(name, detail)
    if is_busy(error):
        return StoreError(
            f"the store {name} stayed locked by another process for "
            f"{LOCK_PATIENCE:.0f} s; wait for that process to finish, or run with no_cache="
        )
    return StoreError(
        f"cannot use the store {name} ({detail}); check the path or URL and its "
        "permissions, choose another store with store= or ENUMERATOR_STORE, "
        "or run with no_cache="
    )


def enable_wal(engine: Engine) -> bool:
    """Switch an SQLite file to WAL mode (readers never wait for the writer); False if it is read-only.

    Notes
    -----
    Does nothing on other backends.  Cost: one pragma read, and one write
    the first time (retried while another process holds the lock).
    """
    if engine.dialect.name != "sqlite":
        return True

    def switch():
        with engine.connect() as conn:
            mode = conn.exec_driver_sql("PRAGMA journal_mode").scalar()
            if str(mode).lower() != "wal":
                conn.exec_driver_sql("PRAGMA journal_mode = WAL")

    try:
        retry(switch)
    except sa_exc.OperationalError as error:
        if is_readonly(error):
            return False
        raise
    return True
