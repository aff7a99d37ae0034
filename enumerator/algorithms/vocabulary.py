r"""The one registry of statistics of an occupancy vector.

Each statistic is one :class:`Entry` of :data:`REGISTRY`, carrying everything
the library does with it: how it is named and parsed, its value on one
configuration, its value on a numpy block of configurations (one per row),
its exact route (counts in equally likely outcomes, from
:mod:`enumerator.algorithms.laws`), how the event language spells it and
reduces it to canonical atoms, and, for counting statistics, which urns a
generating function marks.  The three front ends read the registry:

* :func:`~enumerator.algorithms.statistics.distribution` (``dist``) parses
  names with :func:`parse_statistic` and follows the entry's route;
* the event language (:mod:`enumerator.algorithms.events`) reads the event
  spellings (``max``, ``k1``, ``count(== 2)``) and evaluates with the
  entry's values;
* :func:`~enumerator.algorithms.generating.bivariate_generating_function`
  (``gf --mark``) marks the urns an entry's marking window names.

Adding a statistic is adding an entry.

=================  ==========================================================
``empty``          the number of urns holding no ball
``occupied``       the number of urns holding at least one ball
``max``, ``min``   the largest and the smallest occupancy
``urn:I``          the occupancy ``k_I`` of urn ``I`` (1-based; ``kI`` in
                   events)
``exactly:J``      the number of urns holding exactly ``J`` balls
``atleast:J``      the number of urns holding at least ``J`` balls
``profile``        the occupancy profile: the entries sorted in decreasing
                   order (an integer partition of ``n`` with ``r`` parts,
                   zeros included)
``count(OP J)``    (events only) the number of urns whose occupancy ``k``
                   satisfies ``k OP J``
=================  ==========================================================
"""

from __future__ import annotations

import operator
import re
from dataclasses import dataclass
from typing import Any, Callable, Dict, Optional, Sequence, Tuple, Union

from ..core.errors import InvalidParameters
from ..core.groups import MAX_DIGITS
from ..core.model import UrnModel
from .laws import marked_counts, max_counts, min_counts, profile_counts, urn_counts

__all__ = [
    "OPS",
    "REGISTRY",
    "STATISTICS",
    "Entry",
    "Statistic",
    "names_help",
    "parse_statistic",
]

#: The comparison operators of the event language and of ``count(OP J)``.
OPS = {
    "==": operator.eq,
    "!=": operator.ne,
    "<": operator.lt,
    "<=": operator.le,
    ">": operator.gt,
    ">=": operator.ge,
}

Value = Union[int, Tuple[int, ...]]


