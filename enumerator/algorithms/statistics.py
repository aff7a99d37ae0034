r"""Exact distributions of statistics of a random occupancy vector.

A configuration ``k = (k_1, ..., k_r)`` of an :class:`~enumerator.model.UrnModel`
is drawn under the model's rule (MB: every admissible assignment of the
distinguishable balls equally likely; BE/FD: every admissible vector equally
likely).  This module gives the exact law of any statistic of the registry
(:mod:`enumerator.algorithms.vocabulary`):

=================  ==========================================================
``empty``          the number of urns holding no ball
``occupied``       the number of urns holding at least one ball
``max``, ``min``   the largest and the smallest occupancy
``urn:I``          the occupancy ``k_I`` of urn ``I`` (1-based)
``exactly:J``      the number of urns holding exactly ``J`` balls
``atleast:J``      the number of urns holding at least ``J`` balls
``profile``        the occupancy profile: the entries sorted in decreasing
                   order (an integer partition of ``n`` with ``r`` parts,
                   zeros included)
=================  ==========================================================

as a :class:`Distribution`: the probability mass function over the support
(exact :class:`~fractions.Fraction` values, summing to exactly 1) and, for the
numeric statistics, the exact mean and variance.

Everything is counted in the model's equally likely outcomes — for a
weighted model, in the weight of the outcomes (MB: an assignment weighs
``prod_i w_i^{k_i}``, so ``P(k) = n!/prod k_i! prod (w_i/W)^{k_i}``,
conditioned on the bounds; BE/FD: ``P(k)`` proportional to
``prod_i w_i^{k_i}``) — by the statistic's exact route
(:mod:`enumerator.algorithms.laws`: bounded counts, binomial moments,
generating-function rows, profiles; listing only as a last resort), and
divided by their total once at the end.  Small unweighted models keep their
per-urn routes; weighted models and those of many urns are answered by urn
groups (:mod:`enumerator.algorithms.grouped`), at a cost that grows with
``n``, the number of groups and the size of the answer, never with ``r``.
:func:`statistic_moments` gives the exact mean and variance of a statistic
without its law where a cheaper route exists.

All arithmetic is exact (gmpy2 and FLINT inside); the public results are
``int`` and :class:`~fractions.Fraction`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction
from typing import Callable, Dict, List, Optional, Tuple, Union

import gmpy2

from ..core import limits
from ..core.errors import InvalidParameters, Unsupported
from ..core.limits import Cost
from ..core.model import UrnModel, as_count
from .bounded import outcome_count
from .counting import exact_fraction, over_prime_power, power_primes
from .laws import marked_moments, outcome_total
from .moments import Moments, counting_moments
from .vocabulary import STATISTICS, Statistic, parse_statistic

__all__ = [
    "DEFAULT_LIMIT",
    "Distribution",
    "STATISTICS",
    "Statistic",
    "distribution",
    "outcome_count",
    "parse_statistic",
    "statistic_counts",
    "statistic_moments",
]

mpz = gmpy2.mpz

#: Default size limit: the most configurations listed, profiles generated or
#: bounded counts summed by one request; raise it with ``limit=``.
DEFAULT_LIMIT = 10 ** 6

Value = Union[int, Tuple[int, ...]]


# ---------------------------------------------------------------------------
# the result
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class Distribution:
    """The exact law of a statistic under a model.

    Attributes
    ----------
    statistic : str
        The statistic's name (``"max"``, ``"urn:2"``, ...).
    pmf : dict
        ``{value: Fraction}`` over the support (values of probability 0 are
        left out), in increasing order of value; values are ``int``, or
        tuples of ints in decreasing order for ``profile``.  Sums to exactly 1.
    mean, variance : Fraction or None
        Exact moments; ``None`` for ``profile``.
    """

    statistic: str
    pmf: Dict[Value, Fraction]
    mean: Optional[Fraction]
    variance: Optional[Fraction]

    def probability(self, value) -> Fraction:
        """``P(statistic == value)`` (exactly 0 off the support)."""
        if isinstance(value, list):
            value = tuple(value)
        return self.pmf.get(value, Fraction(0))

    @property
    def support(self) -> List[Value]:
        """The values of positive probability, in increasing order."""
        return list(self.pmf)


def distribution(model: UrnModel, statistic: Union[str, Statistic], limit: int = DEFAULT_LIMIT) -> Distribution:
    """Return the exact distribution of *statistic* under *model*'s rule.

    Parameters
    ----------
    model : UrnModel
        The model; its rule fixes which outcomes are equally likely.
    statistic : str or Statistic
        ``empty``, ``occupied``, ``max``, ``min``, ``urn:I``, ``exactly:J``,
        ``atleast:J`` or ``profile`` (see :func:`parse_statistic`).
    limit : int
        The most profiles generated, or configurations listed, when a
        method has to go one by one (default :data:`DEFAULT_LIMIT`).

    Returns
    -------
    Distribution
        Exact pmf, mean and variance (see the module docstring for the
        method used for each statistic).

    Raises
    ------
    InvalidParameters
        for an unknown statistic, an urn number outside ``1..r``, or a model
        that admits no configuration (every probability would be 0/0).
    TooLarge
        when the statistic needs more than *limit* objects one by one.

    Examples
    --------
    >>> d = distribution(UrnModel(balls=3, urns=3, rule="MB"), "empty")
    >>> d.pmf
    {0: Fraction(2, 9), 1: Fraction(2, 3), 2: Fraction(1, 9)}
    >>> d.mean, d.variance
    (Fraction(8, 9), Fraction(26, 81))
    >>> distribution(UrnModel(balls=3, urns=2, rule="BE"), "max").pmf
    {2: Fraction(1, 2), 3: Fraction(1, 2)}
    """
    stat = parse_statistic(statistic)
    counts, total = statistic_counts(model, stat, limit)
    reduce = _reducer(model, total)
    pmf = {value: reduce(c) for value, c in sorted(counts.items()) if c}
    mean = variance = None
    if stat.numeric:
        first = sum((mpz(v) * c for v, c in counts.items()), mpz(0))
        second = sum((mpz(v) * v * c for v, c in counts.items()), mpz(0))
        mean = exact_fraction(first, total)
        variance = exact_fraction(second * total - first * first, total * total)
    return Distribution(stat.name, pmf, mean, variance)


def statistic_counts(model: UrnModel, statistic: Union[str, Statistic], limit: int = DEFAULT_LIMIT):
    """Return ``(counts, total)``: how many equally likely outcomes give each value.

    Parameters
    ----------
    model : UrnModel
        The model; its rule fixes which outcomes are equally likely.
    statistic : str or Statistic
        A statistic of the registry (see :func:`parse_statistic`).
    limit : int
        As in :func:`distribution`.

    Returns
    -------
    counts : dict
        ``{value: int}`` (values of count 0 may be missing).
    total : int
        The number of outcomes of *model* (MB: microstates; BE/FD:
        configurations), so ``P(value) = counts[value] / total``.  For a
        weighted model, counts and total are weights, with the weights
        scaled to integers (:func:`~enumerator.algorithms.grouped.integer_groups`:
        the common factor cancels in every ratio).

    Raises
    ------
    InvalidParameters, TooLarge
        as :func:`distribution`.

    Notes
    -----
    Follows the statistic's registry entry to its route in
    :mod:`enumerator.algorithms.laws`; the costs are given there, and each
    route checks its estimate with :func:`~enumerator.core.limits.check`
    before computing (:class:`~enumerator.core.errors.TooLarge` beyond the
    limits).
    """
    stat = parse_statistic(statistic)
    limit = as_count(limit, "limit", 1)
    if stat.entry.indexes_urns and stat.parameter > model.urns:
        raise InvalidParameters(
            f"statistic {stat.name!r} names urn {stat.parameter}, but the model has {model.urns} urns; "
            f"use urn:1 to urn:{model.urns}"
        )
    # before the total: its size is at most n log2(n + sum of the weights) bits
    weight = sum(g.count * g.weight for g in model.groups)
    _check_answer_size(model, stat, model.balls * math.log2(model.balls + 2 + weight))
    total = outcome_total(model)
    if total == 0:
        raise InvalidParameters(
            f"the model of {model} admits no configuration, so {stat.name!r} has no distribution; "
            "loosen the bounds or change the number of balls"
        )
    _check_answer_size(model, stat, int(total).bit_length())
    counts = stat.counts(model, total, limit)
    counts = {v: int(c) for v, c in counts.items() if c}
    if sum(counts.values()) != total:  # pragma: no cover - an internal invariant
        raise AssertionError(f"counts of {stat.name} do not add up to the total for {model!r}")
    return counts, int(total)


def statistic_moments(model: UrnModel, statistic: Union[str, Statistic], limit: int = DEFAULT_LIMIT) -> Moments:
    r"""Return the exact mean and variance of *statistic* under *model*, without its law where possible.

    Parameters
    ----------
    model : UrnModel
        Any model: weights, bounds, any number of urns.
    statistic : str or Statistic
        A numeric statistic of the registry (``empty``, ``occupied``,
        ``exactly:J``, ``atleast:J``, ``max``, ``min``, ``urn:I``).
    limit : int
        As in :func:`distribution`, for the statistics read off their law.

    Returns
    -------
    Moments
        ``statistic``, exact ``Fraction`` ``mean`` and ``variance``.

    Raises
    ------
    InvalidParameters
        For ``profile`` (no mean), an unknown statistic, an urn beyond ``r``,
        or a model that admits no configuration.
    TooLarge
        When the route's estimated cost is beyond the limits.

    Notes
    -----
    Counting statistics (``X`` = the urns whose occupancy lies in a window):

    1. closed binomial and trinomial laws of one urn and of a pair
       (:func:`~enumerator.algorithms.moments.counting_moments`) for MB
       groups without bounds, any weights, and BE/FD equal free urns:
       ``O(G^2 |T|^2)`` big products, independent of ``r``;
    2. otherwise the binomial moments ``E[X]`` and ``E[X(X-1)]`` as sums of
       bounded counts over groups and pairs of groups
       (:func:`~enumerator.algorithms.laws.marked_moments`, Feller, vol. 1,
       ch. IV.3): ``G + G^2`` grouped counts.

    ``Var X = E[X(X-1)] + E[X] - E[X]^2``.  ``max``, ``min`` and ``urn:I``
    are read off their exact law (:func:`distribution`).

    Examples
    --------
    The number of occupied buckets for 23 keys in 365 (MB):
    ``E = 365 (1 - (364/365)^23)``:

    >>> m = statistic_moments(UrnModel(balls=23, urns=365, rule="MB"), "occupied")
    >>> m.mean == 365 * (1 - Fraction(364, 365) ** 23)
    True
    """
    stat = parse_statistic(statistic)
    if not stat.numeric:
        raise InvalidParameters(f"statistic {stat.name!r} has no mean or variance; choose a numeric statistic")
    if stat.entry.indexes_urns and stat.parameter > model.urns:
        raise InvalidParameters(
            f"statistic {stat.name!r} names urn {stat.parameter}, but the model has {model.urns} urns; "
            f"use urn:1 to urn:{model.urns}"
        )
    if stat.entry.marking is None:
        law = distribution(model, stat, limit)
        return Moments(stat.name, law.mean, law.variance)
    if stat.kind in ("empty", "occupied", "exactly", "atleast"):
        try:
            return counting_moments(model.balls, model.rule, model.groups, stat.name)
        except Unsupported:
            pass
    if outcome_total(model) == 0:
        raise InvalidParameters(
            f"the model of {model} admits no configuration, so {stat.name!r} has no moments; "
            "loosen the bounds or change the number of balls"
        )
    how, J = stat.entry.marking(stat.parameter)
    low, high = (J, J) if how == "exactly" else (J, None)
    mean, falling = marked_moments(model, low, high)
    variance = falling + mean - mean * mean
    return Moments(stat.name, mean, variance)


def _support_bound(model: UrnModel, stat: Statistic) -> int:
    """At most how many values *stat* takes under *model* (``n + 1`` for most; profiles are checked by their route)."""
    n, r = model.balls, model.urns
    if stat.kind == "min":
        return n // r + 1
    if stat.kind in ("empty", "occupied", "exactly", "atleast", "count"):
        return min(n, r) + 1
    return n + 1


def _check_answer_size(model: UrnModel, stat: Statistic, bits: float) -> None:
    """Refuse a law whose exact counts alone (values x *bits* bits of the total) are beyond the limits."""
    if not stat.numeric:
        return
    values = _support_bound(model, stat)
    bits = max(64, int(bits))
    limits.check(Cost(seconds=values * limits.product_seconds(bits), memory=2 * values * limits.bigint_bytes(bits)),
                 f"the law of {stat.name} ({values:,} exact values of up to {bits:,} bits)",
                 advice="use fewer balls, or ask for one probability (an event) or the moments instead")


# ---------------------------------------------------------------------------
# exact fractions without big gcds
# ---------------------------------------------------------------------------

def _reducer(model: UrnModel, total) -> Callable[[int], Fraction]:
    """A function ``count -> Fraction(count, total)``.

    For labelled balls without bounds ``total = r^n`` and only the primes of
    ``r`` can cancel (:func:`~enumerator.algorithms.counting.over_prime_power`);
    otherwise GMP's gcd.
    """
    n, r = model.balls, model.urns
    total = mpz(total)
    if not model.weighted and model.rule.distinguishable and 1 < r <= 2 ** 64 and total == mpz(r) ** n:
        primes = power_primes(r, n)
        return lambda count: over_prime_power(count, total, primes)
    return lambda count: exact_fraction(count, total)
