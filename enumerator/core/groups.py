r"""Urn groups: any number of urns described in space that does not grow with it.

A problem's urns are an ordered list of **groups**; a group is ``count`` urns
(any positive integer: ``2**128`` is ordinary) sharing a lower bound ``a >= 0``,
an upper bound ``b >= a`` or none, and a weight ``w > 0`` (an exact rational, 1
by default).  Uniform urns are one group; per-urn bounds or weights are groups
of one urn with equal neighbours merged; an energy level of degeneracy ``g``
is a group of ``g`` states.

Text forms (the CLI's ``--bounds`` and ``--weights``)
    A comma-separated list of items, each optionally run-length encoded as
    ``COUNTxITEM``:

    - bounds items are ``a:b``, ``a:`` (no upper bound) or ``b`` (for ``0:b``):
      ``"1000x0:3,2x1:"`` is 1000 urns holding 0 to 3 balls, then 2 urns holding
      at least one;
    - weight items are positive exact rationals — integers, ``p/q`` or plain
      decimals (``0.25`` is exactly 1/4): ``"365x400,97"`` is 365 urns of
      weight 400 then one of weight 97.

Numbers are read digit by digit with a bound on their length
(:data:`MAX_DIGITS`), so text such as ``1e999999999`` is refused before
anything is expanded.

Examples
--------
>>> parse_bounds_runs("1000x0:3,2x1:")
((1000, (0, 3)), (2, (1, None)))
>>> parse_weight_runs("365x400,97,1/3")
((365, Fraction(400, 1)), (1, Fraction(97, 1)), (1, Fraction(1, 3)))
>>> groups = make_groups(parse_bounds_runs("3x0:2,1:"), parse_weight_runs("2x1,2x5"))
>>> [(g.count, g.lower, g.upper, str(g.weight)) for g in groups]
[(2, 0, 2, '1'), (1, 0, 2, '5'), (1, 1, None, '5')]
>>> canonical_groups_text(groups)
'2x0:2@1,1x0:2@5,1x1:@5'
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from fractions import Fraction
from typing import Iterable, List, Optional, Sequence, Tuple

from .errors import InvalidParameters

__all__ = [
    "MAX_DIGITS",
    "UrnGroup",
    "canonical_groups_text",
    "make_groups",
    "merge_groups",
    "parse_bounds_runs",
    "parse_count",
    "parse_weight",
    "parse_weight_runs",
    "total_urns",
]

#: Longest decimal number accepted from text (a count of urns of up to 10^4000
#: digits is far beyond any use; longer text is refused before conversion).
MAX_DIGITS = 4000
#: Largest number of comma-separated items in one text (each becomes at most one group).
MAX_ITEMS = 1_000_000

Bound = Tuple[int, Optional[int]]

_DIGITS = re.compile(r"[0-9]+")
_POWER = re.compile(r"([0-9]+)\s*\^\s*([0-9]+)\s*(?:([+-])\s*([0-9]+))?")
_DECIMAL = re.compile(r"([0-9]*)(?:\.([0-9]*))?")


@dataclass(frozen=True)
class UrnGroup:
    """``count`` urns that share a lower bound, an optional upper bound and a weight.

    Parameters
    ----------
    count : int
        How many urns, ``>= 1`` (any size).
    lower : int
        The least number of balls each urn holds, ``>= 0``.
    upper : int or None
        The most each holds (``>= lower``), ``None`` for no bound.
    weight : Fraction
        A positive exact weight (MB: proportional to the urn's probability;
        BE/FD: a Boltzmann-type factor per ball).

    Raises
    ------
    InvalidParameters
        For a count below 1, a negative bound, ``upper < lower``, or a weight
        that is not a positive rational.
    """

    count: int
    lower: int = 0
    upper: Optional[int] = None
    weight: Fraction = Fraction(1)

    def __post_init__(self):
        for name in ("count", "lower"):
            value = getattr(self, name)
            if isinstance(value, bool) or not isinstance(value, int):
                raise InvalidParameters(f"a group's {name} must be a whole number (got {value!r})")
        if self.count < 1:
            raise InvalidParameters(f"a group holds at least one urn (got count={self.count})")
        if self.lower < 0:
            raise InvalidParameters(f"a lower bound must be at least 0 (got {self.lower})")
        if self.upper is not None:
            if isinstance(self.upper, bool) or not isinstance(self.upper, int):
                raise InvalidParameters(f"an upper bound must be a whole number or None (got {self.upper!r})")
            if self.upper < self.lower:
                raise InvalidParameters(
                    f"a group has lower bound {self.lower} above its upper bound {self.upper}; "
                    "lower must be <= upper"
                )
        weight = self.weight
        if isinstance(weight, bool) or isinstance(weight, float) or not isinstance(weight, (int, Fraction)):
            raise InvalidParameters(
                f"a weight must be an exact positive rational (int or Fraction), not {weight!r}"
            )
        if weight <= 0:
            raise InvalidParameters(f"a weight must be positive (got {weight})")
        object.__setattr__(self, "weight", Fraction(weight))

    @property
    def bound(self) -> Bound:
        """``(lower, upper)``."""
        return (self.lower, self.upper)

    def same_urns(self, other: "UrnGroup") -> bool:
        """True when *other*'s urns are interchangeable with these (same bounds and weight)."""
        return (self.lower, self.upper, self.weight) == (other.lower, other.upper, other.weight)


