"""``enumerator levels``: particles on energy levels.

Spectra, multiplicities and the ensembles are
:mod:`enumerator.algorithms.levels`; this module parses the options, calls
the library and hands the results to :mod:`enumerator.cli.render_levels`
(one JSON object, tables or a plot).  The command neither reads nor writes the result store, so it does not offer
``--store``/``--no-cache``.  ``enumerator contact`` is :mod:`enumerator.cli.contact`.
"""

import math
from typing import Annotated, Optional

import typer

from ..core.errors import InvalidParameters, TooLarge
from ..core.workers import active_processes
from .app import FLAGS
from .options import OUTPUT_PANEL, Json, MaxMemory, MaxSeconds, limits_scope, plot_option, whole_option
from .render import emit_json

__all__ = ["commands"]

#: The commands of this module, merged into the root application by :mod:`enumerator.cli.app`.
commands = typer.Typer()

_OUTPUT = OUTPUT_PANEL
_LEVELS = "Levels"
_PRESET = "Preset (instead of --energies/--degeneracies)"
_THERMO = "Thermodynamics"

#: ``levels --plot``.
LevelsPlot = plot_option("Draw what was computed: multiplicity against energy; canonical occupations "
                         "against the grand-canonical formula; with several temperatures C(T), U(T), <N0>(T) "
                         "and δN0(T) against the grand-canonical curves; with --occupation-law the law P(n = k).")


def _levels_opt(flag: str, help: str, panel: str = _LEVELS, metavar: Optional[str] = None,
                whole: Optional[int] = None):
    """An option of ``levels`` in its help panel.

    Parameters
    ----------
    flag : str
        The option's name.
    help : str
        Its help text.
    panel : str
        The help panel it is listed under.
    metavar : str, optional
        The placeholder shown for its value.
    whole : int, optional
        For a whole number: the least value accepted.  It is then read as
        every whole-number option is (digits or a power such as ``2^10``,
        sized before it is expanded; :func:`.options.whole_option`).

    Returns
    -------
    typer.models.OptionInfo
    """
    if whole is not None:
        return whole_option(flag, name=flag.lstrip("-").replace("-", " "), minimum=whole, help=help,
                            rich_help_panel=panel, metavar=metavar or "INTEGER")
    return typer.Option(flag, help=help, rich_help_panel=panel, metavar=metavar)


def _level_system(particles, energies, degeneracies, rule, capacity, preset, levels, dimension, gap, oscillators):
    """Options -> :class:`~enumerator.algorithms.levels.System` (validation is the library's).

    Parameters
    ----------
    particles, energies, degeneracies, rule, capacity, preset, levels, dimension, gap, oscillators
        The option values, ``None`` where not given.

    Returns
    -------
    System

    Raises
    ------
    EnumeratorError
        Malformed or incomplete options (raised by the library).

    Notes
    -----
    Imports the levels algorithms.  Cost: the library's, linear in the levels given.
    """
    from ..algorithms import levels as lv

    return lv.make_system(
        particles=particles, energies=energies, degeneracies=degeneracies, rule=rule,
        capacity=capacity, preset=preset, levels=levels, dimension=dimension, gap=gap,
        oscillators=oscillators,
    )


