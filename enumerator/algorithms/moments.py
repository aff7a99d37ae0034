r"""Mean and variance of a counting statistic without its law, at any number of urns.

A *counting statistic* counts the urns whose occupancy lies in a set ``S``:
``empty`` (``S = {0}``), ``occupied`` (``k >= 1``), ``exactly:J`` (``S = {J}``)
and ``atleast:J`` (``k >= J``).  Writing ``X_S = sum_i 1[k_i in S]``, the
first two factorial moments are sums over one urn and over ordered pairs of
distinct urns (the *binomial moments* of the statistic, Feller, vol. 1,
ch. IV.3):

.. math::

    E[X_S] = \sum_i P(k_i \in S), \qquad
    E[X_S (X_S - 1)] = \sum_{i \ne l} P(k_i \in S,\ k_l \in S),

and ``Var X = E[X(X-1)] + E[X] - E[X]^2``.  Urns of one group are
interchangeable, so each sum runs over groups and pairs of groups; a set ``S``
whose complement ``T`` is finite (``occupied``, ``atleast:J``) is handled
through ``X_S = r - X_T``.  The cost therefore grows with ``n``, the number
of groups ``G`` and ``|T|``, never with the number of urns ``r``.

Laws used (all exact):

MB, unbounded urns of weights ``w_g`` (total weight ``W = sum_g c_g w_g``)
    each urn's load is binomial, a pair's is trinomial:
    ``P(k_i = j) = C(n, j) w^j (W - w)^{n-j} / W^n`` and
    ``P(k_i = j, k_l = j') = n! / (j! j'! (n-j-j')!) w_i^j w_l^{j'}
    (W - w_i - w_l)^{n-j-j'} / W^n``.
BE, ``r`` equal unbounded urns (every occupancy vector equally likely)
    the others hold ``n - j`` balls in ``r - 1`` urns:
    ``P(k_i = j) = C(n-j+r-2, r-2) / C(n+r-1, r-1)``, a ratio of ``O(j)``
    falling factorials, and ``P(k_i = j, k_l = j') = C(n-j-j'+r-3, r-3) /
    C(n+r-1, r-1)``.
FD, ``r`` equal urns of capacity 1
    ``P(k_i = 1) = n/r``, ``P(k_i = k_l = 1) = n(n-1) / (r(r-1))``.

Other models (bounds, weights under BE/FD) are not covered here: the caller
answers them from the statistic's law (:mod:`enumerator.algorithms.statistics`).

Cost
    MB: ``O(G^2 |T|^2)`` products and one power ``(W - w_g - w_h)^{n - 2|T|}``
    per pair of groups, each of ``O(n log W)`` bits (GMP's FFT
    multiplication); BE and FD: ``O(|T|^2)`` small multiplications.  The
    denominators of MB moments are powers of ``W`` only, so the fractions are
    reduced by stripping the primes of ``W`` (``gmpy2.remove``) rather than by
    a gcd of numbers of ``n log W`` bits.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction
from math import lcm
from typing import Dict, List, Optional, Sequence, Tuple

import gmpy2

from ..core import limits
from ..core.errors import InvalidParameters, TooLarge, Unsupported
from ..core.exact import coprime_fraction
from ..core.groups import UrnGroup, total_urns
from ..core.limits import Cost
from ..core.rules import Rule

__all__ = ["COUNTING_STATISTICS", "Moments", "counting_moments", "moments_cost"]

#: The statistics this module answers, with the finite set ``T`` they are built on
#: and whether the statistic counts ``T`` itself or its complement.
COUNTING_STATISTICS = ("empty", "occupied", "exactly:J", "atleast:J")

#: Largest ``|T|^2 G^2`` term count accepted before refusing (each term is a big product).
MAX_TERMS = 4_000_000
#: Largest size, in bits, of one exact power ``W^n`` (MB) before refusing (about 1 GB of digits).
MAX_BITS = 2_000_000_000


@dataclass(frozen=True)
class Moments:
    """The exact mean and variance of a counting statistic.

    Attributes
    ----------
    statistic : str
        Its canonical name (``"empty"``, ``"exactly:2"``, ...).
    mean, variance : Fraction
        Exact values.
    """

    statistic: str
    mean: Fraction
    variance: Fraction


def _finite_side(statistic: str) -> Tuple[Tuple[int, ...], bool]:
    """``(T, complement)``: the statistic counts urns with load in ``T`` (or outside it)."""
    name, _, arg = statistic.partition(":")
    if name in ("empty", "occupied") and not arg:
        return (0,), name == "occupied"
    if name in ("exactly", "atleast") and arg:
        body = arg.strip()
        if not body.isdigit() or len(body) > 9:
            raise InvalidParameters(f"{name}:J needs a whole number J below 10^9 (got {arg!r})")
        j = int(body)
        if name == "exactly":
            return (j,), False
        return tuple(range(j)), True
    raise InvalidParameters(
        f"moments without the law are for the counting statistics {', '.join(COUNTING_STATISTICS)} "
        f"(got {statistic!r})"
    )


def _canonical(statistic: str) -> str:
    name, _, arg = statistic.partition(":")
    return name if not arg else f"{name}:{int(arg)}"


def moments_cost(balls: int, rule, groups: Sequence[UrnGroup], statistic: str) -> Dict[str, int]:
    """Estimate the work of :func:`counting_moments`: ``{"terms", "bits"}``.

    ``terms`` counts the big products, ``bits`` the size of the largest exact
    number built.  Neither depends on the number of urns.
    """
    rule_ = Rule.parse(rule)
    t, _ = _finite_side(statistic)
    size = len([j for j in t if j <= balls])
    g = len(groups)
    if rule_ is Rule.MB:
        weights = _integer_weights(groups)
        total = sum(c * w for c, w in weights)
        return {"terms": (g * size) ** 2 + g * size, "bits": balls * int(total).bit_length()}
    return {"terms": size * size + size, "bits": 64 * (size + 2)}


def counting_moments(balls: int, rule, groups: Sequence[UrnGroup], statistic: str) -> Moments:
    """Return the exact mean and variance of a counting statistic, without its law.

    Parameters
    ----------
    balls : int
        ``n >= 0``.
    rule : Rule or str
        ``MB``, ``BE`` or ``FD``.
    groups : sequence of UrnGroup
        The urns.  MB: unbounded groups of any weights; BE: one group of
        unbounded urns of equal weight; FD: one group of urns of capacity 1.
    statistic : str
        ``empty``, ``occupied``, ``exactly:J`` or ``atleast:J``.

    Returns
    -------
    Moments
        Exact ``Fraction`` mean and variance.

    Raises
    ------
    Unsupported
        For a model outside the laws above (bounds, or weights under BE/FD):
        answer it from the statistic's law instead.
    TooLarge
        When the estimate of :func:`moments_cost` is beyond :data:`MAX_TERMS`
        or :data:`MAX_BITS`, or its time and memory beyond the active limits
        (:func:`~enumerator.core.limits.check`).

    Examples
    --------
    Expected empty urns for 3 balls in 2 equal urns (MB): ``2 (1/2)^3 = 1/4``
    (Feller, vol. 1, ch. II.5):

    >>> m = counting_moments(3, "MB", [UrnGroup(2)], "empty")
    >>> m.mean, m.variance
    (Fraction(1, 4), Fraction(3, 16))

    The expected number of collisions of 23 keys in 365 equally likely
    buckets, ``n - E[occupied] = n - r (1 - (1 - 1/r)^n)``:

    >>> m = counting_moments(23, "MB", [UrnGroup(365)], "occupied")
    >>> f"{float(23 - m.mean):.4f}"
    '0.6800'

    Notes
    -----
    See the module docstring for the laws and the cost.
    """
    rule_ = Rule.parse(rule)
    n = balls
    if isinstance(n, bool) or not isinstance(n, int) or n < 0:
        raise InvalidParameters(f"balls must be a whole number at least 0 (got {balls!r})")
    if not groups:
        raise InvalidParameters("the model needs at least one urn")
    t, complement = _finite_side(statistic)
    name = _canonical(statistic)
    cost = moments_cost(n, rule_, groups, statistic)
    if cost["terms"] > MAX_TERMS or cost["bits"] > MAX_BITS:
        raise TooLarge(
            f"the moments of {name} would need {cost['terms']:,} exact products of up to "
            f"{cost['bits']:,} bits; use fewer groups or a smaller statistic argument"
        )
    # each term is a few products of numbers of up to `bits` bits; a handful of them live at once
    limits.check(Cost(seconds=4 * cost["terms"] * limits.product_seconds(cost["bits"]),
                      memory=8 * limits.bigint_bytes(cost["bits"])),
                 f"the moments of {name} ({cost['terms']:,} exact products of up to {cost['bits']:,} bits)",
                 advice="use fewer balls, fewer groups or a smaller statistic argument")
    t = tuple(j for j in t if j <= n)
    r = total_urns(groups)
    if rule_ is Rule.MB:
        # mean_T = A / D and E[X(X-1)] = B / D with D = W^n, so
        # Var = (B D + A D - A^2) / D^2: whole numbers until one reduction.
        A, B, W = _mb(n, groups, t)
        D = _power_times(1, W, n)
        mean_t = _reduced(A, D, W)
        variance = _reduced(_power_times(B + A, W, n) - A * A, _power_times(D, W, n), W)
        mean = r - mean_t if complement else mean_t
        return Moments(name, mean, variance)
    if rule_ is Rule.BE:
        mean_t, second_t = _be(n, groups, t)
    else:
        mean_t, second_t = _fd(n, groups, t)
    variance = second_t + mean_t - mean_t * mean_t
    mean = r - mean_t if complement else mean_t
    return Moments(name, Fraction(mean), Fraction(variance))


# ---------------------------------------------------------------------------
# MB: binomial and trinomial laws of one urn and of a pair
# ---------------------------------------------------------------------------

def _integer_weights(groups: Sequence[UrnGroup]) -> List[Tuple[int, int]]:
    """``(count, integer weight)`` per group: weights scaled by the lcm of their denominators."""
    scale = lcm(*(g.weight.denominator for g in groups))
    return [(g.count, int(g.weight * scale)) for g in groups]


def _mb(n: int, groups: Sequence[UrnGroup], t: Tuple[int, ...]):
    for g in groups:
        if g.lower != 0 or g.upper is not None:
            raise Unsupported("moments without the law under MB need unbounded urns; use the law")
    weights = _integer_weights(groups)
    W = gmpy2.mpz(sum(c * w for c, w in weights))
    if not t:
        return gmpy2.mpz(0), gmpy2.mpz(0), W
    top = max(t)
    # Each power (W - w)^(n - j) is built from one big power (W - w)^(n - span)
    # times a small one, so a group costs one big exponentiation, not |T|.
    one = gmpy2.mpz(0)
    for c, w in weights:
        rest = W - w
        span = min(top, n)
        base = rest ** (n - span)
        for j in t:
            one += c * gmpy2.comb(n, j) * gmpy2.mpz(w) ** j * base * rest ** (span - j)
    pair = gmpy2.mpz(0)
    span = min(2 * top, n)
    for a, (ca, wa) in enumerate(weights):
        for b, (cb, wb) in enumerate(weights):
            pairs = ca * (ca - 1) if a == b else ca * cb
            if not pairs:
                continue
            rest = W - wa - wb
            base = rest ** (n - span)
            for j in t:
                for k in t:
                    if j + k > n:
                        continue
                    # n! / (j! k! (n-j-k)!) w_a^j w_b^k (W - w_a - w_b)^(n-j-k)
                    multinomial = gmpy2.comb(n, j) * gmpy2.comb(n - j, k)
                    pair += (pairs * multinomial * gmpy2.mpz(wa) ** j * gmpy2.mpz(wb) ** k
                             * base * rest ** (span - j - k))
    return one, pair, W


def _power_times(x, base, exponent):
    """``x * base**exponent``; a shift when *base* is a power of two (bucket counts usually are)."""
    base = gmpy2.mpz(base)
    if base > 0 and base & (base - 1) == 0:
        return gmpy2.mpz(x) << ((base.bit_length() - 1) * exponent)
    return gmpy2.mpz(x) * base ** exponent


def _reduced(numerator, denominator, base) -> Fraction:
    """``numerator / denominator`` in lowest terms, where *denominator* is a power of *base*.

    Only the primes of *base* can cancel, so each is removed from both sides
    (``gmpy2.remove``) instead of taking a gcd of two huge numbers.
    """
    if numerator == 0:
        return Fraction(0)
    if denominator == 1:
        return Fraction(int(numerator))
    num, den = gmpy2.mpz(numerator), gmpy2.mpz(denominator)
    primes, certain = _prime_factors(int(base))
    for p in primes:
        stripped, times = gmpy2.remove(num, p)
        if times:
            den_stripped, den_times = gmpy2.remove(den, p)
            keep = min(times, den_times)
            num = stripped * gmpy2.mpz(p) ** (times - keep)
            den = den_stripped * gmpy2.mpz(p) ** (den_times - keep)
    if not certain:
        # a cofactor of base may be composite: let GMP finish the reduction
        q = gmpy2.mpq(num, den)
        num, den = q.numerator, q.denominator
    return coprime_fraction(num, den)


_TRIAL = 1_000_000


def _prime_factors(value: int) -> Tuple[List[int], bool]:
    """The prime factors of *value* by trial division to 10^6, and whether the list is certainly prime."""
    out = []
    v = value
    p = 2
    while p * p <= v and p <= _TRIAL:
        if v % p == 0:
            out.append(p)
            while v % p == 0:
                v //= p
        p += 1 if p == 2 else 2
    if v > 1:
        out.append(v)
    return out, v <= _TRIAL * _TRIAL or bool(gmpy2.is_prime(v))


# ---------------------------------------------------------------------------
# BE and FD: equal urns
# ---------------------------------------------------------------------------

def _equal_urns(groups: Sequence[UrnGroup], capacity: Optional[int]) -> int:
    first = groups[0]
    if any(not g.same_urns(first) for g in groups) or first.lower != 0 or first.upper != capacity:
        raise Unsupported(
            "moments without the law under BE/FD need equal urns without bounds (FD: capacity 1); use the law"
        )
    return total_urns(groups)


def _falling(x: int, k: int):
    out = gmpy2.mpz(1)
    for i in range(k):
        out *= x - i
    return out


def _be(n: int, groups: Sequence[UrnGroup], t: Tuple[int, ...]):
    r = _equal_urns(groups, None)
    if r == 1:
        one = Fraction(1 if n in t else 0)
        return one, Fraction(0)
    # P(k_i = j) = (r-1) n^(j) / (n+r-1)^(j+1)   (falling factorials)
    one = Fraction(0)
    for j in t:
        one += Fraction(int((r - 1) * _falling(n, j)), int(_falling(n + r - 1, j + 1)))
    mean = r * one
    pair = Fraction(0)
    if r == 2:
        # the second urn holds the rest: P(k_1 = j, k_2 = k) = [j + k = n] / (n + 1)
        pair = Fraction(sum(1 for j in t for k in t if j + k == n), n + 1)
    else:
        for j in t:
            for k in t:
                if j + k > n:
                    continue
                # C(n-j-k+r-3, r-3) / C(n+r-1, r-1) = (r-1)(r-2) n^(j+k) / (n+r-1)^(j+k+2)
                pair += Fraction(int((r - 1) * (r - 2) * _falling(n, j + k)), int(_falling(n + r - 1, j + k + 2)))
    return mean, r * (r - 1) * pair


def _fd(n: int, groups: Sequence[UrnGroup], t: Tuple[int, ...]):
    r = _equal_urns(groups, 1)
    if n > r:
        raise InvalidParameters(f"FD puts at most one ball in each of {r} urns, fewer than {n} balls")
    # P(one urn holds 1) = n/r; pairs: hypergeometric
    p1 = Fraction(n, r)
    law = {0: 1 - p1, 1: p1}
    one = sum((law.get(j, Fraction(0)) for j in t), Fraction(0))
    pair = Fraction(0)
    if r >= 2:
        both = {(1, 1): Fraction(n * (n - 1), r * (r - 1)),
                (1, 0): Fraction(n * (r - n), r * (r - 1)),
                (0, 1): Fraction(n * (r - n), r * (r - 1)),
                (0, 0): Fraction((r - n) * (r - n - 1), r * (r - 1))}
        pair = sum((both.get((j, k), Fraction(0)) for j in t for k in t), Fraction(0))
    return r * one, r * (r - 1) * pair
