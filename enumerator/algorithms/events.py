r"""Plan and count events about an occupancy vector, exactly.

Events are read by :mod:`enumerator.algorithms.event_language` (``max <= 1``,
``k1 >= 2 and not count(== 1) > 2``); their statistics are entries of the
registry (:mod:`enumerator.algorithms.vocabulary`).

Planning (:func:`event_count`): the event is put in negation normal form
over canonical atoms (each registry entry says how its statistic reduces:
``empty``, ``occupied`` and ``count(...)`` become comparisons of "urns
holding exactly ``J``" or "urns holding at least ``J``"), then counted
exactly:

* a conjunction of per-urn constraints (``k_i`` compared with a number,
  ``max <= m``, ``min >= m``, "every urn holds at least ``J``", ...) tightens
  the bounds of the urn groups (one urn is split off its group): one
  bounded count (:func:`~enumerator.algorithms.laws.outcome_total`, by groups);
  a negated constraint ``C`` is removed by ``N(A and not C) = N(A) - N(A and C)``;
* whatever remains, if it is about one statistic only, is read off that
  statistic's exact distribution under the tightened bounds (``max`` and
  ``min`` by differences of bounded counts over the intervals where the
  condition holds);
* ``or`` is expanded by inclusion–exclusion while that stays small;
* anything else — several counting statistics at once, say — is decided by
  listing every admissible configuration (:mod:`enumerator.algorithms.listing`),
  with a progress bar on stderr, and refused above *limit* configurations.

References: the negation normal form and inclusion–exclusion are textbook
(Feller, vol. 1, ch. IV, §1 for the occupancy case); the bounded-count
method is the one of :mod:`enumerator.algorithms.statistics`.
"""

from __future__ import annotations

import itertools
import sys
from dataclasses import dataclass
from fractions import Fraction
from typing import Dict, List, Optional, Tuple, Union

import gmpy2

from ..core import limits
from ..core.errors import InvalidParameters, TooLarge
from ..core.groups import UrnGroup, merge_groups
from ..core.limits import Cost
from ..core.model import UrnModel, as_count
from .counting import count_configurations, exact_fraction
from .event_language import (
    COMPLEMENT,
    MIRROR,
    And,
    Comparison,
    Event,
    Not,
    Or,
    Term,
    comparisons,
    evaluate,
    evaluate_event,
    parse_event,
)
from .grouped import integer_groups
from .laws import outcome_total
from .listing import iter_blocks
from .statistics import DEFAULT_LIMIT, statistic_counts
from .vocabulary import OPS, Statistic

__all__ = [
    "And",
    "Comparison",
    "DEFAULT_LIMIT",
    "Not",
    "Or",
    "Term",
    "evaluate_block",
    "evaluate_event",
    "event_needs_listing",
    "event_count",
    "event_probability",
    "parse_event",
]

mpz = gmpy2.mpz


# ---------------------------------------------------------------------------
# canonical atoms in negation normal form
# ---------------------------------------------------------------------------
# An atom is (key, op, value) with key a registry Statistic in canonical form:
# max, min, urn:I, exactly:J or atleast:J (each entry's ``canonical`` says how
# its statistic reduces to these); True/False are constants.

@dataclass(frozen=True)
class _Atom:
    key: Statistic
    op: str
    value: int


@dataclass(frozen=True)
class _All:
    items: Tuple


@dataclass(frozen=True)
class _Any:
    items: Tuple


def _normal_form(node, r: int, negate: bool = False):
    """Negation normal form over canonical atoms (``not`` pushed into the operators)."""
    kind = type(node)
    if kind is Not:
        return _normal_form(node.operand, r, not negate)
    if kind in (And, Or):
        parts = tuple(_normal_form(x, r, negate) for x in node.operands)
        conj = (kind is And) != negate
        return _All(parts) if conj else _Any(parts)
    op = COMPLEMENT[node.op] if negate else node.op
    key, sign = node.term.canonical(r)
    value = node.value
    if sign == 0:  # the term is a constant
        return OPS[op](key, value)
    if sign < 0:
        op, value = MIRROR[op], r - value
    return _Atom(key, op, value)


