"""The immutable description of an occupancy problem.

An :class:`Occupancy` is ``n`` balls placed into ``r`` labelled urns, each urn
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

import operator
from enum import Enum
from fractions import Fraction
from typing import Iterable, Iterator, Optional, Sequence, Tuple

from .errors import InvalidConfiguration, InvalidParameters

__all__ = ["Occupancy", "Rule", "as_count", "parse_bounds"]

Bound = Tuple[int, Optional[int]]
_PLAIN_INT = frozenset({int})


class Rule(str, Enum):
    """The three counting rules, by their trade abbreviations."""

    MB = "MB"
    BE = "BE"
    FD = "FD"

    @property
    def title(self) -> str:
        """The rule's full name."""
        return {"MB": "Maxwell–Boltzmann", "BE": "Bose–Einstein", "FD": "Fermi–Dirac"}[self.value]

    @classmethod
    def parse(cls, value: "Rule | str") -> "Rule":
        """Return the rule named by *value* (``MB``, ``BE``, ``FD``, any case)."""
        if isinstance(value, Rule):
            return value
        if isinstance(value, str):
            key = value.strip().upper()
            if key in cls.__members__:
                return cls[key]
        raise InvalidParameters(
            f"rule must be one of MB, BE, FD (got {value!r}); MB counts distinguishable "
            "balls, BE indistinguishable ones, FD at most one ball per urn"
        )


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


