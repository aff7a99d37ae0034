"""Bounded per-model working memory for the algorithms.

Several algorithms keep working data per problem between calls: listing keeps
its suffix-count tables so that ``rank``/``unrank`` and listing ranges start at
once, counting keeps ``n!`` and its intermediate series, sampling keeps its
threshold tables.  Each such module owns one :class:`ModelMemo`; the problem
description itself stays a plain immutable value.

What is kept, and for how long
    For each of the ``maxsize`` most recently used models (compared by value:
    two equal models share their working data, which depends on the value
    only), one ``dict`` that the owning module fills under its own keys.  The
    least recently used model's data is dropped first.  :meth:`ModelMemo.clear`
    frees everything at once.

Thread safety
    Looking up or creating a model's dict is guarded by a lock; the dict
    itself is filled by idempotent computations (two threads racing compute the
    same value, and either may win).
"""

from __future__ import annotations

import threading
from collections import OrderedDict
from typing import Any, Dict, Hashable, List

__all__ = ["ModelMemo", "clear_all"]

_ALL: List["ModelMemo"] = []


class ModelMemo:
    """A least-recently-used table from a model to the working data a module keeps for it.

    Parameters
    ----------
    owner : str
        The owning module's name (shown in ``repr``).
    maxsize : int, optional
        How many models keep their data (default 32).

    Examples
    --------
    >>> memo = ModelMemo("example", maxsize=2)
    >>> slots = memo.slots(("a model", 1))
    >>> slots["twice"] = 2
    >>> memo.slots(("a model", 1))["twice"]
    2
    >>> _ = memo.slots("b"), memo.slots("c")   # the first model is now the least recent
    >>> memo.slots(("a model", 1))
    {}
    """

    __slots__ = ("owner", "maxsize", "_tables", "_lock", "__weakref__")

    def __init__(self, owner: str, maxsize: int = 32):
        self.owner = owner
        self.maxsize = maxsize
        self._tables: "OrderedDict[Hashable, Dict[Any, Any]]" = OrderedDict()
        self._lock = threading.Lock()
        _ALL.append(self)

    def slots(self, model: Hashable) -> Dict[Any, Any]:
        """Return the working-data dict of *model*, creating an empty one if needed.

        Cost: one hash lookup (models cache their hash).
        """
        with self._lock:
            table = self._tables.get(model)
            if table is None:
                table = self._tables[model] = {}
                if len(self._tables) > self.maxsize:
                    self._tables.popitem(last=False)
            else:
                self._tables.move_to_end(model)
            return table

    def clear(self) -> None:
        """Forget every model's working data."""
        with self._lock:
            self._tables.clear()

    def __len__(self) -> int:
        return len(self._tables)

    def __repr__(self) -> str:
        return f"ModelMemo({self.owner!r}, {len(self._tables)}/{self.maxsize} models)"


def clear_all() -> None:
    """Free the working data of every module's memo."""
    for memo in _ALL:
        memo.clear()
