"""Benchmark workloads of thermal contact and multiplicities at scale.

``scripts/bench.py`` loads this file and calls :func:`register`.

* ``contact-summary-10^4``: two Einstein solids of 10^4 oscillators sharing
  10^4 quanta (counts of 8,291 digits): the exact split, its most probable
  value and that value's exact probability, mean and variance
  (:func:`enumerator.algorithms.levels.thermal_contact` and
  :meth:`~enumerator.algorithms.levels.Contact.summary`), against the plain
  exact table: Python integers and one ``Fraction`` per split (how the split
  was computed before the summary existed).
* ``levels-trap-bosons-10^4-E900``: ``Ω(N = 10^4, E <= 900)`` for bosons in
  the 3D harmonic trap by the one-variable product over the excited states
  (:func:`enumerator.algorithms.levels.multiplicities`), against the
  particle-number recursion over ``N + 1`` rows run at ``N = 900`` (the same
  answer, since ``N >= E``; at ``N = 10^4`` that recursion ended in a native
  FLINT abort).
"""

from __future__ import annotations

import math
from fractions import Fraction

OSCILLATORS = 10_000
QUANTA = 10_000


def register(bench) -> None:
    """Declare the workloads of this file in *bench* (``scripts/bench.py``)."""
    Method = bench.Method

    @bench.workload("contact-summary-10^4",
                    "contact --summary: two Einstein solids of 10^4 oscillators sharing 10^4 quanta "
                    "(peak, its exact probability, exact mean and variance) vs the exact table of Fractions",
                    target=bench.faster_by(1))
    def _contact_summary(ctx):
        from enumerator.algorithms.levels import einstein_solid, thermal_contact

        def ours(n=OSCILLATORS, q=QUANTA):
            contact = thermal_contact(einstein_solid(n), einstein_solid(n), q)
            s = contact.summary()
            return s.most_probable, s.most_probable_probability

        def fraction_table(n=OSCILLATORS, q=QUANTA):
            # stars and bars per side, the split, then one reduced Fraction per split
            row = [math.comb(k + n - 1, k) for k in range(q + 1)]
            split = [row[k] * row[q - k] for k in range(q + 1)]
            total = sum(split)
            probability = [Fraction(v, total) for v in split]
            best = max(range(q + 1), key=lambda k: (probability[k], -k))
            return best, probability[best]

        def scaled(s):
            size = max(10, int(OSCILLATORS * s))
            return lambda: fraction_table(size, size)

        return ctx.compare(Method("enumerator thermal_contact + summary", ours),
                           [Method("exact table of Fractions", fraction_table, scaled=scaled)],
                           items=QUANTA + 1,
                           notes=["answer: the most probable split (5,000) and its exact probability "
                                  "(a fraction of 4,560/4,562 digits)"])

    @bench.workload("levels-trap-bosons-10^4-E900",
                    "Omega(N=10^4, E<=900), bosons in the 3D trap: product over the excited states "
                    "vs the particle-number recursion over N+1 rows (run at N=900, the same answer)",
                    target=bench.faster_by(1))
    def _trap_bosons(ctx):
        import importlib

        from enumerator.algorithms.levels import System, harmonic_trap, multiplicities

        mult = importlib.import_module("enumerator.algorithms.levels.multiplicities")
        top = 900

        def ours():
            counts = multiplicities(System.create(harmonic_trap(), 10_000, "BE"), top)
            return [counts[e] for e in range(top + 1)]

        def rows(size=top):
            system = System.create(harmonic_trap().through(size), size, "BE")
            poly = mult._partition_polynomials(system, size, size)[size]
            return [int(poly[e]) for e in range(size + 1)]

        def scaled(s):
            size = max(8, int(top * s))
            return lambda: rows(size)

        return ctx.compare(Method("enumerator (excited-state product)", ours),
                           [Method("particle-number recursion, N+1 rows", rows, scaled=scaled)],
                           items=top + 1,
                           notes=["answer: the 901 multiplicities (Omega(N, 900) has 463 bits)"])