@dataclass(frozen=True)
class Entry:
    """One statistic and everything the library does with it.

    Attributes
    ----------
    kind : str
        The statistic's name (``"urn"``).
    letter : str or None
        The letter of its number in names (``"I"`` in ``urn:I``), or None
        when it takes none.
    least : int
        The smallest number it accepts (urns are numbered from 1).
    value : callable
        ``value(config, parameter)``: the statistic of one occupancy vector.
    block : callable
        ``block(array, parameter)``: the statistic of every row of an
        integer numpy array of occupancy vectors.
    counts : callable
        ``counts(model, parameter, total, limit)``: its exact route, the
        number of equally likely outcomes giving each value.
    numeric : bool
        False when the values are tuples (no mean or variance).
    named : bool
        Whether ``dist`` accepts it by name (:func:`parse_statistic`).
    marking : callable or None
        ``marking(parameter)``: ``("exactly", J)`` or ``("atleast", J)``, the
        urns a generating function marks for it and the event planner bounds;
        None if it counts no urns.
    canonical : callable or None
        ``canonical(parameter, r)``: the event planner's form, ``(statistic,
        sign)`` with the value ``= statistic`` (sign 1) or ``= r - statistic``
        (sign -1), or ``(constant, 0)``; None if events cannot use it.
    event : str or None
        Its event spelling: a word, the prefix of an urn index (``"k"``), or
        the function name of a condition (``"count"``).
    event_form : {"word", "index", "condition"}
        How the event parser reads it.
    event_help, help : str
        How the event language's and ``dist``'s error messages list it.
    event_rank : int
        Its place in the event language's list of statistics.
    indexes_urns : bool
        Whether its number is an urn (checked against ``r``); the event
        planner turns a comparison on it into bounds of that urn.
    extreme : {"max", "min"} or None
        For the largest (smallest) occupancy: ``max <= m`` is every urn at
        most ``m`` (``min >= m`` every urn at least ``m``), so the event
        planner counts it by tightening every urn's bounds.
    """

    kind: str
    letter: Optional[str]
    least: int
    value: Callable[[Sequence[int], Any], Value]
    block: Callable[[Any, Any], Any]
    counts: Callable[[UrnModel, Any, int, int], Dict]
    numeric: bool = True
    named: bool = True
    marking: Optional[Callable[[Any], Tuple[str, int]]] = None
    canonical: Optional[Callable[[Any, int], Tuple[Any, int]]] = None
    event: Optional[str] = None
    event_form: str = "word"
    event_help: str = ""
    event_rank: int = 0
    help: str = ""
    indexes_urns: bool = False
    extreme: Optional[str] = None

    @property
    def label(self) -> str:
        """The name with its letter, as listed in :data:`STATISTICS` (``"urn:I"``)."""
        return self.kind if self.letter is None else f"{self.kind}:{self.letter}"


@dataclass(frozen=True)
class Statistic:
    """A statistic of an occupancy vector: a registry *kind* and, for some kinds, a number.

    ``Statistic("urn", 2)`` is the occupancy of urn 2 (1-based),
    ``Statistic("exactly", 0)`` the number of empty urns,
    ``Statistic("count", ("<=", 1))`` the event language's ``count(<= 1)``;
    see :data:`REGISTRY`.

    Examples
    --------
    >>> Statistic("urn", 2).value((3, 0, 1))
    0
    >>> Statistic("urn", 2).event_text
    'k2'
    """

    kind: str
    parameter: Optional[Any] = None

    @property
    def entry(self) -> Entry:
        """The statistic's :class:`Entry` in :data:`REGISTRY`."""
        return REGISTRY[self.kind]

    @property
    def name(self) -> str:
        """The statistic written as :func:`parse_statistic` reads it (``"urn:2"``)."""
        if self.kind == "count":
            return self.event_text
        return self.kind if self.parameter is None else f"{self.kind}:{self.parameter}"

    @property
    def event_text(self) -> str:
        """The statistic as the event language writes it (``"k2"``, ``"count(== 1)"``)."""
        form = self.entry.event_form
        if form == "index":
            return f"{self.entry.event}{self.parameter}"
        if form == "condition":
            op, value = self.parameter
            return f"{self.entry.event}({op} {value})"
        return self.entry.event or self.name

    @property
    def numeric(self) -> bool:
        """True unless the values are profiles (tuples)."""
        return self.entry.numeric

    def value(self, config: Sequence[int]) -> Value:
        """The statistic of one occupancy vector (no bounds are checked)."""
        return self.entry.value(config, self.parameter)

    def block_value(self, block):
        """The statistic of every row of an integer numpy array (one value per row)."""
        return self.entry.block(block, self.parameter)

    def counts(self, model: UrnModel, total: int, limit: int) -> Dict:
        """``{value: outcomes}`` under *model* by the entry's exact route."""
        return self.entry.counts(model, self.parameter, total, limit)

    def canonical(self, r: int):
        """The event planner's form: ``(statistic, sign)`` or ``(constant, 0)``."""
        return self.entry.canonical(self.parameter, r)


# ---------------------------------------------------------------------------
# values, routes and canonical forms of the entries
# ---------------------------------------------------------------------------

def _profile_block(block, _):
    import numpy as np

    return -np.sort(-block, axis=1)


