"""The result store: exact results remembered in a SQL database, and lookup tables.

One concept per module, each importing only the ones above it in this list:

- :mod:`~enumerator.store.codec` — exact values (and lists/dicts of them)
  to the stored text and back, on top of :mod:`enumerator.core.exact`;
- :mod:`~enumerator.store.keys` — what a value is filed under: the
  canonical :class:`Key`, the quantities and their algorithm versions, the
  digest and checksum of a row;
- :mod:`~enumerator.store.schema` — the tables and :data:`SCHEMA_VERSION`;
- :mod:`~enumerator.store.migrations` — the steps that upgrade an older store;
- :mod:`~enumerator.store.engine` — locations, the SQLAlchemy engine,
  transactions, locks and failures;
- :mod:`~enumerator.store.database` — :class:`Store`: opening (create,
  check, upgrade), reads, writes, verification, export;
- :mod:`~enumerator.store.context` — which store a computation uses
  (:func:`using`, :func:`bypass`, :func:`remember`, :func:`open_store`);
- :mod:`~enumerator.store.tables` — grids of counts built into a store.
"""

from .codec import decode_value, encode_value
from .context import (
    ENV_NO_CACHE,
    ENV_STORE,
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
from .engine import DEFAULT_FILENAME
from .keys import ALGORITHM_VERSIONS, Key, model_from_key, register_quantity
from .schema import SCHEMA_VERSION

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
