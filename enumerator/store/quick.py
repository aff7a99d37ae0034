"""A stored value read with the standard library's :mod:`sqlite3`, without SQLAlchemy.

Answering from the store should cost little more than the answer itself, and
importing SQLAlchemy (engine, SQL compiler, ORM) costs several times more
than reading one row.  So :func:`~enumerator.store.context.remember` first
asks :func:`read` here, for a store that is an existing SQLite file:

* the file is opened read-only (:func:`connect_read_only`: ``mode=ro``, or
  ``immutable=1`` when the user may not create the shared-memory file of a
  WAL database): no write, no switch to WAL, no file created, so a store
  the user may only read answers as fast as their own;
* one statement reads the store's ``schema_version`` and the row filed under
  the key's digest (:func:`~enumerator.store.keys.key_digest`) in the same
  snapshot;
* the row is checked and decoded exactly as the full store does
  (:func:`~enumerator.store.keys.stored_value`): a damaged row raises the
  same :class:`~enumerator.core.errors.StoreError`, never a wrong answer.

Anything else — the key is not stored, the schema is not the current one
(the full store upgrades or refuses it), a table is missing, the file is
locked, not a database or replaced, an odd column type — gives
:data:`MISSING`, and the caller goes through the full store
(:class:`~enumerator.store.database.Store`), which behaves exactly as it
would have without this module.

One read-only connection is kept per file and process, shared by threads
under a lock (a lookup holds it for one indexed read); :func:`close_all`
closes them, and a forked child never uses its parent's.
"""

from __future__ import annotations

import os
import sqlite3
import threading
from pathlib import Path
from typing import Dict, Optional

from .keys import Key, key_digest, stored_value
from .layout import LOOKUP_TABLE, META_SCHEMA_VERSION, META_TABLE, RESULTS_TABLE, current_schema_version

__all__ = ["MISSING", "SQLITE_HEADER", "close_all", "connect_read_only", "file_kind", "read"]

#: Returned by :func:`read` when this module cannot answer (use the full store).
MISSING = object()

#: Seconds a quick read waits for a lock before leaving the read to the full store.
_BUSY_TIMEOUT = 1.0

_TABLES = (META_TABLE, RESULTS_TABLE, LOOKUP_TABLE)

_SELECT = (
    f"SELECT m.value, r.kind, r.value, r.digits, r.checksum "
    f"FROM {META_TABLE} AS m LEFT JOIN {RESULTS_TABLE} AS r ON r.key_digest = ? "
    f"WHERE m.key = '{META_SCHEMA_VERSION}'"
)


#: The first 16 bytes of every SQLite 3 database file.
SQLITE_HEADER = b"SQLite format 3\x00"


def file_kind(path: Path) -> str:
    """Say what the file *path* holds, from its first 100 bytes: ``"missing"``, ``"empty"``,
    ``"unreadable"``, ``"wal"`` (an SQLite database in WAL mode), ``"sqlite"`` (another
    journal mode) or ``"other"`` (not an SQLite database).

    Parameters
    ----------
    path : pathlib.Path

    Returns
    -------
    str
        One of the six words above.

    Notes
    -----
    The journal mode is the file-format write version, byte 18 of the
    database header (2 for WAL), as the SQLite file-format document
    describes ("The Database File Format", section 1.3).  Cost: one read
    of 100 bytes.
    """
    try:
        with open(path, "rb") as handle:
            head = handle.read(100)
    except FileNotFoundError:
        return "missing"
    except OSError:
        return "unreadable"
    if not head:
        return "empty"
    if not head.startswith(SQLITE_HEADER):
        return "other"
    return "wal" if len(head) > 18 and head[18] == 2 else "sqlite"


def _read_only_uris(path: Path):
    """The URIs to try, in order, to read *path* without writing anything."""
    plain = path.as_uri() + "?mode=ro"
    # immutable: no -shm or -wal file is created or read, no lock is taken
    immutable = plain + "&immutable=1"
    if not os.access(path, os.W_OK) and file_kind(path) == "wal" and not Path(f"{path}-wal").exists():
        # someone else's WAL file that nobody has open (no log beside it): opening it
        # mode=ro would need a -shm file this user may not create, or would leave one
        # owned by this user in the owner's folder (which then stops the owner
        # writing), and there is nothing in a log to miss
        return (immutable,)
    return (plain, immutable)


