"""The immutable description of an occupancy problem.

An :class:`UrnModel` is ``n`` balls placed into ``r`` labelled urns, each urn
``i`` holding between ``a_i`` and ``b_i`` balls (``b_i = None``: no upper
bound), counted under one of three rules:

``MB`` (Maxwell–Boltzmann)
    distinguishable balls; the equally likely outcomes are the admissible
    assignments of balls to urns, so a configuration ``k`` has weight
    ``n! / (k_1! ... k_r!)``.
``BE`` (Bose–Einstein)
    indistinguishable balls; every admissible occupancy vector is equally
    likely (weight 1).  With a uniform capacity this is Gentile's
    intermediate statistics.
``FD`` (Fermi–Dirac)
    indistinguishable balls, at most one per urn; BE with capacity 1.

Conventions (Feller, *An Introduction to Probability Theory and Its
Applications*, vol. 1, ch. II.5): urns are labelled, a configuration is the
occupancy vector ``(k_1, ..., k_r)``, and a model whose bounds admit no vector
has 0 configurations — that is an answer, not an error.  Malformed input
(negative or non-integer numbers, ``a_i > b_i``, an FD capacity above 1)
raises :class:`~enumerator.errors.InvalidParameters`.
"""

from __future__ import annotations

import bisect
import operator
from collections.abc import Mapping
from fractions import Fraction
from typing import Iterable, Optional, Sequence, Tuple

from .errors import InvalidConfiguration, InvalidParameters, TooLarge
from .groups import UrnGroup, make_groups, merge_groups, parse_bounds_runs, parse_weight, parse_weight_runs
from .rules import Rule

__all__ = ["PER_URN_LIMIT", "Rule", "UrnGroup", "UrnModel", "as_count", "parse_bounds", "parse_canonical_bounds"]

#: Most urns a per-urn list (``bounds``, ``weights``) may expand to; beyond it
#: only the groups describe the urns, and per-urn work is refused.
PER_URN_LIMIT = 10_000_000
#: Most urns written one by one in ``repr``.
_REPR_URNS = 64

Bound = Tuple[int, Optional[int]]
_PLAIN_INT = frozenset({int})


def as_count(value, name: str, minimum: int = 0) -> int:
    """Return *value* as an exact ``int`` at least *minimum*, or raise.

    Accepts ``int`` and integer-like objects (``operator.index``); rejects
    ``bool``, floats and strings, because ``1e23`` is not an exact integer.
    """
    if isinstance(value, bool):
        raise InvalidParameters(f"{name} must be an integer, not a boolean (got {value!r})")
    try:
        number = operator.index(value)
    except TypeError:
        raise InvalidParameters(
            f"{name} must be a whole number (got {value!r} of type {type(value).__name__})"
        ) from None
    if number < minimum:
        raise InvalidParameters(f"{name} must be at least {minimum} (got {number})")
    return int(number)


def parse_bounds(text: str) -> Tuple[Bound, ...]:
    """Parse ``"a:b,a:b,..."`` (``a:`` for no upper bound, ``b`` alone for ``0:b``)."""
    if not isinstance(text, str) or not text.strip():
        raise InvalidParameters('bounds must look like "0:2,1:,0:3" (lower:upper per urn, "a:" for no upper bound)')
    bounds = []
    for position, item in enumerate(text.split(","), start=1):
        item = item.strip()
        lower, sep, upper = item.partition(":")
        try:
            if not sep:
                a, b = 0, int(lower)
            else:
                a = int(lower) if lower.strip() else 0
                b = int(upper) if upper.strip() else None
        except ValueError:
            raise InvalidParameters(
                f'bounds item {position} ({item!r}) must be "lower:upper" with whole numbers, '
                'or "lower:" for no upper bound'
            ) from None
        bounds.append((a, b))
    return tuple(bounds)


