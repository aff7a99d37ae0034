"""The store's names and numbers that a reader needs, without SQLAlchemy.

The layout version, the table names, the meta key of the version and the
file name inside a store directory live here, so the quick read of one
stored value (:mod:`enumerator.store.quick`) and the full store
(:mod:`enumerator.store.schema`, :mod:`enumerator.store.engine`) share them
while only the full store loads SQLAlchemy.  :mod:`enumerator.store.schema`
re-exports the version names, which remain importable from there.
"""

from __future__ import annotations

import sys
from pathlib import Path

__all__ = [
    "DEFAULT_FILENAME",
    "FIRST_SCHEMA_VERSION",
    "LOOKUP_TABLE",
    "META_SCHEMA_VERSION",
    "META_TABLE",
    "RESULTS_TABLE",
    "SCHEMA_VERSION",
    "current_schema_version",
    "file_path",
]

#: The layout this code writes; a store written by a newer layout is
#: refused, an older one is upgraded (:mod:`enumerator.store.migrations`).
SCHEMA_VERSION = 2
#: The first layout ever written; every store is at this version or later.
FIRST_SCHEMA_VERSION = 2
#: The ``enumerator_meta`` key under which a store records its layout.
META_SCHEMA_VERSION = "schema_version"

#: Table of key/value facts about the store (``schema_version``, creator).
META_TABLE = "enumerator_meta"
#: Table of remembered values, one row per key digest.
RESULTS_TABLE = "enumerator_results"
#: Table of lookup-table definitions.
LOOKUP_TABLE = "enumerator_tables"

#: The file name used inside a store directory.
DEFAULT_FILENAME = "enumerator.sqlite"


def current_schema_version() -> int:
    """Return the layout version the full store works to.

    Returns
    -------
    int
        :data:`enumerator.store.schema.SCHEMA_VERSION` when that module is
        loaded (so a value set there, as the migration tests do, holds for
        every reader), else :data:`SCHEMA_VERSION` (the same number).

    Notes
    -----
    Cost: one dict lookup; never imports SQLAlchemy.
    """
    schema = sys.modules.get(__package__ + ".schema")
    return SCHEMA_VERSION if schema is None else schema.SCHEMA_VERSION


def file_path(text: str) -> Path:
    """Return the SQLite file a store location that is not a URL names.

    Parameters
    ----------
    text : str
        A file path, or a directory (:data:`DEFAULT_FILENAME` inside it);
        ``~`` is expanded.

    Returns
    -------
    pathlib.Path
        The absolute, resolved file path.

    Notes
    -----
    The one rule for plain locations, shared by
    :func:`~enumerator.store.engine.resolve_location`.  Cost: one ``stat``.
    """
    path = Path(text).expanduser()
    if path.is_dir():
        path = path / DEFAULT_FILENAME
    return path.resolve()
