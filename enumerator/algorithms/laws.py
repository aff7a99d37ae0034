r"""The exact route of each statistic: its counts in equally likely outcomes.

Every function here returns ``{value: count}`` for one statistic of one
model, counted in the model's equally likely outcomes (MB: assignments of the
labelled balls; BE/FD: admissible occupancy vectors).  The registry of
statistics (:mod:`enumerator.algorithms.vocabulary`) points each statistic at
its route; :mod:`enumerator.algorithms.statistics` turns the counts into a
law.

* ``max`` and ``min`` (:func:`max_counts`, :func:`min_counts`) — bounded
  counts.  ``P(max <= m)`` is the count of the model with every upper bound
  lowered to ``m``, ``P(min >= m)`` the count with every lower bound raised
  to ``m``; the pmf is a difference of such cumulative counts, and the walk
  stops as soon as a cumulative count reaches the total.  Without bounds the
  cumulative counts of all ``m`` come from :mod:`enumerator.algorithms.extremes`.
* counting statistics (:func:`marked_counts`) — the bivariate generating
  function ``prod_i (u s_i(x) + t_i(x))`` with a marking variable ``u`` on
  the occupancies in the chosen set (Flajolet & Sedgewick, *Analytic
  Combinatorics*, 2009, §III.2), taken through its binomial moments:
  ``B_j = E[C(X, j)]`` is a sum of counts in which ``j`` chosen urns are
  confined to the set, and the pmf is the inverse binomial transform
  ``P(X = i) = sum_j (-1)^{j-i} C(j, i) B_j`` (Riordan, *An Introduction to
  Combinatorial Analysis*, 1958, ch. 3; for the number of empty cells under
  MB this is the classical formula of Feller, vol. 1, ch. IV, §2), done as
  one exact polynomial product when the support is long.  Closed forms give
  ``B_j`` for MB and BE without bounds; otherwise each is a bounded count.
* ``urn:I`` (:func:`urn_counts`) — the marginal ``P(k_I = v)``: the weight
  of ``v`` balls in urn ``I`` times the count of the other urns holding
  ``n - v``, all ``v`` at once from one generating-function row of the other
  urns (binomial for MB without bounds).
* ``profile`` (:func:`profile_counts`) — every partition of ``n`` that fits
  the bounds, with the number of labelled vectors having it
  (``r! / prod_v mult_v!`` for uniform bounds, a dynamic programme over
  groups of equal bounds otherwise) times the weight of one vector (the
  rule's :meth:`~enumerator.core.rules.Rule.weight`).  The number of profiles
  is counted first (a Gaussian binomial coefficient) and a request above
  *limit* raises :class:`~enumerator.core.errors.TooLarge`.

Weighted models, and models of more than :data:`PER_URN_ROUTES` urns, are
answered by urn groups (:mod:`enumerator.algorithms.grouped`): the totals
(:func:`outcome_total`), ``max``/``min`` by grouped bounded counts (with the
one-term inclusion–exclusion for ``2(m+1) > n``), ``urn:I`` by the urn's
weight times the other groups' row (binomial under MB when the others are
free), and counting statistics by the bivariate generating function of the
groups with the side of the window that excludes 0 marked — at most ``n``
urns hold a ball, so the law has at most ``n + 1`` values at any ``r``
(:func:`marked_moments` gives their first two binomial moments from
``G + G^2`` bounded counts).  Costs grow with ``n``, the number of groups
and the size of the answer, never with ``r``, and are checked with
:func:`~enumerator.core.limits.check` before computing.  These group routes
live in :mod:`enumerator.algorithms.group_laws`; the routes here choose
between them and the per-urn ones.

Full enumeration of the configurations (:func:`enumerated_counts`) is the
last resort, used only for per-urn bounds so varied that the group method
would need more bounded counts than listing the configurations, and refused
above *limit*.
"""

from __future__ import annotations

import math
from collections import Counter
from typing import Callable, Dict, List, Optional, Tuple

import gmpy2
from flint import fmpz_poly

from ..core import limits, series
from ..core.errors import TooLarge
from ..core.limits import Cost, bigint_bytes
from ..core.model import UrnModel
from ..core.rules import Rule
from . import grouped
from .bounded import outcome_count, outcome_row
from .counting import count_configurations, count_profiles
from .extremes import be_max_cumulative, mb_at_least, mb_capped_moments, mb_max_cumulative
from .group_laws import (
    _group_marked_law,
    _group_max_counts,
    _group_min_counts,
    _group_urn_counts,
    _mb_max_cost,
    law_from_cumulative,
    marked_moments,
)
from .listing import iter_configurations

