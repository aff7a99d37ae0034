r"""The size needed for a probability: the least number of balls (or urns) at which an event is likely enough.

Given a model with one parameter left free — the number of balls ``n`` or the
number of urns ``r`` — an event and a target probability ``p``,
:func:`find_threshold` returns the least value ``v`` of the free parameter
with ``P_v(event) >= p``, with the exact probabilities at ``v`` and ``v - 1``.
Typical questions: how many keys until two share a bucket with probability
1/2 (``max >= 2``), how many people until three share a birthday
(``max >= 3``), how many buckets so that 10^5 keys collide with probability
at most 0.001 (vary the urns, ``max <= 1``, target 0.999).

How the value is searched
    *Bisection* where ``P_v`` is proved monotone in ``v``, *a scan* upward
    from the smallest value otherwise.  Bisection is an exponential search
    (1, 2, 4, ... until the target is reached) followed by a binary search,
    ``O(log v)`` exact evaluations; a scan evaluates every value in turn and
    stops after :data:`SCAN_STEPS` values.

When ``P_v`` is proved monotone
    Balls: the event must be *monotone in the occupancies* — built with
    ``and``, ``or``, ``not`` from comparisons ``T >= j``, ``T > j``, ``T <= j``,
    ``T < j`` of statistics ``T`` that only grow when a ball is added (``max``,
    ``min``, ``occupied``, ``kI``, ``count(>= J)``) or only shrink (``empty``,
    ``count(<= J)``), all pointing the same way — and the model must be one
    that can be grown a ball at a time without changing its law: MB with any
    weights and no bounds (balls are thrown one by one, independently);
    BE with equal weights and no bounds (the Pólya urn: a new ball joins urn
    ``i`` with probability ``(k_i + 1)/(n + r)``, and the occupancy vector is
    uniform at every ``n`` — F. Eggenberger and G. Pólya, 1923; Feller,
    vol. 1, ch. V.2); FD with equal weights and no lower bound (a new ball
    takes an empty urn uniformly at random, which keeps the occupied set
    uniform).  Coupling the models at ``n`` and ``n + 1`` this way makes an
    increasing event's probability non-decreasing in ``n``.
    Urns: for the no-collision events (``max <= 1``, ``max < 2`` and their
    negations) with equal weights and no bounds, ``P(max <= 1)`` is
    ``prod_{i<n} (1 - i/r)`` (MB) or ``prod_{i<n} (r - i)/(r + i)`` (BE):
    every factor grows with ``r``.

Every evaluation is an exact probability
(:func:`enumerator.algorithms.events.event_probability`), so each step checks
its own cost against the limits (:mod:`enumerator.core.limits`).
"""

from __future__ import annotations

import math
import re
import time
from dataclasses import dataclass
from fractions import Fraction
from typing import Callable, Optional, Tuple, Union

from ..core import limits
from ..core.errors import InvalidParameters, TooLarge
from ..core.limits import Cost, bigint_bytes
from ..core.model import UrnModel
from .event_language import And, Comparison, Event, Not, Or, comparisons, parse_event
from .events import event_probability

__all__ = ["SCAN_STEPS", "Threshold", "event_direction", "find_threshold", "parse_probability"]

#: Most values a scan evaluates before it gives up.
SCAN_STEPS = 10_000
#: Largest value an exponential search tries (about 2^512).
SEARCH_CEILING = 1 << 512

_PROBABILITY = re.compile(r"\s*([0-9]+)(?:\.([0-9]*))?(?:[eE]([+-]?[0-9]{1,4}))?\s*")


@dataclass(frozen=True)
class Threshold:
    """The answer of :func:`find_threshold`.

    Attributes
    ----------
    vary : str
        ``"balls"`` or ``"urns"``.
    value : int
        The least value with ``P(event) >= target``.
    probability : Fraction or None
        ``P(event)`` at *value*; None when it was not computed exactly
        (``exact_digits`` of :func:`find_threshold`; *bounds* then hold it).
    probability_before : Fraction or None
        ``P(event)`` at ``value - 1`` (None when ``value`` is the smallest
        value the parameter takes, or when it was not computed exactly).
    method : str
        ``"bisection"`` (monotonicity proved) or ``"scan"``.
    evaluations : int
        How many exact probabilities were computed.
    bounds : tuple of (Fraction, Fraction), optional
        Set only when the exact probabilities were skipped: rational
        enclosures ``(lo, hi)`` of ``P(event)`` at *value* and (second
        entry, or None) at ``value - 1``, proved as in
        :func:`_proved_no_collision`, relative width below ``1e-20``.
    digits : int, optional
        With *bounds*: the estimated decimal digits of each exact
        probability (numerator or denominator).
    """

    vary: str
    value: int
    probability: Optional[Fraction]
    probability_before: Optional[Fraction]
    method: str
    evaluations: int
    bounds: Optional[Tuple[Tuple[Fraction, Fraction], Optional[Tuple[Fraction, Fraction]]]] = None
    digits: Optional[int] = None