@commands.command("levels")
def levels_command(
    particles: Annotated[Optional[int], _levels_opt("--particles", "Number of particles N, >= 0.", whole=0)] = None,
    energies: Annotated[
        Optional[str],
        _levels_opt("--energies", 'Level energies "0,1,2,3" (integers, fractions like 1/2 or decimals).', metavar="E1,E2,..."),
    ] = None,
    degeneracies: Annotated[
        Optional[str],
        _levels_opt("--degeneracies", 'Degeneracy g of each level, "1,3,5,7" (default all 1).', metavar="G1,G2,..."),
    ] = None,
    rule: Annotated[
        Optional[str],
        _levels_opt("--rule", "MB: distinguishable particles (every assignment of particles to "
                    "single-particle states is a microstate); BE: bosons; FD: fermions. Default MB.",
                    metavar="MB|BE|FD"),
    ] = None,
    capacity: Annotated[
        Optional[int],
        _levels_opt("--capacity", "BE only: at most this many particles per single-particle state "
                    "(intermediate statistics; 1 is FD).", whole=0),
    ] = None,
    preset: Annotated[
        Optional[str],
        _levels_opt("--preset", "harmonic (1D oscillator), trap (isotropic harmonic trap), "
                    "two-level, einstein (N distinguishable oscillators).", _PRESET, "NAME"),
    ] = None,
    levels: Annotated[
        Optional[int],
        _levels_opt("--levels", "harmonic/trap: keep only this many levels (default: the infinite ladder).", _PRESET, whole=0),
    ] = None,
    dimension: Annotated[Optional[int], _levels_opt("--dimension", "trap: its dimension (default 3).", _PRESET, whole=0)] = None,
    gap: Annotated[Optional[str], _levels_opt("--gap", "two-level: the energy gap (default 1).", _PRESET)] = None,
    oscillators: Annotated[
        Optional[int], _levels_opt("--oscillators", "einstein: number of oscillators N.", _PRESET, whole=0)
    ] = None,
    max_energy: Annotated[
        Optional[str],
        _levels_opt("--max-energy", "Largest total energy of the multiplicities Ω(N, E) (default: the "
                    "highest reachable, finite spectra only). Ladders list their levels up to it. Not needed "
                    "for canonical results alone: they use the whole ladder.", metavar="E"),
    ] = None,
    temperatures: Annotated[
        Optional[str],
        _levels_opt("--temperatures", "Canonical results at these k_B T, in the energy unit (the level "
                    "spacing for harmonic/trap/einstein): a list 0.5,1,2; a range 1..20 (step 1, so B - A whole); "
                    "0.1..20:40 (40 points, linear); 0.1..20:40:log (geometric).", _THERMO, "T1,T2|A..B:K"),
    ] = None,
    factor: Annotated[
        Optional[str],
        _levels_opt("--factor", "Instead of temperatures: exact Boltzmann factors x = e^(-unit/k_B T), "
                    "0 < x < 1, e.g. 1/2 (a state of energy e weighs x^(e/unit)); the occupation law is "
                    "then exact.", _THERMO, "X1,X2,..."),
    ] = None,
    occupation_law: Annotated[
        Optional[int],
        _levels_opt("--occupation-law", "The canonical law P(n = k) of the occupation of this level "
                    "(0 = the lowest listed level / ladder rung), with its mean and variance beside the "
                    "grand-canonical variance.", _THERMO, "LEVEL", whole=0),
    ] = None,
    route: Annotated[
        str,
        _levels_opt("--route", "Canonical method: auto (fermions far below the Fermi temperature by the "
                    "particle-hole expansion; bosons by the float route when --digits is at most 12, the "
                    "recursion would be twice as slow and the float bounds meet the digits; the rest by "
                    "the Borrmann-Franke recursion), recursion, particle-hole (FD only), float (BE only: "
                    "double precision with rigorous error bounds in the output; N = 10^4 in about half a "
                    "second per temperature, temperatures side by side in passes of 8).", _THERMO, "ROUTE"),
    ] = "auto",
    digits: Annotated[
        int, _levels_opt("--digits", "Significant digits of the canonical arithmetic (mpmath), at most 10,000.", _THERMO, whole=0)
    ] = 50,
    report_levels: Annotated[
        Optional[int],
        _levels_opt("--report-levels", "Report occupations of this many lowest levels (default: every listed level).", _THERMO, whole=0),
    ] = None,
    micro: Annotated[
        bool,
        _levels_opt("--microcanonical", "Also give ln Ω(E) and T(E) = 1/(d ln Ω/dE) (central differences).", _THERMO),
    ] = False,
    processes: Annotated[
        Optional[int],
        _levels_opt("--processes", "Compute the temperatures (and their occupation laws) side by side in up to "
                    "this many local processes "
                    "(default: $ENUMERATOR_PROCESSES, else the cores this process may use; 1: one after the other). They start when the "
                    "lowest temperature alone took over a quarter of a second; the answers are those of "
                    "separate calls for groups of neighbouring temperatures.", _THERMO, "P", whole=1),
    ] = None,
    plot: LevelsPlot = None,
    as_json: Json = False,
    max_memory: MaxMemory = None,
    max_seconds: MaxSeconds = None,
) -> None:
    """Exact multiplicities Ω(N, E) of particles on energy levels, and the ensembles.

    Ω(N, E) counts the microstates of N particles with total energy E, exactly,
    from the generating functions prod (1 - x t^e)^-g (BE), prod (1 + x t^e)^g
    (FD), (sum g t^e)^N (MB, distinguishable particles); they are the
    coefficients of the canonical partition function Z_N(t).  Energies and
    k_B T are in the user's energy unit (the level spacing for the presets),
    everywhere, JSON keys included; "unit" is the grid the energies lie on.
    With --temperatures (or exact Boltzmann factors --factor): Z, mean
    energy, heat capacity, free energy, entropy, energy and ground-level
    fluctuations and level occupations from the exact canonical recursion
    (Borrmann-Franke; fermions far below the Fermi temperature by the
    particle-hole expansion), beside the grand-canonical formulas at the
    chemical potential giving mean N.  --occupation-law LEVEL adds the whole
    canonical law P(n = k) of one level.  With --json an approximation beyond
    the double range (a probability of 1e-4343) is written as a JSON number
    with 17 significant digits and its true exponent; parse it with Decimal or
    mpmath to keep it.

    Example:

        $ enumerator levels --particles 3 --energies 0,1,2,3 --degeneracies 1,3,5,7 --rule BE --max-energy 6
        $ enumerator levels --preset trap --particles 100 --rule BE --temperatures 2,4 --json
        $ enumerator levels --preset trap --particles 969 --rule FD --temperatures 0.1,0.3,1
        $ enumerator levels --preset trap --particles 1000 --rule BE --temperatures 1..12:12 --occupation-law 0 --plot c.png
        $ enumerator levels --preset trap --particles 10000 --rule BE --temperatures 0.5..40:40 --digits 6 --json
        $ enumerator levels --preset harmonic --particles 20 --rule BE --factor 1/2 --occupation-law 0 --json
        $ enumerator levels --preset einstein --oscillators 3 --max-energy 6 --microcanonical
    """
    with limits_scope(max_memory, max_seconds):
        _levels(particles, energies, degeneracies, rule, capacity, preset, levels, dimension, gap, oscillators,
                max_energy, temperatures, factor, occupation_law, route, digits, report_levels, micro, plot,
                as_json, processes)