def _keys(node, into: set) -> set:
    if isinstance(node, _Atom):
        into.add(node.key)
    elif isinstance(node, (_All, _Any)):
        for x in node.items:
            _keys(x, into)
    return into


def _truth(node, key, value) -> bool:
    """The single-key expression *node* evaluated at ``key = value``."""
    if isinstance(node, bool):
        return node
    if isinstance(node, _Atom):
        return OPS[node.op](value, node.value)
    if isinstance(node, _All):
        return all(_truth(x, key, value) for x in node.items)
    return any(_truth(x, key, value) for x in node.items)


def _constants(node, into: set) -> set:
    if isinstance(node, _Atom):
        into.update((node.value - 1, node.value, node.value + 1))
    elif isinstance(node, (_All, _Any)):
        for x in node.items:
            _constants(x, into)
    return into


# ---------------------------------------------------------------------------
# bounds from atoms
# ---------------------------------------------------------------------------
# A "box" is {urn index or "all": (low, high)} (high None: no bound).

def _interval(op: str, value: int):
    """The values ``x`` with ``x op value`` as ``(low, high)``, or None if not an interval."""
    if op == "<=":
        return (None, value)
    if op == "<":
        return (None, value - 1)
    if op == ">=":
        return (value, None)
    if op == ">":
        return (value + 1, None)
    if op == "==":
        return (value, value)
    return None


def _window(entry, parameter):
    """The occupancies ``(low, high)`` a counting statistic counts (``high`` None: no end)."""
    how, J = entry.marking(parameter)
    return (J, J) if how == "exactly" else (J, None)


def _outside(window):
    """The occupancies outside *window* as one interval, or None when they are not one."""
    low, high = window
    if high is None:
        return (None, low - 1) if low > 0 else None
    return (high + 1, None) if low == 0 else None


def _classify(atom: _Atom, r: int):
    """``(positive boxes, negated boxes)`` equivalent to *atom*, or None.

    Read from the statistic's registry entry: an urn's occupancy (``k_i op
    v``) bounds urn ``i``; an extreme bounds every urn (``max <= m`` above,
    ``min >= m`` below); a counting statistic equal to ``r`` puts every urn
    in its marking window ("at least ``J`` in every urn") and equal to 0
    puts every urn outside it when the outside is an interval ("no urn with
    ``J`` or more").  A negated box ``C`` stands for ``not C``.
    """
    key, op, v = atom.key, atom.op, atom.value
    entry = key.entry
    if entry.indexes_urns:
        index = key.parameter - 1
        if op == "!=":
            return [], [{index: (v, v)}]
        return [{index: _interval(op, v)}], []
    if entry.extreme is not None:
        if op == "!=":
            return None
        low, high = _interval(op, v)
        if entry.extreme == "max":
            pos = [{"all": (None, high)}] if high is not None else []
            neg = [{"all": (None, low - 1)}] if low is not None else []
        else:
            pos = [{"all": (low, None)}] if low is not None else []
            neg = [{"all": (high + 1, None)}] if high is not None else []
        return pos, neg
    if entry.marking is None:
        return None
    window = _window(entry, key.parameter)
    if (op, v) in (("==", r), (">=", r), (">", r - 1)):
        return [{"all": window}], []
    if (op, v) in (("!=", r), ("<", r), ("<=", r - 1)):
        return [], [{"all": window}]
    outside = _outside(window)
    if outside is None:
        return None
    if (op, v) in (("==", 0), ("<=", 0), ("<", 1)):
        return [{"all": outside}], []
    if (op, v) in (("!=", 0), (">=", 1), (">", 0)):
        return [], [{"all": outside}]
    return None


def _tighten(group: UrnGroup, low, high) -> Optional[UrnGroup]:
    """*group* with its bounds intersected with ``[low, high]``, or None when empty."""
    a, b = group.lower, group.upper
    if low is not None and low > a:
        a = low
    if high is not None and (b is None or high < b):
        b = high
    if b is not None and a > b:
        return None
    return UrnGroup(group.count, a, b, group.weight)


