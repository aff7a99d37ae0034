"""Which store a computation remembers its results in: passed, never a global setting.

The store reaches every stored computation in one of two ways:

- explicitly, as the ``store=`` argument of :func:`remember` (and of the
  facade's methods), a :class:`~enumerator.store.database.Store` or a location;
- through the *active store* of the current context, a
  :class:`contextvars.ContextVar` set only for the duration of a ``with``
  block: :func:`using` (remember in this store), :func:`bypass` (remember
  nothing).  Threads and asyncio tasks each see their own setting, and
  nothing stays changed after the block.

With neither, the facade uses :func:`default_location` (the
``ENUMERATOR_STORE`` environment variable, else the checkout's ``store/``
folder, else the user's cache directory), unless ``ENUMERATOR_NO_CACHE=1``.

Open stores are reused per location within a process (:func:`open_store`);
:func:`close_all` closes them.

Reading a stored value loads no SQLAlchemy: for an existing SQLite file,
:func:`remember` first reads the row with the standard library's
:mod:`sqlite3` (:mod:`enumerator.store.quick`), and opens the full
:class:`~enumerator.store.database.Store` only on a miss, for a write, for a
URL, or when anything is unusual.  Likewise :func:`using` only records the
choice (the store opens on first use), and this module imports
:mod:`~enumerator.store.database` only inside the functions that open a store.
"""

from __future__ import annotations

import functools
import os
import threading
import time
from contextlib import contextmanager
from contextvars import ContextVar
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any, Callable, Dict, Iterator, Optional, Union

from . import quick
from .keys import ALGORITHM_VERSIONS, Key
from .layout import DEFAULT_FILENAME, file_path

if TYPE_CHECKING:  # the class is imported where a store is opened, not here
    from .database import Store

__all__ = [
    "ENV_NO_CACHE",
    "ENV_STORE",
    "StoreHandle",
    "bypass",
    "cache_enabled",
    "close_all",
    "current_store",
    "default_location",
    "open_store",
    "remember",
    "using",
]

#: What may name a store without being one: a path or URL text, or None (the default).
_LOCATION_TYPES = (str, os.PathLike, type(None))

#: Environment variable naming the store (a path or an SQLAlchemy URL).
ENV_STORE = "ENUMERATOR_STORE"
#: Environment variable that, set to 1/true/yes/on, bypasses the store entirely.
ENV_NO_CACHE = "ENUMERATOR_NO_CACHE"


def _checkout_store_dir(package_dir: Optional[Path] = None) -> Optional[Path]:
    """``<checkout>/store`` when the package (*package_dir*, default this one) runs from a checkout.

    A checkout has ``pyproject.toml`` and a ``store/`` folder beside the
    package folder; an installed copy (anything under ``site-packages`` or
    ``dist-packages``) never counts, so the store is never written there.
    """
    package = Path(package_dir or Path(__file__).resolve().parent.parent).resolve()
    root = package.parent
    if any(part in ("site-packages", "dist-packages") for part in root.parts):
        return None
    if (root / "pyproject.toml").is_file() and (root / "store").is_dir():
        return root / "store"
    return None


@functools.lru_cache(maxsize=1)
def _this_checkout_store_dir() -> Optional[Path]:
    """:func:`_checkout_store_dir` of this package, looked up once per process (it cannot change)."""
    return _checkout_store_dir()


def default_location() -> str:
    """Return the store location used when none is chosen.

    Returns
    -------
    str
        ``ENUMERATOR_STORE`` when set, else ``store/enumerator.sqlite`` in
        the source checkout the package runs from, else
        ``enumerator.sqlite`` in the user's cache directory (platformdirs).

    Notes
    -----
    Cost: one environment lookup; the checkout test runs once per process.
    """
    env = os.environ.get(ENV_STORE, "").strip()
    if env:
        return env
    checkout = _this_checkout_store_dir()
    if checkout is not None:
        return str(checkout / DEFAULT_FILENAME)
    import platformdirs

    return str(Path(platformdirs.user_cache_dir("enumerator", appauthor=False)) / DEFAULT_FILENAME)


# ---------------------------------------------------------------------------
# open stores, one per location and process
# ---------------------------------------------------------------------------

# A registry of open resources (one engine per location), not a setting:
# which store a computation uses is never read from here but passed, or set
# for a block through the context variable below.
_open_lock = threading.Lock()  # guards the two dicts, held only for a moment
_open: Dict[str, "Store"] = {}
_opening: Dict[str, threading.Lock] = {}  # one lock per location, held while it opens


