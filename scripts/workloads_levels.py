"""Benchmark workloads of the canonical ensemble of particles on energy levels.

``scripts/bench.py`` loads this file and calls :func:`register`.

* ``levels-fermions-969-trap``: 969 fermions in the 3D harmonic trap (closed
  shells 0..16; ``--quick``: 120, shells 0..7) at ``k_B T = 0.1, 0.3, 1`` (``U``, ``C``, ``S`` and the
  occupations to 15 digits): the default route, which takes the
  particle-hole expansion far below the Fermi temperature, against the
  Borrmann–Franke recursion in fixed point (``route="recursion"``, the only
  route before), estimated from smaller closed-shell systems when too slow.
* ``levels-bosons-10^4-40T``: 10^4 bosons in the 3D trap at 40 temperatures
  ``0.5..40`` (``--quick``: 1200 bosons at 4 temperatures): ``route="float"`` (the positive
  recursion in double precision with rigorous bounds) against the exact
  fixed-point recursion (``route="recursion"``), estimated from fewer
  particles when too slow.  The answers are compared to 6 significant digits.
* ``levels-bosons-10^4-40T-auto``: the same 40 temperatures at 6 digits on
  the default route ``"auto"``, which takes the float route where the exact
  recursion is slow and the float route's proved bounds meet the 6 digits
  (``--quick``: 1200 bosons at 4 temperatures), against the float route at
  every temperature and against the exact recursion at every temperature
  (the previous default, here at 15 digits; estimated from fewer particles
  when too slow: at 10^4 bosons it takes about half an hour, so the ratio
  is against the float route).
* ``levels-bosons-10^4-3T-auto``: the same at ``k_B T = 0.5, 10, 15``
  spacings only, where the exact recursion (15 digits) finishes within the
  bench's limit (about 1, 3 and 7 s of CPU at 10^4 bosons), so the ratio is
  against it (``--quick``: 1200 bosons).  Both compare answers to 5
  digits: the exact route at 6 digits may round a value near a boundary
  the other way.
* ``levels-bosons-10^4-40T-processes``: the 40 temperatures on route auto
  shared among two local processes (``processes=2``: the lowest alone,
  then groups of neighbouring temperatures) against one process, in
  elapsed time (it needs two free cores to show; ``--quick``: 1200 bosons
  at 8 temperatures).
"""

from __future__ import annotations