def _isolate(groups: Tuple[UrnGroup, ...], index: int):
    """*groups* with urn *index* (0-based) in a group of its own: ``(groups, its position)``.

    Walks the groups (``O(G)``), never the urns.
    """
    start = 0
    for position, g in enumerate(groups):
        if index < start + g.count:
            before, after = index - start, start + g.count - index - 1
            parts = []
            if before:
                parts.append(UrnGroup(before, g.lower, g.upper, g.weight))
            parts.append(UrnGroup(1, g.lower, g.upper, g.weight))
            if after:
                parts.append(UrnGroup(after, g.lower, g.upper, g.weight))
            return groups[:position] + tuple(parts) + groups[position + 1:], position + (1 if before else 0)
        start += g.count
    raise IndexError(index)  # pragma: no cover - urn numbers are checked against r first


def _apply(bounds: Tuple[UrnGroup, ...], box: Dict):
    """The groups *bounds* tightened by *box*, or None when no vector can satisfy both.

    A box bounds every urn (``"all"``) or single urns by index; a single urn
    is split off its group, so the cost is ``O(G)`` whatever ``r`` is.  The
    result is merged (:func:`~enumerator.core.groups.merge_groups`), so equal
    urn sets have equal keys.
    """
    out = tuple(bounds)
    for where, (low, high) in box.items():
        if where == "all":
            tightened = [_tighten(g, low, high) for g in out]
            if any(g is None for g in tightened):
                return None
            out = tuple(tightened)
        else:
            out, position = _isolate(out, where)
            g = _tighten(out[position], low, high)
            if g is None:
                return None
            out = out[:position] + (g,) + out[position + 1:]
    return merge_groups(out)


# ---------------------------------------------------------------------------
# the planner
# ---------------------------------------------------------------------------

class _Enumerate(Exception):
    """No exact method fits; fall back to listing the configurations."""


#: Most sub-counts one planned event may spend (inclusion–exclusion terms,
#: negated bounds) before listing the configurations is preferred.
PLAN_STEP_LIMIT = 4096


