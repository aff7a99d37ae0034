"""The result store: exact results remembered in a SQL database, and lookup tables.

- :mod:`~enumerator.store.database` — the schema, the value codec on the
  database side, and :class:`Store` (reads, writes, verification, export);
- :mod:`~enumerator.store.context` — which store a computation uses
  (:func:`using`, :func:`bypass`, :func:`remember`, :func:`open_store`);
- :mod:`~enumerator.store.tables` — grids of counts built into a store.
"""

from .context import (
    bypass,
    cache_enabled,
    close_all,
    current_store,
    default_location,
    open_store,
    remember,
    using,
)
from .database import (
    ALGORITHM_VERSIONS,
    DEFAULT_FILENAME,
    ENV_NO_CACHE,
    ENV_STORE,
    SCHEMA_VERSION,
    Key,
    Store,
    StoredEntry,
    decode_value,
    encode_value,
    model_from_key,
    register_quantity,
)

__all__ = [
    "ALGORITHM_VERSIONS",
    "DEFAULT_FILENAME",
    "ENV_NO_CACHE",
    "ENV_STORE",
    "Key",
    "SCHEMA_VERSION",
    "Store",
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