def open_store(location: Union[str, os.PathLike, "Store", "StoreHandle", None] = None,
               create: bool = True) -> "Store":
    """Return the open :class:`Store` at *location*, opening it on first use.

    Parameters
    ----------
    location : str, os.PathLike, Store, StoreHandle or None
        A path, directory or SQLAlchemy URL; ``None`` means
        :func:`default_location`; a :class:`Store` is returned as it is, a
        :class:`StoreHandle` (what :func:`using` yields) gives its store.
    create : bool
        Make the store when there is none at *location* (the default).
        With False nothing is created: where there is no store, a
        :class:`Store` that reads as empty (``exists`` False) is returned
        and not kept, so a later call that may create it does.

    Returns
    -------
    Store
        The same object for the same location text within a process
        (except a store that does not exist, opened with ``create=False``).

    Raises
    ------
    StoreError
        As :class:`Store` (the location is retried on the next call).

    Notes
    -----
    Thread-safe: threads asking for the same location at once open it once
    (the others wait for it), while opening one location never waits for
    another (an upgrade or a locked file elsewhere does not hold them up).
    Cost: one dict lookup once open; opening costs what :class:`Store` does.
    """
    if isinstance(location, StoreHandle):
        location = location.location
    if not isinstance(location, _LOCATION_TYPES):
        return location  # a Store already
    where = str(location) if location is not None else default_location()
    store = _open.get(where)
    if store is not None:
        return store
    with _open_lock:
        gate = _opening.setdefault(where, threading.Lock())
    with gate:
        store = _open.get(where)
        if store is None:
            from .database import Store

            store = Store(where, create=create)
            if not store.exists:
                return store  # nothing there, and nothing made: not kept
            with _open_lock:
                _open[where] = store
    return store


def close_all() -> None:
    """Close every store opened by this process (they reopen on next use).

    Notes
    -----
    A thread still holding one of them keeps working: its engine opens new
    connections when next used.  The quick-read connections
    (:mod:`enumerator.store.quick`) are closed too.
    """
    with _open_lock:
        stores = list(_open.values())
        _open.clear()
    quick.close_all()
    for store in stores:
        store.close()


class StoreHandle:
    """The store a :func:`using` block chose, opened on first use.

    Parameters
    ----------
    location : str or None
        The location as given to :func:`using` (``None``: :func:`default_location`).

    Notes
    -----
    Attributes other than :attr:`location` are those of the open
    :class:`~enumerator.store.database.Store` (``path``, ``name``,
    ``read_only``, ``stats()``, ...): reading one opens the store through
    :func:`open_store`, so a block that only answers from the store never
    opens it (nor imports SQLAlchemy).  Pass the handle wherever a store is
    accepted (``store=``, :func:`open_store`, :func:`using`).
    """

    __slots__ = ("location",)

    def __init__(self, location: Optional[str]):
        self.location = location

    @property
    def store(self) -> "Store":
        """The open store (opened now if it is not yet)."""
        return open_store(self.location)

    def __getattr__(self, name: str):
        if name.startswith("__"):  # copy, pickle and friends probe for these: not the store's
            raise AttributeError(name)
        return getattr(open_store(self.location), name)

    def __repr__(self) -> str:
        return f"StoreHandle({self.location!r})"


# ---------------------------------------------------------------------------
# the active store of the current context
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class _Choice:
    """What :func:`using` or :func:`bypass` chose: a location (or store), or no store."""

    location: Union[str, "Store", None]
    enabled: bool


_active: ContextVar[Optional[_Choice]] = ContextVar("enumerator_active_store", default=None)


def _env_no_cache() -> bool:
    return os.environ.get(ENV_NO_CACHE, "").strip().lower() in ("1", "true", "yes", "on")


def cache_enabled() -> bool:
    """Return whether computations in the current context remember their results.

    Returns
    -------
    bool
        False inside :func:`bypass`, or when ``ENUMERATOR_NO_CACHE=1`` and
        no :func:`using` block is active; True otherwise.

    Notes
    -----
    Cost: one context-variable read and at most one environment lookup.
    """
    choice = _active.get()
    if choice is not None:
        return choice.enabled
    return not _env_no_cache()


def current_store() -> Optional["Store"]:
    """Return the store the current context remembers results in, or None when remembering is off.

    Returns
    -------
    Store or None
        The store of the innermost :func:`using` block, None inside
        :func:`bypass`; outside both, the store at :func:`default_location`
        unless ``ENUMERATOR_NO_CACHE=1``.

    Raises
    ------
    StoreError
        When that store cannot be opened (see :class:`Store`).

    Notes
    -----
    Cost: that of :func:`open_store` (one dict lookup once open).
    """
    choice = _active.get()
    if choice is None:
        return None if _env_no_cache() else open_store(None)
    if not choice.enabled:
        return None
    return open_store(choice.location)


