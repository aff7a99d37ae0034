r"""Exact distributions of statistics of a random occupancy vector.

A configuration ``k = (k_1, ..., k_r)`` of an :class:`~enumerator.model.UrnModel`
is drawn under the model's rule (MB: every admissible assignment of the
distinguishable balls equally likely; BE/FD: every admissible vector equally
likely).  This module gives the exact law of

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

Methods (everything is counted in the model's equally likely outcomes, and
divided by their total once at the end):

* ``max`` and ``min`` — bounded counts.  ``P(max <= m)`` is the count of the
  model with every upper bound lowered to ``m``, ``P(min >= m)`` the count
  with every lower bound raised to ``m``; the pmf is a difference of such
  cumulative counts, and the walk stops as soon as a cumulative count reaches
  the total.  For MB with no bounds (the balls-into-bins case) the counts of
  all ``m`` come from :func:`_mb_max_cumulative` (J. C. P. Miller's power
  recurrence for small ``m``, a differential-equation recursion over the
  number of urns with extensions for larger ``m``, and a closed form once
  at most one urn can exceed ``m``) and :func:`_mb_at_least`.
* counting statistics (``empty``, ``occupied``, ``exactly:J``, ``atleast:J``)
  — the bivariate generating function ``prod_i (u s_i(x) + t_i(x))`` with a
  marking variable ``u`` on the occupancies in the chosen set (Flajolet &
  Sedgewick, *Analytic Combinatorics*, 2009, §III.2), taken through its
  binomial moments: ``B_j = E[C(X, j)]`` is a sum of counts in which ``j``
  chosen urns are confined to the set, and the pmf is the inverse binomial
  transform ``P(X = i) = sum_j (-1)^{j-i} C(j, i) B_j`` (Riordan,
  *An Introduction to Combinatorial Analysis*, 1958, ch. 3; for the number
  of empty cells under MB this is the classical formula of Feller, vol. 1,
  ch. IV, §2), done as one exact polynomial product when the support is long.
  Closed forms give ``B_j`` for MB and BE without bounds; otherwise each is a
  bounded count.
* ``urn:I`` — the marginal ``P(k_I = v)``: the weight of ``v`` balls in urn
  ``I`` times the count of the other urns holding ``n - v``, all ``v`` at once
  from one generating-function row of the other urns (binomial for MB
  without bounds).
* ``profile`` — every partition of ``n`` that fits the bounds, with the number
  of labelled vectors having it (``r! / prod_v mult_v!`` for uniform bounds,
  a dynamic programme over groups of equal bounds otherwise) times the
  weight of one vector (MB: the multinomial ``n! / prod k_i!``).  The number
  of profiles is counted first (a Gaussian binomial coefficient) and a
  request above *limit* raises :class:`~enumerator.errors.TooLarge`.

Full enumeration of the configurations (:mod:`enumerator.listing`) is the
last resort, used only for per-urn bounds so varied that the group method
would need more bounded counts than listing the configurations, and refused
above *limit*.

All arithmetic is exact (gmpy2 and FLINT inside); the public results are
``int`` and :class:`~fractions.Fraction`.
"""

from __future__ import annotations

import math
import re
from collections import Counter
from dataclasses import dataclass
from fractions import Fraction
from typing import Callable, Dict, List, Optional, Sequence, Tuple, Union

import gmpy2
from flint import fmpz, fmpz_poly

from ..core import series
from ..core.errors import InvalidParameters, TooLarge
from ..core.model import UrnModel, as_count
from ..core.rules import Rule
from .counting import count_configurations, count_microstates, count_profiles, multinomial
from .listing import iter_configurations

__all__ = [
    "DEFAULT_LIMIT",
    "Distribution",
    "STATISTICS",
    "Statistic",
    "distribution",
    "outcome_count",
    "parse_statistic",
    "statistic_counts",
]

mpz = gmpy2.mpz
divexact = gmpy2.divexact

#: Default size limit: the most configurations listed, profiles generated or
#: bounded counts summed by one request; raise it with ``limit=``.
DEFAULT_LIMIT = 10 ** 6

#: The statistic names :func:`parse_statistic` accepts (``I``, ``J``: whole numbers).
STATISTICS = ("empty", "occupied", "max", "min", "urn:I", "exactly:J", "atleast:J", "profile")

_NAMES_HELP = "empty, occupied, max, min, urn:I (I = 1..r), exactly:J, atleast:J or profile"

Value = Union[int, Tuple[int, ...]]


# ---------------------------------------------------------------------------
# statistics and their values
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class Statistic:
    """A statistic of an occupancy vector: a *kind* and, for some kinds, a number.

    ``Statistic("urn", 2)`` is the occupancy of urn 2 (1-based),
    ``Statistic("exactly", 0)`` the number of empty urns; see :data:`STATISTICS`.
    """

    kind: str
    parameter: Optional[int] = None

    @property
    def name(self) -> str:
        """The statistic written as :func:`parse_statistic` reads it (``"urn:2"``)."""
        return self.kind if self.parameter is None else f"{self.kind}:{self.parameter}"

    @property
    def numeric(self) -> bool:
        """True unless the values are profiles (tuples)."""
        return self.kind != "profile"

    def value(self, config: Sequence[int]) -> Value:
        """The statistic of one occupancy vector (no bounds are checked)."""
        kind, j = self.kind, self.parameter
        if kind == "empty":
            return sum(1 for v in config if v == 0)
        if kind == "occupied":
            return sum(1 for v in config if v > 0)
        if kind == "max":
            return max(config)
        if kind == "min":
            return min(config)
        if kind == "urn":
            return config[j - 1]
        if kind == "exactly":
            return sum(1 for v in config if v == j)
        if kind == "atleast":
            return sum(1 for v in config if v >= j)
        return tuple(sorted(config, reverse=True))


_PARAMETER = {"urn": "I", "exactly": "J", "atleast": "J"}
_PLAIN = ("empty", "occupied", "max", "min", "profile")