def total_urns(groups: Iterable[UrnGroup]) -> int:
    """The number of urns ``r``: the sum of the groups' counts (cost: one addition per group)."""
    return sum(g.count for g in groups)


def merge_groups(groups: Iterable[UrnGroup]) -> Tuple[UrnGroup, ...]:
    """Merge neighbouring groups whose urns are interchangeable, keeping the order.

    Examples
    --------
    >>> merge_groups([UrnGroup(2), UrnGroup(3), UrnGroup(1, upper=1)])
    (UrnGroup(count=5, lower=0, upper=None, weight=Fraction(1, 1)), UrnGroup(count=1, lower=0, upper=1, weight=Fraction(1, 1)))
    """
    out: List[UrnGroup] = []
    for group in groups:
        if out and out[-1].same_urns(group):
            last = out.pop()
            group = UrnGroup(last.count + group.count, group.lower, group.upper, group.weight)
        out.append(group)
    return tuple(out)


# ---------------------------------------------------------------------------
# text
# ---------------------------------------------------------------------------

def parse_count(text: str, name: str, minimum: int = 0) -> int:
    """Read a whole number written in decimal digits, refusing anything else before converting it.

    Parameters
    ----------
    text : str
        Decimal digits, optionally surrounded by blanks, or a power
        ``B^E`` of two such numbers with an optional ``+K``/``-K`` after it
        (``2^64``, ``2^32-1``).  A power is sized from ``E log10 B`` before it
        is expanded, so it obeys the same :data:`MAX_DIGITS` limit as written
        digits; ``"1_000"`` and ``"1e6"`` are refused.
    name : str
        What the number is, for the error message.
    minimum : int
        The least value accepted.

    Raises
    ------
    InvalidParameters
        For text that is not plain digits, longer than :data:`MAX_DIGITS`, or
        below *minimum*.

    Examples
    --------
    >>> parse_count(" 365 ", "urns", 1)
    365
    >>> parse_count("2^64", "urns", 1), parse_count("2^32-1", "urns", 1)
    (18446744073709551616, 4294967295)
    """
    body = text.strip()
    power = _POWER.fullmatch(body)
    if power:
        return _parse_power(power, body, name, minimum)
    if len(body) > MAX_DIGITS:
        raise InvalidParameters(
            f"{name} has {len(body):,} characters; numbers are limited to {MAX_DIGITS:,} digits"
        )
    if not _DIGITS.fullmatch(body):
        raise InvalidParameters(
            f"{name} must be a whole number written in digits or as a power such as 2^64 (got {_short(body)!r})"
        )
    value = int(body)
    if value < minimum:
        raise InvalidParameters(f"{name} must be at least {minimum} (got {value})")
    return value


