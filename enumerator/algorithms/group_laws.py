r"""The group routes of the laws of statistics: counts by urn groups, for weighted models and any number of urns.

Every function here answers one statistic of :mod:`enumerator.algorithms.laws`
by urn groups (:mod:`enumerator.algorithms.grouped`), never urn by urn, so
its cost grows with ``n``, the number of groups and the size of the answer,
never with ``r``:

* the totals of a list of groups (:func:`_total_of`) and the MB tail of
  the maximum without bounds, ``P(max >= m)`` from the bounded counts of the
  groups capped below ``m``;
* ``max``/``min`` by grouped bounded counts, with the one-term
  inclusion–exclusion for ``2(m+1) > n`` (Riordan, *An Introduction to
  Combinatorial Analysis*, 1958, ch. 5);
* ``urn:I`` by the urn's weight times the other groups' row (binomial under
  MB when the others are free);
* counting statistics by the bivariate generating function of the groups
  with the side of the window that excludes 0 marked (Flajolet & Sedgewick,
  *Analytic Combinatorics*, 2009, §III.2) — at most ``n`` urns hold a ball,
  so the law has at most ``n + 1`` values at any ``r`` — and
  :func:`marked_moments`, their first two binomial moments from
  ``G + G^2`` bounded counts (Feller, vol. 1, ch. IV).

Costs are checked with :func:`~enumerator.core.limits.check` before
computing.
"""

from __future__ import annotations

import math
from fractions import Fraction
from typing import Dict, Optional

import gmpy2
from flint import fmpz

from ..core import limits
from ..core.errors import InvalidParameters
from ..core.limits import Cost, bigint_bytes
from ..core.model import UrnModel
from . import grouped
from .extremes import mb_max_estimate

__all__ = ["marked_moments"]

mpz = gmpy2.mpz
divexact = gmpy2.divexact


def _total_of(groups, model: UrnModel, what: str):
    """The total weight of *groups* (integer weights) for the model's balls and rule."""
    return grouped.total_count(groups, model.rule.distinguishable, model.balls, what)


def _mb_free_tail(groups, n: int, start: int) -> Dict[int, "mpz"]:
    r"""``A_m`` for ``m >= start`` with ``2(m+1) > n``: MB, every group free (``a = 0``, no upper bound).

    At most one urn can exceed ``m``, so inclusion–exclusion has one term:
    ``A_m = W^n - sum_g c_g sum_{s>m} C(n, s) w_g^s (W - w_g)^{n-s}``
    (Feller, vol. 1, ch. IV), one pass of suffix sums per group: ``O(G n)``.
    """
    W = sum(c * w for c, _, _, w in groups)
    total = mpz(W) ** n
    suffix = {m: mpz(0) for m in range(start, n + 1)}
    for c, _, _, w in groups:
        acc = mpz(0)
        rest = W - w
        # term(s) = C(n, s) w^s rest^(n-s), from s = n down
        term = mpz(w) ** n
        for s in range(n, start - 1, -1):
            suffix[s] += c * acc  # urns above s: loads s+1..n
            acc += term
            if s:
                term = divexact(term * s * rest, (n - s + 1) * w) if w else mpz(0)
    return {m: total - suffix[m] for m in range(start, n + 1)}


# ---------------------------------------------------------------------------
# the same laws by groups (weighted models, any number of urns)
# ---------------------------------------------------------------------------

def _mb_max_cost(n: int, r: int, lo: int, hi: int) -> Cost:
    """Estimate :func:`~enumerator.algorithms.extremes.mb_max_cumulative`: its own plan, priced.

    :func:`~enumerator.algorithms.extremes.mb_max_estimate`: the plan's
    units at a rate fitted to measured runs, and the numbers it keeps.
    """
    seconds, memory = mb_max_estimate(n, r, hi)
    return Cost(seconds=seconds, memory=memory)


def _capped(groups, top: int):
    return [(c, a, min(b, top), w) for c, a, b, w in groups]


def _raised(groups, bottom: int):
    return [(c, max(a, bottom), b, w) for c, a, b, w in groups]