#: Most ladder rungs --max-energy may list (each is a level of the spectrum; a table of Ω(N, E) that far
#: is refused by its plan long before).
_MOST_RUNGS = 10**6


def _levels(particles, energies, degeneracies, rule, capacity, preset, levels, dimension, gap, oscillators,
            max_energy, temperatures, factor, occupation_law, route, digits, report_levels, micro, plot,
            as_json, processes=None) -> None:
    """The body of :func:`levels_command` (inside the limits the user set).

    Parameters
    ----------
    particles, energies, degeneracies, rule, capacity, preset, levels, dimension, gap, oscillators
        The system's options.
    max_energy, temperatures, factor, occupation_law, route, digits, report_levels, micro, plot, as_json
        What to compute and how to show it.
    processes : int, optional
        Most local processes for the temperatures (default: the cores available).
    """
    from ..algorithms import levels as lv
    from ..core.errors import InvalidParameters
    from . import render_levels

    if report_levels is not None and report_levels < 1:
        raise InvalidParameters(f"--report-levels must be at least 1 (got {report_levels})")
    if processes is not None and processes < 1:
        raise InvalidParameters(f"--processes must be at least 1 (got {processes})")
    lv.parse_digits(digits)  # refused before any work, even where only multiplicities are asked
    system = _level_system(particles, energies, degeneracies, rule, capacity, preset, levels,
                           dimension, gap, oscillators)
    if max_energy is not None and not system.spectrum.finite:
        top = lv.parse_rational(max_energy, "--max-energy")
        rungs = math.floor(top / system.spectrum.unit)
        if rungs > _MOST_RUNGS:
            raise TooLarge(
                f"--max-energy {max_energy} lists about 10^{len(str(rungs)) - 1} rungs of the ladder, more than the "
                f"{_MOST_RUNGS:,} a table of multiplicities can reach; lower --max-energy (canonical results "
                "need none)", parameters=["max_energy"])
        listed = system.spectrum.through(rungs)
        system = lv.System(listed, system.particles, system.rule, system.capacity)
    temps, factors = _thermal_points(lv, system, temperatures, factor, digits)
    if occupation_law is not None and not temps:
        raise InvalidParameters("--occupation-law needs --temperatures or --factor",
                                parameters=["occupation_law", "temperatures"])
    # Multiplicities only where they can be listed: a finite spectrum, or a
    # ladder cut by --max-energy; canonical results alone use the whole ladder.
    counts = None
    if max_energy is None and not system.spectrum.finite and not temps:
        raise InvalidParameters(
            "an infinite ladder of levels needs a maximum energy for its multiplicities (max_energy=); "
            "canonical results alone (--temperatures or --factor) need none",
            parameters=["max_energy"],
        )
    omitted = None
    if max_energy is not None or system.spectrum.finite:
        try:
            counts = lv.multiplicities(system, max_energy)
        except TooLarge as error:
            # Asked for canonical results only: say why the table is missing instead of failing.
            if max_energy is not None or not temps or micro:
                raise
            omitted = error.spelled(FLAGS)  # spelled as the CLI spells every error
    if micro and counts is None:
        raise InvalidParameters("--microcanonical needs the multiplicities: give --max-energy",
                                parameters=["max_energy"])
    points = laws = None
    if temps:
        report = report_levels
        if report is None and max_energy is None and not system.spectrum.finite:
            report = _default_report(lv, system, temps)
        workers = active_processes() if processes is None else processes
        points = lv.canonical(system, temps, digits=digits, levels=report, route=route, processes=workers)
        if occupation_law is not None:
            laws = [None] * len(temps)
            floats = [i for i, x in enumerate(factors) if x is None]
            for i, law in zip(floats, lv.occupation_law(system, occupation_law, [temps[i] for i in floats],
                                                        digits=max(digits, 16), processes=workers)):
                laws[i] = law
            for i, x in enumerate(factors):
                if x is not None:
                    laws[i] = lv.occupation_law_exact(system, occupation_law, x)
    micro_points = lv.microcanonical(system, max_energy) if micro else None
    if plot is not None:
        render_levels.plot_levels(plot, system, counts, points or (), laws or ())
    if as_json:
        emit_json(render_levels.levels_payload(system, counts, points, micro_points, laws, factors, omitted))
        return
    render_levels.show_levels(system, counts, points, micro_points, max_energy, plot, laws, factors, omitted)


