"""Benchmark workloads of the multiplicity table of every particle number.

``scripts/bench.py`` loads this file and calls :func:`register`.

* ``levels-table-trap-bosons-10^3-E200``: ``Ω(n, E)`` for every
  ``n = 0..10^3`` bosons in the 3D harmonic trap and ``E <= 200``
  (:func:`enumerator.algorithms.levels.multiplicity_table`: the 201 rows of
  the excited levels, then one prefix sum over ``n`` for the single ground
  state), against the particle-number recursion over all ``N + 1`` rows (the
  route the table took before).  ``--quick``: 400 bosons, ``E <= 120``.
* ``levels-table-mb-trap-401-levels-10^3-E400``: ``Ω(n, E)`` for every
  ``n = 0..10^3`` distinguishable particles in the 3D trap cut at 401 levels
  (a finite spectrum) and ``E <= 400``: each row the previous one times
  ``z(t)`` (one truncated product per row), against one truncated power per
  row (:func:`enumerator.algorithms.levels.multiplicities` for each ``n``,
  the route the MB table took before).  ``--quick``: 300 particles,
  ``E <= 150``.
* ``levels-row-trap-bosons-300-E600-modular``: one row ``Ω(300, E)``,
  ``E <= 600``, of bosons in the 3D trap by evaluation modulo primes (the
  route taken when the recursion's table does not fit the memory limit),
  against the particle-number recursion over the excited rows; the notes
  give each route's peak resident memory in a child process.  ``--quick``:
  80 bosons, ``E <= 160``.
"""

from __future__ import annotations


def register(bench) -> None:
    """Declare the workloads of this file in *bench* (``scripts/bench.py``)."""
    Method = bench.Method

    @bench.workload("levels-table-trap-bosons-10^3-E200",
                    "Omega(n, E) for n = 0..10^3 bosons in the 3D trap, E <= 200 (quick: 400, E <= 120): "
                    "the excited rows then the ground state's prefix sum vs the recursion over N+1 rows",
                    target=bench.faster_by(1))
    def _table(ctx):
        import importlib

        from enumerator.algorithms.levels import System, harmonic_trap, multiplicity_table

        mult = importlib.import_module("enumerator.algorithms.levels.multiplicities")
        particles, top = (400, 120) if ctx.quick else (1000, 200)

        def digest(rows):
            # every row's total count and its count at the top energy: equal tables give equal digests
            return tuple((sum(row.values()), row.get(top)) for row in rows)

        def system(n, e):
            return System.create(harmonic_trap().through(e), n, "BE")

        def ours():
            return digest(multiplicity_table(system(particles, top), top))

        def all_rows(n=particles, e=top):
            sy = system(n, e)
            polys = mult._partition_polynomials(sy, n, e)
            return digest(mult._table_rows(sy, e, lambda m, d: mult.series.coefficients(polys[m], d)))

        def scaled(s):
            return lambda: all_rows(max(8, int(particles * s)), max(4, int(top * s)))

        cells = (particles + 1) * (top + 1)
        return ctx.compare(Method("enumerator multiplicity_table (excited rows)", ours),
                           [Method("particle-number recursion, N+1 rows", all_rows, scaled=scaled)],
                           items=cells,
                           notes=[f"answer: the {cells:,} multiplicities (digest: each row's total and "
                                  "its count at the top energy)"])

    @bench.workload("levels-table-mb-trap-401-levels-10^3-E400",
                    "Omega(n, E) for n = 0..10^3 distinguishable particles in the 3D trap cut at 401 levels, "
                    "E <= 400 (quick: 300, E <= 150): each row the previous one times z(t) vs one power per row",
                    target=bench.faster_by(1))
    def _mb_table(ctx):
        from enumerator.algorithms.levels import System, harmonic_trap, multiplicities, multiplicity_table

        particles, top = (300, 150) if ctx.quick else (1000, 400)

        def digest(rows):
            # every row's total count and its count at the top energy: equal tables give equal digests
            return tuple((sum(row.values()), row.get(top)) for row in rows)

        def system(n, e):
            return System.create(harmonic_trap(levels=e + 1), n, "MB")

        def ours():
            return digest(multiplicity_table(system(particles, top), top))

        def per_row(n=particles, e=top):
            sy = system(n, e)
            return digest([multiplicities(System(sy.spectrum, m, sy.rule), e) for m in range(n + 1)])

        def scaled(s):
            return lambda: per_row(max(8, int(particles * s)), max(4, int(top * s)))

        cells = (particles + 1) * (top + 1)
        return ctx.compare(Method("enumerator multiplicity_table (row times z)", ours),
                           [Method("one truncated power per row", per_row, scaled=scaled)],
                           items=cells,
                           notes=[f"answer: the {cells:,} multiplicities (digest: each row's total and "
                                  "its count at the top energy)"])

    @bench.workload("levels-row-trap-bosons-300-E600-modular",
                    "Omega(300, E) for bosons in the 3D trap, E <= 600 (quick: 80, E <= 160): evaluation "
                    "modulo primes vs the particle-number recursion, with each route's peak memory",
                    target=bench.faster_by(0.5))
    def _modular_row(ctx):
        import importlib

        from enumerator.algorithms.levels import System, harmonic_trap

        mult = importlib.import_module("enumerator.algorithms.levels.multiplicities")
        particles, top = (80, 160) if ctx.quick else (300, 600)
        system = System.create(harmonic_trap(), particles, "BE")
        bits = mult._plan(system, top).bits

        def digest(values):
            return (sum(values), values[-1])

        def ours():
            return digest(mult._modular_row(system, top, bits))

        def recursion():
            return digest(mult.series.coefficients(mult._excited_recursion(system, particles, top), top))

        code = (
            "import importlib, json, sys\n"
            "from enumerator.algorithms.levels import System, harmonic_trap\n"
            "mult = importlib.import_module('enumerator.algorithms.levels.multiplicities')\n"
            "n, e, route = int(sys.argv[1]), int(sys.argv[2]), sys.argv[3]\n"
            "s = System.create(harmonic_trap(), n, 'BE')\n"
            "if route == 'modular':\n"
            "    mult._modular_row(s, e, mult._plan(s, e).bits)\n"
            "else:\n"
            "    mult._excited_recursion(s, n, e)\n"
            "print(json.dumps({}))\n"
        )
        peaks = {route: bench.child_peak(code, particles, top, route)[1] for route in ("modular", "recursion")}
        return ctx.compare(Method("enumerator multiplicities (modular route)", ours),
                           [Method("particle-number recursion", recursion)],
                           items=top + 1,
                           notes=[f"peak RSS (child, interpreter included): modular {peaks['modular']:.0f} MB, "
                                  f"recursion {peaks['recursion']:.0f} MB",
                                  "answer: the row's total and its count at the top energy"])