def connect_read_only(path: Path, timeout: float) -> sqlite3.Connection:
    """Open the SQLite file *path* for reading only, whoever owns it.

    Parameters
    ----------
    path : pathlib.Path
        An existing SQLite file.
    timeout : float
        Seconds to wait for another process's lock.

    Returns
    -------
    sqlite3.Connection
        In autocommit; it never writes the file, nor creates one beside it.

    Raises
    ------
    sqlite3.Error
        When neither way of opening can read the file's schema.

    Notes
    -----
    First ``mode=ro``, which sees a writer's log (``-wal``) through its
    shared-memory index; when that cannot be opened (a WAL file whose
    ``-shm`` this user may not create or read: SQLite's "attempt to write
    a readonly database"), then ``immutable=1``, which reads the main file
    alone.  Someone else's WAL file with no log beside it is opened
    ``immutable`` at once: nobody has it open, so its main file holds
    every committed row, and ``mode=ro`` would leave a ``-shm`` file owned
    by this user in the owner's folder.  An immutable reader does not see
    what a writer commits later; a row it reads half-written fails its
    checksum and is refused, never served (SQLite's URI parameters are documented in "Uniform
    Resource Identifiers", sqlite.org/uri.html).  Cost: one or two opens
    and one read of ``sqlite_master``.
    """
    failure: Optional[sqlite3.Error] = None
    for uri in _read_only_uris(path):
        conn = sqlite3.connect(uri, uri=True, timeout=timeout, isolation_level=None, check_same_thread=False)
        try:
            conn.execute("SELECT count(*) FROM sqlite_master").fetchone()
        except sqlite3.Error as error:
            conn.close()
            failure = error
            text = str(error).lower()
            if "readonly" in text or "read-only" in text or "unable to open" in text:
                continue  # the next way may read it
            raise
        return conn
    assert failure is not None
    raise failure


class _Reader:
    """One read-only connection to one SQLite file, opened on first use and shared under a lock."""

    def __init__(self, path: Path):
        self.path = path
        self.lock = threading.Lock()
        self.conn: Optional[sqlite3.Connection] = None
        self.identity = None  # (device, inode[, size, mtime]) of the file the connection reads

    def _connect(self, identity) -> sqlite3.Connection:
        conn = connect_read_only(self.path, _BUSY_TIMEOUT)
        try:
            found = conn.execute(
                f"SELECT count(*) FROM sqlite_master WHERE type = 'table' AND name IN ({', '.join('?' * len(_TABLES))})",
                _TABLES,
            ).fetchone()[0]
        except BaseException:
            conn.close()
            raise
        if found != len(_TABLES):
            conn.close()
            raise sqlite3.OperationalError("the store lacks a table")
        self.conn, self.identity = conn, identity
        return conn

    def fetch(self, digest: str):
        """The ``(schema text, kind, value, digits, checksum)`` row for *digest*, or None to fall back."""
        try:
            stat = os.stat(self.path)
        except OSError:
            return None
        identity = (stat.st_dev, stat.st_ino)
        if not os.access(self.path, os.W_OK):
            # someone else's file, perhaps read immutable (which trusts its page cache):
            # a new connection whenever the owner has changed it
            identity += (stat.st_size, stat.st_mtime_ns)
        with self.lock:
            try:
                conn = self.conn
                if conn is None or self.identity != identity:  # first use, or the file was replaced
                    self._close()
                    conn = self._connect(identity)
                return conn.execute(_SELECT, (digest,)).fetchone()
            except sqlite3.Error:
                self._close()
                return None

    def _close(self) -> None:
        conn, self.conn, self.identity = self.conn, None, None
        if conn is not None:
            try:
                conn.close()
            except sqlite3.Error:
                pass

    def close(self) -> None:
        with self.lock:
            self._close()


_lock = threading.Lock()  # guards _readers, held only for a moment
_readers: Dict[Path, _Reader] = {}


def _forget_in_child() -> None:
    # a forked child never touches its parent's SQLite handles: drop them unclosed
    global _lock
    _lock = threading.Lock()
    _readers.clear()


os.register_at_fork(after_in_child=_forget_in_child)


def read(path: Path, quantity: str, key: Key, version: int, params: str = ""):
    """Return the value stored under a key in the SQLite file *path*, or :data:`MISSING`.

    Parameters
    ----------
    path : pathlib.Path
        The store's resolved SQLite file (:func:`~enumerator.store.layout.file_path`).
    quantity, key, version, params
        The key, as for :meth:`Store.get <enumerator.store.database.Store.get>`.

    Returns
    -------
    int, Fraction, list, dict or MISSING
        The exact value; :data:`MISSING` when the key is not stored or the
        store needs the full treatment (see the module docstring).

    Raises
    ------
    StoreError
        When the stored row is damaged or unreadable (the full store's message).

    Notes
    -----
    Cost: one ``stat`` and one indexed read; the first call per file also
    opens it and checks its tables.  Never imports SQLAlchemy.
    """
    if not path.is_file():
        return MISSING
    reader = _readers.get(path)
    if reader is None:
        with _lock:
            reader = _readers.setdefault(path, _Reader(path))
    digest = key_digest(quantity, key, params, version)
    row = reader.fetch(digest)
    if row is None:
        return MISSING
    found, kind, text, digits, checksum = row
    if found != str(current_schema_version()) or kind is None:
        return MISSING
    if not (isinstance(kind, str) and isinstance(text, str) and type(digits) is int and type(checksum) is int):
        return MISSING  # an odd row: the full store says what it is
    return stored_value(str(path), quantity, key, digest, kind, text, digits, checksum)


def close_all() -> None:
    """Close every quick-read connection of this process (they reopen on next use)."""
    with _lock:
        readers = list(_readers.values())
        _readers.clear()
    for reader in readers:
        reader.close()