def _flipped(counts: Dict, r: int) -> Dict:
    return {r - v: c for v, c in counts.items()}


def _count_canonical(parameter, r: int):
    """``count(op j)`` as ``exactly:J`` / ``atleast:J`` (or its complement in ``r``), or a constant."""
    op, j = parameter
    if op == "==":
        if j < 0:
            return 0, 0
        return (Statistic("atleast", 1), -1) if j == 0 else (Statistic("exactly", j), 1)
    if op == "!=":
        if j < 0:
            return r, 0
        return (Statistic("atleast", 1), 1) if j == 0 else (Statistic("exactly", j), -1)
    if op in (">=", ">"):
        j = j if op == ">=" else j + 1
        return (r, 0) if j <= 0 else (Statistic("atleast", j), 1)
    j = j if op == "<" else j + 1  # count(< j) = r - count(>= j)
    return (0, 0) if j <= 0 else (Statistic("atleast", j), -1)


def _count_counts(model: UrnModel, parameter, total: int, limit: int) -> Dict:
    stat, sign = _count_canonical(parameter, model.urns)
    if sign == 0:
        return {stat: total}
    counts = stat.counts(model, total, limit)
    return counts if sign > 0 else _flipped(counts, model.urns)


def _itself(kind: str):
    return lambda parameter, r: (Statistic(kind, parameter), 1)


_ENTRIES = (
    Entry(
        "empty", None, 0,
        value=lambda k, _: sum(1 for v in k if v == 0),
        block=lambda b, _: (b == 0).sum(axis=1),
        counts=lambda model, _, total, limit: marked_counts(model, 0, 0, limit),
        marking=lambda _: ("exactly", 0),
        canonical=lambda _, r: (Statistic("atleast", 1), -1),
        event="empty", event_rank=2, event_help="empty", help="empty",
    ),
    Entry(
        "occupied", None, 0,
        value=lambda k, _: sum(1 for v in k if v > 0),
        block=lambda b, _: (b > 0).sum(axis=1),
        # the complement of the empty urns: the same binomial moments
        counts=lambda model, _, total, limit: _flipped(marked_counts(model, 0, 0, limit), model.urns),
        marking=lambda _: ("atleast", 1),
        canonical=lambda _, r: (Statistic("atleast", 1), 1),
        event="occupied", event_rank=3, event_help="occupied", help="occupied",
    ),
    Entry(
        "max", None, 0,
        value=lambda k, _: max(k),
        block=lambda b, _: b.max(axis=1),
        counts=lambda model, _, total, limit: max_counts(model, total),
        canonical=_itself("max"),
        extreme="max",
        event="max", event_rank=0, event_help="max", help="max",
    ),
    Entry(
        "min", None, 0,
        value=lambda k, _: min(k),
        block=lambda b, _: b.min(axis=1),
        counts=lambda model, _, total, limit: min_counts(model, total),
        canonical=_itself("min"),
        extreme="min",
        event="min", event_rank=1, event_help="min", help="min",
    ),
    Entry(
        "urn", "I", 1,
        value=lambda k, i: k[i - 1],
        block=lambda b, i: b[:, i - 1],
        counts=lambda model, i, total, limit: urn_counts(model, i - 1),
        canonical=_itself("urn"),
        event="k", event_form="index", event_rank=4, event_help="k1 ... kr (urn occupancies)",
        help="urn:I (I = 1..r)", indexes_urns=True,
    ),
    Entry(
        "exactly", "J", 0,
        value=lambda k, j: sum(1 for v in k if v == j),
        block=lambda b, j: (b == j).sum(axis=1),
        counts=lambda model, j, total, limit: marked_counts(model, j, j, limit),
        marking=lambda j: ("exactly", j),
        canonical=_itself("exactly"),
        help="exactly:J",
    ),
    Entry(
        "atleast", "J", 0,
        value=lambda k, j: sum(1 for v in k if v >= j),
        block=lambda b, j: (b >= j).sum(axis=1),
        counts=lambda model, j, total, limit: marked_counts(model, j, None, limit),
        marking=lambda j: ("atleast", j),
        canonical=_itself("atleast"),
        help="atleast:J",
    ),
    Entry(
        "profile", None, 0,
        value=lambda k, _: tuple(sorted(k, reverse=True)),
        block=_profile_block,
        counts=lambda model, _, total, limit: profile_counts(model, limit),
        numeric=False,
        help="profile",
    ),
    Entry(
        "count", None, 0,
        value=lambda k, p: sum(1 for v in k if OPS[p[0]](v, p[1])),
        block=lambda b, p: OPS[p[0]](b, p[1]).sum(axis=1),
        counts=_count_counts,
        named=False,
        canonical=_count_canonical,
        event="count", event_form="condition", event_rank=5, event_help="count(OP J)",
    ),
)

