"""Benchmark workloads of ``enumerator compare``: whole sweeps, exact side and approximation.

``scripts/bench.py`` loads this file and calls :func:`register`.

* ``compare-empty-mean-10^6``: the sweep ``empty-mean`` over ``balls =
  10..10^6`` (10 points on a log scale, ``urns = balls//2``) through
  :func:`enumerator.algorithms.asymptotics.compare_sweep`: the exact mean
  ``(r-1)^n / r^(n-1)`` (two GMP powers, no gcd) and its error at honest
  precision, against the same sweep with the exact side as it was computed
  before, ``Fraction(r (r-1)^n, r^n)`` in Python integers (a CPython gcd of
  numbers of ``n log2 r`` bits).  ``--quick``: to ``10^5``.
* ``compare-normal-10^5``: the sweep ``normal`` over ``balls = 10..10^5``
  (``urns = balls//2``, ``j = floor(r e^{-n/r})``): the exact law of the
  number of empty urns by the cheaper of its two routes, each point checked
  against a per-point limit of 60 s, so a point out of reach is skipped
  rather than computed (the note says which); against the earlier exact
  side (inclusion–exclusion with binomials from scratch and a CPython
  ``Fraction``).  ``--quick``: to ``10^4``.

* ``empty-law-point-10^5``: one point of that sweep, ``P(E <= j)`` for
  ``n = 10^5`` balls in ``r = n/2`` urns, ``j = floor(r e^{-2})``, through
  :func:`enumerator.algorithms.asymptotics.formulas.empty_urns_at_most`
  (inclusion-exclusion by Horner's rule along the factorisations of the
  bases, one power per prime), against the same law by the earlier route
  (one power ``o^n`` per odd base ``o``, two binomials per term,
  ``formulas._exclusion_sum_by_odd_parts``), the same final division.
  ``--quick``: ``n = 10^4``.  The earlier route passes the 60 s call limit
  at 10^5 balls (105-155 s CPU here), so there its time is extrapolated;
* ``empty-law-point-3*10^4``: the same comparison at ``n = 3*10^4``, where
  both finish and the ratio is measured.  ``--quick``: ``n = 5000``.
* ``empty-law-split-10^5``: the point of ``empty-law-point-10^5`` as
  :func:`~enumerator.algorithms.asymptotics.formulas.empty_urns_at_most`
  computes it (the sum cut in parts computed by worker processes, as many
  as ``core.workers.active_processes()`` allows up to 8, when its estimate
  is 1 s or more) against the same sum in one process
  (``formulas._exclusion_sum(..., processes=1)``, the route before the
  split), the same final division.  Elapsed times: the
  split saves no CPU time, so the gain needs free cores (measured
  2026-12-02 on 2 cores under a load of 4-5 from other work, medians of 3
  interleaved runs: one process 29.5 s CPU, two processes 14.5 s + 15.2 s
  CPU and no shorter in elapsed time, since no core was free).
  ``--quick``: ``n = 2*10^4``, the smallest point of the sweep that is split.

In ``--quick`` mode the two sweeps report plain seconds: estimating the earlier exact
side alone takes longer than the sweeps themselves.
"""

from __future__ import annotations

import math
from fractions import Fraction

#: Per-point limit (seconds) of the normal sweep: the planned cost of a point beyond it is refused.
NORMAL_POINT_SECONDS = 60.0


