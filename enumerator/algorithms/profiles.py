r"""Profiles (occupancy vectors with the urns unlabelled) and the twelvefold way.

* uniform bounds — partitions into at most ``r`` parts each at most
  ``b - a``, a coefficient of a Gaussian binomial (Andrews, *The Theory of
  Partitions*, 1976, Thm 3.1), or the partition number by FLINT's
  Hardy–Ramanujan–Rademacher formula;
* differing bounds — partitions tested one by one with an interval matching
  over the groups (Glover, *Maximum matching in a convex bipartite graph*,
  1967);
* the twelvefold way — the twelve counts of balls labelled or not, urns
  labelled or not, any / at most one / at least one ball per urn (Stanley,
  *Enumerative Combinatorics* vol. 1, 2nd ed., 2012, §1.9, Table 1.1), with
  Stirling and Bell numbers by FLINT (Abramowitz & Stegun 24.1.4).

All arithmetic is exact; counts are ``int``.
"""

from __future__ import annotations

import math
from typing import Dict, List

import gmpy2
from flint import fmpz

from ..core.errors import TooLarge
from ..core.limits import (
    Cost,
    bigint_bytes,
    check,
    product_seconds,
)
from ..core.model import UrnModel, as_count
from .configurations import MEMO
from .counting_costs import (
    PROFILE_ENUMERATION_LIMIT,
    check_counting_cost,
    log2_approx,
    log2_binomial_approx,
    partitions_cost,
)
from .normalisers import surjections

__all__ = ["WAYS_ORDER", "count_profiles", "partitions_at_most", "twelvefold"]

mpz = gmpy2.mpz


# ---------------------------------------------------------------------------
# profiles (urns unlabelled)
# ---------------------------------------------------------------------------