#: Every statistic, by kind, in the order ``dist`` lists them.
REGISTRY: Dict[str, Entry] = {entry.kind: entry for entry in _ENTRIES}

#: The statistic names :func:`parse_statistic` accepts (``I``, ``J``: whole numbers).
STATISTICS = tuple(entry.label for entry in _ENTRIES if entry.named)


def names_help(entries) -> str:
    """``"a, b, c or d"``: the help texts of *entries* as one list."""
    texts = list(entries)
    return texts[0] if len(texts) == 1 else ", ".join(texts[:-1]) + " or " + texts[-1]


_NAMES_HELP = names_help(entry.help for entry in _ENTRIES if entry.named)


def parse_statistic(text: Union[str, Statistic]) -> Statistic:
    """Read a statistic name: ``empty``, ``occupied``, ``max``, ``min``, ``urn:I``,
    ``exactly:J``, ``atleast:J`` or ``profile`` (any case, spaces ignored).

    Parameters
    ----------
    text : str or Statistic
        The name (a :class:`Statistic` is returned as it is).

    Returns
    -------
    Statistic
        The registry kind and its number.

    Raises
    ------
    InvalidParameters
        naming the choices, for an unknown name or a missing, malformed or
        out-of-range number.

    Notes
    -----
    One look-up in :data:`REGISTRY` and a regular expression on the number,
    ``O(len(text))``.

    Examples
    --------
    >>> parse_statistic("urn:2")
    Statistic(kind='urn', parameter=2)
    >>> parse_statistic("exactly:0").name
    'exactly:0'
    """
    if isinstance(text, Statistic):
        return text
    if not isinstance(text, str):
        raise InvalidParameters(f"a statistic is a name such as 'max' or 'urn:1' (got {text!r}); choose {_NAMES_HELP}")
    clean = "".join(text.split()).lower()
    kind, sep, arg = clean.partition(":")
    entry = REGISTRY.get(kind)
    if entry is None or not entry.named:
        raise InvalidParameters(f"unknown statistic {text!r}; choose {_NAMES_HELP}")
    if entry.letter is None:
        if sep:
            raise InvalidParameters(f"statistic {kind!r} takes no number (got {text!r}); write just {kind!r}")
        return Statistic(kind)
    example = f"{kind}:{entry.least or 2}"
    if not sep or not arg:
        raise InvalidParameters(
            f"statistic {kind!r} needs a number after a colon, {kind}:{entry.letter} (for example {example!r})"
        )
    if len(arg) > MAX_DIGITS:
        raise InvalidParameters(
            f"the number in statistic {kind!r} has {len(arg):,} digits; numbers are limited to {MAX_DIGITS:,} digits"
        )
    if not re.fullmatch(r"\d+", arg):
        raise InvalidParameters(
            f"the number in statistic {text!r} must be a whole number >= {entry.least} "
            f"(for example {example!r})"
        )
    number = int(arg)
    if number < entry.least:
        raise InvalidParameters(f"urns are numbered from 1 (got {text!r}); write urn:1 for the first urn")
    return Statistic(kind, number)