__all__ = [
    "GROUP_TUPLE_LIMIT",
    "PER_URN_ROUTES",
    "enumerated_counts",
    "marked_counts",
    "marked_moments",
    "max_counts",
    "min_counts",
    "outcome_total",
    "profile_counts",
    "urn_counts",
]

mpz = gmpy2.mpz
divexact = gmpy2.divexact


# ---------------------------------------------------------------------------
# which route: per urn (small unweighted models) or by groups
# ---------------------------------------------------------------------------

#: Unweighted models with at most this many urns keep the per-urn routes
#: (tuned closed forms and recursions); weighted models and larger ones are
#: answered by groups (:mod:`enumerator.algorithms.grouped`), whose cost
#: never grows with the number of urns.
PER_URN_ROUTES = 4096


def _per_urn(model: UrnModel) -> bool:
    return not model.weighted and model.urns <= PER_URN_ROUTES


def outcome_total(model: UrnModel) -> int:
    r"""The model's total weight: every count of a statistic is a part of it.

    Parameters
    ----------
    model : UrnModel
        Any model, any number of urns.

    Returns
    -------
    int
        Unweighted: the equally likely outcomes (MB assignments, BE/FD
        vectors).  Weighted: the total weight ``sum_k weight(k)`` with the
        weights scaled to integers (:func:`~enumerator.algorithms.grouped.integer_groups`;
        the scale cancels in every probability).

    Notes
    -----
    Per-urn bounded counts for small unweighted models
    (:func:`~enumerator.algorithms.bounded.outcome_count`), otherwise
    :func:`~enumerator.algorithms.grouped.total_count`: ``O(G M(n))`` plus
    Miller's ``O(n b)`` per bounded MB group, never a pass over the urns.
    """
    if _per_urn(model) and (model.is_uniform or not model.rule.distinguishable):
        return int(outcome_count(model.bounds, model.rule, model.balls))
    groups, _ = grouped.integer_groups(model)
    return int(grouped.total_count(groups, model.rule.distinguishable, model.balls, "the model's total weight"))


# ---------------------------------------------------------------------------
# max and min
# ---------------------------------------------------------------------------

def _is_mb_free(model: UrnModel) -> bool:
    """MB, every urn ``0..`` with no effective upper bound below ``n``."""
    if not model.rule.distinguishable or not model.is_uniform:
        return False
    a, b = model.bounds[0]
    return a == 0 and (b is None or b >= model.balls)