#: Closed shells of the 3D trap: 1 + 3 + ... + (e+1)(e+2)/2 (common practice).
_CLOSED = [sum((e + 1) * (e + 2) // 2 for e in range(top + 1)) for top in range(17)]


def _rounded(points, digits: int = 6):
    """``U``, ``C``, ``S`` and the lowest occupations of each point, as text rounded to *digits*."""
    import mpmath

    out = []
    for p in points:
        values = [p.mean_energy_approx, p.heat_capacity_approx, p.entropy_approx, *p.occupations_approx[:3]]
        out.append(tuple(mpmath.nstr(v, digits) for v in values))
    return tuple(out)


def register(bench) -> None:
    """Declare the workloads of this file in *bench* (``scripts/bench.py``)."""
    Method = bench.Method

    @bench.workload("levels-fermions-969-trap",
                    "canonical 969 fermions in the 3D trap at T = 0.1, 0.3, 1 (15 digits): particle-hole "
                    "route vs the Borrmann-Franke recursion in fixed point",
                    target=bench.faster_by(10))
    def _fermions(ctx):
        from enumerator.algorithms.levels import canonical, make_system

        temps = ["0.1", "0.3", "1"]
        n = 120 if ctx.quick else 969  # quick: shells 0..7, where the recursion finishes in a second or two

        def run(n, route):
            system = make_system(n, preset="trap", rule="FD")
            return canonical(system, temps, digits=15, levels=3, grand=False, route=route)

        def ours():
            return _rounded(run(n, "auto"))

        def recursion(size=n):
            return _rounded(run(size, "recursion"))

        def scaled(s):
            size = max(c for c in _CLOSED if c <= max(4, n * s))
            return lambda: recursion(size)

        return ctx.compare(Method("enumerator (auto: particle-hole)", ours),
                           [Method("Borrmann-Franke recursion, fixed point", recursion, scaled=scaled,
                                   normalise=lambda x: x)],
                           items=3,
                           notes=[f"{n} fermions; answer: U, C, S and three occupations at each temperature, "
                                  "6 digits"])

    @bench.workload("levels-bosons-10^4-40T",
                    "canonical 10^4 bosons in the 3D trap at 40 temperatures (quick: 4): float route with "
                    "rigorous bounds vs the exact fixed-point recursion",
                    target=bench.faster_by(3))
    def _bosons(ctx):
        from enumerator.algorithms.levels import canonical, make_system, parse_temperatures

        temps = parse_temperatures("0.5..40:4" if ctx.quick else "0.5..40:40")
        n = 1200 if ctx.quick else 10_000

        def run(size, route):
            system = make_system(size, preset="trap", rule="BE")
            return canonical(system, temps, digits=15, levels=3, grand=False, route=route)

        def ours():
            return _rounded(run(n, "float"))

        def exact(size=n):
            return _rounded(run(size, "recursion"))

        def scaled(s):
            size = max(50, int(n * s))
            return lambda: exact(size)

        return ctx.compare(Method("enumerator (route float)", ours),
                           [Method("exact fixed-point recursion", exact, scaled=scaled,
                                   normalise=lambda x: x)],
                           items=len(temps),
                           notes=[f"{n} bosons, {len(temps)} temperatures; answer: U, C, S and three "
                                  "occupations per temperature, 6 digits"])

    @bench.workload("levels-bosons-10^4-40T-auto",
                    "canonical 10^4 bosons in the 3D trap at 40 temperatures (quick: 4), 6 digits: default "
                    "route auto vs the float route and the exact recursion at every temperature",
                    target=bench.at_most(1.5))
    def _bosons_auto(ctx):
        from enumerator.algorithms.levels import canonical, make_system, parse_temperatures

        temps = parse_temperatures("0.5..40:4" if ctx.quick else "0.5..40:40")
        n = 1200 if ctx.quick else 10_000

        def run(size, route, digits=6):
            system = make_system(size, preset="trap", rule="BE")
            return canonical(system, temps, digits=digits, levels=3, grand=False, route=route)

        routes = {}

        def ours():
            points = run(n, "auto")
            routes["float"] = sum(p.route == "float" for p in points)
            return _rounded(points, 5)

        def floated():
            return _rounded(run(n, "float"), 5)

        def exact(size=n):
            # 15 digits (its integers are sized by ln Z far more than by the digits: about as fast as at 6)
            return _rounded(run(size, "recursion", 15), 5)

        def scaled(s):
            size = max(50, int(n * s))
            return lambda: exact(size)

        result = ctx.compare(Method("enumerator (route auto, 6 digits)", ours),
                             [Method("float route at every temperature", floated, normalise=lambda x: x),
                              Method("exact fixed-point recursion at every temperature (previous default)",
                                     exact, scaled=scaled, normalise=lambda x: x)],
                             items=len(temps),
                             notes=[f"{n} bosons, {len(temps)} temperatures; answer: U, C, S and three "
                                    "occupations per temperature, compared to 5 digits (6 asked: a value near a "
                                    "rounding boundary may round either way at 6)"])
        result.notes.append(f"auto took the float route at {routes.get('float', 0)} of {len(temps)} temperatures")
        return result

    @bench.workload("levels-bosons-10^4-40T-processes",
                    "canonical 10^4 bosons in the 3D trap at 40 temperatures (quick: 1200 at 8), 6 digits, "
                    "route auto: two local processes vs one (elapsed time; needs two free cores)",
                    target=bench.faster_by(1.5))
    def _bosons_processes(ctx):
        from enumerator.algorithms.levels import canonical, make_system, parse_temperatures

        temps = parse_temperatures("0.5..40:8" if ctx.quick else "0.5..40:40")
        n = 1200 if ctx.quick else 10_000
        system = make_system(n, preset="trap", rule="BE")

        def run(processes):
            return _rounded(canonical(system, temps, digits=6, levels=3, grand=True, processes=processes), 5)

        return ctx.compare(Method("enumerator (2 processes)", lambda: run(2)),
                           [Method("one process", lambda: run(1))],
                           items=len(temps),
                           notes=[f"{n} bosons, {len(temps)} temperatures with the grand-canonical comparison; "
                                  "answers compared to 5 digits"])

    @bench.workload("levels-bosons-10^4-3T-auto",
                    "canonical 10^4 bosons in the 3D trap at T = 0.5, 10, 15 (quick: 1200 bosons), 6 digits: "
                    "default route auto vs the exact recursion (the previous default)",
                    target=bench.faster_by(2))
    def _bosons_auto_exact(ctx):
        from enumerator.algorithms.levels import canonical, make_system

        temps = ["0.5", "10", "15"]
        n = 1200 if ctx.quick else 10_000
        system = make_system(n, preset="trap", rule="BE")
        routes = {}

        def ours():
            points = canonical(system, temps, digits=6, levels=3, grand=False)
            routes["taken"] = [p.route for p in points]
            return _rounded(points, 5)

        def exact():
            return _rounded(canonical(system, temps, digits=15, levels=3, grand=False, route="recursion"), 5)

        result = ctx.compare(Method("enumerator (route auto, 6 digits)", ours),
                             [Method("exact fixed-point recursion, 15 digits (previous default)", exact,
                                     normalise=lambda x: x)],
                             items=len(temps),
                             notes=[f"{n} bosons at k_B T = {', '.join(temps)}; answer: U, C, S and three "
                                    "occupations per temperature, compared to 5 digits (6 asked: a value near a "
                                    "rounding boundary may round either way at 6)"])
        result.notes.append(f"routes taken by auto: {', '.join(routes.get('taken', []))}")
        return result
