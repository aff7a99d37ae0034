"""The result store: exact results remembered in a SQL database, and lookup tables.

One concept per module, each importing only the ones above it in this list:

- :mod:`~enumerator.store.layout` — the layout's numbers and names
  (:data:`SCHEMA_VERSION`, the table names, the file name in a directory);
- :mod:`~enumerator.store.codec` — exact values (and lists/dicts of them)
  to the stored text and back, on top of :mod:`enumerator.core.exact`;
- :mod:`~enumerator.store.keys` — what a value is filed under: the
  canonical :class:`Key`, the quantities and their algorithm versions, the
  digest and checksum of a row;
- :mod:`~enumerator.store.quick` — one stored value read with the standard
  library's ``sqlite3``, without SQLAlchemy;
- :mod:`~enumerator.store.schema` — the tables (SQLAlchemy models);
- :mod:`~enumerator.store.migrations` — the steps that upgrade an older store;
- :mod:`~enumerator.store.engine` — locations, the SQLAlchemy engine,
  transactions, locks and failures;
- :mod:`~enumerator.store.entries` — stored rows read back
  (:class:`StoredEntry`): their exact values, their audit against a fresh
  computation, their export;
- :mod:`~enumerator.store.database` — :class:`Store`: opening (create,
  check, upgrade), reads, writes, verification, export;
- :mod:`~enumerator.store.context` — which store a computation uses
  (:func:`using`, :func:`bypass`, :func:`remember`, :func:`open_store`);
- :mod:`~enumerator.store.tables` — grids of counts built into a store and
  read back in bounded batches;
- :mod:`~enumerator.store.cluster` — tables, enumeration sums and listings
  on a Dask cluster (imported only by the commands that use one).

The names below are imported on first use (module ``__getattr__``), so
importing this package, or reading a stored value through
:func:`remember`, loads no SQLAlchemy; :class:`Store` and the modules from
:mod:`~enumerator.store.schema` down load it when used.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING

__all__ = [
    "ALGORITHM_VERSIONS",
    "DEFAULT_FILENAME",
    "ENV_NO_CACHE",
    "ENV_STORE",
    "Key",
    "SCHEMA_VERSION",
    "Store",
    "StoreHandle",
    "StoredEntry",
    "bypass",
    "cache_enabled",
    "close_all",
    "current_store",
    "decode_value",
    "default_location",
    "encode_value",
    "model_from_key",
    "open_store",
    "register_quantity",
    "remember",
    "using",
]

#: Where each public name lives (imported from there on first use).
_HOME = {
    "decode_value": "codec",
    "encode_value": "codec",
    "ENV_NO_CACHE": "context",
    "ENV_STORE": "context",
    "StoreHandle": "context",
    "bypass": "context",
    "cache_enabled": "context",
    "close_all": "context",
    "current_store": "context",
    "default_location": "context",
    "open_store": "context",
    "remember": "context",
    "using": "context",
    "Store": "database",
    "StoredEntry": "database",
    "DEFAULT_FILENAME": "layout",
    "SCHEMA_VERSION": "layout",
    "ALGORITHM_VERSIONS": "keys",
    "Key": "keys",
    "model_from_key": "keys",
    "register_quantity": "keys",
}

if TYPE_CHECKING:  # pragma: no cover - for type checkers and editors only
    from .codec import decode_value, encode_value
    from .context import (
        ENV_NO_CACHE,
        ENV_STORE,
        StoreHandle,
        bypass,
        cache_enabled,
        close_all,
        current_store,
        default_location,
        open_store,
        remember,
        using,
    )
    from .database import Store, StoredEntry
    from .keys import ALGORITHM_VERSIONS, Key, model_from_key, register_quantity
    from .layout import DEFAULT_FILENAME, SCHEMA_VERSION


def __getattr__(name: str):
    home = _HOME.get(name)
    if home is None:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    value = getattr(importlib.import_module(f"{__name__}.{home}"), name)
    globals()[name] = value  # found directly from now on
    return value


def __dir__():
    return sorted(set(globals()) | set(__all__))