def parse_probability(text: Union[str, Fraction, int]) -> Fraction:
    """Read a target probability exactly: ``"0.5"``, ``"1e-6"``, ``"999/1000"``, in ``(0, 1]``.

    Exponents are limited to four digits, so no text asks for a number of
    unbounded size.

    Examples
    --------
    >>> parse_probability("1e-6"), parse_probability("0.999"), parse_probability("1/2")
    (Fraction(1, 1000000), Fraction(999, 1000), Fraction(1, 2))
    """
    if isinstance(text, (Fraction, int)) and not isinstance(text, bool):
        value = Fraction(text)
    else:
        body = str(text)
        top, slash, bottom = body.partition("/")
        try:
            if slash:
                if not (top.strip().isdigit() and bottom.strip().isdigit()) or len(body) > 200:
                    raise ValueError
                value = Fraction(int(top), int(bottom))
            else:
                match = _PROBABILITY.fullmatch(body) if len(body) <= 200 else None
                if not match:
                    raise ValueError
                whole, frac, exp = match.group(1), match.group(2) or "", int(match.group(3) or 0)
                value = Fraction(int(whole + frac), 10 ** len(frac)) * Fraction(10) ** exp
        except (ValueError, ZeroDivisionError):
            raise InvalidParameters(
                f"target must be a probability such as 0.5, 1e-6 or 999/1000 (got {str(text)[:40]!r})",
                parameters=["target"],
            ) from None
    if not 0 < value <= 1:
        raise InvalidParameters(f"target must be above 0 and at most 1 (got {value})", parameters=["target"])
    return value


# ---------------------------------------------------------------------------
# monotonicity
# ---------------------------------------------------------------------------

def _statistic_direction(term) -> int:
    """+1 if the statistic never decreases when a ball is added, -1 if it never increases, else 0."""
    kind, parameter = term.kind, term.parameter
    if kind in ("max", "min", "occupied", "urn", "atleast"):
        return 1
    if kind == "empty":
        return -1
    if kind == "exactly":
        return -1 if parameter == 0 else 0
    if kind == "count":
        op, value = parameter
        if op in (">=", ">"):
            return 1
        if op in ("<=", "<"):
            return -1
        if value == 0:
            return -1 if op == "==" else 1
    return 0


def event_direction(event: Union[str, Event]) -> int:
    """+1 if the event only becomes true as balls are added, -1 if only false, 0 if neither is proved.

    Examples
    --------
    >>> event_direction("max >= 2"), event_direction("max <= 1"), event_direction("count(== 2) >= 1")
    (1, -1, 0)
    >>> event_direction("not (empty > 3) and occupied >= 2")
    1
    """
    node = parse_event(event) if isinstance(event, str) else event

    def walk(node) -> int:
        if isinstance(node, Comparison):
            base = _statistic_direction(node.term)
            if node.op in (">=", ">"):
                return base
            if node.op in ("<=", "<"):
                return -base
            return 0
        if isinstance(node, Not):
            return -walk(node.operand)
        if isinstance(node, (And, Or)):
            signs = {walk(x) for x in node.operands}
            return signs.pop() if len(signs) == 1 else 0
        return 0  # pragma: no cover - the parser builds only these nodes

    return walk(node)


def _grows_a_ball_at_a_time(model: UrnModel) -> bool:
    """True when the model at n + 1 balls is the model at n plus one ball (see the module docstring)."""
    free = all(g.lower == 0 and g.upper is None for g in model.groups)
    if model.rule.value == "MB":
        return free
    if model.rule.value == "BE":
        return free and not model.weighted
    return not model.weighted and all(g.lower == 0 for g in model.groups)