def parse_statistic(text: Union[str, Statistic]) -> Statistic:
    """Read a statistic name: ``empty``, ``occupied``, ``max``, ``min``, ``urn:I``,
    ``exactly:J``, ``atleast:J`` or ``profile`` (any case, spaces ignored).

    Raises :class:`~enumerator.errors.InvalidParameters` naming the choices.

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
    if kind in _PLAIN:
        if sep:
            raise InvalidParameters(f"statistic {kind!r} takes no number (got {text!r}); write just {kind!r}")
        return Statistic(kind)
    if kind in _PARAMETER:
        letter = _PARAMETER[kind]
        example = f"{kind}:1" if kind == "urn" else f"{kind}:2"
        if not sep or not arg:
            raise InvalidParameters(
                f"statistic {kind!r} needs a number after a colon, {kind}:{letter} (for example {example!r})"
            )
        if not re.fullmatch(r"\d+", arg):
            raise InvalidParameters(
                f"the number in statistic {text!r} must be a whole number >= {1 if kind == 'urn' else 0} "
                f"(for example {example!r})"
            )
        number = int(arg)
        if kind == "urn" and number < 1:
            raise InvalidParameters(f"urns are numbered from 1 (got {text!r}); write urn:1 for the first urn")
        return Statistic(kind, number)
    raise InvalidParameters(f"unknown statistic {text!r}; choose {_NAMES_HELP}")


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
        mean = _fraction(first, total)
        variance = _fraction(second * total - first * first, total * total)
    return Distribution(stat.name, pmf, mean, variance)


def statistic_counts(model: UrnModel, statistic: Union[str, Statistic], limit: int = DEFAULT_LIMIT):
    """Return ``(counts, total)``: how many equally likely outcomes give each value.

    ``counts`` is ``{value: int}`` (values of count 0 may be missing) and
    ``total`` is the number of outcomes of *model* (MB: microstates; BE/FD:
    configurations), so ``P(value) = counts[value] / total``.  Same methods
    and errors as :func:`distribution`.
    """
    stat = parse_statistic(statistic)
    limit = as_count(limit, "limit", 1)
    if stat.kind == "urn" and stat.parameter > model.urns:
        raise InvalidParameters(
            f"statistic {stat.name!r} names urn {stat.parameter}, but the model has {model.urns} urns; "
            f"use urn:1 to urn:{model.urns}"
        )
    total = outcome_count(model.bounds, model.rule, model.balls)
    if total == 0:
        raise InvalidParameters(
            f"the model ({model!r}) admits no configuration, so {stat.name!r} has no distribution; "
            "loosen the bounds or change the number of balls"
        )
    kind = stat.kind
    if kind == "max":
        counts = _max_counts(model, total)
    elif kind == "min":
        counts = _min_counts(model, total)
    elif kind == "urn":
        counts = _urn_counts(model, stat.parameter - 1)
    elif kind == "profile":
        counts = _profile_counts(model, limit)
    else:
        if kind == "empty":
            low, high, flip = 0, 0, False
        elif kind == "occupied":
            low, high, flip = 0, 0, True
        elif kind == "exactly":
            low, high, flip = stat.parameter, stat.parameter, False
        else:
            low, high, flip = stat.parameter, None, False
        counts = _marked_counts(model, low, high, limit)
        if flip:
            counts = {model.urns - v: c for v, c in counts.items()}
    counts = {v: int(c) for v, c in counts.items() if c}
    if sum(counts.values()) != total:  # pragma: no cover - an internal invariant
        raise AssertionError(f"counts of {stat.name} do not add up to the total for {model!r}")
    return counts, int(total)


# ---------------------------------------------------------------------------
# exact fractions without big gcds
# ---------------------------------------------------------------------------

def _fraction(num, den) -> Fraction:
    """``num / den`` reduced by GMP (subquadratic gcd), wrapped as a Fraction."""
    q = gmpy2.mpq(int(num), int(den))
    return _wrap(q.numerator, q.denominator)


def _wrap(num, den) -> Fraction:
    f = object.__new__(Fraction)
    f._numerator = int(num)  # already in lowest terms with den > 0
    f._denominator = int(den)
    return f


def _reducer(model: UrnModel, total) -> Callable[[int], Fraction]:
    """A function ``count -> Fraction(count, total)``.

    For MB without bounds ``total = r^n`` and only the primes of ``r`` can
    cancel, so each is removed from the numerator (GMP ``mpz_remove``) up
    to its power in the total; otherwise GMP's gcd.
    """
    n, r = model.balls, model.urns
    total = mpz(total)
    if model.rule is Rule.MB and r > 1 and total == mpz(r) ** n:
        primes = [(int(p), int(e) * n) for p, e in fmpz(r).factor()]

        def reduce(count):
            num, den = mpz(count), total
            for p, top in primes:
                stripped, times = gmpy2.remove(num, p)
                if times > top:
                    times = top
                    stripped = divexact(num, mpz(p) ** top)
                if times:
                    num = stripped
                    den = divexact(den, mpz(p) ** times)
            return _wrap(num, den)

        return reduce
    return lambda count: _fraction(count, total)


# ---------------------------------------------------------------------------
# outcome counts for arbitrary bounds (the bounded counts)
# ---------------------------------------------------------------------------

def outcome_count(bounds: Sequence[Tuple[int, Optional[int]]], rule, balls: int) -> int:
    """The number of equally likely outcomes of ``balls`` balls in urns with *bounds*.

    MB: assignments of labelled balls with every urn within its bounds; BE
    and FD: admissible occupancy vectors.  This is the bounded count behind
    every distribution and event: ``P(max <= m)`` is ``outcome_count`` of
    the bounds with upper bounds lowered to ``m``, divided by the model's.
    Infeasible bounds give 0.

    MB bounds where most urns are unbounded are handled without expanding
    their factors: ``n! [x^n] P(x) e^{q x}`` for ``q`` free urns and a
    polynomial ``P`` of the others is ``sum_i C(n, i) N(i) q^{n-i}``
    (Flajolet & Sedgewick 2009, §II.2), one Horner pass.  Everything else
    is :func:`~enumerator.counting.count_microstates` of the model with
    those bounds, except uniform MB lower bounds ``a >= 2`` without upper
    bounds (:func:`_mb_at_least`).

    >>> outcome_count([(0, 1)] * 3, "MB", 2)
    6
    >>> outcome_count([(2, None), (0, None)], "MB", 3)
    4
    """
    rule = Rule.parse(rule)
    bounds = tuple((int(a), None if b is None else int(b)) for a, b in bounds)
    n = int(balls)
    low = sum(a for a, _ in bounds)
    if n < low or any(b is not None and b < a for a, b in bounds):
        return 0
    if rule is not Rule.MB:
        # FD's admissible vectors are BE's with the same (capped) bounds.
        return count_configurations(UrnModel(balls=n, bounds=bounds, rule=Rule.BE))
    r = len(bounds)
    free = [i for i, (a, b) in enumerate(bounds) if a == 0 and (b is None or b >= n - low)]
    uniform = all(p == bounds[0] for p in bounds)
    if uniform:
        a, b = bounds[0]
        if a >= 2 and (b is None or b >= n - (r - 1) * a):
            return int(_mb_at_least(n, r, a))
        return count_microstates(UrnModel(balls=n, bounds=bounds, rule=Rule.MB))
    if not free:
        return count_microstates(UrnModel(balls=n, bounds=bounds, rule=Rule.MB))
    rest = [bounds[i] for i in range(r) if i not in set(free)]
    return int(_mb_free_dot(rest, len(free), n))


def _mb_bounded_part(bounds, top: int):
    """``(coeffs, shift, scale)`` with ``prod_i sum_{k=a_i}^{b_i} x^k/k! = x^shift * coeffs(x) / scale``.

    Equal bounds are grouped into one truncated power of the factorial-scaled
    window ``sum_k (b!/k!) x^{k-a}`` (FLINT), the groups multiplied with
    truncation at degree ``top - shift``; missing upper bounds are capped at
    what *top* balls allow.
    """
    shift = sum(a for a, _ in bounds)
    room = top - shift
    groups: Counter = Counter()
    for a, b in bounds:
        b = a + room if b is None else min(b, a + room)
        groups[(a, b)] += 1
    factors = []
    scale = mpz(1)
    for (a, b), e in sorted(groups.items()):
        scale *= gmpy2.fac(b) ** e
        if b > a:
            factors.append(series.power(series.falling_window(a, b), e, room))
        else:
            factors.append(fmpz_poly([int(gmpy2.fac(b) // gmpy2.fac(a)) ** e]))
    return series.product(factors, room), shift, scale


def _mb_free_dot(bounds, q: int, n: int):
    """MB assignments of ``n`` balls: urns with *bounds* plus ``q`` unbounded urns.

    ``sum_i C(n, i) N(i) q^{n-i}`` with ``N(i) = i! [x^i] P(x)`` the
    assignments of ``i`` balls to the bounded urns: a Horner pass
    ``acc <- acc q + c_i n^{(i)}`` over the scaled coefficients ``c_i`` of
    ``P`` and one exact division by the scale (``O(n)`` big operations).
    """
    if not bounds:
        return mpz(q) ** n
    poly, shift, scale = _mb_bounded_part(bounds, n)
    coeffs = poly.coeffs()
    top = min(n, shift + len(coeffs) - 1)
    if top < shift:
        return mpz(0)
    acc = mpz(0)
    falling = mpz(1)  # n (n-1) ... (n-i+1)
    for i in range(shift):
        falling *= n - i
    for i in range(shift, top + 1):
        acc = acc * q + int(coeffs[i - shift]) * falling
        falling *= n - i
    acc *= mpz(q) ** (n - top)
    return divexact(acc, scale)


def _outcome_row(bounds, rule: Rule, top: int) -> List:
    """Outcome counts of ``L = 0..top`` balls in urns with *bounds*, as ``mpz``.

    BE/FD: the coefficients of ``prod_i (x^{a_i} + ... + x^{b_i})``, written
    as ``x^A prod_d (1 - x^d)^{e_d} (1 - x)^{-R}`` (sparse binomial powers
    times one binomial row, one FLINT product).  MB: ``L! [x^L] P(x) e^{q x}``
    for the bounded urns' EGF ``P`` and ``q`` unbounded urns — a binomial
    convolution done as one product of factorial-scaled rows.
    """
    if top < 0:
        return []
    if not bounds:
        return [mpz(1)] + [mpz(0)] * top
    if rule is not Rule.MB:
        shift = sum(a for a, _ in bounds)
        room = top - shift
        if room < 0:
            return [mpz(0)] * (top + 1)
        groups: Counter = Counter()
        for a, b in bounds:
            if b is not None and b - a + 1 <= room:
                groups[b - a + 1] += 1
        numerator = series.product([series.one_minus_power(d, e, room) for d, e in sorted(groups.items())], room)
        row = fmpz_poly([int(c) for c in series.binomial_row(len(bounds), room)])
        values = [mpz(0)] * shift + [mpz(int(c)) for c in series.coefficients(numerator.mul_low(row, room + 1), room)]
        return values[: top + 1]
    def is_free(p):
        return p[0] == 0 and (p[1] is None or p[1] >= top)

    rest = [p for p in bounds if not is_free(p)]
    q = len(bounds) - len(rest)
    fac = gmpy2.fac
    if not rest:
        return [mpz(q) ** L for L in range(top + 1)]
    poly, shift, scale = _mb_bounded_part(rest, top)
    coeffs = [0] * shift + [int(c) for c in poly.coeffs()]
    coeffs = (coeffs + [0] * (top + 1))[: top + 1]
    if q == 0:
        return [divexact(fac(L) * c, scale) for L, c in enumerate(coeffs)]
    # X_i = top! c_i / scale (integers: top! P_i), Y_j = q^j top!/j!
    ftop = fac(top)
    x_row = [int(divexact(ftop * c, scale)) if c else 0 for c in coeffs]
    y_row = [0] * (top + 1)
    y = mpz(1)
    for j in range(top, -1, -1):  # top!/j! from the top down, times q^j
        y_row[j] = y
        y *= j if j else 1
    qp = mpz(1)
    for j in range(top + 1):
        y_row[j] = int(y_row[j] * qp)
        qp *= q
    prod = fmpz_poly(x_row).mul_low(fmpz_poly(y_row), top + 1)
    square = ftop * ftop
    return [divexact(fac(L) * int(c), square) for L, c in enumerate(series.coefficients(prod, top))]


# ---------------------------------------------------------------------------
# MB without bounds: counts of the maximum and the minimum
# ---------------------------------------------------------------------------

def _mb_miller(n: int, r: int, m: int):
    """MB assignments of ``n`` balls to ``r`` urns with every urn at most ``m``.

    ``N(k) = k! [x^k] e_m(x)^r`` with ``e_m = sum_{j<=m} x^j/j!``, by
    J. C. P. Miller's recurrence for the power of a series (Knuth, *TAOCP*
    vol. 2, 3rd ed., 1997, §4.7, eq. (9)) written for the integers ``N``:
    ``N(k) = (1/k) sum_{j=1}^{m} ((r+1) j - k) C(k, j) N(k-j)``.
    Cost ``O(n m)`` multiplications of a big number by a small one.
    """
    N = [mpz(0)] * (n + 1)
    N[0] = mpz(1)
    r1 = r + 1
    value = mpz(1)
    for k in range(1, min(m, n) + 1):
        value *= r
        N[k] = value
    for k in range(m + 1, n + 1):
        total = mpz(0)
        c = mpz(1)
        for j in range(1, m + 1):
            c = c * (k - j + 1) // j
            total += (r1 * j - k) * c * N[k - j]
        N[k] = divexact(total, k)
    return N[n]


def _level_cost(n: int, r: int, m: int) -> int:
    """Steps of :func:`_mb_max_levels` at bound *m* (sum over levels of ``K_t - m``)."""
    cost = 0
    t = 0
    while t < r:
        K = n - t * (m + 1)
        if K <= m:
            break
        cost += K - m
        t += 1
    return cost


def _extension_cost(n: int, r: int, m: int, d: int) -> float:
    """Work of :func:`_mb_max_extend` for the bound ``m + d`` from base *m*.

    About ``t(d-1)`` products per level ``t``, each growing with the size of
    the coefficients of ``delta^t`` (``~ t (d-1) log2(m+d)`` bits) against
    the ~20,000-bit level entries.
    """
    T = min(r, n // (m + 1))
    bits = math.log2(m + d)
    return sum((min(n - t * (m + 1), t * (d - 1)) + 1) * (1 + t * (d - 1) * bits / 3000) for t in range(1, T + 1))


def _mb_max_levels(n: int, r: int, m: int, keep: Callable[[int], int]):
    r"""Counts with every urn at most *m*, for ``r, r-1, ..., r-T`` urns.

    ``L_t(k)`` = assignments of ``k`` balls to ``r - t`` urns each at most
    ``m``.  The truncated exponential satisfies ``e_m' = e_m - x^m/m!``, so
    ``(e_m^j)' = j e_m^j - j (x^m/m!) e_m^{j-1}``, i.e.

    ``L_t(k+1) = j (L_t(k) - C(k, m) L_{t+1}(k - m))``,  ``j = r - t``,

    with ``L_t(k) = j^k`` for ``k <= m``.  Level ``t`` is needed up to
    ``K_t = n - t(m+1)``; the deepest levels are closed forms, so the cost is
    ``sum_t (K_t - m) ~ n^2 / (2m)`` small-by-big multiplications, against
    ``n m`` for :func:`_mb_miller`.

    Returns ``(L_0(n), tails)`` with ``tails[t][i] = L_t(K_t - i)`` for
    ``i < keep(t)``, the entries :func:`_mb_max_extend` reads.
    """
    T = min(r, n // (m + 1))
    tails: List[List] = [[] for _ in range(T + 1)]
    prev: List = []
    cur: List = [mpz(1)]
    # C(k, m) for k = m .. n - 1, shared by every level
    binomials = [mpz(1)] * max(n - m, 0)
    c = mpz(1)
    for k in range(m, n - 1):
        c = divexact(c * (k + 1), k + 1 - m)
        binomials[k + 1 - m] = c
    for t in range(T, -1, -1):
        j = r - t
        K = n - t * (m + 1)
        if j == 0:
            cur = [mpz(1)] + [mpz(0)] * K
        else:
            cur = [mpz(0)] * (K + 1)
            v = mpz(1)
            cur[0] = v
            for k in range(1, min(m, K) + 1):
                v *= j
                cur[k] = v
            if K > m:
                for k in range(m, K):
                    v = j * (v - binomials[k - m] * prev[k - m])
                    cur[k + 1] = v
        take = min(K + 1, keep(t))
        tails[t] = cur[K - take + 1:][::-1]
        prev = cur
    return cur[n], tails


def _mb_max_extend(n: int, r: int, m: int, d: int, vtails) -> "mpz":
    r"""Assignments with every urn at most ``m + d``, from the levels at bound *m*.

    With ``delta = sum_{l=m+1}^{m+d} x^l/l!``,
    ``e_{m+d}^r = sum_t C(r, t) delta^t e_m^{r-t}``, so

    ``N = sum_t C(r, t) sum_u C(n, u) D_t(u) L_t(n - u)``,

    ``D_t(u) = u! [x^u] delta^t`` (``t`` urns holding ``m+1..m+d`` each),
    ``u = t(m+1) + i`` with ``0 <= i <= t(d-1)``.  The powers of the scaled
    ``delta`` are FLINT products of short polynomials; *vtails* holds the
    precomputed ``K_t^{(i)} L_t(K_t - i)`` (falling factorials), so each
    term is one product.  Cost ``~ T^2 d / 2`` products, ``T = n/(m+1)``.
    """
    F = gmpy2.fac(m + d)
    eps = fmpz_poly([int(divexact(F, gmpy2.fac(m + 1 + i))) for i in range(d)])
    E = fmpz_poly([1])
    total = mpz(0)
    binom = mpz(1)
    falling = mpz(1)  # n! / K_t!
    Fpow = mpz(1)
    for t in range(len(vtails)):
        K = n - t * (m + 1)
        if t:
            E = E.mul_low(eps, K + 1)
            binom = divexact(binom * (r - t + 1), t)
            for s in range(K + 1, K + m + 2):
                falling *= s
            Fpow *= F
        row = vtails[t]
        acc = mpz(0)
        for i, c in enumerate(E.coeffs()[: len(row)]):
            if c:
                acc += int(c) * row[i]
        if acc:
            total += binom * divexact(falling * acc, Fpow)
    return total


#: Relative cost of one Miller step, one level step and one extension product
#: (measured on ~20,000-bit numbers, MB n=2000 r=500; only their ratios matter).
_COST_MILLER, _COST_LEVEL, _COST_EXTEND = 2.45, 4.5, 8.0


def _mb_max_cumulative(n: int, r: int, top: int) -> Dict[int, "mpz"]:
    r"""``A_m`` = MB assignments of ``n`` balls to ``r`` urns with every urn at most ``m``,
    for every ``m`` from ``ceil(n/r)`` to ``top`` (``top <= n``).

    Three regimes, chosen by a cost model:

    * small ``m``: :func:`_mb_miller`, ``O(n m)``;
    * larger ``m``: :func:`_mb_max_levels` at a base bound (``~ n^2/(2m)``),
      then :func:`_mb_max_extend` for the next bounds as long as an
      extension costs less than the average so far per bound;
    * once two urns cannot both exceed ``m`` (``2(m+1) > n``), inclusion–
      exclusion has one term: ``A_m = r^n - r sum_{s>m} C(n, s)(r-1)^{n-s}``
      (Feller, vol. 1, ch. IV), one pass of suffix sums for all those ``m``.

    For MB ``n = 2000``, ``r = 500`` (support ``4..2000``) this is a few
    seconds (scripts/bench.py).
    """
    A: Dict[int, mpz] = {}
    lo = -(-n // r)
    if top < lo:
        return A
    total = mpz(r) ** n
    if r == 1:
        return {n: mpz(1)} if top >= n else {}
    half = n // 2  # from here on 2(m+1) > n
    if top >= half:
        suffix = mpz(0)
        term = mpz(1)  # C(n, s) (r-1)^(n-s) at s = n
        for s in range(n, max(lo, half) - 1, -1):
            if s <= top:
                A[s] = total - r * suffix
            suffix += term
            term = divexact(term * s * (r - 1), n - s + 1)
    m = lo
    last = min(top, half - 1)
    while m <= last:
        spent = _COST_LEVEL * (_level_cost(n, r, m) + n)
        D = 0
        while m + D + 1 <= last:
            extra = _COST_EXTEND * _extension_cost(n, r, m, D + 1)
            if extra >= spent / (D + 1):
                break
            spent += extra
            D += 1
        if _COST_MILLER * n * m <= spent / (D + 1):
            A[m] = _mb_miller(n, r, m)
            m += 1
            continue
        value, tails = _mb_max_levels(n, r, m, lambda t, D=D: t * max(D - 1, 0) + 1)
        A[m] = value
        if D:
            vtails = []
            for t, tail in enumerate(tails):
                K = n - t * (m + 1)
                row = []
                falling = mpz(1)
                for i, v in enumerate(tail):
                    row.append(falling * v)
                    falling *= K - i
                vtails.append(row)
            for d in range(1, D + 1):
                A[m + d] = _mb_max_extend(n, r, m, d, vtails)
        m += D + 1
    return A


def _mb_at_least(n: int, r: int, m: int):
    r"""MB assignments of ``n`` balls to ``r`` urns with every urn at least ``m``.

    ``m = 1`` is ``r! S(n, r)`` (FLINT's Stirling numbers).  Otherwise the
    cheaper of two routes: with ``tau = sum_{k>=m} x^k/k!`` and
    ``tau' = tau + x^{m-1}/(m-1)!``, the counts ``N_j(k) = k! [x^k] tau^j``
    obey ``N_j(k+1) = j N_j(k) + j C(k, m-1) N_{j-1}(k-m+1)``, and level ``j``
    is nonzero only for ``k`` in ``[j m, j m + n - r m]`` (cost
    ``r (n - r m + 1)``); or inclusion–exclusion over the urns holding fewer
    than ``m`` (:func:`_mb_capped_moments`, cost ``sum_t min(n, t(m-1))``).
    """
    target = n - r * m
    if target < 0:
        return mpz(0)
    if m == 0:
        return mpz(r) ** n
    if m == 1:
        return mpz(int(fmpz.stirling_s2(n, r))) * gmpy2.fac(r)
    c = m - 1
    grow = math.log2(math.factorial(c)) / 4000  # coefficients of e_c^t grow by log2(c!) bits per urn
    if sum((min(n, t * c) + 1) * (1 + t * grow) for t in range(r + 1)) < r * (target + 1):
        # inclusion-exclusion over the urns holding at most m - 1 is shorter
        total = mpz(0)
        for t, b in enumerate(_mb_capped_moments(n, r, c)):
            total = total - b if t & 1 else total + b
        return total
    prev = [mpz(1)] + [mpz(0)] * target  # level 0: N_0(k) = [k == 0], k = 0..target
    for j in range(1, r + 1):
        start = j * m
        cur = [mpz(0)] * (target + 1)
        v = mpz(0)
        binom = gmpy2.comb(start - 1, c)
        for i in range(target + 1):
            k = start - 1 + i  # cur[i] = N_j(k + 1); N_{j-1}(k - c) = prev[i]
            v = j * (v + binom * prev[i])
            cur[i] = v
            binom = divexact(binom * (k + 1), k + 1 - c)
        prev = cur
    return prev[target]


# ---------------------------------------------------------------------------
# max and min
# ---------------------------------------------------------------------------

def _is_mb_free(model: UrnModel) -> bool:
    """MB, every urn ``0..`` with no effective upper bound below ``n``."""
    if model.rule is not Rule.MB or not model.is_uniform:
        return False
    a, b = model.bounds[0]
    return a == 0 and (b is None or b >= model.balls)


def _max_counts(model: UrnModel, total) -> Dict[int, "mpz"]:
    n, r = model.balls, model.urns
    eff = model.effective_bounds()
    lo = max(max(a for a, _ in eff), -(-n // r))
    hi = min(n, max(b for _, b in eff))
    cumulative: Dict[int, mpz] = {}
    if model.is_uniform and lo <= hi:
        if model.rule is Rule.MB and model.bounds[0][0] == 0:
            cumulative = _mb_max_cumulative(n, r, hi)
        elif model.rule is not Rule.MB:
            cumulative = _be_max_cumulative(n, r, model.bounds[0][0], lo, hi)
        cumulative[hi] = mpz(total)
    counts: Dict[int, mpz] = {}
    previous = mpz(0)
    for m in range(lo, hi + 1):
        if m in cumulative:
            value = cumulative[m]
        else:
            value = mpz(outcome_count(tuple((a, min(b, m)) for a, b in eff), model.rule, n))
        if value != previous:
            counts[m] = value - previous
        previous = value
        if value == total:
            break
    return counts


def _be_max_cumulative(n: int, r: int, a: int, lo: int, hi: int) -> Dict[int, "mpz"]:
    r"""BE/FD vectors with every entry in ``a..m``, for every ``m`` in ``lo..hi``.

    Inclusion–exclusion over the urns above ``m`` (Riordan 1958, ch. 5):
    ``sum_j (-1)^j C(r, j) C(n' - j s + r - 1, r - 1)`` with ``n' = n - r a``
    and ``s = m - a + 1``; the binomials ``C(L + r - 1, r - 1)`` for all
    ``L <= n'`` are one row (:func:`~enumerator.series.binomial_row`), so all
    ``m`` together cost ``O(n' log n')`` big multiplications.
    """
    target = n - r * a
    row = series.binomial_row(r, target)
    choose = [mpz(1)] * (r + 1)
    for j in range(1, r + 1):
        choose[j] = divexact(choose[j - 1] * (r - j + 1), j)
    out: Dict[int, mpz] = {}
    for m in range(lo, hi + 1):
        step = m - a + 1
        value = mpz(0)
        for j in range(0, min(r, target // step) + 1):
            term = choose[j] * row[target - j * step]
            value = value - term if j & 1 else value + term
        out[m] = value
    return out


def _min_counts(model: UrnModel, total) -> Dict[int, "mpz"]:
    n, r = model.balls, model.urns
    eff = model.effective_bounds()
    lo = min(a for a, _ in eff)
    hi = min(min(b for _, b in eff), n // r)
    free = _is_mb_free(model)
    counts: Dict[int, mpz] = {}
    current = mpz(total)  # outcomes with min >= m, at m = lo
    for m in range(lo, hi + 1):
        if m + 1 > hi:
            following = mpz(0)
        elif free:
            following = mpz(_mb_at_least(n, r, m + 1))
        else:
            following = mpz(outcome_count(tuple((max(a, m + 1), b) for a, b in eff), model.rule, n))
        if current != following:
            counts[m] = current - following
        current = following
        if current == 0:
            break
    return counts


# ---------------------------------------------------------------------------
# the occupancy of one urn
# ---------------------------------------------------------------------------

def _urn_counts(model: UrnModel, index: int) -> Dict[int, "mpz"]:
    n, r = model.balls, model.urns
    eff = model.effective_bounds()
    a, b = eff[index]
    counts: Dict[int, mpz] = {}
    if b < a:
        return counts
    mb = model.rule is Rule.MB
    a0, b0 = model.bounds[0]
    if model.is_uniform and a0 == 0 and (b0 is None or b0 >= n):
        # no bounds: MB binomial C(n, v)(r-1)^(n-v); BE stars and bars C(n-v+r-2, r-2)
        for v in range(0, n + 1):
            if r == 1:
                c = mpz(1) if v == n else mpz(0)
            elif mb:
                c = gmpy2.comb(n, v) * mpz(r - 1) ** (n - v)
            else:
                c = gmpy2.comb(n - v + r - 2, r - 2)
            if c:
                counts[v] = c
        return counts
    others = tuple(p for i, p in enumerate(model.bounds) if i != index)
    row = _outcome_row(others, model.rule, n - a)
    for v in range(a, b + 1):
        c = row[n - v]
        if c:
            counts[v] = gmpy2.comb(n, v) * c if mb else c
    return counts


# ---------------------------------------------------------------------------
# counting statistics: binomial moments of the number of marked urns
# ---------------------------------------------------------------------------

#: At most this many bounded counts for the binomial moments of a model with
#: differing per-urn bounds before listing the configurations instead.
GROUP_TUPLE_LIMIT = 4096


def _inverse_binomial_transform(B: List) -> List:
    r"""``c_i = sum_{j>=i} (-1)^{j-i} C(j, i) B_j`` from binomial moments ``B_j``.

    Short lists directly; long ones as one FLINT product: with ``K`` the
    last index, ``i! K! c_i = [x^{K-i}] (sum_j j! B_j x^{K-j}) (sum_k (-1)^k (K!/k!) x^k)``.
    """
    K = len(B) - 1
    if K < 48:
        out = []
        for i in range(K + 1):
            c = mpz(0)
            binom = mpz(1)
            for j in range(i, K + 1):
                c += -binom * B[j] if (j - i) & 1 else binom * B[j]
                binom = divexact(binom * (j + 1), j + 1 - i)
            out.append(c)
        return out
    fac = gmpy2.fac
    alpha = [0] * (K + 1)
    f = mpz(1)
    for j in range(K + 1):
        alpha[K - j] = int(f * B[j])
        f *= j + 1
    beta = [0] * (K + 1)
    c = mpz(1)
    for k in range(K, -1, -1):  # K!/k!
        beta[k] = int(-c if k & 1 else c)
        c *= k if k else 1
    prod = fmpz_poly(alpha).mul_low(fmpz_poly(beta), K + 1)
    coeffs = series.coefficients(prod, K)
    fK = fac(K)
    out = []
    fi = mpz(1)
    for i in range(K + 1):
        out.append(divexact(mpz(coeffs[K - i]), fi * fK))
        fi *= i + 1
    return out


def _marked_counts(model: UrnModel, low: int, high: Optional[int], limit: int) -> Dict[int, "mpz"]:
    """Counts of ``X`` = the number of urns whose occupancy lies in ``[low, high]``."""
    n, r = model.balls, model.urns
    rule = model.rule
    a0, b0 = model.bounds[0]
    free_top = model.is_uniform and (b0 is None or b0 >= n - (r - 1) * a0)
    if model.is_uniform and a0 == 0 and free_top:
        B = _free_binomial_moments(n, r, rule, low, high)
        if B is not None:
            kind, moments = B
            counts = _inverse_binomial_transform(moments)
            if kind == "complement":
                return {r - i: c for i, c in enumerate(counts) if c}
            return {i: c for i, c in enumerate(counts) if c}
    return _group_marked_counts(model, low, high, limit)


def _free_binomial_moments(n: int, r: int, rule: Rule, low: int, high: Optional[int]):
    """Closed-form binomial moments for MB and BE without bounds, or None."""
    comb = gmpy2.comb
    if rule is Rule.BE:
        if high is not None and high == low:
            J = low
            B = []
            for j in range(r + 1):
                rest = n - j * J
                if rest < 0:
                    break
                if j < r:
                    w = comb(rest + r - j - 1, r - j - 1)
                else:
                    w = mpz(1) if rest == 0 else mpz(0)
                B.append(comb(r, j) * w)
            return "direct", B
        if high is None and low >= 1:
            J = low
            B = []
            for j in range(r + 1):
                rest = n - j * J
                if rest < 0:
                    break
                B.append(comb(r, j) * comb(rest + r - 1, r - 1))
            return "direct", B
        return None
    if rule is not Rule.MB:
        return None
    fac = gmpy2.fac
    if high is not None and high == low:
        # W(j) = n! / (J!^j (n - jJ)!) (r - j)^(n - jJ), the multinomial updated by
        # the falling factorial (n - jJ)^(J) / J! from one j to the next
        J = low
        B = []
        fJ = fac(J)
        multinomial = mpz(1)
        choose = mpz(1)
        for j in range(r + 1):
            rest = n - j * J
            if rest < 0:
                break
            if j:
                choose = divexact(choose * (r - j + 1), j)
                step = mpz(1)
                for s in range(rest + 1, rest + J + 1):
                    step *= s
                multinomial = divexact(multinomial * step, fJ)
            B.append(choose * multinomial * mpz(r - j) ** rest)
        return "direct", B
    if high is None and low >= 1:
        # Y = urns holding fewer than J = low balls
        return "complement", _mb_capped_moments(n, r, low - 1)
    return None


def _mb_capped_moments(n: int, r: int, c: int) -> List:
    r"""Binomial moments ``B_t = C(r, t) W(t)`` of the number of urns holding at most *c*
    balls, MB without bounds.

    ``W(t) = n! [x^n] e_c(x)^t e^{(r-t)x} = sum_u C(n, u) N_t(u) (r-t)^{n-u}``
    counts the assignments in which ``t`` given urns hold at most ``c`` each;
    ``N_t(u)/u!`` are the coefficients of ``e_c^t`` (FLINT products of the
    factorial-scaled window), and each ``W(t)`` is one Horner pass of length
    ``min(n, t c) + 1``: ``sum_t min(n, t c)`` multiplications in all.
    """
    fac = gmpy2.fac
    eps = series.falling_window(0, c)  # c!/k! x^k
    scale = fac(c)
    B = []
    E = fmpz_poly([1])
    falling = [mpz(1)] * (min(n, r * c) + 1)  # n^{(u)}
    for u in range(1, len(falling)):
        falling[u] = falling[u - 1] * (n - u + 1)
    choose = mpz(1)
    for t in range(r + 1):
        if t:
            E = E.mul_low(eps, n + 1)
            choose = divexact(choose * (r - t + 1), t)
        z = r - t
        coeffs = E.coeffs()
        U = min(len(coeffs) - 1, n)
        acc = mpz(0)
        for u in range(U + 1):
            acc = acc * z + int(coeffs[u]) * falling[u]
        B.append(choose * divexact(acc * mpz(z) ** (n - U), scale ** t))
    return B


def _group_marked_counts(model: UrnModel, low: int, high: Optional[int], limit: int) -> Dict[int, "mpz"]:
    """Binomial moments over groups of equal bounds, each a bounded count.

    Urns with equal (effective) bounds are exchangeable: ``B_j`` sums, over
    ``(j_g)`` with ``sum j_g = j``, ``prod_g C(e_g, j_g)`` times the count in
    which ``j_g`` urns of group ``g`` are confined to the marked set.
    Groups whose whole range is marked (or unmarked) add a constant.
    """
    n = model.balls
    eff = model.effective_bounds()
    groups: Counter = Counter(eff)
    always = 0
    partial = []  # ((a, b), e, (s, t))
    fixed = []
    for (a, b), e in sorted(groups.items()):
        s = max(a, low)
        t = b if high is None else min(b, high)
        if s > t:
            fixed.append(((a, b), e))
        elif s == a and t == b:
            always += e
            fixed.append(((a, b), e))
        else:
            partial.append(((a, b), e, (s, t)))
    tuples = 1
    for _, e, _ in partial:
        tuples *= e + 1
    if tuples > GROUP_TUPLE_LIMIT:
        return _enumerated_counts(
            model, "this statistic", limit,
            lambda k: sum(1 for v in k if v >= low and (high is None or v <= high)),
        )
    base = [p for p, e in fixed for _ in range(e)]
    moments: List = [mpz(0)] * (sum(e for _, e, _ in partial) + 1)

    def walk(index, chosen, weight, bounds):
        if index == len(partial):
            w = outcome_count(tuple(base + bounds), model.rule, n)
            if w:
                moments[chosen] += weight * w
            return
        (a, b), e, (s, t) = partial[index]
        for j in range(e + 1):
            walk(index + 1, chosen + j, weight * gmpy2.comb(e, j), bounds + [(s, t)] * j + [(a, b)] * (e - j))

    walk(0, 0, mpz(1), [])
    counts = _inverse_binomial_transform(moments)
    return {always + i: c for i, c in enumerate(counts) if c}


# ---------------------------------------------------------------------------
# profiles
# ---------------------------------------------------------------------------

def _partitions(total: int, parts: int, largest: int):
    """Partitions of *total* into at most *parts* parts each at most *largest*, as
    decreasing lists (SymPy's ``partitions``, after Knuth, TAOCP 7.2.1.4)."""
    if total == 0:
        yield []
        return
    if largest <= 0:
        return
    from sympy.utilities.iterables import partitions

    for p in partitions(total, m=parts, k=largest):
        yield [v for v in sorted(p, reverse=True) for _ in range(p[v])]


def _profile_counts(model: UrnModel, limit: int) -> Dict[Tuple[int, ...], "mpz"]:
    n, r = model.balls, model.urns
    eff = model.effective_bounds()
    fac = gmpy2.fac
    mb = model.rule is Rule.MB
    fac_n = fac(n)
    counts: Dict[Tuple[int, ...], mpz] = {}
    if model.is_uniform:
        a, b = eff[0]
        how_many = count_profiles(model)
        if how_many > limit:
            raise TooLarge(
                f"the model has {how_many} occupancy profiles, above the limit {limit}; "
                "raise limit= or choose a summary statistic such as max or empty",
                parameters=["limit"],
            )
        fac_r = fac(r)
        for part in _partitions(n - r * a, r, b - a):
            profile = tuple(v + a for v in part) + (a,) * (r - len(part))
            mult = Counter(profile)
            arrangements = fac_r
            for m in mult.values():
                arrangements = divexact(arrangements, fac(m))
            weight = multinomial(profile, fac_n) if mb else 1
            counts[profile] = arrangements * weight
        return counts
    largest = max(b for _, b in eff)
    candidates = _candidate_bound(n, r, largest)
    if candidates > limit:
        raise TooLarge(
            f"the per-urn bounds leave up to {candidates} candidate profiles to check, above the limit {limit}; "
            "raise limit= or use uniform bounds",
            parameters=["limit"],
        )
    groups = sorted(Counter(eff).items())
    for part in _partitions(n, r, largest):
        profile = tuple(part) + (0,) * (r - len(part))
        arrangements = _arrangements(Counter(profile), groups)
        if not arrangements:
            continue
        weight = multinomial(profile, fac_n) if mb else 1
        counts[profile] = arrangements * weight
    return counts


def _candidate_bound(n: int, r: int, largest: int) -> int:
    """Partitions of ``n`` into at most ``r`` parts each at most *largest* (Gaussian binomial)."""
    return count_profiles(UrnModel(balls=n, urns=r, rule=Rule.BE, capacity=largest))


def _arrangements(multiplicity: Counter, groups) -> int:
    """Vectors within per-urn bounds whose multiset of entries is *multiplicity*.

    Urns with equal bounds ``(a_g, b_g)`` form groups of size ``e_g``; value
    ``v`` must go ``c_g`` times to group ``g`` (only where ``a_g <= v <= b_g``),
    ``sum_g c_g = mult_v``, and the number of vectors is the sum over such
    tables of ``prod_g e_g! / prod_v c_{g,v}!`` — a dynamic programme over
    the values with the remaining room of each group as state.
    """
    values = sorted(multiplicity)
    memo: Dict = {}

    def fill(index: int, room: Tuple[int, ...]) -> int:
        if index == len(values):
            return 1 if not any(room) else 0
        key = (index, room)
        if key in memo:
            return memo[key]
        v = values[index]
        need = multiplicity[v]
        allowed = [g for g, ((a, b), _) in enumerate(groups) if a <= v <= b and room[g]]
        total = 0

        def share(position: int, left: int, ways: int, current: List[int]):
            nonlocal total
            if position == len(allowed):
                if left == 0:
                    total += ways * fill(index + 1, tuple(current))
                return
            g = allowed[position]
            for c in range(min(left, current[g]) + 1):
                spare = current[g]
                current[g] = spare - c
                share(position + 1, left - c, ways * math.comb(spare, c), current)
                current[g] = spare

        share(0, need, 1, list(room))
        memo[key] = total
        return total

    return fill(0, tuple(e for _, e in groups))


# ---------------------------------------------------------------------------
# the last resort: listing every configuration
# ---------------------------------------------------------------------------

def _enumerated_counts(model: UrnModel, label: str, limit: int, value: Callable) -> Dict:
    """Counts of ``value(k)`` by listing every admissible configuration (refused above *limit*)."""
    how_many = count_configurations(model)
    if how_many > limit:
        raise TooLarge(
            f"{label} for these per-urn bounds needs all {how_many} configurations listed, "
            f"above the limit {limit}; raise limit=",
            parameters=["limit"],
        )
    mb = model.rule is Rule.MB
    fac = gmpy2.fac
    fac_n = fac(model.balls)
    counts: Dict = {}
    for k in iter_configurations(model):
        w = multinomial(k, fac_n) if mb else 1
        key = value(k)
        counts[key] = counts.get(key, 0) + w
    return counts
