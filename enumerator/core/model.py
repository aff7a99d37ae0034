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

import operator
from typing import Iterable, Optional, Sequence, Tuple

from .errors import InvalidConfiguration, InvalidParameters
from .rules import Rule

__all__ = ["Rule", "UrnModel", "as_count", "parse_bounds", "parse_canonical_bounds"]

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
    """Read the canonical bounds text that :meth:`UrnModel.canonical_bounds` writes.

    Parameters
    ----------
    text : str
        ``"r*a:b"`` (``r`` urns sharing the bounds ``a:b``) or ``"a:b,a:b,..."``,
        with ``a:`` for no upper bound.

    Returns
    -------
    tuple of (int, int or None)
        One ``(lower, upper)`` pair per urn.

    Raises
    ------
    InvalidParameters
        when the text is not in the canonical form.

    Notes
    -----
    The one parser of the canonical text (the store rebuilds models from its
    keys with it); a single pass over the text, ``O(len(text))``, plus ``r``
    tuple entries for the run-length form.

    Examples
    --------
    >>> parse_canonical_bounds("3*0:2")
    ((0, 2), (0, 2), (0, 2))
    >>> parse_canonical_bounds("0:1,2:")
    ((0, 1), (2, None))
    """
    def one(item):
        a, _, b = item.partition(":")
        return int(a), (int(b) if b else None)

    try:
        if "*" in text:
            count, _, item = text.partition("*")
            return (one(item),) * int(count)
        return tuple(one(item) for item in text.split(","))
    except (TypeError, ValueError):
        raise InvalidParameters(
            f'canonical bounds must look like "3*0:2" or "0:1,2:" (got {text!r})'
        ) from None


class UrnModel:
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
    >>> UrnModel(balls=3, urns=2, rule="BE")
    UrnModel(balls=3, urns=2, rule='BE')
    >>> UrnModel(balls=3, urns=2, rule="FD").bounds
    ((0, 1), (0, 1))
    >>> UrnModel(balls=3, bounds=[(0, 1), (1, None)], rule="BE").effective_bounds()
    ((0, 1), (1, 3))
    """

    __slots__ = ("balls", "bounds", "rule", "_uniform", "_hash")

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
        most = rule_.description.per_urn
        if most is not None:
            # the rule itself caps every urn (FD: one ball), so the cap is a bound
            capped = []
            for i, (a, b) in enumerate(normal, start=1):
                if b is not None and b > most:
                    raise InvalidParameters(
                        f"{rule_.value} allows at most one ball per urn, but urn {i} has capacity {b}; "
                        "use capacity 1 (or leave it out), or rule BE for a larger capacity"
                    )
                if a > most:
                    raise InvalidParameters(
                        f"{rule_.value} allows at most one ball per urn, but urn {i} has minimum {a}"
                    )
                capped.append((a, most if b is None else b))
            normal = capped
        object.__setattr__(self, "balls", n)
        object.__setattr__(self, "bounds", tuple(normal))
        object.__setattr__(self, "rule", rule_)
        first = normal[0]
        object.__setattr__(self, "_uniform", all(p == first for p in normal))
        object.__setattr__(self, "_hash", hash((n, tuple(normal), rule_)))

    # -- immutability and identity -------------------------------------
    def __setattr__(self, name, value):
        raise AttributeError(f"{type(self).__name__} is immutable; build a new one (see with_balls)")

    def __eq__(self, other):
        if self is other:
            return True
        if not isinstance(other, UrnModel):
            return NotImplemented
        return (self.balls, self.bounds, self.rule) == (other.balls, other.bounds, other.rule)

    def __hash__(self):
        return self._hash

    def __repr__(self):
        if self._uniform:
            a, b = self.bounds[0]
            extra = "" if a == 0 else f", minimum={a}"
            if b is not None and b != self.rule.description.per_urn:
                extra += f", capacity={b}"
            return f"{type(self).__name__}(balls={self.balls}, urns={self.urns}, rule={self.rule.value!r}{extra})"
        return f"{type(self).__name__}(balls={self.balls}, bounds={list(self.bounds)!r}, rule={self.rule.value!r})"

    def __reduce__(self):
        return (_rebuild, (type(self), self.balls, self.bounds, self.rule.value))

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

    def with_balls(self, balls) -> "UrnModel":
        """Return the same urns and rule with another number of balls."""
        return type(self)(balls=balls, bounds=self.bounds, rule=self.rule)

    def with_rule(self, rule) -> "UrnModel":
        """Return the same balls and urns under another rule."""
        return type(self)(balls=self.balls, bounds=self.bounds, rule=rule)

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
            The canonical bounds text (:func:`parse_canonical_bounds`).

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
        return cls(balls=balls, bounds=parse_canonical_bounds(bounds), rule=rule)

    def canonical_bounds(self) -> str:
        """The bounds in one canonical text form: ``"r*a:b"`` or ``"a:b,..."``.

        :func:`parse_canonical_bounds` reads it back; the store keys its
        results by it.
        """
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

def _rebuild(cls, balls, bounds, rule):
    return cls(balls=balls, bounds=bounds, rule=rule)