def parse_canonical_bounds(text: str) -> Tuple[Bound, ...]:
    """Read the per-urn bounds of a canonical text that :meth:`UrnModel.canonical_bounds` writes.

    Parameters
    ----------
    text : str
        ``"r*a:b"`` (``r`` urns sharing the bounds ``a:b``), the group form
        ``"c1xa:b,c2xa:b,..."``, or the older per-urn form ``"a:b,a:b,..."``;
        ``a:`` for no upper bound.  Weights (``@w``) are refused here: use
        :meth:`UrnModel.from_canonical`.

    Returns
    -------
    tuple of (int, int or None)
        One ``(lower, upper)`` pair per urn.

    Raises
    ------
    InvalidParameters
        when the text is not in a canonical form, or describes more than
        :data:`PER_URN_LIMIT` urns.

    Notes
    -----
    A single pass over the text, ``O(len(text))``, plus ``r`` tuple entries.

    Examples
    --------
    >>> parse_canonical_bounds("3*0:2")
    ((0, 2), (0, 2), (0, 2))
    >>> parse_canonical_bounds("0:1,2:")
    ((0, 1), (2, None))
    >>> parse_canonical_bounds("2x0:1,1x2:")
    ((0, 1), (0, 1), (2, None))
    """
    groups = _canonical_groups(text)
    if any(g.weight != 1 for g in groups):
        raise InvalidParameters(f"canonical bounds {text!r} carry weights; rebuild the model with from_canonical")
    return _expand(groups, lambda g: g.bound, sum(g.count for g in groups))


def _canonical_groups(text: str) -> Tuple[UrnGroup, ...]:
    """The groups of a canonical text (``"r*a:b[@w]"``, ``"cxa:b[@w],..."`` or ``"a:b,..."``)."""
    def one(item, count):
        body, at, weight = item.partition("@")
        a, colon, b = body.partition(":")
        if not colon:
            raise ValueError(item)
        return UrnGroup(int(count), int(a), int(b) if b else None, parse_weight(weight) if at else Fraction(1))

    try:
        if "*" in text:
            count, _, item = text.partition("*")
            return (one(item, count),)
        out = []
        for item in text.split(","):
            count, x, rest = item.partition("x")
            out.append(one(rest, count) if x else one(item, 1))
        return merge_groups(out)
    except (TypeError, ValueError, InvalidParameters):
        raise InvalidParameters(
            f'canonical bounds must look like "3*0:2", "2x0:1,1x2:" or "0:1,2:" (got {text!r})'
        ) from None


def _expand(groups, item, total: int) -> tuple:
    """One entry per urn (``item(group)`` repeated ``count`` times), refused past :data:`PER_URN_LIMIT`."""
    if total > PER_URN_LIMIT:
        raise TooLarge(
            f"the model has {total:,} urns; a list with one entry per urn is limited to "
            f"{PER_URN_LIMIT:,} entries; work with the model's groups instead",
            parameters=["urns"],
        )
    out = []
    for g in groups:
        out.extend([item(g)] * (g.count if isinstance(g, UrnGroup) else g[0]))
    return tuple(out)