def _no_collision(event: Event) -> int:
    """+1 for ``max >= 2`` / ``max > 1`` (a collision), -1 for ``max <= 1`` / ``max < 2``, else 0."""
    if isinstance(event, Not):
        return -_no_collision(event.operand)
    if isinstance(event, Comparison) and event.term.kind == "max":
        if (event.op, event.value) in ((">=", 2), (">", 1)):
            return 1
        if (event.op, event.value) in (("<=", 1), ("<", 2)):
            return -1
    return 0


# ---------------------------------------------------------------------------
# the search
# ---------------------------------------------------------------------------

def find_threshold(model: UrnModel, vary: str, event: Union[str, Event], target,
                   limit: Optional[int] = None,
                   probability: Optional[Callable[[UrnModel, Event], Fraction]] = None,
                   exact_digits: Optional[int] = None) -> Threshold:
    """Return the least value of the free parameter at which ``P(event) >= target``.

    Parameters
    ----------
    model : UrnModel
        The fixed part of the problem: its rule, bounds and weights, and the
        value of the parameter that is not varied.  With ``vary="balls"`` its
        ball count is ignored; with ``vary="urns"`` it must be one group of
        equal urns (whose count is ignored), and the search starts at the
        largest urn the event names (``k3``: from 3 urns), where the event
        is first defined, or at the fewest urns that hold the balls within
        their capacity (FD: from ``n`` urns) if that is more; a minimum per
        urn caps the search at ``n // minimum`` urns.
    vary : {"balls", "urns"}
        The free parameter.
    event : str
        An event of :mod:`enumerator.algorithms.event_language`.
    target : str or Fraction
        The probability to reach (:func:`parse_probability`).
    limit : int, optional
        Passed to the event planner (most configurations it may list).
    probability : callable, optional
        ``f(model, event) -> Fraction``; default
        :func:`~enumerator.algorithms.events.event_probability`.
    exact_digits : int, optional
        When the answer is located by proved bounds (the no-collision
        searches) and its exact probabilities would have more than this many
        digits, they are not computed: the answer carries rational
        enclosures instead (``Threshold.bounds``), at a cost independent of
        their size, and nothing is refused for their size.  Default None:
        always exact.

    Returns
    -------
    Threshold

    Raises
    ------
    InvalidParameters
        For a malformed event, target or *vary*, or urns varied on a model
        with several groups.
    TooLarge
        When the target is not reached within :data:`SCAN_STEPS` values (scan),
        below :data:`SEARCH_CEILING` or the largest admissible ball count
        (bisection), or an evaluation exceeds the limits.

    Examples
    --------
    How many people until two share a birthday with probability 1/2
    (the classical answer is 23; Feller, vol. 1, II.3):

    >>> t = find_threshold(UrnModel(balls=0, urns=365), "balls", "max >= 2", "1/2")
    >>> t.value, float(t.probability) > 0.5 > float(t.probability_before), t.method
    (23, True, 'bisection')

    Notes
    -----
    Cost: ``O(log v)`` exact evaluations by bisection, at most
    :data:`SCAN_STEPS` by scan; each evaluation's cost is that of the event
    planner at the size tried, checked against the limits before it runs.
    """
    if vary not in ("balls", "urns"):
        raise InvalidParameters(f"vary must be 'balls' or 'urns' (got {vary!r})", parameters=["vary"])
    goal = parse_probability(target)
    node = parse_event(event) if isinstance(event, str) else event
    evaluate = probability or (lambda m, e: event_probability(m, e) if limit is None
                               else event_probability(m, e, limit=limit))
    if vary == "balls":
        start = 0
        highest = _largest_balls(model)

        def at(v: int) -> UrnModel:
            return model.with_balls(v)

        direction = event_direction(node) if _grows_a_ball_at_a_time(model) else 0
    else:
        if len(model.groups) != 1:
            raise InvalidParameters(
                "to vary the urns, describe them as one group of equal urns (a capacity, minimum or "
                "weight shared by all)", parameters=["vary"],
            )
        group = model.groups[0]
        # an event naming urn I (kI) is defined from I urns on: the search starts there
        start = max([1] + [c.term.parameter for c in comparisons(node) if c.term.entry.indexes_urns])
        highest = SEARCH_CEILING
        # the model admits the balls only from ceil(n / upper) urns on, and up to n // lower urns
        n = model.balls
        if group.upper is not None:
            start = max(start, -(-n // group.upper) if group.upper else (1 if n == 0 else SEARCH_CEILING + 1))
        if group.lower:
            highest = min(highest, n // group.lower)
        if start > highest:
            most = "any number" if group.upper is None else f"at most {group.upper}"
            raise InvalidParameters(
                f"no number of urns holds {_count_text(n)} balls with at least {group.lower} and {most} in "
                "each urn; change the bounds or the number of balls", parameters=["vary"],
            )

        def at(v: int) -> UrnModel:
            return model.with_groups([(v, group.lower, group.upper, group.weight)])

        free_equal = group.lower == 0 and group.upper is None and model.rule.value in ("MB", "BE")
        direction = -_no_collision(node) if free_equal else 0
    evaluations = 0

    def p(v: int) -> Fraction:
        nonlocal evaluations
        evaluations += 1
        return evaluate(at(v), node)

    if direction > 0:
        guess = _no_collision_guess(model, vary, node, goal)
        if guess is not None:
            proved = _proved_no_collision(model, vary, node, goal, guess)
            if proved is not None and probability is None:
                if exact_digits is not None:
                    bounded = _bounded_threshold(model, vary, proved, start, exact_digits)
                    if bounded is not None:
                        return bounded
                _check_exact_pair(model, vary, node, goal, proved)
            return _gallop(vary, start, highest, goal, p, lambda: evaluations, proved or guess)
        return _bisect(vary, start, highest, goal, p, lambda: evaluations)
    if direction < 0:
        first = p(start)
        if first >= goal:
            return Threshold(vary, start, first, None, "bisection", evaluations)
        raise TooLarge(
            f"P({node}) never grows as the {vary} increase, and at {vary} = {start} it is "
            f"{_probability_text(first)}, below the target {_probability_text(goal)}; no value reaches it",
            parameters=["target"],
        )
    return _scan(vary, start, highest, goal, p, lambda: evaluations)


def _probability_text(value: Fraction) -> str:
    """A probability for a message: six significant digits, or ``1 - d`` when those would read 1 but it is not.

    >>> _probability_text(Fraction(1, 3)), _probability_text(1 - Fraction(1, 10**9)), _probability_text(Fraction(1))
    ('0.333333', '1 - 1e-09', '1')
    """
    text = f"{float(value):.6g}"
    if text == "1" and value != 1:
        return f"1 - {float(1 - value):.3g}"
    return text


def _count_text(value: int) -> str:
    """A count for a message: with thousands separators, or ``2^k`` for a large power of two.

    >>> _count_text(10_000), _count_text(2**512)
    ('10,000', '2^512')
    """
    if value > 10**6 and value & (value - 1) == 0:
        return f"2^{value.bit_length() - 1}"
    return f"{value:,}"


def _largest_balls(model: UrnModel) -> int:
    """The most balls the urns can hold (the search ceiling when every group has an upper bound)."""
    if any(g.upper is None for g in model.groups):
        return SEARCH_CEILING
    return sum(g.count * g.upper for g in model.groups)


def _bisect(vary, start, highest, goal, p, count) -> Threshold:
    """Exponential search up from *start* (1, 2, 4, ... past it), then bisection."""
    return _gallop(vary, start, highest, goal, p, count, start)


def _no_collision_guess(model: UrnModel, vary: str, node: Event, goal: Fraction) -> Optional[int]:
    """A close guess of the answer for the no-collision events on equal free urns (MB or BE), else None.

    ``log P(max <= 1)`` is ``lgamma(r+1) - lgamma(r-n+1) - n ln r`` (MB) or
    ``lgamma(r+1) - lgamma(r-n+1) - lgamma(n+r) + lgamma(r)`` (BE); a binary
    search on it in 40-digit floating point (mpmath) lands within a few
    units of the answer, which the exact search then settles.  Only a
    starting point: every reported value is decided by exact probabilities.
    """
    kind = _no_collision(node)
    if len(model.groups) != 1 or model.rule.value not in ("MB", "BE"):
        return None
    group = model.groups[0]
    if group.lower != 0 or group.upper is not None:
        return None
    if not ((vary == "balls" and kind == 1) or (vary == "urns" and kind == -1)):
        return None
    import mpmath

    with mpmath.workdps(40):
        def log_none(n: int, r: int):
            if n > r:
                return mpmath.ninf
            value = mpmath.loggamma(r + 1) - mpmath.loggamma(r - n + 1)
            if model.rule.value == "MB":
                return value - n * mpmath.log(r)
            return value - mpmath.loggamma(n + r) + mpmath.loggamma(r)

        if vary == "balls":
            r = model.urns
            if goal == 1:
                return r + 1
            wanted = mpmath.log(1 - mpmath.mpf(goal.numerator) / goal.denominator)
            lo, hi = 0, r + 1  # log_none(lo) > wanted >= log_none(hi)
            while hi - lo > 1:
                mid = (lo + hi) // 2
                if log_none(mid, r) <= wanted:
                    hi = mid
                else:
                    lo = mid
            return hi
        n = model.balls
        wanted = mpmath.log(mpmath.mpf(goal.numerator) / goal.denominator)
        lo, hi = max(n, 1) - 1, max(n, 1)
        while log_none(n, hi) < wanted:
            lo, hi = hi, hi * 2
            if hi > SEARCH_CEILING:
                return None
        while hi - lo > 1:
            mid = (lo + hi) // 2
            if log_none(n, mid) >= wanted:
                hi = mid
            else:
                lo = mid
        return max(hi, 1)


def _bernoulli(K: int):
    """Bernoulli numbers ``B_0..B_K`` (``B_1 = -1/2``), exactly, by ``sum_{j<=m} C(m+1, j) B_j = 0``."""
    B = [Fraction(1)]
    for m in range(1, K + 1):
        B.append(-sum(math.comb(m + 1, j) * B[j] for j in range(m)) / (m + 1))
    return B


def _power_sums(n: int, K: int):
    """``p_k = sum_{i=0}^{n-1} i^k`` for ``k = 0..K``, exactly (Faulhaber's formula; Knuth, *Johann Faulhaber and sums of powers*, 1993)."""
    B = _bernoulli(K)
    return [sum(math.comb(k + 1, j) * B[j] * n ** (k + 1 - j) for j in range(k + 1)) / (k + 1) for k in range(K + 1)]


def _log1m_bounds(y: Fraction, K: int) -> Tuple[Fraction, Fraction]:
    """Rational bounds ``lo <= ln(1 - y) <= hi`` for ``0 <= y <= 1/2``: ``K`` terms of ``-sum y^k/k``.

    The tail ``sum_{k>K} y^k/k`` lies in ``[0, y^{K+1} / ((K+1)(1-y))]``.
    """
    head = -sum(y ** k / k for k in range(1, K + 1))
    return head - y ** (K + 1) / ((K + 1) * (1 - y)), head


def _log_bounds(q: Fraction, K: int) -> Tuple[Fraction, Fraction]:
    """Rational bounds on ``ln q`` for ``0 < q <= 1``: ``q = 2^-e q'`` with ``1/2 < q' <= 1``, two series."""
    e = max(0, q.denominator.bit_length() - q.numerator.bit_length() - 1)
    while q * 2 ** e <= Fraction(1, 2):
        e += 1
    lo, hi = _log1m_bounds(1 - q * 2 ** e, K)
    ln2_lo, ln2_hi = (-x for x in _log1m_bounds(Fraction(1, 2), K)[::-1])  # ln 2 = -ln(1 - 1/2)
    return lo - e * ln2_hi, hi - e * ln2_lo


def _log_none_bounds(rule: str, n: int, r: int, K: int) -> Optional[Tuple[Fraction, Fraction]]:
    r"""Rational bounds on ``ln P(max <= 1)`` for ``n`` balls in ``r`` equal free urns, or None when ``2(n-1) > r``.

    MB: ``ln P = sum_{i<n} ln(1 - i/r) = -sum_k p_k / (k r^k)`` with the power
    sums ``p_k = sum_{i<n} i^k`` exact (:func:`_power_sums`); ``K`` terms,
    and the rest lies in ``[0, p_{K+1} / ((K+1) r^{K+1} (1 - x))]``,
    ``x = (n-1)/r``.  BE: ``P = prod_{i<n} (r-i)/(r+i)``, so
    ``ln P = -2 sum_{odd k} p_k / (k r^k)`` (the series of ``artanh``), the
    rest in ``[0, 2 p_{K+2} / ((K+2) r^{K+2} (1 - x^2))]`` for odd ``K``.
    Cost: ``O(K^2)`` rational operations on numbers of ``O(K log r)`` bits.
    """
    if n <= 1:
        return Fraction(0), Fraction(0)
    if 2 * (n - 1) > r:
        return None
    x = Fraction(n - 1, r)
    if rule == "MB":
        p = _power_sums(n, K + 1)
        head = -sum(Fraction(p[k]) / (k * r ** k) for k in range(1, K + 1))
        return head - Fraction(p[K + 1]) / ((K + 1) * r ** (K + 1) * (1 - x)), head
    K |= 1
    p = _power_sums(n, K + 2)
    head = -2 * sum(Fraction(p[k]) / (k * r ** k) for k in range(1, K + 1, 2))
    return head - 2 * Fraction(p[K + 2]) / ((K + 2) * r ** (K + 2) * (1 - x * x)), head


def _proved_no_collision(model: UrnModel, vary: str, node: Event, goal: Fraction, guess: int) -> Optional[int]:
    r"""The least value, proved by rational bounds on the logarithms, for the no-collision searches; else None.

    Varying the balls for a collision (``max >= 2``): the least ``n`` with
    ``ln P(max <= 1) <= ln(1 - target)``; varying the urns for no collision:
    the least ``r`` with ``ln P(max <= 1) >= ln(target)``.  Both sides are
    enclosed by rational intervals (:func:`_log_none_bounds`,
    :func:`_log_bounds`), widened to more series terms (4, 8, ... 64) until
    they separate; a comparison that stays undecided (an exact tie, or
    ``2(n-1) > r`` where the series are not used) gives None and the exact
    search decides.  Starting from *guess* (:func:`_no_collision_guess`),
    a gallop and a bisection over these proved comparisons; ``P`` is
    monotone (module notes), so the value at which the comparison flips is
    the answer.  Cost: ``O(log |v - guess|)`` comparisons, each polynomial
    in ``K`` and ``log r`` — independent of the size of the exact
    probabilities (``~ n log2 r`` bits).
    """
    rule = model.rule.value
    if goal >= 1:
        return None  # only certainty reaches it: the exact search settles the edge
    if vary == "balls":
        q = 1 - goal

        def sizes(v):
            return v, model.urns
    else:
        q = goal

        def sizes(v):
            return model.balls, v

    def reached(v: int) -> Optional[bool]:
        n, r = sizes(v)
        for K in (4, 8, 16, 32, 64):
            none = _log_none_bounds(rule, n, r, K)
            if none is None:
                return None
            wanted = _log_bounds(q, K)
            if vary == "balls":  # P(collision) >= goal  <=>  ln P(none) <= ln q
                if none[1] < wanted[0]:
                    return True
                if none[0] > wanted[1]:
                    return False
            else:  # P(none) >= goal  <=>  ln P(none) >= ln q
                if none[0] > wanted[1]:
                    return True
                if none[1] < wanted[0]:
                    return False
        return None

    start = 0 if vary == "balls" else 1
    v = max(guess, start)
    at = reached(v)
    if at is None:
        return None
    # bracket: reached(lo) is False (or lo below start), reached(hi) is True
    step = 1
    if at:
        hi = v
        while True:
            lo = hi - step
            if lo < start:
                lo = start - 1
                break
            got = reached(lo)
            if got is None:
                return None
            if not got:
                break
            hi = lo
            step *= 2
    else:
        lo = v
        while True:
            hi = lo + step
            if hi > SEARCH_CEILING:
                return None
            got = reached(hi)
            if got is None:
                return None
            if got:
                break
            lo = hi
            step *= 2
    while hi - lo > 1:
        mid = (lo + hi) // 2
        got = reached(mid)
        if got is None:
            return None
        if got:
            hi = mid
        else:
            lo = mid
    return hi


def exact_pair_cost(model: UrnModel, vary: str, value: int) -> Tuple[Cost, int]:
    """The cost of the no-collision probabilities at *value* and *value - 1*, exactly, and their digits.

    ``P(max <= 1)`` is a falling factorial over ``r^n`` (MB) or over the
    rising factorial (BE): numbers of ``b ~ n log2(r + n)`` bits.  The work,
    in GMP products of ``b``-bit numbers (:func:`~enumerator.core.limits.multiply_seconds`):
    two product trees (about 6 products each), four gcds (each fraction
    reduced once, and once more when the command line rounds it to a float;
    :data:`~enumerator.core.limits.GCD_PRODUCTS` each) and four numbers
    written in decimal (:data:`~enumerator.core.limits.DECIMAL_PRODUCTS`
    each), since the exact answer exists to be written.  Memory: the trees
    and the answers, ``~ 8`` numbers of ``b`` bits, plus the four decimal
    texts on their way out (:data:`~enumerator.core.limits.TEXT_BYTES_PER_DIGIT`).

    Measured (``threshold --vary urns --event "max <= 1" --target 1/2
    --json``, CPU time and peak RSS above the 61 MB of the command's own
    start, 2 cores under a load of 4-5): ``n = 2^16``: 1.4 s, 14 MB
    (estimate 1.8 s, 17 MB); ``2^18``: 8.4 s, 52 MB (9.6 s, 77 MB);
    ``2^20``: 47-52 s, 252 MB (51 s, 341 MB).  The former estimate (nominal
    :func:`~enumerator.core.limits.product_seconds`, no gcd, no text) said
    13.8 s and 41 MB at ``2^20``.
    """
    n, r = (value, model.urns) if vary == "balls" else (model.balls, value)
    bits = max(64.0, n * math.log2(max(2, r + (n if model.rule.value == "BE" else 0))))
    digits = int(bits * math.log10(2)) + 1
    seconds = 12 * limits.multiply_seconds(bits) + 4 * limits.gcd_seconds(bits) + 4 * limits.decimal_seconds(bits)
    memory = 8 * bigint_bytes(bits) + 4 * limits.TEXT_BYTES_PER_DIGIT * digits
    return Cost(seconds=seconds, memory=memory), digits


def _probability_enclosure(model: UrnModel, vary: str, value: int) -> Optional[Tuple[Fraction, Fraction]]:
    r"""Rational bounds on ``P(event)`` at *value* for the no-collision searches, relative width below ``1e-20``.

    From the bounds ``[a, b]`` on ``ln P(max <= 1)`` (:func:`_log_none_bounds`,
    up to 64 series terms), ``P(none)`` lies in ``[e^a, e^b]`` and, varying
    the balls (the collision event), ``P(event) = 1 - P(none)``.  The
    exponentials are taken in mpmath's interval arithmetic (outward
    rounding), with ``96 + log2(1/|b|)`` bits so that ``1 - e^b`` keeps its
    digits when the probability is tiny.  None when the series do not apply
    (``2(n-1) > r``) or do not reach the width.  Cost: ``O(K^2)`` rational
    operations on numbers of ``O(K log r)`` bits; independent of the size of
    the exact probability.
    """
    from mpmath import iv

    def fraction(raw) -> Fraction:
        sign, man, exp, _ = raw
        v = Fraction(man) * Fraction(2) ** exp
        return -v if sign else v

    n, r = (value, model.urns) if vary == "balls" else (model.balls, value)
    for K in (16, 32, 64):
        log_none = _log_none_bounds(model.rule.value, n, r, K)
        if log_none is None:
            return None
        a, b = log_none
        if b == 0:
            return (Fraction(0), Fraction(0)) if vary == "balls" else (Fraction(1), Fraction(1))
        prec = 96 + max(0, -math.floor(math.log2(-b)))
        saved = iv.prec
        try:
            iv.prec = prec
            low = iv.exp(iv.mpf(a.numerator) / iv.mpf(a.denominator))
            high = iv.exp(iv.mpf(b.numerator) / iv.mpf(b.denominator))
            none_lo, none_hi = fraction(low._mpi_[0]), fraction(high._mpi_[1])
        finally:
            iv.prec = saved
        lo, hi = (1 - none_hi, 1 - none_lo) if vary == "balls" else (none_lo, min(none_hi, Fraction(1)))
        if lo > 0 and hi - lo <= lo * Fraction(1, 10 ** 20):
            return max(lo, Fraction(0)), hi
    return None


def _bounded_threshold(model: UrnModel, vary: str, value: int, start: int,
                       exact_digits: int) -> Optional[Threshold]:
    """The answer at a proved *value* with enclosures instead of exact probabilities, when those are too long.

    None (compute exactly) when the exact probabilities have at most
    *exact_digits* digits, or when an enclosure cannot be made narrow
    enough (:func:`_probability_enclosure`).
    """
    _, digits = exact_pair_cost(model, vary, value)
    if digits <= exact_digits:
        return None
    here = _probability_enclosure(model, vary, value)
    if here is None:
        return None
    before = None
    if value - 1 >= start:
        before = _probability_enclosure(model, vary, value - 1)
        if before is None:
            return None
    return Threshold(vary, value, None, None, "bisection", 0, bounds=(here, before), digits=digits)


def _check_exact_pair(model: UrnModel, vary: str, node: Event, goal: Fraction, value: int) -> None:
    """Refuse before the two exact evaluations when they are beyond the limits, saying what the answer is."""
    cost, digits = exact_pair_cost(model, vary, value)
    limits.check(
        cost,
        f"the least number of {vary} is {value:,} (proved by rational bounds on ln P: P({node}) reaches "
        f"{_probability_text(goal)} at {value:,} and not at {value - 1:,}); its exact probabilities there are "
        f"fractions of about {digits:,} digits each, and computing and writing them",
        advice="ask prob --event for one probability at a smaller size",
        parameters=["target"],
    )


def _gallop(vary, start, highest, goal, p, count, guess: int) -> Threshold:
    """Exact search outward from *guess*: steps 1, 2, 4, ... until the target is bracketed, then bisection."""
    guess = min(max(guess, start), highest)
    value = p(guess)
    if value >= goal and guess == start:
        return Threshold(vary, start, value, None, "bisection", count())
    if value >= goal:
        hi, hi_value = guess, value
        step = 1
        while True:
            lo = max(hi - step, start)
            lo_value = p(lo)
            if lo_value < goal:
                break
            hi, hi_value = lo, lo_value
            if lo == start:
                return Threshold(vary, start, lo_value, None, "bisection", count())
            step *= 2
    else:
        lo, lo_value = guess, value
        step = 1
        while True:
            hi = min(lo + step, highest)
            hi_value = p(hi)
            if hi_value >= goal:
                break
            if hi >= highest:
                raise TooLarge(
                    f"the target {_probability_text(goal)} is not reached up to {vary} = {_count_text(highest)} "
                    f"(P = {_probability_text(hi_value)} there); lower the target", parameters=["target"],
                )
            lo, lo_value = hi, hi_value
            step *= 2
    while hi - lo > 1:  # P(lo) < goal <= P(hi)
        mid = (lo + hi) // 2
        mid_value = p(mid)
        if mid_value >= goal:
            hi, hi_value = mid, mid_value
        else:
            lo, lo_value = mid, mid_value
    return Threshold(vary, hi, hi_value, lo_value, "bisection", count())


def _scan(vary, start, highest, goal, p, count) -> Threshold:
    """Try every value from *start* up; stop at :data:`SCAN_STEPS` values or when the time limit would pass.

    Each evaluation is cost-checked on its own; the scan also watches its
    total: when the time spent plus the last step's time would exceed the
    limit in force (:func:`enumerator.core.limits.active_limits`), it stops
    with a refusal naming the last value tried.
    """
    seconds = limits.active_limits().seconds
    began = time.perf_counter()
    before = None
    v = start
    while v <= highest and v - start < SCAN_STEPS:
        step_began = time.perf_counter()
        value = p(v)
        if value >= goal:
            return Threshold(vary, v, value, before, "scan", count())
        before = value
        now = time.perf_counter()
        if now - began + (now - step_began) > seconds:
            raise TooLarge(
                f"the target {_probability_text(goal)} is not reached for {vary} from {start} to {v} "
                f"(P = {_probability_text(value)} there) within the time limit of {seconds:g} s "
                "(monotonicity is not proved for this event and model, so every value is tried); "
                "raise max_seconds= (or ENUMERATOR_MAX_SECONDS), use an event built from max, min, occupied, "
                "kI, empty or count(>= J) comparisons on a model without bounds, or lower the target",
                parameters=["max_seconds", "target"],
            )
        v += 1
    raise TooLarge(
        f"the target {_probability_text(goal)} is not reached for {vary} from {start} to {v - 1} "
        f"(monotonicity is not proved for this event and model, so every value is tried, "
        f"at most {SCAN_STEPS:,}); use an event built from max, min, occupied, kI, empty or "
        "count(>= J) comparisons on a model without bounds, or lower the target",
        parameters=["target"],
    )