@contextmanager
def using(location: Union[str, os.PathLike, "Store", StoreHandle, None]) -> Iterator[Union["Store", StoreHandle]]:
    """Within the block, remember results in the store at *location* (``None``: the default).

    Parameters
    ----------
    location : str, os.PathLike, Store, StoreHandle or None
        A path, directory or SQLAlchemy URL, an open :class:`Store` (or a
        :class:`StoreHandle`), or None for :func:`default_location`.

    Yields
    ------
    StoreHandle or Store
        The store now active: the :class:`Store` given, else a
        :class:`StoreHandle` that opens it on first use (its attributes are
        the store's).

    Notes
    -----
    The choice lives in a :class:`contextvars.ContextVar`: it holds for
    this thread or task only and is undone when the block ends, also on an
    exception.  The store is not opened here: a failure to open it is
    raised where it is first used.  Cost: constant.

    Examples
    --------
    >>> import tempfile, os
    >>> folder = tempfile.mkdtemp()
    >>> with using(os.path.join(folder, "s.sqlite")) as store:
    ...     store.name.endswith("s.sqlite")
    True
    """
    if isinstance(location, StoreHandle):
        location = location.location
    if isinstance(location, _LOCATION_TYPES):
        where = None if location is None else str(location)
        chosen = StoreHandle(where)
    else:
        where = chosen = location  # a Store
    token = _active.set(_Choice(where, True))
    try:
        yield chosen
    finally:
        _active.reset(token)


@contextmanager
def bypass() -> Iterator[None]:
    """Within the block, compute everything afresh and remember nothing.

    Notes
    -----
    Like :func:`using`, for this thread or task only and undone when the
    block ends; a :func:`using` block inside it switches remembering back on.
    """
    token = _active.set(_Choice(None, False))
    try:
        yield
    finally:
        _active.reset(token)


# ---------------------------------------------------------------------------
# remembering one result
# ---------------------------------------------------------------------------

_MISSING = quick.MISSING


def _quick_get(location, quantity: str, key: Key, version: int, params: str):
    """The stored value read without SQLAlchemy (:func:`quick.read <enumerator.store.quick.read>`), or ``_MISSING``.

    Only for a location that names an SQLite file (not a URL) whose store is
    not open yet in this process: an open store answers itself.
    """
    if isinstance(location, StoreHandle):
        location = location.location
    if not isinstance(location, _LOCATION_TYPES):
        return _MISSING  # an open Store
    where = str(location) if location is not None else default_location()
    text = where.strip()
    if not text or "://" in text or where in _open:
        return _MISSING
    return quick.read(file_path(text), quantity, key, version, params)


def remember(quantity: str, model_or_key, compute: Callable[[], Any], version: Optional[int] = None,
             *, params: str = "", method: Optional[str] = None,
             store: Union[str, os.PathLike, "Store", StoreHandle, None] = None):
    """Return the remembered value of *quantity* for a model, computing and storing it once.

    Parameters
    ----------
    quantity : str
        The quantity's name (its first key field).
    model_or_key : UrnModel or Key
        The problem the value belongs to.
    compute : callable
        A function of no arguments returning the exact value (``int``,
        ``Fraction``, or lists/dicts of them).
    version : int, optional
        The algorithm version; default ``ALGORITHM_VERSIONS[quantity]``.  A
        different version is a different key.
    params : str
        Canonical text of any further parameters (part of the key).
    method : str, optional
        Recorded beside the value (default: *compute*'s qualified name).
    store : Store or location, optional
        The store to use; default :func:`current_store`.

    Returns
    -------
    The stored or freshly computed value.  With remembering off
    (:func:`bypass`, ``ENUMERATOR_NO_CACHE=1``) this is ``compute()``.

    Notes
    -----
    Cost: one indexed lookup by the key's SHA-256 digest; on a miss, the
    computation plus one short write transaction.  A hit in an SQLite file
    whose store is not open yet is read with :mod:`sqlite3` alone
    (:mod:`enumerator.store.quick`); the store is opened (SQLAlchemy
    imported) only on a miss or when that read cannot answer.
    """
    if store is not None:
        location = store
    else:
        choice = _active.get()
        if choice is None:
            if _env_no_cache():
                return compute()
            location = None
        elif not choice.enabled:
            return compute()
        else:
            location = choice.location
    if version is None:
        version = ALGORITHM_VERSIONS.get(quantity)
        if version is None:
            open_store(location)  # a store that cannot be opened says so first, as it always did
            raise ValueError(
                f"quantity {quantity!r} has no algorithm version; pass version= or call register_quantity"
            )
    key = model_or_key if isinstance(model_or_key, Key) else Key.of(model_or_key)
    value = _quick_get(location, quantity, key, version, params)
    if value is not _MISSING:
        return value
    target = open_store(location)
    value = target.get(quantity, key, version, params, _MISSING)
    if value is _MISSING:
        t0 = time.perf_counter_ns()
        value = compute()
        elapsed = time.perf_counter_ns() - t0
        if method is None:
            inner = getattr(compute, "func", compute)
            method = getattr(inner, "__module__", "") + "." + getattr(inner, "__qualname__", repr(inner))
        target.put(quantity, key, version, value, params=params, method=method, elapsed_ns=elapsed)
    return value