def register(bench) -> None:
    """Declare the workloads of this file in *bench* (``scripts/bench.py``)."""
    Method = bench.Method

    def sweep_rows(name, top, **fixed):
        from enumerator.algorithms.asymptotics import compare_sweep

        (comparison,) = compare_sweep(name, f"balls=10..{top}", urns="balls//2", **fixed)
        return [(row.point.balls, row.exact if row.error is None else row.skipped)
                for row in comparison.rows]

    def old_sweep(name, top, exact):
        """The sweep's points with the earlier exact side (no approximation: a lower bound on its time)."""
        from enumerator.algorithms.asymptotics import approximation, sweep

        entry = approximation(name)
        _, points = sweep(f"balls=10..{top}", urns="balls//2")
        return [(p.balls, exact(entry.check(p))) for p in points]

    @bench.workload("compare-empty-mean-10^6",
                    "compare empty-mean --vary balls=10..10^6 --urns balls//2 (10 points): exact mean "
                    "(r-1)^n/r^(n-1) by GMP vs Fraction(r(r-1)^n, r^n) in Python integers",
                    target=bench.faster_by(1))
    def _empty_mean(ctx):
        top = 10**5 if ctx.quick else 10**6

        def ours():
            return sweep_rows("empty-mean", top)

        def fraction_side(point):
            n, r = point.balls, point.urns
            return Fraction(r * (r - 1) ** n, r**n)

        def scaled(s):
            size = max(100, int(top * s))
            return lambda: old_sweep("empty-mean", size, fraction_side)

        # --quick: plain seconds (estimating the slow peer alone takes longer than the sweep)
        peers = [] if ctx.quick else [Method("earlier exact side only, Python Fraction", lambda: old_sweep(
            "empty-mean", top, fraction_side), scaled=scaled)]
        return ctx.compare(Method("enumerator compare_sweep (exact + approximation)", ours), peers,
                           items=10,
                           notes=[f"10 points up to {top:,} balls; the largest exact mean has "
                                  f"{int(top * math.log10(top // 2)):,} digits over as many"])

    @bench.workload("compare-normal-10^5",
                    "compare normal --vary balls=10..10^5 --urns balls//2: exact P(E <= j) by the cheaper "
                    "route under a 60 s per-point limit vs inclusion-exclusion with a Python Fraction",
                    target=bench.faster_by(1))
    def _normal(ctx):
        from enumerator.core.limits import limited

        top = 10**4 if ctx.quick else 10**5

        def ours():
            with limited(seconds=NORMAL_POINT_SECONDS):
                return sweep_rows("normal", top)

        def fraction_side(point):
            # the exact side as it was: binomials from scratch, CPython's gcd at the end
            n, r, j = point.balls, point.urns, point.at
            total = r**n
            for m in range(j + 1, r + 1):
                term = math.comb(r, m) * math.comb(m - 1, j) * (r - m) ** n
                total += -term if (m + j) & 1 else term
            return Fraction(total, r**n)

        def scaled(s):
            size = max(100, int(top * s))
            return lambda: old_sweep("normal", size, fraction_side)

        peers = [] if ctx.quick else [Method("earlier exact side only, Python Fraction", lambda: old_sweep(
            "normal", top, fraction_side), scaled=scaled)]
        result = ctx.compare(Method("enumerator compare_sweep (exact + approximation)", ours), peers, items=10)
        rows = result.enumerator.answer or ()
        skipped = [balls for balls, value in rows if isinstance(value, str)]
        note = (f"points skipped at the {NORMAL_POINT_SECONDS:g} s per-point limit: {skipped}" if skipped
                else "every point computed")
        result.notes.append(f"10 points up to {top:,} balls; {note}")
        return result

    def empty_law_point(ctx, top):
        import gmpy2

        from enumerator.algorithms.asymptotics import formulas
        from enumerator.algorithms.counting import over_prime_power, power_primes
        from enumerator.core.limits import limited

        def point(balls):
            urns = balls // 2
            return balls, urns, math.floor(urns * math.exp(-balls / urns))

        def ours(balls):
            n, r, j = point(balls)
            with limited(seconds=1e6):
                return formulas.empty_urns_at_most(n, r, j)

        def earlier(balls):
            n, r, j = point(balls)
            whole = gmpy2.mpz(r) ** n
            return over_prime_power(whole + formulas._exclusion_sum_by_odd_parts(n, r, j), whole,
                                    power_primes(r, n))

        n, r, j = point(top)
        return ctx.compare(Method("enumerator empty_urns_at_most (one power per prime base)", lambda: ours(top)),
                           [Method("earlier route: one power per odd base, binomials from scratch",
                                   lambda: earlier(top), scaled=lambda s: (lambda: earlier(max(100, int(top * s)))))],
                           notes=[f"n = {n:,}, r = {r:,}, j = {j:,}: {r - j - 1:,} bases"])

    @bench.workload("empty-law-point-10^5",
                    "exact P(E <= j), 10^5 balls in 5*10^4 urns, j = floor(r e^-2): inclusion-exclusion with "
                    "one power per prime base vs one per odd base (the earlier route; beyond the 60 s call "
                    "limit at this size, so estimated; measured in empty-law-point-3*10^4)",
                    target=bench.faster_by(1))
    def _empty_law_point(ctx):
        return empty_law_point(ctx, 10**4 if ctx.quick else 10**5)

    @bench.workload("empty-law-split-10^5",
                    "exact P(E <= j), 10^5 balls in 5*10^4 urns, j = floor(r e^-2): the inclusion-exclusion sum "
                    "split between two processes vs the same sum in one (elapsed time; needs two free cores)",
                    target=bench.faster_by(1.5))
    def _empty_law_split(ctx):
        import gmpy2

        from enumerator.algorithms.asymptotics import formulas
        from enumerator.algorithms.counting import over_prime_power, power_primes
        from enumerator.core.limits import limited

        n = 2 * 10**4 if ctx.quick else 10**5
        r = n // 2
        j = math.floor(r * math.exp(-n / r))

        def ours():
            with limited(seconds=1e6):
                return formulas.empty_urns_at_most(n, r, j)

        def one_process():
            whole = gmpy2.mpz(r) ** n
            return over_prime_power(whole + formulas._exclusion_sum(n, r, j, processes=1), whole, power_primes(r, n))

        split = formulas._processes(n, r, j)
        return ctx.compare(Method(f"enumerator empty_urns_at_most ({split} process{'es' if split > 1 else ''})", ours),
                           [Method("the same sum in one process", one_process)],
                           notes=[f"n = {n:,}, r = {r:,}, j = {j:,}: " + (f"split between {split} processes" if split > 1
                                                                         else "not split (one core, or small)")])

    @bench.workload("empty-law-point-3*10^4",
                    "exact P(E <= j), 3*10^4 balls in 15,000 urns, j = floor(r e^-2): the same two routes, "
                    "both within the call limit",
                    target=bench.faster_by(2))
    def _empty_law_point_small(ctx):
        return empty_law_point(ctx, 5000 if ctx.quick else 3 * 10**4)