class Occupancy:
    """``n`` balls in ``r`` labelled urns with bounds, under a counting rule.

    Parameters
    ----------
    balls : int
        ``n >= 0``.
    urns : int, optional
        ``r >= 1``; required unless *bounds* is given (then it must match).
    rule : {"MB", "BE", "FD"}
        The counting rule (default ``"MB"``).
    capacity : int, optional
        A uniform upper bound per urn; ``None`` means unbounded (FD: 1).
    minimum : int
        A uniform lower bound per urn (default 0).
    bounds : sequence of (a, b) pairs, optional
        Per-urn bounds, ``b = None`` for no upper bound.  Excludes
        *capacity* and *minimum*.

    Examples
    --------
    >>> Occupancy(balls=3, urns=2, rule="BE").configurations()
    4
    >>> Occupancy(balls=3, urns=2, rule="MB").microstates()
    8
    >>> Occupancy(balls=3, bounds=[(0, 1), (1, None)], rule="BE").configurations()
    2
    """

    __slots__ = ("balls", "bounds", "rule", "_uniform", "_memo")

    def __init__(
        self,
        balls,
        urns=None,
        rule: "Rule | str" = "MB",
        capacity=None,
        minimum=0,
        bounds: Optional[Iterable[Sequence]] = None,
    ):
        n = as_count(balls, "balls")
        rule_ = Rule.parse(rule)
        if bounds is not None:
            if capacity is not None or (minimum not in (0, None)):
                raise InvalidParameters(
                    "give either per-urn bounds or a uniform capacity/minimum, not both"
                )
            if isinstance(bounds, str):
                bounds = parse_bounds(bounds)
            normal = []
            for i, pair in enumerate(bounds, start=1):
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
                normal.append((a, b))
            if not normal:
                raise InvalidParameters("bounds must list at least one urn (urns must be at least 1)")
            if urns is not None and as_count(urns, "urns", 1) != len(normal):
                raise InvalidParameters(
                    f"urns is {urns} but bounds lists {len(normal)} urns; give one bound per urn"
                )
        else:
            if urns is None:
                raise InvalidParameters("urns is required (or give per-urn bounds)")
            r = as_count(urns, "urns", 1)
            a = as_count(0 if minimum is None else minimum, "minimum")
            b = None if capacity is None else as_count(capacity, "capacity")
            if b is not None and b < a:
                raise InvalidParameters(
                    f"minimum {a} is above capacity {b}; the minimum must be <= the capacity"
                )
            normal = [(a, b)] * r
        if rule_ is Rule.FD:
            fd = []
            for i, (a, b) in enumerate(normal, start=1):
                if b is not None and b > 1:
                    raise InvalidParameters(
                        f"FD allows at most one ball per urn, but urn {i} has capacity {b}; "
                        "use capacity 1 (or leave it out), or rule BE for a larger capacity"
                    )
                if a > 1:
                    raise InvalidParameters(
                        f"FD allows at most one ball per urn, but urn {i} has minimum {a}"
                    )
                fd.append((a, 1 if b is None else b))
            normal = fd
        object.__setattr__(self, "balls", n)
        object.__setattr__(self, "bounds", tuple(normal))
        object.__setattr__(self, "rule", rule_)
        first = normal[0]
        object.__setattr__(self, "_uniform", all(p == first for p in normal))
        object.__setattr__(self, "_memo", {})

    # -- immutability and identity -------------------------------------
    def __setattr__(self, name, value):
        raise AttributeError("Occupancy is immutable; build a new one (see with_balls)")

    def __eq__(self, other):
        if not isinstance(other, Occupancy):
            return NotImplemented
        return (self.balls, self.bounds, self.rule) == (other.balls, other.bounds, other.rule)

    def __hash__(self):
        return hash((self.balls, self.bounds, self.rule))

    def __repr__(self):
        if self._uniform:
            a, b = self.bounds[0]
            extra = "" if a == 0 else f", minimum={a}"
            if b is not None and not (self.rule is Rule.FD and b == 1):
                extra += f", capacity={b}"
            return f"Occupancy(balls={self.balls}, urns={self.urns}, rule={self.rule.value!r}{extra})"
        return f"Occupancy(balls={self.balls}, bounds={list(self.bounds)!r}, rule={self.rule.value!r})"

    def __reduce__(self):
        return (_rebuild, (self.balls, self.bounds, self.rule.value))

    # -- derived descriptions -------------------------------------------
    @property
    def urns(self) -> int:
        """The number of urns ``r``."""
        return len(self.bounds)

    @property
    def is_uniform(self) -> bool:
        """True when every urn has the same bounds."""
        return self._uniform

    @property
    def minimum(self) -> Optional[int]:
        """The uniform lower bound, or ``None`` when bounds differ per urn."""
        return self.bounds[0][0] if self._uniform else None

    @property
    def capacity(self) -> Optional[int]:
        """The uniform upper bound (``None``: unbounded or per-urn bounds)."""
        return self.bounds[0][1] if self._uniform else None

    def with_balls(self, balls) -> "Occupancy":
        """Return the same urns and rule with another number of balls."""
        return Occupancy(balls=balls, bounds=self.bounds, rule=self.rule)

    def with_rule(self, rule) -> "Occupancy":
        """Return the same balls and urns under another rule."""
        return Occupancy(balls=self.balls, bounds=self.bounds, rule=rule)

    def canonical_bounds(self) -> str:
        """The bounds in one canonical text form: ``"r*a:b"`` or ``"a:b,..."``."""
        def one(a, b):
            return f"{a}:" if b is None else f"{a}:{b}"
        if self._uniform:
            return f"{self.urns}*{one(*self.bounds[0])}"
        return ",".join(one(a, b) for a, b in self.bounds)

    def effective_bounds(self) -> Tuple[Tuple[int, int], ...]:
        """Bounds with every upper bound made finite and tight.

        Urn ``i`` can hold at most ``n - sum_{j != i} a_j`` balls, so that
        replaces a missing or larger upper bound.  The admissible set is
        unchanged; an upper bound below the lower one means no vector fits.
        """
        total_lower = sum(a for a, _ in self.bounds)
        out = []
        for a, b in self.bounds:
            room = self.balls - (total_lower - a)
            top = room if b is None else min(b, room)
            out.append((a, top))
        return tuple(out)

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
                f"configuration has {len(values)} entries but the model has {self.urns} urns; "
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
                f"configuration sums to {total} but the model has {self.balls} balls; "
                "the occupancies must add up to the number of balls"
            )
        return values

    def admits(self, config) -> bool:
        """True when the (well-formed) configuration respects every bound."""
        values = self.check_configuration(config)
        return self._within_bounds(values)

    def _within_bounds(self, values: Tuple[int, ...]) -> bool:
        if self._uniform:
            a, b = self.bounds[0]
            return min(values) >= a and (b is None or max(values) <= b)
        for v, (a, b) in zip(values, self.bounds):
            if v < a or (b is not None and v > b):
                return False
        return True

    # -- exact quantities (implemented in counting / listing) -----------
    def configurations(self) -> int:
        """The number of admissible occupancy vectors (exact ``int``).

        Remembered in the result store (:func:`enumerator.store.remember`);
        the pure computation is :func:`enumerator.counting.count_configurations`.
        """
        from functools import partial

        from .counting import count_configurations
        from .store import remember

        return remember("configurations", self, partial(count_configurations, self))

    def microstates(self) -> int:
        """The number of equally likely outcomes (MB: assignments; BE/FD: vectors).

        Remembered in the result store; BE and FD share the entry of
        :meth:`configurations`.  Pure: :func:`enumerator.counting.count_microstates`.
        """
        if self.rule is not Rule.MB:
            return self.configurations()
        from functools import partial

        from .counting import count_microstates
        from .store import remember

        return remember("microstates", self, partial(count_microstates, self))

    def weight(self, config) -> int:
        """The number of equally likely outcomes with occupancy *config*."""
        from .counting import configuration_weight

        return configuration_weight(self, config)

    def probability(self, config) -> Fraction:
        """The exact probability of the occupancy vector *config*."""
        from .counting import configuration_probability

        return configuration_probability(self, config)

    def profiles(self) -> int:
        """The number of distinct occupancy profiles (multisets of entries).

        Remembered in the result store; pure: :func:`enumerator.counting.count_profiles`.
        """
        from functools import partial

        from .counting import count_profiles
        from .store import remember

        return remember("profiles", self, partial(count_profiles, self))

    def distribution(self, statistic, limit=None):
        """The exact distribution of *statistic* (``"max"``, ``"empty"``, ``"urn:1"``, ...).

        Remembered in the result store under the statistic's canonical name;
        pure: :func:`enumerator.statistics.distribution`.
        """
        from .statistics import DEFAULT_LIMIT, Distribution, distribution, parse_statistic
        from .store import remember

        stat = parse_statistic(statistic)
        bound = DEFAULT_LIMIT if limit is None else limit

        def compute():
            law = distribution(self, stat, limit=bound)
            return {
                "pmf": [[list(v) if isinstance(v, tuple) else v, p] for v, p in law.pmf.items()],
                "mean": law.mean,
                "variance": law.variance,
            }

        stored = remember("distribution", self, compute, params=stat.name)
        pmf = {}
        for value, p in stored["pmf"]:
            pmf[tuple(value) if isinstance(value, list) else value] = p
        return Distribution(stat.name, pmf, stored["mean"], stored["variance"])

    def event_probability(self, event: str, limit=None) -> Fraction:
        """The exact probability of an event such as ``"max <= 2 and k1 >= 1"``.

        See :mod:`enumerator.events` for the language.
        """
        from .events import event_probability

        return event_probability(self, event) if limit is None else event_probability(self, event, limit=limit)

    def coefficient_row(self, upto=None):
        """Counts for every ball number ``0..upto`` at once (one series pass).

        BE/FD: configurations; MB: microstates.  Remembered in the result
        store; pure: :func:`enumerator.generating.coefficient_row`.
        """
        from .generating import coefficient_row
        from .store import remember

        top = self.balls if upto is None else as_count(upto, "upto")
        return list(remember("coefficient_row", self.with_balls(0), lambda: coefficient_row(self, top),
                             params=f"upto={top}"))

    def sample(self, size, seed=None):
        """Draw *size* configurations exactly from the rule's law (reproducible by *seed*)."""
        from .sampling import sample

        return sample(self, size, seed)

    def iter_configurations(self, start=0, stop=None) -> Iterator[Tuple[int, ...]]:
        """Yield admissible configurations of ranks ``[start, stop)`` in lexicographic order."""
        from .listing import iter_configurations

        return iter_configurations(self, start, stop)

    def iter_blocks(self, size, start=0, stop=None):
        """Yield numpy arrays of at most *size* configurations each, in lexicographic order."""
        from .listing import iter_blocks

        return iter_blocks(self, size, start, stop)

    def rank(self, config) -> int:
        """The lexicographic rank of an admissible configuration."""
        from .listing import rank

        return rank(self, config)

    def unrank(self, index) -> Tuple[int, ...]:
        """The admissible configuration of lexicographic rank *index*."""
        from .listing import unrank

        return unrank(self, index)


def _rebuild(balls, bounds, rule):
    return Occupancy(balls=balls, bounds=bounds, rule=rule)