def _parse_power(match: "re.Match", body: str, name: str, minimum: int) -> int:
    """Expand ``B^E[+-K]`` after checking its size from ``E log10 B`` (see :func:`parse_count`)."""
    base_text, exponent_text, sign, offset_text = match.groups()
    if max(len(base_text), len(exponent_text), len(offset_text or "")) > MAX_DIGITS:
        raise InvalidParameters(f"{name} is too long; numbers are limited to {MAX_DIGITS:,} digits")
    base, exponent = int(base_text), int(exponent_text)
    if base > 1 and exponent * math.log10(base) > MAX_DIGITS:
        raise InvalidParameters(
            f"{name} {_short(body)!r} would have about {exponent * math.log10(base):,.0f} digits; "
            f"numbers are limited to {MAX_DIGITS:,} digits"
        )
    value = base ** exponent
    if sign:
        value = value + int(offset_text) if sign == "+" else value - int(offset_text)
    if value < minimum:
        raise InvalidParameters(f"{name} must be at least {minimum} (got {_short(body)!r} = {value})")
    return value


def parse_weight(text: str, name: str = "weight") -> Fraction:
    """Read a positive exact rational: ``"3"``, ``"2/7"``, a plain decimal ``"0.25"`` or a power ``"2^10"``.

    Raises
    ------
    InvalidParameters
        For anything else (negative, zero, exponents, more than
        :data:`MAX_DIGITS` digits).

    Examples
    --------
    >>> parse_weight("0.25"), parse_weight("6/4")
    (Fraction(1, 4), Fraction(3, 2))
    """
    body = text.strip()
    if len(body) > 2 * MAX_DIGITS + 1:
        raise InvalidParameters(f"{name} has {len(body):,} characters; numbers are limited to {MAX_DIGITS:,} digits")
    top, slash, bottom = body.partition("/")
    if slash:
        value = Fraction(parse_count(top, f"the numerator of {name}"),
                         parse_count(bottom, f"the denominator of {name}", 1))
    elif _POWER.fullmatch(top):
        value = Fraction(parse_count(top, name))
    else:
        match = _DECIMAL.fullmatch(top)
        if not match or not (match.group(1) or match.group(2)):
            raise InvalidParameters(
                f"{name} must be a positive number such as 3, 2/7, 0.25 or 2^10 (got {_short(body)!r})"
            )
        whole, frac = match.group(1) or "0", match.group(2) or ""
        value = Fraction(int(whole + frac), 10 ** len(frac))
    if value <= 0:
        raise InvalidParameters(f"{name} must be positive (got {_short(body)})")
    return value


def _runs(text: str, what: str, example: str) -> List[Tuple[int, str, int]]:
    """Split ``"COUNTxITEM,ITEM,..."`` into ``(count, item text, position)`` triples."""
    if not isinstance(text, str) or not text.strip():
        raise InvalidParameters(f"{what} must look like {example!r}")
    if text.count(",") >= MAX_ITEMS:
        raise InvalidParameters(
            f"{what} lists more than {MAX_ITEMS:,} items; describe equal neighbours as one run COUNTxITEM"
        )
    out = []
    for position, raw in enumerate(text.split(","), start=1):
        item = raw.strip()
        count_text, times, rest = item.partition("x")
        if times:
            count = parse_count(count_text, f"the run length of {what} item {position}", 1)
            item = rest.strip()
        else:
            count = 1
        if not item:
            raise InvalidParameters(f"{what} item {position} is empty; write it like {example!r}")
        out.append((count, item, position))
    return out