def _group_max_counts(model: UrnModel, total) -> Dict[int, "mpz"]:
    r"""``{m: weight with max == m}`` by groups: one grouped count per ``m`` (uppers lowered to ``m``).

    For MB with every group free, the ``m`` with ``2(m+1) > n`` come from
    one pass of suffix sums (:func:`_mb_free_tail`).  Cost: the sum over
    ``m`` of :func:`~enumerator.algorithms.grouped.row_cost` (checked first).
    """
    n, r = model.balls, model.urns
    groups, _ = grouped.integer_groups(model)
    labelled = model.rule.distinguishable
    lo = max(max(a for _, a, _, _ in groups), -(-n // r))
    hi = min(n, max(b for _, _, b, _ in groups))
    cumulative: Dict[int, mpz] = {}
    free = labelled and all(a == 0 and b >= n for _, a, b, _ in groups)
    last = hi
    cost = Cost()
    bits = max(64.0, n * math.log2(max(2, sum(c * w for c, _, _, w in groups))))
    if free and hi >= n // 2:
        start = max(lo, n // 2)
        last = start - 1
        # suffix sums: G n products, and one count per m kept
        cost = Cost(seconds=len(groups) * (n - start + 1) * 2 * limits.product_seconds(bits),
                    memory=(n - start + 2) * bigint_bytes(bits))
    # one grouped count per m: priced at every m, or at 4096 evenly spaced m (scaled up) for longer ranges
    span = last - lo + 1
    stride = max(1, -(-span // 4096))
    for m in range(lo, last + 1, stride):
        cost = cost + grouped.row_cost(_capped(groups, m), n, labelled).times(min(stride, last + 1 - m))
    limits.check(cost, f"the law of max for {n} balls in {r} urns",
                 advice="ask for P(max <= m) at one m (an event) instead of the whole law")
    if free and hi >= n // 2:
        cumulative.update(_mb_free_tail(groups, n, max(lo, n // 2)))
    counts: Dict[int, mpz] = {}
    previous = mpz(0)
    for m in range(lo, hi + 1):
        value = cumulative.get(m)
        if value is None:
            value = mpz(_total_of(_capped(groups, m), model, "a bounded count"))
        if value != previous:
            counts[m] = value - previous
        previous = value
        if value == total:
            break
    return counts


def _group_min_counts(model: UrnModel, total) -> Dict[int, "mpz"]:
    """``{m: weight with min == m}`` by groups: lowers raised to ``m``, at most ``n // r + 1`` counts."""
    n, r = model.balls, model.urns
    groups, _ = grouped.integer_groups(model)
    lo = min(a for _, a, _, _ in groups)
    hi = min(min(b for _, _, b, _ in groups), n // r)
    counts: Dict[int, mpz] = {}
    current = mpz(total)
    for m in range(lo, hi + 1):
        following = mpz(0) if m + 1 > hi else mpz(_total_of(_raised(groups, m + 1), model, "a bounded count"))
        if current != following:
            counts[m] = current - following
        current = following
        if current == 0:
            break
    return counts


def _split_urn(groups, index: int):
    """``(the urn's group, the other urns' groups)`` for the 0-based urn *index*, walking the groups."""
    start = 0
    for position, g in enumerate(groups):
        c = g[0]
        if index < start + c:
            others = list(groups[:position]) + ([(c - 1,) + tuple(g[1:])] if c > 1 else []) + list(groups[position + 1:])
            return g, others
        start += c
    raise InvalidParameters(f"urn {index + 1} is beyond the model's {start} urns; use urn:1 to urn:{start}")


def _group_urn_counts(model: UrnModel, index: int) -> Dict[int, "mpz"]:
    r"""``{v: weight with k_index == v}`` by groups.

    The urn's weight for ``v`` balls (``C(n, v) w^v`` for labelled balls)
    times the other urns' weight for ``n - v``: a binomial law under MB when
    the others are free (``C(n, v) w^v (W - w)^{n-v}``), otherwise one row of
    the other groups (:func:`~enumerator.algorithms.grouped.total_row`).
    """
    n = model.balls
    groups, _ = grouped.integer_groups(model)
    # tight uppers of the whole model stay valid for the urn and the others
    (_, a, b, w), others = _split_urn(groups, index)
    labelled = model.rule.distinguishable
    counts: Dict[int, mpz] = {}
    if b < a:
        return counts
    top = n - a
    limits.check(Cost(seconds=(top + 1) / limits.STEPS_PER_SECOND,
                      memory=(top + 1) * bigint_bytes(n * math.log2(max(2, sum(c * g for c, _, _, g in groups))))),
                 f"the law of one urn for {n} balls", advice="use fewer balls")
    if not others:
        return {n: mpz(w) ** n} if a <= n <= b else {}
    lowest = sum(c * x for c, x, _, _ in groups)
    if labelled and all(x == 0 and y >= n - lowest for _, x, y, _ in others):
        rest = mpz(sum(c * g for c, _, _, g in others))
        binom = gmpy2.comb(n, a)
        for v in range(a, min(b, n) + 1):
            counts[v] = binom * mpz(w) ** v * rest ** (n - v)
            binom = divexact(binom * (n - v), v + 1)
        return {v: c for v, c in counts.items() if c}
    row = grouped.total_row(others, labelled, top, f"the law of one urn for {n} balls")
    binom = gmpy2.comb(n, a)
    for v in range(a, min(b, n) + 1):
        c = row[n - v]
        if c:
            counts[v] = (binom if labelled else 1) * mpz(w) ** v * c
        binom = divexact(binom * (n - v), v + 1)
    return counts


def _single_group_occupied(groups, labelled: bool, n: int) -> Optional[Dict[int, "mpz"]]:
    r"""The law of the occupied urns of one group of free urns (or of capacity 1), or None.

    MB: ``C(c, u) u! S(n, u) w^n`` (Stirling numbers of the second kind, FLINT);
    BE: ``C(c, u) C(n - 1, u - 1) w^n``; capacity 1: every ball alone, ``u = n``
    (Feller, vol. 1, ch. II.5).  ``O(n)`` terms, whatever ``c`` is.
    """
    if len(groups) != 1:
        return None
    c, a, b, w = groups[0]
    if a != 0:
        return None
    scale = mpz(w) ** n
    if b == 1 and b < n:
        return {n: gmpy2.comb(c, n) * scale * (gmpy2.fac(n) if labelled else 1)} if c >= n else {}
    if b < n:
        return None
    if n == 0:
        return {0: mpz(1)}
    counts: Dict[int, mpz] = {}
    choose = mpz(1)
    for u in range(1, min(n, c) + 1):
        choose = divexact(choose * (c - u + 1), u)  # C(c, u)
        if labelled:
            ways = mpz(int(fmpz.stirling_s2(n, u))) * gmpy2.fac(u)
        else:
            ways = gmpy2.comb(n - 1, u - 1)
        counts[u] = choose * ways * scale
    return counts


def _group_marked_law(model: UrnModel, low: int, high: Optional[int]) -> Dict[int, "mpz"]:
    r"""``{j: weight with j urns holding low..high}`` by groups, at any number of urns.

    The side of the window without 0 is marked (at most ``n`` such urns):
    the window itself when ``low >= 1``, else its complement, and then
    ``j = r - u``.  One bivariate generating function
    (:func:`~enumerator.algorithms.grouped.marked_row`).
    """
    n, r = model.balls, model.urns
    groups, _ = grouped.integer_groups(model)
    labelled = model.rule.distinguishable
    single = _single_group_occupied(groups, labelled, n) if (low, high) in ((1, None), (0, 0)) else None
    if single is not None:
        return single if low == 1 else {r - u: c for u, c in single.items()}
    if low >= 1:
        row = grouped.marked_row(groups, labelled, n, low, high, f"the law of a counting statistic for {n} balls")
        return {u: c for u, c in enumerate(row) if c}
    if high is None:  # every urn holds at least 0
        return {r: mpz(_total_of(groups, model, "the model's total weight"))}
    row = grouped.marked_row(groups, labelled, n, high + 1, None, f"the law of a counting statistic for {n} balls")
    return {r - u: c for u, c in enumerate(row) if c}


def _tight(groups, n: int):
    """Groups ``(count, lower, upper or None, weight)`` with finite, tight upper bounds."""
    lowest = sum(c * a for c, a, _, _ in groups)
    return [(c, a, (n - (lowest - a)) if b is None else min(b, n - (lowest - a)), w) for c, a, b, w in groups]


def marked_moments(model: UrnModel, low: int, high: Optional[int]):
    r"""Exact ``(E[X], E[X(X-1)])`` of ``X`` = the urns holding ``low..high`` balls, from bounded counts.

    Parameters
    ----------
    model : UrnModel
        Any model (weights, bounds, any number of urns).
    low, high : int, int or None
        The window (``high`` None: no end).

    Returns
    -------
    tuple of Fraction
        The first two factorial moments.

    Notes
    -----
    The binomial moments of a counting statistic are sums over one urn and
    over ordered pairs of distinct urns (Feller, vol. 1, ch. IV.3), and urns
    of one group are interchangeable:
    ``E[X] = sum_g c_g N_g / N`` and
    ``E[X(X-1)] = sum_{g,h} p_{gh} N_{gh} / N``, where ``N_g`` is the total
    weight with one urn of group ``g`` confined to the window, ``N_{gh}``
    with one urn of ``g`` and another of ``h`` confined, and ``p_{gh}`` the
    number of such ordered pairs (``c_g (c_g - 1)`` or ``c_g c_h``).
    ``G + G^2`` grouped counts (:func:`~enumerator.algorithms.grouped.total_count`),
    each ``O(G M(n))`` — never a pass over the urns.
    """
    n = model.balls
    ints, _ = grouped.integer_groups(model)
    base = [(c, g.lower, g.upper, w) for (c, _, _, w), g in zip(ints, model.groups)]
    labelled = model.rule.distinguishable

    def count(groups):
        return grouped.total_count(_tight(groups, n), labelled, n, "a binomial moment")

    def confine(groups, position):
        c, a, b, w = groups[position]
        lo = max(a, low)
        hi = b if high is None else (high if b is None else min(b, high))
        if hi is not None and hi < lo:
            return None
        parts = [(c - 1, a, b, w)] if c > 1 else []
        return groups[:position] + [(1, lo, hi, w)] + parts + groups[position + 1:]

    total = count(base)
    first = mpz(0)
    second = mpz(0)
    for g in range(len(base)):
        groups_g = confine(base, g)
        if groups_g is None:
            continue
        first += base[g][0] * count(groups_g)
        for h in range(len(base)):
            pairs = base[g][0] * (base[g][0] - 1) if g == h else base[g][0] * base[h][0]
            if not pairs:
                continue
            # urn of g sits at index g in groups_g; the rest of group g (if any) follows it
            position = h if h < g else (g + 1 if h == g else h + (1 if base[g][0] > 1 else 0))
            two = confine(groups_g, position)
            if two is not None:
                second += pairs * count(two)
    return Fraction(int(first), int(total)), Fraction(int(second), int(total))
