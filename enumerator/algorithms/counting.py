r"""Exact counts of an occupancy model: configurations, microstates, profiles.

Methods, cheapest first (each cited where it is used):

* closed forms — BE ``C(n+r-1, n)``, FD ``C(r, n)``, MB ``r^n``; a uniform
  lower bound ``a`` shifts ``n`` by ``r a``; MB with ``a = 1`` is ``r! S(n, r)``
  (Feller, *An Introduction to Probability Theory*, vol. 1, §II.5; Stanley,
  *Enumerative Combinatorics* vol. 1, §1.9, the twelvefold way);
* inclusion–exclusion for a uniform capacity,
  ``sum_j (-1)^j C(r, j) C(n - j(c+1) + r - 1, r - 1)`` (Riordan,
  *An Introduction to Combinatorial Analysis*, 1958, ch. 5), each term from
  the previous by exact small multiplications and one exact division;
* per-urn bounds — ``[x^n]`` of ``prod_i (x^{a_i} + ... + x^{b_i})``, written
  as ``x^{sum a} prod_d (1 - x^{d})^{e_d} (1 - x)^{-r}`` so that equal factors
  form one sparse binomial power, then one dot product with a row of
  binomials; MB uses the exponential generating function
  ``n! [x^n] prod_i sum_{k=a_i}^{b_i} x^k / k!`` scaled to exact integers
  (Flajolet & Sedgewick, *Analytic Combinatorics*, 2009, §II.1).

All arithmetic is exact (gmpy2 / FLINT inside); public functions return
``int`` and ``fractions.Fraction``.
"""

from __future__ import annotations

import math
from collections import Counter
from fractions import Fraction
from typing import Dict, List, Tuple

import gmpy2
from flint import fmpz, fmpz_poly

from ..core import series
from ..core.errors import TooLarge
from ..core.exact import coprime_fraction
from ..core.memo import ModelMemo
from ..core.model import UrnModel, as_count
from ..core.rules import multinomial

__all__ = [
    "binomial",
    "configuration_probability",
    "configuration_weight",
    "count_configurations",
    "count_microstates",
    "count_profiles",
    "exact_fraction",
    "multinomial",
    "over_prime_power",
    "partitions_at_most",
    "power_primes",
    "twelvefold",
]

# Working data kept per model between calls (see enumerator.core.memo).
_MEMO = ModelMemo("counting")

mpz = gmpy2.mpz

#: Largest number of integer partitions examined one by one when counting
#: the profiles of a model with differing per-urn bounds.
PROFILE_ENUMERATION_LIMIT = 2_000_000


# ---------------------------------------------------------------------------
# small exact helpers
# ---------------------------------------------------------------------------

def binomial(n: int, k: int):
    """``C(n, k)`` as an ``mpz``; 0 outside ``0 <= k <= n`` (GMP ``mpz_bin_uiui``)."""
    if k < 0 or n < 0 or k > n:
        return mpz(0)
    return gmpy2.comb(n, k)


def exact_fraction(num, den) -> Fraction:
    """Return ``num / den`` in lowest terms, reduced by GMP.

    Parameters
    ----------
    num, den : int or mpz
        The numerator and a positive denominator.

    Returns
    -------
    Fraction
        The exact quotient.

    Notes
    -----
    GMP's ``mpq`` canonicalisation uses a subquadratic gcd (T. Granlund et
    al., *GNU MP manual*, "Greatest Common Divisor Algorithms"), then
    :func:`~enumerator.core.exact.coprime_fraction` wraps the pair without
    CPython's quadratic gcd: ``O(M(b) log b)`` for ``b``-bit numbers.

    Examples
    --------
    >>> exact_fraction(6, 4)
    Fraction(3, 2)
    """
    q = gmpy2.mpq(num, den)
    return coprime_fraction(q.numerator, q.denominator)


# ---------------------------------------------------------------------------
# configurations (BE counting; also the set MB weights)
# ---------------------------------------------------------------------------

