r"""Cumulative counts of the largest and smallest occupancy, all bounds at once.

``A_m`` = the outcomes with every urn holding at most ``m`` balls (so
``P(max <= m) = A_m / total``), and the outcomes with every urn holding at
least ``m``, for the cases where a recursion over ``m`` or over the number of
urns beats one bounded count per ``m``:

* :func:`mb_max_cumulative` — MB without bounds, every ``m`` from
  ``ceil(n/r)`` up: J. C. P. Miller's power recurrence for small ``m``, a
  differential-equation recursion over the number of urns with extensions for
  larger ``m``, and a closed form once at most one urn can exceed ``m``;
* :func:`mb_at_least` — MB, every urn holding at least ``m``;
* :func:`mb_capped_moments` — MB binomial moments of the urns holding at most
  ``c`` (inclusion–exclusion terms of the two above);
* :func:`be_max_cumulative` — BE/FD, every ``m`` by one row of binomials.

All arithmetic is exact (gmpy2 integers, FLINT polynomials).
"""

from __future__ import annotations

import math
from typing import Callable, Dict, List, Tuple

import gmpy2
from flint import fmpz, fmpz_poly

from ..core import series
from ..core.workers import active_processes, map_in_processes
from .group_rows import capped_levels

__all__ = ["be_max_cumulative", "mb_at_least", "mb_capped_moments", "mb_max_cumulative", "mb_max_estimate", "poly_dot"]

mpz = gmpy2.mpz
divexact = gmpy2.divexact


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
    for t, K, cur in capped_levels(r, m, n):
        take = min(K + 1, keep(t))
        tails[t] = cur[K - take + 1:][::-1]
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
        acc = poly_dot(E, vtails[t])
        if acc:
            total += binom * divexact(falling * acc, Fpow)
    return total


def poly_dot(poly, row) -> "mpz":
    """``sum_i poly[i] row[i]`` over the coefficients of a FLINT polynomial and a row of mpz (the shorter decides).

    >>> int(poly_dot(fmpz_poly([1, 0, 2]), [mpz(5), mpz(7), mpz(3)]))
    11
    """
    acc = mpz(0)
    for i, c in enumerate(poly.coeffs()[: len(row)]):
        if c:
            acc += int(c) * row[i]
    return acc


#: Relative cost of one Miller step, one level step and one extension product
#: (measured on ~20,000-bit numbers, MB n=2000 r=500; only their ratios matter).
_COST_MILLER, _COST_LEVEL, _COST_EXTEND = 2.45, 4.5, 8.0


def _mb_max_plan(n: int, r: int, first: int, last: int):
    """The steps of :func:`mb_max_cumulative` below ``n // 2``: ``[(m, D, miller, units)]``.

    Each step computes ``A_m`` by Miller's recurrence (``miller``), or by the
    levels at base ``m`` followed by ``D`` extensions (``A_{m+1..m+D}``);
    ``units`` is its work in the relative units ``_COST_*``.  The choice is
    made from the cost model alone, so the plan is known before any
    arithmetic (:func:`mb_max_estimate` prices it).
    """
    plan = []
    m = first
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
            plan.append((m, 0, True, _COST_MILLER * n * m))
            m += 1
            continue
        plan.append((m, D, False, spent))
        m += D + 1
    return plan