def _thermal_points(lv, system, temperatures, factor, digits):
    """The temperatures asked for, and beside each its exact Boltzmann factor (``None`` for a temperature).

    Parameters
    ----------
    lv : module
        :mod:`enumerator.algorithms.levels`.
    system : System
    temperatures, factor : str or None
        The option texts.
    digits : int

    Returns
    -------
    (list of Fraction, list of Fraction or None)
        ``k_B T`` values (a factor ``x`` gives ``unit / ln(1/x)``) and the factors.
    """
    if temperatures is not None and factor is not None:
        raise InvalidParameters("give --temperatures or --factor, not both",
                                   parameters=["temperatures", "factor"])
    if temperatures is not None:
        temps = lv.parse_temperatures(temperatures)
        return temps, [None] * len(temps)
    if factor is not None:
        factors = [lv.parse_factor(x.strip()) for x in factor.split(",")]
        return [lv.factor_temperature(x, system.spectrum.unit, digits) for x in factors], factors
    return [], []


def _default_report(lv, system, temps) -> int:
    """How many ladder rungs to list without --max-energy: through the Fermi shell and 4 k_B T above it (3 to 64).

    Parameters
    ----------
    lv : module
    system : System
        On an infinite ladder.
    temps : list of Fraction

    Returns
    -------
    int
    """
    lad = system.spectrum.ladder
    top = 0
    if system.capacity is not None:
        filled, m = 0, 0
        while filled + lad.degeneracy(m) * system.capacity < system.particles:
            filled += lad.degeneracy(m) * system.capacity
            m += 1
        top = m
    spacing = lad.spacing * system.spectrum.unit
    top += math.ceil(4 * max(temps) / spacing)
    return max(3, min(64, top + 1))