def max_counts(model: UrnModel, total) -> Dict[int, "mpz"]:
    r"""Count the outcomes by their largest occupancy.

    Parameters
    ----------
    model : UrnModel
        The model (it admits at least one configuration).
    total : int
        Its number of equally likely outcomes.

    Returns
    -------
    dict of int to mpz
        ``{m: outcomes with max == m}``, exact.

    Notes
    -----
    Differences of the cumulative counts ``A_m`` (every upper bound lowered
    to ``m``): for uniform bounds all ``A_m`` at once
    (:func:`~enumerator.algorithms.extremes.mb_max_cumulative`, or
    :func:`~enumerator.algorithms.extremes.be_max_cumulative`), otherwise one
    bounded count per ``m``; the walk stops once ``A_m`` reaches the total.
    Cost: at most ``n - ceil(n/r) + 1`` bounded counts (Feller, vol. 1,
    ch. IV).
    """
    if not _per_urn(model):
        return _group_max_counts(model, total)
    n, r = model.balls, model.urns
    eff = model.effective_bounds()
    lo = max(max(a for a, _ in eff), -(-n // r))
    hi = min(n, max(b for _, b in eff))
    cumulative: Dict[int, mpz] = {}
    if model.is_uniform and lo <= hi:
        # labelled balls and unlabelled ones have different recursions over m
        if model.rule.distinguishable and model.bounds[0][0] == 0:
            limits.check(_mb_max_cost(n, r, lo, hi), f"the law of max for {n} balls in {r} urns",
                         advice="ask for P(max <= m) at one m (an event) instead of the whole law")
            cumulative = mb_max_cumulative(n, r, hi)
        elif not model.rule.distinguishable:
            cumulative = be_max_cumulative(n, r, model.bounds[0][0], lo, hi)
        cumulative[hi] = mpz(total)

    def at_most(m: int) -> mpz:
        if m in cumulative:
            return cumulative[m]
        return mpz(outcome_count(tuple((a, min(b, m)) for a, b in eff), model.rule, n))

    return law_from_cumulative(at_most, lo, hi, total)



def min_counts(model: UrnModel, total) -> Dict[int, "mpz"]:
    r"""Count the outcomes by their smallest occupancy.

    Parameters
    ----------
    model : UrnModel
        The model (it admits at least one configuration).
    total : int
        Its number of equally likely outcomes.

    Returns
    -------
    dict of int to mpz
        ``{m: outcomes with min == m}``, exact.

    Notes
    -----
    Differences of the counts with every lower bound raised to ``m``
    (:func:`~enumerator.algorithms.extremes.mb_at_least` for MB without
    bounds), at most ``n // r + 1`` bounded counts.
    """
    if not _per_urn(model):
        return _group_min_counts(model, total)
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
            following = mpz(mb_at_least(n, r, m + 1))
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

def urn_counts(model: UrnModel, index: int) -> Dict[int, "mpz"]:
    r"""Count the outcomes by the occupancy of urn *index* (0-based).

    Parameters
    ----------
    model : UrnModel
        The model.
    index : int
        The urn, ``0 <= index < r``.

    Returns
    -------
    dict of int to mpz
        ``{v: outcomes with k_index == v}``, exact.

    Notes
    -----
    The weight of ``v`` balls in the urn (``C(n, v)`` for labelled balls)
    times the count of the other urns holding ``n - v``, all ``v`` from one
    row (:func:`~enumerator.algorithms.bounded.outcome_row`), ``O(G M(n))``;
    without bounds the binomial and stars-and-bars closed forms (Feller,
    vol. 1, ch. II.5), ``O(n)`` big operations.
    """
    if not _per_urn(model):
        return _group_urn_counts(model, index)
    n, r = model.balls, model.urns
    eff = model.effective_bounds()
    a, b = eff[index]
    counts: Dict[int, mpz] = {}
    if b < a:
        return counts
    labelled = model.rule.distinguishable
    a0, b0 = model.bounds[0]
    if model.is_uniform and a0 == 0 and (b0 is None or b0 >= n):
        # no bounds: MB binomial C(n, v)(r-1)^(n-v); BE stars and bars C(n-v+r-2, r-2)
        for v in range(0, n + 1):
            if r == 1:
                c = mpz(1) if v == n else mpz(0)
            elif labelled:
                c = gmpy2.comb(n, v) * mpz(r - 1) ** (n - v)
            else:
                c = gmpy2.comb(n - v + r - 2, r - 2)
            if c:
                counts[v] = c
        return counts
    others = tuple(p for i, p in enumerate(model.bounds) if i != index)
    row = outcome_row(others, model.rule, n - a)
    for v in range(a, b + 1):
        c = row[n - v]
        if c:
            # labelled balls: also choose which v of the n balls go to the urn
            counts[v] = gmpy2.comb(n, v) * c if labelled else c
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


def marked_counts(model: UrnModel, low: int, high: Optional[int], limit: int) -> Dict[int, "mpz"]:
    r"""Count the outcomes by the number of urns whose occupancy lies in ``[low, high]``.

    Parameters
    ----------
    model : UrnModel
        The model.
    low : int
        The smallest marked occupancy.
    high : int or None
        The largest marked occupancy (``None``: no upper end).
    limit : int
        The most configurations listed if the per-urn bounds leave no
        cheaper route.

    Returns
    -------
    dict of int to mpz
        ``{j: outcomes with exactly j marked urns}``, exact.

    Raises
    ------
    TooLarge
        when listing would exceed *limit* configurations.

    Notes
    -----
    Binomial moments and their inverse binomial transform (Riordan 1958,
    ch. 3): closed forms for MB and BE without bounds (``O(r)`` terms),
    otherwise one bounded count per tuple of marked urns per group of equal
    bounds (at most :data:`GROUP_TUPLE_LIMIT`), listing beyond.
    """
    n, r = model.balls, model.urns
    if not _per_urn(model) or (r > n + 1 and n <= 200):
        # at most n urns hold a ball: the law by groups has at most n + 1 values
        return _group_marked_law(model, low, high)
    rule = model.rule
    a0, b0 = model.bounds[0]
    free_top = model.is_uniform and (b0 is None or b0 >= n - (r - 1) * a0)
    if model.is_uniform and a0 == 0 and free_top:
        # r + 1 binomial moments of up to n log2 r bits, then one product of that length
        bits = max(64.0, n * math.log2(max(r, 2)) + r * math.log2(max(r, 2)))
        limits.check(Cost(seconds=(r + 1) * (math.log2(n + 2) + 4) * limits.product_seconds(bits),
                          memory=4 * (r + 1) * bigint_bytes(bits)),
                     f"the law of a counting statistic for {n} balls in {r} urns", advice="use fewer balls")
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
    if not rule.distinguishable:  # FD: no closed form here
        return None
    fac = gmpy2.fac
    if high is not None and high == low:
        # W(j) = n! / (J!^j (n - jJ)!) (r - j)^(n - jJ), the multinomial updated by
        # the falling factorial (n - jJ)^(J) / J! from one j to the next
        J = low
        B = []
        fJ = fac(J) if J <= n else mpz(1)  # past n only j = 0 is possible, and J! is never used
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
        return "complement", mb_capped_moments(n, r, low - 1)
    return None



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
        return enumerated_counts(
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


def profile_counts(model: UrnModel, limit: int) -> Dict[Tuple[int, ...], "mpz"]:
    r"""Count the outcomes by their occupancy profile (the entries sorted decreasingly).

    Parameters
    ----------
    model : UrnModel
        The model.
    limit : int
        The most profiles generated (uniform bounds) or candidate
        partitions checked (per-urn bounds).

    Returns
    -------
    dict of tuple to mpz
        ``{profile: outcomes}``, exact.

    Raises
    ------
    TooLarge
        above *limit* profiles or candidates (``parameters=["limit"]``).

    Notes
    -----
    The partitions of ``n - r a`` into at most ``r`` parts (SymPy's
    generator, after Knuth, TAOCP 7.2.1.4), each weighted by its
    arrangements ``r! / prod mult!`` (uniform bounds) or a dynamic programme
    over groups of equal bounds, times the rule's weight of one vector.
    Cost proportional to the number of profiles (a Gaussian binomial
    coefficient, Andrews 1976, Thm 3.1) times ``r``.
    """
    n, r = model.balls, model.urns
    if model.weighted:
        # a profile's weight depends on which urns hold what: list the configurations
        return enumerated_counts(model, "the profile law of a weighted model", limit,
                                 lambda k: tuple(sorted(k, reverse=True)))
    fac = gmpy2.fac
    fac_n = fac(n)
    counts: Dict[Tuple[int, ...], mpz] = {}
    if model.is_uniform:
        _, a, b, _ = model.effective_groups()[0]
        how_many = count_profiles(model)
        if how_many > limit:
            raise TooLarge(
                f"the model has {how_many} occupancy profiles, above the limit {limit}; "
                "raise limit= or choose a summary statistic such as max or empty",
                parameters=["limit"],
            )
        # every profile is a tuple of r entries: the answer itself is profiles x r numbers
        limits.check(Cost(seconds=how_many * (r + n) / limits.STEPS_PER_SECOND, memory=how_many * (r * 8 + 64)),
                     f"the {how_many} occupancy profiles of {r} urns",
                     advice="choose a summary statistic such as max, empty or exactly:J")
        fac_r = fac(r)
        for part in _partitions(n - r * a, r, b - a):
            profile = tuple(v + a for v in part) + (a,) * (r - len(part))
            mult = Counter(profile)
            arrangements = fac_r
            for m in mult.values():
                arrangements = divexact(arrangements, fac(m))
            weight = model.rule.weight(profile, fac_n)
            counts[profile] = arrangements * weight
        return counts
    eff = model.effective_bounds()
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
        weight = model.rule.weight(profile, fac_n)
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

def enumerated_counts(model: UrnModel, label: str, limit: int, value: Callable) -> Dict:
    """Count the outcomes by ``value(k)``, listing every admissible configuration.

    Parameters
    ----------
    model : UrnModel
        The model.
    label : str
        What is being computed, for the error message.
    limit : int
        The most configurations listed.
    value : callable
        The statistic of one occupancy vector.

    Returns
    -------
    dict
        ``{value: outcomes}``, exact.

    Raises
    ------
    TooLarge
        above *limit* configurations (``parameters=["limit"]``).

    Notes
    -----
    The last resort: lexicographic listing (Knuth, TAOCP 4A, 7.2.1.3 style
    successors), ``O(C r)`` for ``C`` configurations, each weighted by the
    rule's :meth:`~enumerator.core.rules.Rule.weight`.
    """
    how_many = count_configurations(model)
    if how_many > limit:
        raise TooLarge(
            f"{label} for these per-urn bounds needs all {how_many} configurations listed, "
            f"above the limit {limit}; raise limit=",
            parameters=["limit"],
        )
    r = model.urns
    limits.check(Cost(seconds=how_many * r / limits.STEPS_PER_SECOND, memory=how_many * 64 + r * 64),
                 f"listing {how_many} configurations of {r} urns", advice="lower limit= or use fewer urns",
                 parameters=["limit"])
    fac_n = gmpy2.fac(model.balls)
    powers = None
    if model.weighted:
        groups, _ = grouped.integer_groups(model)
        powers = [w for c, _, _, w in groups for _ in range(c)]
    counts: Dict = {}
    for k in iter_configurations(model):
        w = model.rule.weight(k, fac_n)
        if powers is not None:
            for p, v in zip(powers, k):
                if v:
                    w *= mpz(p) ** v
        key = value(k)
        counts[key] = counts.get(key, 0) + w
    return counts