def parse_bounds_runs(text: str) -> Tuple[Tuple[int, Bound], ...]:
    """Parse run-length bounds text into ``((count, (lower, upper)), ...)``.

    Items are ``a:b``, ``a:`` (no upper bound) or ``b`` alone (``0:b``), each
    optionally preceded by ``COUNTx``.

    Raises
    ------
    InvalidParameters
        For malformed items or an upper bound below its lower bound.
    """
    example = "0:2,1:,1000x0:3"
    out = []
    for count, item, position in _runs(text, "bounds", example):
        lower, colon, upper = item.partition(":")
        where = f"bounds item {position} ({item!r})"
        if not colon:
            a, b = 0, parse_count(lower, f"the upper bound in {where}")
        else:
            a = parse_count(lower, f"the lower bound in {where}") if lower.strip() else 0
            b = parse_count(upper, f"the upper bound in {where}") if upper.strip() else None
        if b is not None and b < a:
            raise InvalidParameters(f"{where} has lower bound {a} above its upper bound {b}; lower must be <= upper")
        out.append((count, (a, b)))
    return tuple(out)


def parse_weight_runs(text: str) -> Tuple[Tuple[int, Fraction], ...]:
    """Parse run-length weights text (``"365x400,97"``) into ``((count, weight), ...)``."""
    return tuple(
        (count, parse_weight(item, f"weight item {position}"))
        for count, item, position in _runs(text, "weights", "365x400,97,1/3")
    )


def make_groups(bounds: Optional[Sequence[Tuple[int, Bound]]] = None,
                weights: Optional[Sequence[Tuple[int, Fraction]]] = None,
                urns: Optional[int] = None) -> Tuple[UrnGroup, ...]:
    """Align runs of bounds and runs of weights into merged groups.

    Parameters
    ----------
    bounds : sequence of (count, (lower, upper)), optional
        Runs of bounds; default: *urns* unbounded urns.
    weights : sequence of (count, weight), optional
        Runs of weights; default: weight 1 throughout.
    urns : int, optional
        The number of urns; required when neither list is given, and must
        agree with the lists' totals when given.

    Raises
    ------
    InvalidParameters
        When the totals disagree, or no urn is described.

    Notes
    -----
    Cost: linear in the number of runs (never in the number of urns): the two
    lists are walked together, splitting a run where the other list changes.
    """
    def total(runs):
        return sum(c for c, _ in runs)

    r = urns
    for runs, what in ((bounds, "bounds"), (weights, "weights")):
        if runs is None:
            continue
        t = total(runs)
        if r is None:
            r = t
        elif t != r:
            raise InvalidParameters(
                f"{what} describe {t} urns but the model has {r}; give one entry per urn "
                "(COUNTxITEM repeats an entry)"
            )
    if r is None or r < 1:
        raise InvalidParameters("the model needs at least one urn")
    b_runs = list(bounds) if bounds is not None else [(r, (0, None))]
    w_runs = list(weights) if weights is not None else [(r, Fraction(1))]
    out: List[UrnGroup] = []
    i = j = 0
    left_b, left_w = b_runs[0][0], w_runs[0][0]
    while i < len(b_runs) and j < len(w_runs):
        take = min(left_b, left_w)
        (a, b), w = b_runs[i][1], w_runs[j][1]
        out.append(UrnGroup(take, a, b, w))
        left_b -= take
        left_w -= take
        if left_b == 0:
            i += 1
            left_b = b_runs[i][0] if i < len(b_runs) else 0
        if left_w == 0:
            j += 1
            left_w = w_runs[j][0] if j < len(w_runs) else 0
    return merge_groups(out)


def canonical_groups_text(groups: Iterable[UrnGroup]) -> str:
    """One canonical text of a list of groups: ``COUNTxLOWER:UPPER@WEIGHT`` joined by commas.

    Equal problems (after :func:`merge_groups`) have equal texts; the text
    grows with the number of groups and the digits of their numbers only.
    """
    parts = []
    for g in merge_groups(groups):
        upper = "" if g.upper is None else str(g.upper)
        parts.append(f"{g.count}x{g.lower}:{upper}@{g.weight}")
    return ",".join(parts)


def _short(text: str, width: int = 40) -> str:
    return text if len(text) <= width else text[: width - 1] + "…"
