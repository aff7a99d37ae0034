"""Benchmark workloads of urn groups at hash-table sizes: sparse listings and the located birthday threshold.

``scripts/bench.py`` loads this file and calls :func:`register`.

* ``sparse-listing-2^64``: consecutive configurations of 10 keys in ``2^64``
  buckets as their occupied buckets, by
  :func:`enumerator.algorithms.listing.iter_sparse` (lexicographic
  successors) against unranking each rank on its own
  (:func:`~enumerator.algorithms.listing.unrank_sparse`, ``O(n log2 r)``
  suffix counts per rank).
* ``threshold-64-bit-ids-located``: the least number of 64-bit IDs with
  ``P(collision) >= 10^-6``, proved by rational bounds on ``ln P``
  (:mod:`enumerator.algorithms.threshold`), against a bisection on
  mpmath's ``loggamma`` at 40 digits (fast, but not a proof).
* ``weighted-max-law-by-plan``: the exact law of the maximum for MB balls
  in 5 groups of urns of weights 1..5, by the planned routes of
  :mod:`enumerator.algorithms.group_laws` (levels over the groups with
  extensions, blocks of two groups and one dot product, grouped counts),
  against one grouped count (FLINT products of the groups' rows) at every
  bound, the same answer.
"""

from __future__ import annotations

from fractions import Fraction

R = 2 ** 64


def register(bench) -> None:
    """Declare the workloads of this file in *bench* (``scripts/bench.py``)."""
    Method = bench.Method

    @bench.workload("sparse-listing-2^64",
                    "10 keys in 2^64 buckets: 2,000 consecutive configurations (quick: 100) as occupied buckets, "
                    "successors vs unranking each rank",
                    target=bench.faster_by(1))
    def _sparse_listing(ctx):
        from enumerator.algorithms.listing import iter_sparse, unrank_sparse
        from enumerator.core.model import UrnModel

        model = UrnModel(balls=10, urns=R)
        rows = 100 if ctx.quick else 2_000
        start = 10 ** 150

        def successors():
            return list(iter_sparse(model, start, start + rows))

        def unrank_each():
            return [unrank_sparse(model, i) for i in range(start, start + rows)]

        return ctx.compare(Method("enumerator iter_sparse", successors),
                           [Method("unrank_sparse of each rank", unrank_each)], items=rows,
                           notes=["answer: the configurations, (bucket, keys) pairs"])

    @bench.workload("threshold-64-bit-ids-located",
                    "least 64-bit IDs with P(collision) >= 1e-6, proved by rational bounds on ln P "
                    "vs an mpmath bisection at 40 digits (not a proof)")
    def _located(ctx):
        from enumerator.algorithms.event_language import parse_event
        from enumerator.algorithms.threshold import _no_collision_guess, _proved_no_collision
        from enumerator.core.model import UrnModel

        model = UrnModel(balls=0, urns=R)
        event = parse_event("max >= 2")
        goal = Fraction(1, 10 ** 6)

        def guess():
            return _no_collision_guess(model, "balls", event, goal)

        def proved():
            return _proved_no_collision(model, "balls", event, goal, guess())

        return ctx.compare(Method("enumerator (proved)", proved), [Method("mpmath loggamma bisection", guess)],
                           notes=["answer: the least number of IDs (6,074,004)"])

    @bench.workload("weighted-max-law-by-plan",
                    "exact law of max, MB 400 balls in 5 groups of 40 urns of weights 1..5 (quick: 150 in 5 of 15), "
                    "planned routes vs a grouped count at every bound",
                    target=bench.faster_by(1))
    def _weighted_max_plan(ctx):
        import math

        from enumerator.algorithms import grouped
        from enumerator.algorithms.group_laws import _capped, _group_max_counts, law_from_cumulative
        from enumerator.core.model import UrnModel

        balls, count = (150, 15) if ctx.quick else (400, 40)
        model = UrnModel(balls=balls, weights=",".join(f"{count}x{w}" for w in range(1, 6)))
        groups, _ = grouped.integer_groups(model)
        total = sum(c * w for c, _, _, w in groups) ** balls
        lo = max(1, math.ceil(balls / model.urns))

        def planned():
            return {m: int(v) for m, v in _group_max_counts(model, total).items()}

        def every_bound():
            def at_most(m):
                return grouped.total_count(_capped(groups, m), True, balls)
            return {m: int(v) for m, v in law_from_cumulative(at_most, lo, balls, total).items()}

        return ctx.compare(Method("enumerator (planned routes)", planned),
                           [Method("a grouped count at every bound", every_bound)],
                           notes=[f"answer: the counts of max = m for {balls} balls, total weight {sum(c * w for c, _, _, w in groups)}^{balls}"])