def mb_max_estimate(n: int, r: int, top: int) -> Tuple[float, int]:
    """Estimated ``(seconds, bytes)`` of :func:`mb_max_cumulative` (the plan of :func:`_mb_max_plan`, priced).

    One unit of the plan costs about ``max(0.16, 1.45e-5 b - 0.03)``
    microseconds of CPU on numbers of ``b = n log2 r`` bits: fitted to
    measured runs at ``b`` = 10,000 to 50,000 (MB ``n`` = 1000 to 5000,
    ``r`` = 500 and 1024: 0.16 to 0.69 us per unit, 0.3 to 28 s of CPU).  The suffix sums above ``n/2`` cost
    ``n`` steps.  Memory: the answers (``n`` numbers of ``b`` bits), two
    level rows and the largest set of level tails kept for extensions.
    Planning is ``O(n)`` small-number work (0.1 s at ``n = 10^4``).
    """
    lo = -(-n // r)
    if r <= 1 or top < lo:
        return 0.0, 0
    bits = n * math.log2(r)
    plan = _mb_max_plan(n, r, lo, min(top, n // 2 - 1))
    seconds, longest = _plan_seconds(n, r, plan)
    workers = _plan_processes(n, r, plan)
    if workers > 1:  # shared out longest first: at most the even share plus the longest step
        seconds = min(seconds, seconds / workers + longest)
    kept = 0
    for m, D, miller, _ in plan:
        if not miller and D > 1:
            T = min(r, n // (m + 1))
            kept = max(kept, sum(min(n - t * (m + 1) + 1, t * (D - 1) + 1) for t in range(T + 1)))
    numbers = (min(top, n) - lo + 1) + 2 * (n + 1) + kept
    memory = numbers * (int(bits // 8) + 32)
    if workers > 1:  # each process holds two level rows and its own kept tails; the answers come back here
        memory += (workers - 1) * (2 * (n + 1) + kept) * (int(bits // 8) + 32)
    return seconds + n * (1 + bits / 4000) * 2e-7, memory


def _plan_seconds(n: int, r: int, plan) -> Tuple[float, float]:
    """``(total, longest)`` seconds of the steps of *plan* (see :func:`mb_max_estimate` for the rate)."""
    bits = n * math.log2(r)
    per_unit = max(0.16, 1.45e-5 * bits - 0.03) * 1e-6
    units = [step[3] for step in plan]
    return sum(units) * per_unit, max(units, default=0.0) * per_unit


def mb_max_cumulative(n: int, r: int, top: int) -> Dict[int, "mpz"]:
    r"""Count the MB assignments with every urn at most ``m``, for every ``m`` up to *top*.

    Parameters
    ----------
    n : int
        Balls, ``n >= 0``.
    r : int
        Urns without bounds, ``r >= 1``.
    top : int
        The largest bound wanted, ``top <= n``.

    Returns
    -------
    dict of int to mpz
        ``{m: A_m}`` for ``m = ceil(n/r) .. top``, ``A_m`` the number of
        assignments of ``n`` labelled balls to ``r`` urns each holding at
        most ``m`` (``A_m / r^n = P(max <= m)``), exact.

    Notes
    -----
    Three regimes, chosen by a cost model:

    * small ``m``: :func:`_mb_miller`, ``O(n m)``;
    * larger ``m``: :func:`_mb_max_levels` at a base bound (``~ n^2/(2m)``),
      then :func:`_mb_max_extend` for the next bounds as long as an
      extension costs less than the average so far per bound;
    * once two urns cannot both exceed ``m`` (``2(m+1) > n``), inclusion–
      exclusion has one term: ``A_m = r^n - r sum_{s>m} C(n, s)(r-1)^{n-s}``
      (Feller, vol. 1, ch. IV), one pass of suffix sums for all those ``m``.

    For MB ``n = 2000``, ``r = 500`` (support ``4..2000``) this is 1.8 s of
    CPU; ``n = 10^4``, ``r = 1024`` (numbers of ``10^5`` bits, support
    ``10..10^4``) 231 s and 1.1 GB (:func:`mb_max_estimate`: 216 s).  The
    work is ``sum_m min(n m, n^2 / (2m))`` big-number steps on
    ``n log2 r``-bit numbers, spread over all ``m`` (a quarter below
    ``m = 50``, 40 % for ``m`` in ``50..200``), so it grows like
    ``n^3 log n``: seconds are out of reach beyond a few thousand balls.
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
    plan = _mb_max_plan(n, r, lo, min(top, half - 1))
    steps = [(n, r, m, D, miller) for m, D, miller, _ in plan]
    workers = _plan_processes(n, r, plan)
    if workers > 1:
        # the longest steps first, so that the last ones to finish are short (LPT scheduling)
        order = sorted(range(len(steps)), key=lambda i: -plan[i][3])
        for part in map_in_processes(_plan_step, [steps[i] for i in order], workers):
            A.update(part)
    else:
        for step in steps:
            A.update(_plan_step(step))
    return A


#: Estimated seconds above which :func:`mb_max_cumulative` shares its plan's steps among local processes.
PROCESSES_AFTER_SECONDS = 2.0


def _plan_processes(n: int, r: int, plan) -> int:
    """Processes for *plan* (:func:`~enumerator.core.workers.active_processes` when its estimate is long, else 1)."""
    workers = min(active_processes(), len(plan))
    if workers <= 1:
        return 1
    seconds, _ = _plan_seconds(n, r, plan)
    return workers if seconds > PROCESSES_AFTER_SECONDS else 1


def _plan_step(step) -> Dict[int, "mpz"]:
    """One step ``(n, r, m, D, miller)`` of the plan: ``{m: A_m}``, or the levels at ``m`` and ``D`` extensions."""
    n, r, m, D, miller = step
    if miller:
        return {m: _mb_miller(n, r, m)}
    value, tails = _mb_max_levels(n, r, m, lambda t: t * max(D - 1, 0) + 1)
    A = {m: value}
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
    return A


def mb_at_least(n: int, r: int, m: int):
    r"""Count the MB assignments of ``n`` balls to ``r`` urns with every urn at least ``m``.

    Parameters
    ----------
    n, r : int
        Balls (``n >= 0``) and urns (``r >= 1``), no other bounds.
    m : int
        The lower bound of every urn, ``m >= 0``.

    Returns
    -------
    mpz
        The exact count (0 when ``r m > n``).

    Notes
    -----
    ``m = 1`` is ``r! S(n, r)`` (FLINT's Stirling numbers).  Otherwise the
    cheaper of two routes: with ``tau = sum_{k>=m} x^k/k!`` and
    ``tau' = tau + x^{m-1}/(m-1)!``, the counts ``N_j(k) = k! [x^k] tau^j``
    obey ``N_j(k+1) = j N_j(k) + j C(k, m-1) N_{j-1}(k-m+1)``, and level ``j``
    is nonzero only for ``k`` in ``[j m, j m + n - r m]`` (cost
    ``r (n - r m + 1)``); or inclusion–exclusion over the urns holding fewer
    than ``m`` (:func:`mb_capped_moments`, cost ``sum_t min(n, t(m-1))``).
    The recurrence comes from differentiating the truncated exponential
    (Flajolet & Sedgewick, *Analytic Combinatorics*, 2009, §II.2 and §VII.8
    for the differential view).
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
        for t, b in enumerate(mb_capped_moments(n, r, c)):
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



def be_max_cumulative(n: int, r: int, a: int, lo: int, hi: int) -> Dict[int, "mpz"]:
    r"""Count the BE/FD vectors with every entry in ``a..m``, for every ``m`` in ``lo..hi``.

    Parameters
    ----------
    n, r : int
        Balls and urns.
    a : int
        The uniform lower bound.
    lo, hi : int
        The range of upper bounds ``m`` wanted (``lo >= a``).

    Returns
    -------
    dict of int to mpz
        ``{m: count}``, exact.

    Notes
    -----
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


def mb_capped_moments(n: int, r: int, c: int) -> List:
    r"""Return the binomial moments of the number of urns holding at most *c* balls, MB.

    Parameters
    ----------
    n, r : int
        Balls and urns, no bounds.
    c : int
        The largest occupancy counted, ``c >= 0``.

    Returns
    -------
    list of mpz
        ``B_t = C(r, t) W(t)`` for ``t = 0..r`` (in equally likely outcomes:
        ``B_t / r^n = E[C(X, t)]``), exact.

    Notes
    -----
    ``W(t) = n! [x^n] e_c(x)^t e^{(r-t)x} = sum_u C(n, u) N_t(u) (r-t)^{n-u}``
    counts the assignments in which ``t`` given urns hold at most ``c`` each;
    ``N_t(u)/u!`` are the coefficients of ``e_c^t`` (FLINT products of the
    factorial-scaled window), and each ``W(t)`` is one Horner pass of length
    ``min(n, t c) + 1``: ``sum_t min(n, t c)`` multiplications in all.
    """
    fac = gmpy2.fac
    c = min(c, n)  # e_c = e^x up to x^n once c >= n: the same moments (and no window of c terms)
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