class UrnModel:
    """``n`` balls in ``r`` labelled urns, described by groups of equal urns, under a counting rule.

    Parameters
    ----------
    balls : int
        ``n >= 0``.
    urns : int, optional
        ``r >= 1`` (any size: nothing is stored per urn); required unless
        *bounds*, *weights* or *groups* give the urns (then it must match).
    rule : {"MB", "BE", "FD"}
        The counting rule (default ``"MB"``).
    capacity : int, optional
        A uniform upper bound per urn; ``None`` means unbounded (FD: 1).
    minimum : int
        A uniform lower bound per urn (default 0).
    bounds : sequence of (a, b) pairs, or str, optional
        Per-urn bounds, ``b = None`` for no upper bound, or their text
        ``"a:b,a:,b"`` with run-length items ``COUNTxa:b`` (``"1000x0:3,2x1:"``).
        Excludes *capacity* and *minimum*.
    weights : sequence of positive rationals, or str, optional
        Per-urn weights (``int``, ``Fraction`` or their text), or the text
        ``"365x400,97,1/3"``; 1 by default.  MB: urn ``i`` receives a ball
        with probability ``w_i / sum w``; BE/FD: a configuration ``k`` has
        weight ``prod w_i^{k_i}``.
    groups : sequence of UrnGroup or (count, lower, upper[, weight]), optional
        The urns as groups; excludes every other urn description.

    Raises
    ------
    InvalidParameters
        For malformed numbers, inconsistent descriptions, ``lower > upper``,
        or an FD capacity above 1.

    Examples
    --------
    >>> UrnModel(balls=3, urns=2, rule="BE")
    UrnModel(balls=3, urns=2, rule='BE')
    >>> UrnModel(balls=3, urns=2, rule="FD").bounds
    ((0, 1), (0, 1))
    >>> UrnModel(balls=3, bounds=[(0, 1), (1, None)], rule="BE").effective_bounds()
    ((0, 1), (1, 3))
    >>> m = UrnModel(balls=10, bounds="4294967296x0:3", rule="MB")
    >>> m.urns, len(m.groups), m.canonical_bounds()
    (4294967296, 1, '4294967296*0:3')
    >>> UrnModel(balls=2, weights="2x1,3", rule="MB").canonical_bounds()
    '2x0:@1,1x0:@3'

    Notes
    -----
    The model keeps ``groups`` (merged runs of equal urns); its size and
    every derived description cost ``O(number of groups)``.  ``bounds`` and
    ``weights`` expand to one entry per urn on request and refuse beyond
    :data:`PER_URN_LIMIT` urns.
    """

    __slots__ = ("balls", "groups", "rule", "_hash", "_bounds")

    def __init__(
        self,
        balls,
        urns=None,
        rule: "Rule | str" = "MB",
        capacity=None,
        minimum=0,
        bounds: Optional[Iterable[Sequence]] = None,
        weights=None,
        groups=None,
    ):
        n = as_count(balls, "balls")
        rule_ = Rule.parse(rule)
        if groups is not None:
            if any(v is not None for v in (urns, capacity, bounds, weights)) or minimum not in (0, None):
                raise InvalidParameters("give the urns either as groups or by urns/bounds/weights, not both")
            normal = merge_groups(_as_group(g, i) for i, g in enumerate(groups, start=1))
            if not normal:
                raise InvalidParameters("groups must list at least one group of urns")
        else:
            weight_runs = None if weights is None else _weight_runs(weights)
            if bounds is not None:
                if capacity is not None or (minimum not in (0, None)):
                    raise InvalidParameters(
                        "give either per-urn bounds or a uniform capacity/minimum, not both; "
                        "drop bounds= or capacity=/minimum=",
                        parameters=["bounds", "capacity", "minimum"],
                    )
                bound_runs = _bound_runs(bounds)
                if not bound_runs:
                    raise InvalidParameters("bounds must list at least one urn (urns must be at least 1)")
                if urns is not None:
                    listed = sum(c for c, _ in bound_runs)
                    if as_count(urns, "urns", 1) != listed:
                        raise InvalidParameters(
                            f"urns is {urns} but bounds lists {listed} urns; give one bound per urn in bounds=, "
                            "or drop urns=",
                            parameters=["bounds", "urns"],
                        )
            else:
                if urns is None and weights is None:
                    raise InvalidParameters("urns is required: give urns= (or per-urn bounds=)",
                                            parameters=["urns", "bounds"])
                a = as_count(0 if minimum is None else minimum, "minimum")
                b = None if capacity is None else as_count(capacity, "capacity")
                if b is not None and b < a:
                    raise InvalidParameters(
                        f"minimum {a} is above capacity {b}; the minimum must be <= the capacity "
                        "(lower minimum= or raise capacity=)",
                        parameters=["minimum", "capacity"],
                    )
                r = as_count(urns, "urns", 1) if urns is not None else sum(c for c, _ in weight_runs)
                bound_runs = ((r, (a, b)),)
            total = None if urns is None else as_count(urns, "urns", 1)
            normal = make_groups(bound_runs, weight_runs, total)
        most = rule_.description.per_urn
        if most is not None:
            # the rule itself caps every urn (FD: one ball), so the cap is a bound
            capped = []
            first = 1
            for g in normal:
                if g.upper is not None and g.upper > most:
                    raise InvalidParameters(
                        f"{rule_.value} allows at most one ball per urn, but urn {first} has capacity {g.upper}; "
                        "use capacity= 1 (or leave it out), or rule= BE for a larger capacity",
                        parameters=["capacity", "rule"],
                    )
                if g.lower > most:
                    raise InvalidParameters(
                        f"{rule_.value} allows at most one ball per urn, but urn {first} has minimum {g.lower}"
                    )
                capped.append(UrnGroup(g.count, g.lower, most if g.upper is None else g.upper, g.weight))
                first += g.count
            normal = merge_groups(capped)
        object.__setattr__(self, "balls", n)
        object.__setattr__(self, "groups", tuple(normal))
        object.__setattr__(self, "rule", rule_)
        object.__setattr__(self, "_hash", hash((n, self.groups, rule_)))
        object.__setattr__(self, "_bounds", None)

    # -- immutability and identity -------------------------------------
    def __setattr__(self, name, value):
        raise AttributeError(f"{type(self).__name__} is immutable; build a new one (see with_balls)")

    def __eq__(self, other):
        if self is other:
            return True
        if not isinstance(other, UrnModel):
            return NotImplemented
        return (self.balls, self.groups, self.rule) == (other.balls, other.groups, other.rule)

    def __hash__(self):
        return self._hash

    def __repr__(self):
        name = type(self).__name__
        if self.is_uniform and not self.weighted:
            a, b = self.groups[0].bound
            extra = "" if a == 0 else f", minimum={a}"
            if b is not None and b != self.rule.description.per_urn:
                extra += f", capacity={b}"
            return f"{name}(balls={self.balls}, urns={self.urns}, rule={self.rule.value!r}{extra})"
        if not self.weighted and self.urns <= _REPR_URNS:
            return f"{name}(balls={self.balls}, bounds={list(self.bounds)!r}, rule={self.rule.value!r})"
        return f"{name}(balls={self.balls}, groups={list(map(tuple, self._group_tuples()))!r}, rule={self.rule.value!r})"

    def __str__(self):
        """The model in words, for messages: ``"3 balls in 2 urns (MB, at most 0 per urn)"``.

        Cost: constant for one group, linear in the groups otherwise (never in the urns).

        >>> str(UrnModel(balls=3, urns=2, rule="MB", capacity=0))
        '3 balls in 2 urns (MB, at most 0 per urn)'
        >>> str(UrnModel(balls=1, bounds=[(0, 1), (1, None)], rule="BE"))
        '1 ball in 2 urns (BE, 2 groups of urns)'
        """
        def count(n, noun):
            return f"{n:,} {noun}" + ("" if n == 1 else "s")

        words = [self.rule.value]
        if self.is_uniform:
            bounds = self.uniform_bounds_words()
            if bounds:
                words.append(bounds)
            if self.weighted:
                words.append("weighted urns")
        else:
            words.append(count(len(self.groups), "group") + " of urns")
        return f"{count(self.balls, 'ball')} in {count(self.urns, 'urn')} ({', '.join(words)})"

    def uniform_bounds_words(self) -> str:
        """The bound every urn shares, in words: ``"at least 1 and at most 3 per urn"``, or ``""``.

        The rule's own bound (FD: at most one) is not repeated.  Only for a
        uniform model (:attr:`is_uniform`); cost constant.

        >>> UrnModel(balls=3, urns=4, rule="BE", minimum=1, capacity=3).uniform_bounds_words()
        'at least 1 and at most 3 per urn'
        >>> UrnModel(balls=2, urns=4, rule="FD").uniform_bounds_words()
        ''
        """
        low, high = self.groups[0].bound
        limits = []
        if low:
            limits.append(f"at least {low}")
        if high is not None and high != self.rule.description.per_urn:
            limits.append(f"at most {high}")
        return " and ".join(limits) + " per urn" if limits else ""

    def _group_tuples(self):
        return [(g.count, g.lower, g.upper, g.weight) for g in self.groups]

    def __reduce__(self):
        return (_rebuild, (type(self), self.balls, self._group_tuples(), self.rule.value))

    # -- derived descriptions -------------------------------------------
    @property
    def urns(self) -> int:
        """The number of urns ``r`` (the sum of the groups' counts)."""
        return sum(g.count for g in self.groups)

    @property
    def is_uniform(self) -> bool:
        """True when every urn has the same bounds and weight (one group)."""
        return len(self.groups) == 1

    @property
    def weighted(self) -> bool:
        """True when some urn's weight is not 1."""
        return any(g.weight != 1 for g in self.groups)

    @property
    def bounds(self) -> Tuple[Bound, ...]:
        """One ``(lower, upper)`` pair per urn (refused past :data:`PER_URN_LIMIT` urns)."""
        cached = self._bounds
        if cached is None:
            cached = _expand(self.groups, lambda g: g.bound, self.urns)
            object.__setattr__(self, "_bounds", cached)
        return cached

    @property
    def weights(self) -> Tuple[Fraction, ...]:
        """One exact weight per urn (refused past :data:`PER_URN_LIMIT` urns)."""
        return _expand(self.groups, lambda g: g.weight, self.urns)

    @property
    def minimum(self) -> Optional[int]:
        """The uniform lower bound, or ``None`` when bounds differ per urn."""
        return self.groups[0].lower if self.is_uniform else None

    @property
    def capacity(self) -> Optional[int]:
        """The uniform upper bound (``None``: unbounded or per-urn bounds)."""
        return self.groups[0].upper if self.is_uniform else None

    def with_balls(self, balls) -> "UrnModel":
        """Return the same urns and rule with another number of balls."""
        return type(self)(balls=balls, groups=self.groups, rule=self.rule)

    def with_rule(self, rule) -> "UrnModel":
        """Return the same balls and urns under another rule."""
        return type(self)(balls=self.balls, groups=self.groups, rule=rule)

    def with_groups(self, groups) -> "UrnModel":
        """Return the same balls and rule with other urn groups."""
        return type(self)(balls=self.balls, groups=groups, rule=self.rule)

    @classmethod
    def from_canonical(cls, rule, balls, bounds: str) -> "UrnModel":
        """Rebuild a model from its rule, its balls and its :meth:`canonical_bounds` text.

        Parameters
        ----------
        rule : Rule or str
            The counting rule.
        balls : int
            ``n >= 0``.
        bounds : str
            The canonical text (``"r*a:b"``, ``"cxa:b@w,..."``, or the older
            per-urn ``"a:b,..."``).

        Returns
        -------
        UrnModel
            The model whose canonical key these are.

        Raises
        ------
        InvalidParameters
            for a malformed text or invalid parameters.

        Examples
        --------
        >>> model = UrnModel(balls=3, urns=4, rule="BE", capacity=2)
        >>> UrnModel.from_canonical("BE", 3, model.canonical_bounds()) == model
        True
        """
        return cls(balls=balls, groups=_canonical_groups(bounds), rule=rule)

    def canonical_bounds(self) -> str:
        """The urns in one canonical text: ``"r*a:b"`` for one group, else ``"cxa:b,..."``.

        A weight other than 1 is written ``@w`` after the bounds of its group
        (and every group of a weighted model carries one).  The text grows
        with the number of groups, never with the number of urns;
        :meth:`from_canonical` reads it back and the store keys its results
        by it.

        Examples
        --------
        >>> UrnModel(balls=1, bounds=[(0, 2), (0, 2), (1, None)]).canonical_bounds()
        '2x0:2,1x1:'
        """
        weighted = self.weighted

        def one(g):
            text = f"{g.lower}:" if g.upper is None else f"{g.lower}:{g.upper}"
            return f"{text}@{g.weight}" if weighted else text

        if self.is_uniform:
            return f"{self.urns}*{one(self.groups[0])}"
        return ",".join(f"{g.count}x{one(g)}" for g in self.groups)

    def effective_groups(self) -> Tuple[UrnGroup, ...]:
        """Groups with every upper bound made finite and tight.

        An urn of group ``g`` can hold at most ``n - (sum of all lower bounds
        - a_g)`` balls, which replaces a missing or larger upper bound.  The
        admissible set is unchanged; an upper bound below the lower one means
        no vector fits (such groups are kept, with ``upper = lower - 1``
        clipped at 0 only in the sense that nothing fits).

        Cost: ``O(number of groups)``.
        """
        total_lower = sum(g.count * g.lower for g in self.groups)
        out = []
        for g in self.groups:
            room = self.balls - (total_lower - g.lower)
            top = room if g.upper is None else min(g.upper, room)
            out.append((g.count, g.lower, top, g.weight))
        return tuple(out)

    def effective_bounds(self) -> Tuple[Tuple[int, int], ...]:
        """Per-urn bounds with every upper bound made finite and tight (see :meth:`effective_groups`)."""
        return _expand(self.effective_groups(), lambda g: (g[1], g[2]), self.urns)

    # -- configurations ----------------------------------------------------
    def check_configuration(self, config) -> Tuple[int, ...]:
        """Return *config* as a tuple of ints, or raise InvalidConfiguration.

        The vector must have one entry per urn, no negative entry and sum
        ``n``.  Bounds are *not* checked here: a vector that breaks a bound is
        well formed and simply has probability 0.
        """
        if isinstance(config, str):
            raise InvalidConfiguration(
                f"a configuration is a sequence of {self.urns} whole numbers, not the string {config!r}"
            )
        try:
            kinds = set(map(type, config))
            if kinds <= _PLAIN_INT:
                values = tuple(config)
            else:
                values = tuple(map(operator.index, config))
        except TypeError:
            raise InvalidConfiguration(
                f"a configuration must be a sequence of {self.urns} whole numbers (got {config!r})"
            ) from None
        if bool in kinds:
            raise InvalidConfiguration("configuration entries must be whole numbers, not booleans")
        if len(values) != self.urns:
            raise InvalidConfiguration(
                f"configuration has {len(values)} entries but the model has {self.urns} urn{'s' * (self.urns != 1)}; "
                "give one occupancy per urn"
            )
        if values and min(values) < 0:
            i = next(i for i, v in enumerate(values, start=1) if v < 0)
            raise InvalidConfiguration(
                f"configuration entry {i} is {values[i - 1]}; occupancies cannot be negative"
            )
        total = sum(values)
        if total != self.balls:
            raise InvalidConfiguration(
                f"configuration sums to {total} but the model has {self.balls} ball{'s' * (self.balls != 1)}; "
                "the occupancies must add up to the number of balls"
            )
        return values

    def admits(self, config) -> bool:
        """True when the (well-formed) configuration respects every bound (a vector or ``{urn: count}``)."""
        return self.groups_admit(self.configuration_groups(config))

    def configuration_groups(self, config) -> Tuple[Tuple[Tuple[int, ...], int], ...]:
        """A configuration seen group by group: per group, ``(listed occupancies, unlisted urns)``.

        Parameters
        ----------
        config : sequence of int or mapping of int to int
            One occupancy per urn (checked by :meth:`check_configuration`),
            or a sparse vector ``{urn: count}`` with urns numbered from 1 as
            in sparse listings; the urns it leaves out hold 0.

        Returns
        -------
        tuple
            For each group in order, the occupancies given for its urns and
            the number of its urns given none (0 for a full vector).

        Raises
        ------
        InvalidConfiguration
            An urn outside ``1..r``, a negative or non-whole occupancy, or a
            sum other than ``n``.

        Notes
        -----
        Cost: linear in a full vector; ``O(m log g)`` for ``m`` sparse
        entries and ``g`` groups (a bisection over the group starts), never in
        the number of urns, so a vector over ``2^64`` urns is cheap.

        Examples
        --------
        >>> UrnModel(balls=3, urns=2**64, rule="MB").configuration_groups({5: 2, 2**64: 1})
        (((2, 1), 18446744073709551614),)
        """
        if not isinstance(config, Mapping):
            values = self.check_configuration(config)
            out, start = [], 0
            for g in self.groups:
                out.append((values[start:start + g.count], 0))
                start += g.count
            return tuple(out)
        starts, total = [], 0
        for g in self.groups:
            starts.append(total + 1)
            total += g.count
        listed = [[] for _ in self.groups]
        balls = 0
        for urn, count in config.items():
            try:
                urn, count = operator.index(urn), operator.index(count)
            except TypeError:
                raise InvalidConfiguration(
                    f"a sparse configuration maps urn numbers to whole occupancies (got {urn!r}: {count!r})"
                ) from None
            if not 1 <= urn <= total:
                raise InvalidConfiguration(f"urn {urn} is outside 1..{total}; number the urns from 1")
            if count < 0:
                raise InvalidConfiguration(f"urn {urn} holds {count}; occupancies cannot be negative")
            listed[bisect.bisect_right(starts, urn) - 1].append(count)
            balls += count
        if balls != self.balls:
            raise InvalidConfiguration(
                f"configuration sums to {balls} but the model has {self.balls} ball{'s' * (self.balls != 1)}; "
                "the occupancies must add up to the number of balls"
            )
        return tuple((tuple(counts), g.count - len(counts)) for counts, g in zip(listed, self.groups))

    def groups_admit(self, view) -> bool:
        """True when a :meth:`configuration_groups` view respects every bound (unlisted urns hold 0)."""
        for g, (counts, zeros) in zip(self.groups, view):
            if zeros and g.lower > 0:
                return False
            if counts and (min(counts) < g.lower or (g.upper is not None and max(counts) > g.upper)):
                return False
        return True