def _uniform_capacity_count(r: int, n: int, span: int):
    """Vectors of ``r`` entries in ``0..span`` summing to ``n`` (exact ``mpz``).

    Inclusion–exclusion over the urns forced above ``span`` (Riordan 1958,
    ch. 5):  ``sum_j (-1)^j C(r, j) C(n - j s + r - 1, r - 1)``, ``s = span+1``.
    The term ratio is a product of ``s + 1`` small factors, so term ``j + 1``
    comes from term ``j`` by one multiplication by a short integer and one
    exact division, ``O(J s)`` word operations per digit in all with
    ``J = min(r, n // s)`` terms; the symmetry ``n -> r span - n`` halves ``J``.
    """
    if n < 0 or n > r * span:
        return mpz(0)
    if span == 0:
        return mpz(1) if n == 0 else mpz(0)
    n = min(n, r * span - n)
    if span >= n:
        return gmpy2.comb(n + r - 1, r - 1)
    if span == 1:
        return gmpy2.comb(r, n)
    s = span + 1
    terms = min(r, n // s)
    m = n + r - 1
    term = gmpy2.comb(m, r - 1)
    plus = term
    minus = mpz(0)
    perm = math.perm
    divexact = gmpy2.divexact
    k = r - 1
    for j in range(terms):
        # C(r, j+1)/C(r, j) = (r-j)/(j+1);  C(m-s, k)/C(m, k) = (m-k)_s / (m)_s
        num = (r - j) * perm(m - k, s)
        den = (j + 1) * perm(m, s)
        term = divexact(term * num, den)
        m -= s
        if j & 1:
            plus += term
        else:
            minus += term
    return plus - minus


def _bounded_product_count(n: int, bounds) -> "mpz":
    """``[x^n] prod_i (x^{a_i} + ... + x^{b_i})`` for per-urn bounds.

    Each factor is ``x^{a}(1 - x^{d})/(1 - x)`` with ``d = b - a + 1``; the
    numerators with equal ``d`` form one binomial power ``(1 - x^d)^e``
    (sparse, built term by term), the product of the distinct ones is a FLINT
    truncated product, and ``(1 - x)^{-r}`` contributes the binomial row
    ``C(m + r - 1, r - 1)``, so the answer is one dot product.
    Cost: ``O(G M(n))`` for ``G`` distinct bounds plus ``O(n)`` big operations.
    """
    r = len(bounds)
    low = sum(a for a, _ in bounds)
    target = n - low
    if target < 0:
        return mpz(0)
    groups: Counter = Counter()
    for a, b in bounds:
        if b is None:
            continue
        if b < a:
            return mpz(0)
        d = b - a + 1
        if d <= target:
            groups[d] += 1
    if not groups:
        return gmpy2.comb(target + r - 1, r - 1)
    top = sum((b - a) for a, b in bounds if b is not None)
    if all(b is not None for _, b in bounds) and target > top:
        return mpz(0)
    numerators = [series.one_minus_power(d, e, target) for d, e in sorted(groups.items())]
    numerator = series.product(numerators, target)
    row = series.binomial_row(r, target)
    return series.dot_reversed(numerator, row, target)


def _configurations(model: UrnModel):
    memo = _MEMO.slots(model)
    if "configurations" in memo:
        return memo["configurations"]
    n, r = model.balls, model.urns
    if model.is_uniform:
        a, b = model.bounds[0]
        target = n - r * a
        if target < 0:
            value = mpz(0)
        elif b is None:
            value = gmpy2.comb(target + r - 1, r - 1)
        else:
            value = _uniform_capacity_count(r, target, b - a)
    else:
        value = _bounded_product_count(n, model.bounds)
    memo["configurations"] = value
    return value


def count_configurations(model: UrnModel) -> int:
    """The number of admissible occupancy vectors of *model*, exact.

    Closed form ``C(n - ra + r - 1, r - 1)`` for a uniform lower bound ``a``
    and no capacity; inclusion–exclusion for a uniform capacity; a truncated
    polynomial product for per-urn bounds (see the module docstring).

    >>> count_configurations(UrnModel(balls=4, urns=3, rule="BE"))
    15
    >>> count_configurations(UrnModel(balls=4, urns=3, rule="BE", capacity=2))
    6
    """
    return int(_configurations(model))


# ---------------------------------------------------------------------------
# microstates (MB: weighted by multinomials)
# ---------------------------------------------------------------------------

def _mb_surjections(n: int, r: int):
    """``r! S(n, r)`` (maps onto all ``r`` urns) via FLINT's Stirling numbers."""
    if n < r:
        return mpz(0)
    return mpz(int(fmpz.stirling_s2(n, r))) * gmpy2.fac(r)


def _mb_egf_count(n: int, bounds) -> "mpz":
    """``n! [x^n] prod_i sum_{k=a_i}^{b_i} x^k/k!`` in exact integers.

    Urns with equal (effective) bounds form one truncated power of the
    factorial-scaled window ``sum_k (b!/k!) x^{k-a}`` (FLINT), the distinct
    powers are multiplied with truncation, and the result is rescaled by
    ``n! / prod (b!)^e`` with one exact division (Flajolet & Sedgewick 2009,
    §II.2, labelled products).
    """
    if len(set(bounds)) == 1:
        # uniform bounds: one group, without a pass over the urns
        (a, b), r = bounds[0], len(bounds)
        target = n - r * a
        if target < 0:
            return mpz(0)
        groups = {(a, a + target if b is None else min(b, a + target)): r}
    else:
        low = sum(a for a, _ in bounds)
        target = n - low
        if target < 0:
            return mpz(0)
        groups = Counter()
        for a, b in bounds:
            top = b if b is not None else a + target
            top = min(top, a + target)
            groups[(a, top)] += 1
    if any(b < a for a, b in groups):
        return mpz(0)
    factors = []
    scale = mpz(1)
    for (a, b), e in sorted(groups.items()):
        if b == a:
            # x^a / a! exactly: contributes only to the scale.
            scale *= gmpy2.fac(a) ** e
            continue
        factors.append(series.power(series.falling_window(a, b), e, target))
        scale *= gmpy2.fac(b) ** e
    poly = series.product(factors, target)
    c = series.coefficient(poly, target)
    if c == 0:
        return mpz(0)
    return gmpy2.divexact(mpz(c) * gmpy2.fac(n), scale)


def _microstates(model: UrnModel):
    memo = _MEMO.slots(model)
    if "microstates" in memo:
        return memo["microstates"]
    if not model.rule.distinguishable:
        value = _configurations(model)
    else:
        n, r = model.balls, model.urns
        a, b = model.bounds[0] if model.is_uniform else (None, None)
        if model.is_uniform and a == 0 and (b is None or b >= n):
            value = mpz(r) ** n
        elif model.is_uniform and a == 1 and (b is None or b >= n - r + 1):
            value = _mb_surjections(n, r)
        elif model.is_uniform and b is not None and b - a == 0:
            value = multinomial([a] * r) if n == r * a else mpz(0)
        else:
            value = _mb_egf_count(n, model.bounds)
    memo["microstates"] = value
    return value


def count_microstates(model: UrnModel) -> int:
    """The number of equally likely outcomes of *model*, exact.

    MB: the admissible assignments of ``n`` distinguishable balls, i.e. the
    sum of ``n!/(k_1!...k_r!)`` over admissible vectors (``r^n`` unbounded,
    ``r! S(n, r)`` with every urn occupied, the EGF coefficient otherwise).
    BE, FD: equal to :func:`count_configurations`.

    >>> count_microstates(UrnModel(balls=4, urns=3, rule="MB"))
    81
    >>> count_microstates(UrnModel(balls=4, urns=3, rule="MB", minimum=1))
    36
    """
    return int(_microstates(model))


def configuration_weight(model: UrnModel, config) -> int:
    """How many equally likely outcomes have occupancy *config* (0 if it breaks a bound)."""
    values = model.check_configuration(config)
    if not model._within_bounds(values):
        return 0
    return int(model.rule.weight(values))


def power_primes(r: int, n: int) -> List[Tuple[int, int]]:
    """Return the prime factorisation of ``r^n`` as ``[(p, e_p n)]``.

    Parameters
    ----------
    r : int
        The base, ``r >= 1``.
    n : int
        The exponent, ``n >= 0``.

    Returns
    -------
    list of (int, int)
        Each prime ``p`` dividing ``r`` with its exponent in ``r^n``.

    Notes
    -----
    FLINT's ``fmpz.factor`` on ``r`` (small), then ``O(1)`` per prime.
    """
    return [(int(p), int(e) * n) for p, e in fmpz(r).factor()]


def over_prime_power(count, total, primes) -> Fraction:
    r"""Return ``count / total`` in lowest terms when only the primes *primes* can cancel.

    Parameters
    ----------
    count : int or mpz
        The numerator, ``>= 0`` (0 gives ``Fraction(0)``).
    total : int or mpz
        The denominator, a product of the primes in *primes* (``r^n`` for the
        MB outcomes without bounds).
    primes : list of (int, int)
        ``(p, e)``: each prime of *total* with its exponent
        (:func:`power_primes`).

    Returns
    -------
    Fraction
        The exact quotient, already reduced.

    Notes
    -----
    Each prime is removed from the numerator (GMP ``mpz_remove``) up to its
    exponent in the denominator: for a multinomial over ``r^n`` that is
    several times cheaper than a general gcd of numbers of ``n log r`` bits
    (T. Granlund et al., *GNU MP manual*, "Integer Division").  Cost
    ``O(M(n log r))`` per prime.

    Examples
    --------
    >>> over_prime_power(12, 81, power_primes(3, 4))
    Fraction(4, 27)
    """
    num, den = mpz(count), mpz(total)
    if num == 0:
        return Fraction(0)
    for p, top in primes:
        stripped, times = gmpy2.remove(num, p)
        if times > top:
            times = top
            stripped = gmpy2.divexact(num, mpz(p) ** top)
        if times:
            num = stripped
            den = gmpy2.divexact(den, mpz(p) ** times)
    return coprime_fraction(num, den)


def _reduced_mb_probability(model: UrnModel, values) -> Fraction:
    """``multinomial(k) / r^n`` in lowest terms without a big gcd (:func:`over_prime_power`)."""
    memo = _MEMO.slots(model)
    fac_n = memo.get("fac_n")
    if fac_n is None:
        fac_n = memo["fac_n"] = gmpy2.fac(model.balls)
        memo["primes"] = power_primes(model.urns, model.balls)
    return over_prime_power(multinomial(values, fac_n), _microstates(model), memo["primes"])


def configuration_probability(model: UrnModel, config) -> Fraction:
    """The exact probability of the occupancy vector *config* under *model*'s rule.

    MB: ``n!/(k_1!...k_r!)`` over the microstates; BE/FD: one over the number
    of configurations.  A well-formed vector that breaks a bound has
    probability 0; a malformed one raises InvalidConfiguration.

    >>> configuration_probability(UrnModel(balls=2, urns=2, rule="MB"), (1, 1))
    Fraction(1, 2)
    >>> configuration_probability(UrnModel(balls=2, urns=2, rule="BE"), (1, 1))
    Fraction(1, 3)
    """
    values = model.check_configuration(config)
    if not model._within_bounds(values):
        return Fraction(0)
    if model.rule.distinguishable:
        if model.is_uniform and model.bounds[0][0] == 0 and (
            model.bounds[0][1] is None or model.bounds[0][1] >= model.balls
        ):
            return _reduced_mb_probability(model, values)
        return exact_fraction(multinomial(values), _microstates(model))
    return exact_fraction(1, _configurations(model))


# ---------------------------------------------------------------------------
# profiles (urns unlabelled)
# ---------------------------------------------------------------------------

def _gaussian_partitions(total: int, parts: int, largest) -> int:
    """Partitions of *total* into at most *parts* parts, each at most *largest*.

    The coefficient of ``q^total`` in the Gaussian binomial
    ``[parts + largest choose parts]_q = prod_{i=1}^{parts} (1 - q^{largest+i})/(1 - q^i)``
    (Andrews, *The Theory of Partitions*, 1976, Thm 3.1); ``largest=None``
    drops the numerator.  FLINT truncated products: ``O(min(parts, total))``
    multiplications of length ``total``.
    """
    if total < 0:
        return 0
    if total == 0:
        return 1
    if largest is not None and total > parts * largest:
        return 0
    if largest is not None:
        # conjugation symmetry keeps the shorter product
        total = min(total, parts * largest - total)
        if total == 0:
            return 1
    length = total + 1
    poly = fmpz_poly([1])
    for i in range(1, min(parts, total) + 1):
        geometric = fmpz_poly([1 if j % i == 0 else 0 for j in range(length)])
        poly = poly.mul_low(geometric, length)
    if largest is not None:
        for i in range(1, parts + 1):
            step = largest + i
            if step > total:
                break
            factor = fmpz_poly([1] + [0] * (step - 1) + [-1])
            poly = poly.mul_low(factor, length)
    return series.coefficient(poly, total)


def partitions_at_most(total: int, parts: int) -> int:
    """The number of partitions of *total* into at most *parts* parts (OEIS A008284 row sums)."""
    return _gaussian_partitions(total, parts, None)


def _interval_matching(values: List[int], bounds) -> bool:
    """Can the multiset *values* be placed one per urn within *bounds*?

    Greedy interval–point matching: take values in increasing order and give
    each the open interval with the smallest upper end (Glover, *Maximum
    matching in a convex bipartite graph*, 1967).
    """
    import heapq

    intervals = sorted((a, math.inf if b is None else b) for a, b in bounds)
    heap: list = []
    i = 0
    for v in sorted(values):
        while i < len(intervals) and intervals[i][0] <= v:
            heapq.heappush(heap, intervals[i][1])
            i += 1
        while heap and heap[0] < v:
            return False
        if not heap:
            return False
        heapq.heappop(heap)
    return True


def count_profiles(model: UrnModel) -> int:
    """The number of distinct occupancy profiles (sorted vectors) of *model*.

    Uniform bounds ``a..b``: partitions of ``n - r a`` into at most ``r``
    parts each at most ``b - a`` (a Gaussian binomial coefficient).  Per-urn
    bounds: partitions of ``n`` into at most ``r`` parts tested one by one
    with an interval matching, up to :data:`PROFILE_ENUMERATION_LIMIT`.

    >>> count_profiles(UrnModel(balls=5, urns=3, rule="BE"))
    5
    """
    memo = _MEMO.slots(model)
    if "profiles" in memo:
        return memo["profiles"]
    n, r = model.balls, model.urns
    if model.is_uniform:
        a, b = model.bounds[0]
        value = _gaussian_partitions(n - r * a, r, None if b is None else b - a)
    else:
        value = _profiles_by_enumeration(model)
    memo["profiles"] = value
    return value


def _profiles_by_enumeration(model: UrnModel) -> int:
    n, r = model.balls, model.urns
    eff = model.effective_bounds()
    if any(b < a for a, b in eff):
        return 0
    largest = max(b for _, b in eff)
    budget = _gaussian_partitions(n, r, largest)
    if budget > PROFILE_ENUMERATION_LIMIT:
        raise TooLarge(
            f"counting profiles with differing per-urn bounds examines {budget} partitions, "
            f"above the limit {PROFILE_ENUMERATION_LIMIT}; use uniform bounds or fewer balls"
        )
    if n == 0:
        return 1 if _interval_matching([0] * r, model.bounds) else 0
    if budget == 0:
        return 0
    from sympy.utilities.iterables import partitions

    found = 0
    # sympy yields one empty dict when no partition exists; budget > 0 rules that out
    for part in partitions(n, m=r, k=largest):
        values = [v for v, times in part.items() for _ in range(times)]
        values.extend([0] * (r - len(values)))
        if _interval_matching(values, model.bounds):
            found += 1
    return found


# ---------------------------------------------------------------------------
# the twelvefold way
# ---------------------------------------------------------------------------

def _stirling2(n: int, k: int) -> int:
    return int(fmpz.stirling_s2(n, k))


def _set_partitions_at_most(n: int, r: int) -> int:
    """``sum_{k<=r} S(n, k)``: partitions of an ``n``-set into at most ``r`` blocks.

    Bell number when ``r >= n`` (FLINT); otherwise
    ``(1/r!) sum_{i=0}^{r} C(r, i) D_{r-i} i^n`` with ``D_m`` the derangement
    numbers, which follows from ``S(n,k) = (1/k!) sum_j (-1)^j C(k,j)(k-j)^n``
    (Abramowitz & Stegun 24.1.4) by exchanging the sums.
    """
    if n == 0:
        return 1
    if r >= n:
        return int(fmpz.bell_number(n))
    derangements = [mpz(1)]
    for m in range(1, r + 1):
        derangements.append(m * derangements[-1] + (-1) ** m)
    total = mpz(0)
    c = mpz(1)
    for i in range(r + 1):
        if i:
            total += c * derangements[r - i] * mpz(i) ** n
        c = c * (r - i) // (i + 1)
    return int(gmpy2.divexact(total, gmpy2.fac(r)))


#: The order of :func:`twelvefold`'s entries.
WAYS_ORDER = [
    (balls, urns, per_urn)
    for balls in ("labelled", "unlabelled")
    for urns in ("labelled", "unlabelled")
    for per_urn in ("any", "at_most_one", "at_least_one")
]


def twelvefold(balls, urns) -> List[Dict[str, object]]:
    """The twelve counts of the twelvefold way for ``n`` balls and ``r`` urns.

    Balls labelled or not × urns labelled or not × any / at most one / at
    least one ball per urn (Stanley, *Enumerative Combinatorics* vol. 1,
    2nd ed., 2012, §1.9, Table 1.1):

    ======== ======== ============= ============== ==============
    balls    urns     any           at most one    at least one
    ======== ======== ============= ============== ==============
    labelled labelled ``r^n``       ``r^(n)``      ``r! S(n,r)``
    unlab.   labelled ``C(n+r-1,n)`` ``C(r,n)``    ``C(n-1,r-1)``
    labelled unlab.   ``sum S(n,k)`` ``[n<=r]``    ``S(n,r)``
    unlab.   unlab.   ``p_{<=r}(n)`` ``[n<=r]``    ``p_{<=r}(n-r)``
    ======== ======== ============= ============== ==============

    Returns a list of dicts ``{"balls", "urns", "per_urn", "count"}`` in
    :data:`WAYS_ORDER`, counts exact ``int``.
    """
    n = as_count(balls, "balls")
    r = as_count(urns, "urns", 1)
    fits = 1 if n <= r else 0
    values = {
        ("labelled", "labelled", "any"): int(mpz(r) ** n),
        ("labelled", "labelled", "at_most_one"): math.perm(r, n),
        ("labelled", "labelled", "at_least_one"): int(_mb_surjections(n, r)),
        ("unlabelled", "labelled", "any"): math.comb(n + r - 1, n),
        ("unlabelled", "labelled", "at_most_one"): math.comb(r, n),
        ("unlabelled", "labelled", "at_least_one"): (math.comb(n - 1, r - 1) if n >= 1 else 0),
        ("labelled", "unlabelled", "any"): _set_partitions_at_most(n, r),
        ("labelled", "unlabelled", "at_most_one"): fits,
        ("labelled", "unlabelled", "at_least_one"): _stirling2(n, r),
        ("unlabelled", "unlabelled", "any"): partitions_at_most(n, r),
        ("unlabelled", "unlabelled", "at_most_one"): fits,
        ("unlabelled", "unlabelled", "at_least_one"): partitions_at_most(n - r, r) if n >= r else 0,
    }
    return [
        {"balls": b, "urns": u, "per_urn": p, "count": values[(b, u, p)]}
        for (b, u, p) in WAYS_ORDER
    ]