def _gaussian_partitions(total: int, parts: int, largest) -> int:
    """Partitions of *total* into at most *parts* parts, each at most *largest*.

    The coefficient of ``q^total`` in the Gaussian binomial
    ``[parts + largest choose parts]_q = prod_{i=1}^{parts} (1 - q^{largest+i})/(1 - q^i)``
    (Andrews, *The Theory of Partitions*, 1976, Thm 3.1); ``largest=None``
    drops the numerator.  Each factor ``1/(1 - q^i)`` is the running sum
    ``p[m] += p[m - i]`` and each ``1 - q^s`` the difference
    ``p[m] -= p[m - s]`` on one row of ``total + 1`` integers: ``O(total
    min(parts, total))`` additions of numbers of ``O(sqrt(total))`` bits.
    With room for every partition it is ``p(total)`` by FLINT's
    Hardy–Ramanujan–Rademacher formula.
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
        if largest < parts:
            parts, largest = largest, parts
    if parts >= total and (largest is None or largest >= total):
        # every partition of total fits: p(total) by Hardy–Ramanujan–Rademacher (FLINT)
        return int(fmpz(total).partitions_p())
    length = total + 1
    row = [0] * length
    row[0] = 1
    for i in range(1, min(parts, total) + 1):
        for m in range(i, length):
            row[m] += row[m - i]
    if largest is not None:
        for i in range(1, parts + 1):
            step = largest + i
            if step > total:
                break
            for m in range(total, step - 1, -1):
                row[m] -= row[m - step]
    return row[total]


def partitions_at_most(total: int, parts: int) -> int:
    """The number of partitions of *total* into at most *parts* parts (OEIS A008284 row sums)."""
    return _gaussian_partitions(total, parts, None)


def _groups_matching(values: List[int], zeros: int, groups) -> bool:
    """Can the multiset *values* plus *zeros* zeros be placed one per urn within the groups' bounds?

    Greedy interval–point matching with multiplicities: take the values in
    increasing order and give each the open interval with the smallest upper
    end (Glover, *Maximum matching in a convex bipartite graph*, 1967).  A
    group is one interval of ``count`` urns, so the cost is
    ``O((len(values) + G) log G)`` whatever the number of urns.
    """
    import heapq

    intervals = sorted((g.lower, math.inf if g.upper is None else g.upper, g.count) for g in groups)
    runs = ([(0, zeros)] if zeros else []) + [(v, 1) for v in sorted(values)]
    heap: list = []
    i = 0
    for v, need in runs:
        while i < len(intervals) and intervals[i][0] <= v:
            low, up, count = intervals[i]
            heapq.heappush(heap, [up, count])
            i += 1
        while need:
            if not heap or heap[0][0] < v:
                return False
            top = heap[0]
            take = min(need, top[1])
            top[1] -= take
            need -= take
            if top[1] == 0:
                heapq.heappop(heap)
    return not heap and i == len(intervals)


def count_profiles(model: UrnModel) -> int:
    r"""Return the number of distinct occupancy profiles (sorted vectors) of *model*.

    Parameters
    ----------
    model : UrnModel
        The problem (weights do not change the admissible vectors).

    Returns
    -------
    int
        The number of multisets ``{k_1, ..., k_r}`` of admissible vectors.

    Raises
    ------
    TooLarge
        When the route's cost is beyond the limits, or differing bounds
        would examine more than :data:`PROFILE_ENUMERATION_LIMIT` partitions.

    Notes
    -----
    Uniform bounds ``a..b``: partitions of ``n - r a`` into at most ``r``
    parts each at most ``b - a``, the coefficient of a Gaussian binomial
    (Andrews, *The Theory of Partitions*, 1976, Thm 3.1), ``O(min(r, n))``
    FLINT products of length ``n``; with ``r >= n`` and no capacity, the
    partition number by FLINT's Hardy–Ramanujan–Rademacher formula.
    Differing bounds: partitions of ``n`` into at most ``r`` parts tested
    one by one with an interval matching over the groups.

    Examples
    --------
    >>> count_profiles(UrnModel(balls=5, urns=3, rule="BE"))
    5
    >>> count_profiles(UrnModel(balls=10, urns=2**64, rule="BE"))   # p(10), OEIS A000041
    42
    """
    memo = MEMO.slots(model)
    if "profiles" in memo:
        return memo["profiles"]
    n, r = model.balls, model.urns
    check_counting_cost(model, "profiles", "counting the profiles")
    if model.is_uniform:
        g = model.groups[0]
        value = _gaussian_partitions(n - r * g.lower, r, None if g.upper is None else g.upper - g.lower)
    else:
        value = _profiles_by_enumeration(model)
    memo["profiles"] = value
    return value


def _profiles_by_enumeration(model: UrnModel) -> int:
    n, r = model.balls, model.urns
    eff = model.effective_groups()
    if any(top < low for _, low, top, _ in eff):
        return 0
    largest = max(top for _, _, top, _ in eff)
    budget = _gaussian_partitions(n, r, largest)
    if budget > PROFILE_ENUMERATION_LIMIT:
        raise TooLarge(
            f"counting profiles with differing per-urn bounds examines {budget} partitions, "
            f"above the limit {PROFILE_ENUMERATION_LIMIT}; use uniform bounds or fewer balls",
            parameters=["balls"],
        )
    if n == 0:
        return 1 if _groups_matching([], r, model.groups) else 0
    if budget == 0:
        return 0
    from sympy.utilities.iterables import partitions

    found = 0
    # sympy yields one empty dict when no partition exists; budget > 0 rules that out
    for part in partitions(n, m=min(r, n), k=largest):
        values = [v for v, times in part.items() for _ in range(times)]
        if _groups_matching(values, r - len(values), model.groups):
            found += 1
    return found


# ---------------------------------------------------------------------------
# the twelvefold way
# ---------------------------------------------------------------------------

def _stirling2(n: int, k: int) -> int:
    """``S(n, k)`` by FLINT; 0 when ``k > n`` (whatever the size of ``k``)."""
    if k > n:
        return 1 if n == k == 0 else 0
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


def _twelvefold_cost(n: int, r: int) -> Cost:
    """The cost of :func:`twelvefold`: its largest numbers (about ``n log2 r`` bits), their
    powers, Stirling and Bell numbers, and the partition rows, with their decimal output."""
    power_bits = n * log2_approx(r) + 64
    small = min(n, r)
    big = Cost(seconds=2 * product_seconds(power_bits) * max(1.0, math.log2(n + 1)),
               memory=12 * bigint_bytes(power_bits))
    cost = big                                               # r^n, r^(n), the decimal text
    if n >= r:
        stirling_bits = n * log2_approx(r) + 64
        cost = cost + Cost(seconds=2 * min(r, n - r + 1) * product_seconds(stirling_bits),
                           memory=8 * bigint_bytes(stirling_bits))
        cost = cost + big.times(r)                           # sum of S(n, k), k <= r: r powers
    else:
        bell_bits = n * log2_approx(n) + 64
        cost = cost + Cost(seconds=n * product_seconds(bell_bits), memory=8 * bigint_bytes(bell_bits))
    cost = cost + Cost(seconds=product_seconds(log2_binomial_approx(n + r, small) + 64) * 8)
    cost = cost + partitions_cost(n, r, None)
    if n >= r:
        cost = cost + partitions_cost(n - r, r, None)
    return cost


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

    Parameters
    ----------
    balls : int
        ``n >= 0``.
    urns : int
        ``r >= 1``, any size.

    Returns
    -------
    list of dict
        ``{"balls", "urns", "per_urn", "count"}`` in :data:`WAYS_ORDER`,
        counts exact ``int``.

    Raises
    ------
    InvalidParameters
        For a negative or non-integer *balls* or *urns*.
    TooLarge
        When the whole table is beyond the limits (checked before any entry
        is computed: ``n = 10^9`` balls in 3 urns gives numbers of 477
        million digits and partition rows of ``10^9`` entries).

    Notes
    -----
    Every sum is bounded by ``min(n, r)``: ``S(n, r) = 0`` and
    ``r! S(n, r) = 0`` for ``r > n``, the Bell number ``B_n`` (FLINT) for
    ``r >= n``, the partition number ``p(n)`` (FLINT's
    Hardy–Ramanujan–Rademacher) for ``r >= n``; otherwise ``r`` powers for
    ``sum_{k<=r} S(n, k)`` and ``O(n min(r, n))`` additions for
    ``p_{<=r}(n)``.  The estimate is :func:`_twelvefold_cost`.

    Examples
    --------
    >>> [w["count"] for w in twelvefold(3, 2)][:3]
    [8, 0, 6]
    """
    n = as_count(balls, "balls")
    r = as_count(urns, "urns", 1)
    check(_twelvefold_cost(n, r), f"the twelvefold way for {n} balls and {r} urns",
          advice="use fewer balls", parameters=["balls"])
    fits = 1 if n <= r else 0
    values = {
        ("labelled", "labelled", "any"): int(mpz(r) ** n),
        ("labelled", "labelled", "at_most_one"): math.perm(r, n),
        ("labelled", "labelled", "at_least_one"): int(surjections(n, r)),
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