def _as_group(item, position: int) -> UrnGroup:
    """A group from an :class:`UrnGroup` or a tuple ``(count, lower, upper[, weight])``."""
    if isinstance(item, UrnGroup):
        return item
    try:
        count, lower, upper, *rest = item
    except (TypeError, ValueError):
        raise InvalidParameters(
            f"group {position} must be an UrnGroup or (count, lower, upper[, weight]) (got {item!r})"
        ) from None
    weight = rest[0] if rest else 1
    if isinstance(weight, str):
        weight = parse_weight(weight, f"the weight of group {position}")
    return UrnGroup(as_count(count, f"the count of group {position}", 1),
                    as_count(lower, f"the lower bound of group {position}"),
                    None if upper is None else as_count(upper, f"the upper bound of group {position}"),
                    weight)


def _bound_runs(bounds) -> Tuple[Tuple[int, Bound], ...]:
    """Runs ``(count, (a, b))`` from per-urn pairs or from text (run-length items allowed)."""
    if isinstance(bounds, str):
        if "x" in bounds:
            runs = parse_bounds_runs(bounds)
        else:
            runs = tuple((1, pair) for pair in parse_bounds(bounds))
        pairs = runs
    else:
        pairs = tuple((1, pair) for pair in bounds)
    out = []
    first = 1
    for count, pair in pairs:
        i = first
        try:
            a, b = pair
        except (TypeError, ValueError):
            raise InvalidParameters(
                f"bound of urn {i} must be a pair (lower, upper) with upper None for no bound (got {pair!r})"
            ) from None
        a = as_count(a, f"lower bound of urn {i}")
        if b is not None:
            b = as_count(b, f"upper bound of urn {i}")
            if b < a:
                raise InvalidParameters(
                    f"urn {i} has lower bound {a} above its upper bound {b}; lower must be <= upper"
                )
        out.append((count, (a, b)))
        first += count
    return tuple(out)


def _weight_runs(weights) -> Tuple[Tuple[int, Fraction], ...]:
    """Runs ``(count, weight)`` from per-urn values or from text (run-length items allowed)."""
    if isinstance(weights, str):
        return parse_weight_runs(weights)
    out = []
    for i, w in enumerate(weights, start=1):
        if isinstance(w, str):
            w = parse_weight(w, f"the weight of urn {i}")
        elif isinstance(w, bool) or not isinstance(w, (int, Fraction)):
            raise InvalidParameters(f"the weight of urn {i} must be an int or a Fraction, not {w!r}")
        if w <= 0:
            raise InvalidParameters(f"the weight of urn {i} must be positive (got {w})")
        out.append((1, Fraction(w)))
    if not out:
        raise InvalidParameters("weights must list at least one urn")
    return tuple(out)


def _rebuild(cls, balls, groups, rule):
    return cls(balls=balls, groups=groups, rule=rule)