class _Planner:
    def __init__(self, model: UrnModel, limit: int):
        self.model = model
        self.rule = model.rule
        self.n = model.balls
        self.r = model.urns
        self.limit = limit
        self.steps = 0
        self.memo: Dict = {}

    def tick(self, amount: int = 1) -> None:
        self.steps += amount
        if self.steps > PLAN_STEP_LIMIT:
            raise _Enumerate()

    def outcomes(self, bounds) -> int:
        key = ("outcomes", bounds)
        if key not in self.memo:
            self.memo[key] = outcome_total(self.model.with_groups(bounds))
        return self.memo[key]

    def count(self, bounds, node) -> int:
        """Outcomes of the model with *bounds* for which *node* holds."""
        self.tick()
        if isinstance(node, bool):
            return self.outcomes(bounds) if node else 0
        if isinstance(node, _Atom):
            return self.conjunction(bounds, [node])
        if isinstance(node, _All):
            return self.conjunction(bounds, list(node.items))
        if len(_keys(node, set())) == 1:
            return self.single(bounds, node)
        items = list(node.items)
        return self.inclusion_exclusion(bounds, items, [])

    def inclusion_exclusion(self, bounds, alternatives, rest) -> int:
        """``N(bounds, (A_1 or ... or A_k) and rest)`` by inclusion–exclusion."""
        k = len(alternatives)
        if (1 << k) - 1 > PLAN_STEP_LIMIT:
            raise _Enumerate()
        total = 0
        for size in range(1, k + 1):
            for chosen in itertools.combinations(alternatives, size):
                term = self.conjunction(bounds, list(chosen) + list(rest))
                total += term if size & 1 else -term
        return total

    def conjunction(self, bounds, items) -> int:
        flat: List = []
        stack = list(items)
        while stack:
            x = stack.pop()
            if isinstance(x, _All):
                stack.extend(x.items)
            elif x is True:
                continue
            elif x is False:
                return 0
            else:
                flat.append(x)
        negs: List[Dict] = []
        others: List = []
        for x in flat:
            parts = _classify(x, self.r) if isinstance(x, _Atom) else None
            if parts is None:
                others.append(x)
                continue
            pos, neg = parts
            for box in pos:
                bounds = _apply(bounds, box)
                if bounds is None:
                    return 0
            negs.extend(neg)
        return self.reduced(bounds, negs, others)

    def reduced(self, bounds, negs, others) -> int:
        """``N(bounds, not negs[0] and ... and others)``."""
        if negs:
            self.tick()
            box, rest = negs[0], negs[1:]
            whole = self.reduced(bounds, rest, others)
            inner = _apply(bounds, box)
            if inner is None:
                return whole
            return whole - self.reduced(inner, rest, others)
        if self.outcomes(bounds) == 0:
            return 0
        if not others:
            return self.outcomes(bounds)
        if len(_keys(_All(tuple(others)), set())) == 1:
            return self.single(bounds, _All(tuple(others)))
        for i, x in enumerate(others):
            if isinstance(x, _Any):
                return self.inclusion_exclusion(bounds, list(x.items), others[:i] + others[i + 1:])
        raise _Enumerate()

    def single(self, bounds, node) -> int:
        """*node* mentions one statistic only: read it off that statistic's law."""
        (key,) = _keys(node, set())
        if key.entry.extreme is not None:
            return self.extreme(bounds, node, key.entry.extreme)
        stat = key
        memo_key = ("law", bounds, stat)
        if memo_key not in self.memo:
            self.memo[memo_key] = statistic_counts(self.model.with_groups(bounds), stat, self.limit)[0]
        counts = self.memo[memo_key]
        return sum(c for v, c in counts.items() if _truth(node, key, v))

    def extreme(self, bounds, node, head: str) -> int:
        """Sum of bounded counts over the intervals of values where *node* holds."""
        n, r = self.n, self.r
        eff = self.model.with_groups(bounds).effective_groups()
        if head == "max":
            low = max(max(a for _, a, _, _ in eff), -(-n // r))
            high = min(n, max(b for _, _, b, _ in eff))
        else:
            low = min(a for _, a, _, _ in eff)
            high = min(min(b for _, _, b, _ in eff), n // r)
        if low > high:
            return 0
        cuts = sorted(c for c in _constants(node, set()) if low < c <= high)
        starts = [low] + cuts
        ends = [c - 1 for c in cuts] + [high]
        total = 0
        for start, end in zip(starts, ends):
            if start > end or not _truth(node, None, start):
                continue
            self.tick(2)
            if head == "max":
                inside, outside = _apply(bounds, {"all": (None, end)}), _apply(bounds, {"all": (None, start - 1)})
            else:
                inside, outside = _apply(bounds, {"all": (start, None)}), _apply(bounds, {"all": (end + 1, None)})
            total += (self.outcomes(inside) if inside is not None else 0) - (
                self.outcomes(outside) if outside is not None else 0)
        return total


# ---------------------------------------------------------------------------
# listing: the last resort
# ---------------------------------------------------------------------------

#: Rows per block when listing configurations.
_BLOCK = 1 << 16


def evaluate_block(node, block):
    """*node* (a parsed event) on every row of an integer numpy array of configurations.

    Parameters
    ----------
    node : event node
        A parsed event (:func:`~enumerator.algorithms.event_language.parse_event`):
        ``Not``/``And``/``Or`` of comparisons of a statistic with a number.
    block : numpy.ndarray
        Integer array, one configuration per row.

    Returns
    -------
    numpy.ndarray
        Booleans, one per row.

    Notes
    -----
    A recursive walk of the event tree; each comparison is one vectorised
    pass over the block (the statistic's ``block_value`` from the registry in
    :mod:`~enumerator.algorithms.vocabulary`, then a NumPy comparison), so the
    cost is linear in the block's size times the comparisons in the event.
    """
    import numpy as np

    kind = type(node)
    if kind is Not:
        return ~evaluate_block(node.operand, block)
    if kind is And:
        out = evaluate_block(node.operands[0], block)
        for x in node.operands[1:]:
            out = out & evaluate_block(x, block)
        return out
    if kind is Or:
        out = evaluate_block(node.operands[0], block)
        for x in node.operands[1:]:
            out = out | evaluate_block(x, block)
        return out
    values = node.term.block_value(block)
    return np.asarray(OPS[node.op](values, node.value))


def _progress(total: int, show: Optional[bool]):
    """A rich progress bar on stderr, or None (shown by default only on a terminal)."""
    if show is None:
        show = total >= 200_000 and sys.stderr.isatty()
    if not show:
        return None
    from rich.console import Console
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeRemainingColumn

    return Progress(
        TextColumn("listing configurations"),
        BarColumn(),
        MofNCompleteColumn(),
        TimeRemainingColumn(),
        console=Console(stderr=True),
        transient=True,
    )


def _enumerate(model: UrnModel, node, text: str, limit: int, show: Optional[bool]) -> int:
    """Outcomes satisfying *node*, by listing every admissible configuration."""
    import numpy as np

    total = count_configurations(model)
    if total > limit:
        raise TooLarge(
            f"the event {text!r} has no exact shortcut here (it mixes counting statistics), so it needs all "
            f"{total} configurations listed, above the limit {limit}; raise limit=",
            parameters=["limit"],
        )
    r = model.urns
    # each configuration is r numbers, tested and weighed once
    limits.check(Cost(seconds=total * r / limits.STEPS_PER_SECOND, memory=min(total, _BLOCK) * r * 8 * 4),
                 f"listing the {total} configurations of {r} urns for the event {text!r}",
                 advice="lower limit=, use fewer urns, or split the event into single statistics",
                 parameters=["limit"])
    rule = model.rule
    if model.weighted:
        return _enumerate_weighted(model, node, total, show)
    weighted = rule.distinguishable  # equal weights need only the number of hits
    fac_n = gmpy2.fac(model.balls)
    found = mpz(0)
    bar = _progress(total, show)
    task = bar.add_task("listing", total=total) if bar is not None else None
    if bar is not None:
        bar.start()
    try:
        for block in iter_blocks(model, _BLOCK):
            if block.dtype == object:
                rows = [tuple(int(v) for v in row) for row in block]
                hits = [k for k in rows if evaluate(node, k)]
                if weighted:
                    for k in hits:
                        found += rule.weight(k, fac_n)
                else:
                    found += len(hits)
            else:
                arr = block.astype(np.int64)
                mask = evaluate_block(node, arr)
                if weighted:
                    # the weight depends on the profile only: weigh each profile once
                    chosen = Statistic("profile").block_value(arr[mask])
                    if len(chosen):
                        profiles, times = np.unique(chosen, axis=0, return_counts=True)
                        for profile, count in zip(profiles.tolist(), times.tolist()):
                            found += rule.weight(profile, fac_n) * count
                else:
                    found += int(mask.sum())
            if bar is not None:
                bar.advance(task, len(block))
    finally:
        if bar is not None:
            bar.stop()
    return int(found)


def _enumerate_weighted(model: UrnModel, node, total: int, show: Optional[bool]) -> int:
    """Weight of the configurations satisfying *node*, weights scaled as :func:`~enumerator.algorithms.laws.outcome_total`."""
    groups, _ = integer_groups(model)
    powers = [w for c, _, _, w in groups for _ in range(c)]
    fac_n = gmpy2.fac(model.balls)
    found = mpz(0)
    bar = _progress(total, show)
    task = bar.add_task("listing", total=total) if bar is not None else None
    if bar is not None:
        bar.start()
    try:
        for block in iter_blocks(model, _BLOCK):
            for row in block:
                k = tuple(int(v) for v in row)
                if evaluate(node, k):
                    w = model.rule.weight(k, fac_n)
                    for p, v in zip(powers, k):
                        if v:
                            w *= mpz(p) ** v
                    found += w
            if bar is not None:
                bar.advance(task, len(block))
    finally:
        if bar is not None:
            bar.stop()
    return int(found)


# ---------------------------------------------------------------------------
# public entry points
# ---------------------------------------------------------------------------

def event_needs_listing(model: UrnModel, event, limit: int = DEFAULT_LIMIT) -> bool:
    """Whether the event planner would list the configurations to count *event* (no cluster helps otherwise).

    Parameters
    ----------
    model : UrnModel
    event : str or Event
    limit : int
        As for :func:`event_count`.

    Returns
    -------
    bool
        True when no exact shortcut applies and
        :func:`event_count` would list every
        configuration; False when the planner counts the event itself, and
        also for a malformed request (an urn beyond ``r``, a model without
        configurations), which the ordinary route then reports.

    Notes
    -----
    Runs the planner of this module (its bounded
    counts, inclusion–exclusion and single-statistic laws) without its
    listing fallback, so it costs what the planner costs, not a listing.
    """
    node = parse_event(event)
    r = model.urns
    if any(c.term.entry.indexes_urns and c.term.parameter > r for c in comparisons(node)):
        return False
    if outcome_total(model) == 0:
        return False
    try:
        _Planner(model, as_count(limit, "limit", 1)).count(model.groups, _normal_form(node, r))
    except _Enumerate:
        return True
    return False


def event_count(model: UrnModel, event: Union[str, Event], limit: int = DEFAULT_LIMIT,
                progress: Optional[bool] = None) -> Tuple[int, int]:
    """Return ``(count, total)``: the equally likely outcomes where *event* holds, and all of them.

    ``P(event) = count / total``; see the module docstring for the plan.
    *limit* caps the configurations listed when no exact shortcut applies
    (:class:`~enumerator.errors.TooLarge` above it); *progress* shows a
    progress bar on stderr while listing (default: only on a terminal).
    """
    text = event if isinstance(event, str) else str(event)
    node = parse_event(event)
    limit = as_count(limit, "limit", 1)
    r = model.urns
    for comparison in comparisons(node):
        term = comparison.term
        if term.entry.indexes_urns and term.parameter > r:
            raise InvalidParameters(
                f"the event names {term.event_text} (column {comparison.column}) but the model has {r} urns; "
                f"use {Statistic(term.kind, 1).event_text} to {Statistic(term.kind, r).event_text}"
            )
    total = outcome_total(model)
    if total == 0:
        raise InvalidParameters(
            f"the model of {model} admits no configuration, so the event has no probability; "
            "loosen the bounds or change the number of balls"
        )
    planner = _Planner(model, limit)
    try:
        count = planner.count(model.groups, _normal_form(node, r))
    except _Enumerate:
        count = _enumerate(model, node, text, limit, progress)
    return int(count), int(total)


def event_probability(model: UrnModel, event: Union[str, Event], limit: int = DEFAULT_LIMIT,
                      progress: Optional[bool] = None) -> Fraction:
    """Return the exact probability of *event* under *model*'s rule.

    Parameters
    ----------
    model : UrnModel
    event : str
        An event in the language of this module, e.g. ``"max <= 1"``.
    limit : int
        Most configurations listed when no exact shortcut applies
        (default :data:`~enumerator.statistics.DEFAULT_LIMIT`).
    progress : bool, optional
        Show a progress bar on stderr while listing (default: on a terminal).

    Raises
    ------
    InvalidParameters
        for a malformed event (the message gives the column) or an urn
        beyond ``r``.
    TooLarge
        when listing would exceed *limit* configurations.

    Examples
    --------
    Three tagged molecules on five catalyst sites, no two on one site:

    >>> event_probability(UrnModel(balls=3, urns=5, rule="MB"), "max <= 1")
    Fraction(12, 25)
    >>> event_probability(UrnModel(balls=3, urns=5, rule="BE"), "empty == 3 or k1 >= 2")
    Fraction(3, 5)
    """
    count, total = event_count(model, event, limit, progress)
    return exact_fraction(count, total)
