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

from .options import OUTPUT_PANEL, Json
from .render import emit_json

__all__ = ["commands"]

#: The commands of this module, merged into the root application by :mod:`enumerator.cli.app`.
commands = typer.Typer()

_OUTPUT = OUTPUT_PANEL
_LEVELS = "Levels"
_PRESET = "Preset (instead of --energies/--degeneracies)"
_THERMO = "Thermodynamics"


def _levels_opt(flag: str, help: str, panel: str = _LEVELS, metavar: Optional[str] = None):
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

    Returns
    -------
    typer.models.OptionInfo
    """
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
    particles: Annotated[Optional[int], _levels_opt("--particles", "Number of particles N, >= 0.")] = None,
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
                    "(intermediate statistics; 1 is FD)."),
    ] = None,
    preset: Annotated[
        Optional[str],
        _levels_opt("--preset", "harmonic (1D oscillator), trap (isotropic harmonic trap), "
                    "two-level, einstein (N distinguishable oscillators).", _PRESET, "NAME"),
    ] = None,
    levels: Annotated[
        Optional[int],
        _levels_opt("--levels", "harmonic/trap: keep only this many levels (default: the infinite ladder).", _PRESET),
    ] = None,
    dimension: Annotated[Optional[int], _levels_opt("--dimension", "trap: its dimension (default 3).", _PRESET)] = None,
    gap: Annotated[Optional[str], _levels_opt("--gap", "two-level: the energy gap (default 1).", _PRESET)] = None,
    oscillators: Annotated[
        Optional[int], _levels_opt("--oscillators", "einstein: number of oscillators N.", _PRESET)
    ] = None,
    max_energy: Annotated[
        Optional[str],
        _levels_opt("--max-energy", "Largest total energy counted (default: the highest reachable, "
                    "finite spectra only). Ladders list their levels up to it.", metavar="E"),
    ] = None,
    temperatures: Annotated[
        Optional[str],
        _levels_opt("--temperatures", "Canonical results at these k_B T (energy unit), e.g. 0.5,1,2.",
                    _THERMO, "T1,T2,..."),
    ] = None,
    digits: Annotated[
        int, _levels_opt("--digits", "Significant digits of the canonical arithmetic (mpmath).", _THERMO)
    ] = 50,
    report_levels: Annotated[
        Optional[int],
        _levels_opt("--report-levels", "Report occupations of this many lowest levels (default: every listed level).", _THERMO),
    ] = None,
    micro: Annotated[
        bool,
        _levels_opt("--microcanonical", "Also give ln Ω(E) and T(E) = 1/(d ln Ω/dE) (central differences).", _THERMO),
    ] = False,
    plot: Annotated[
        Optional[str],
        typer.Option("--plot", metavar="FILE.png", rich_help_panel=_OUTPUT,
                     help="Draw multiplicity against energy and, with --temperatures, canonical "
                     "occupations against the grand-canonical formula."),
    ] = None,
    as_json: Json = False,
) -> None:
    """Exact multiplicities Ω(N, E) of particles on energy levels, and the ensembles.

    Ω(N, E) counts the microstates of N particles with total energy E, exactly,
    from the generating functions prod (1 - x t^e)^-g (BE), prod (1 + x t^e)^g
    (FD), (sum g t^e)^N (MB, distinguishable particles); they are the
    coefficients of the canonical partition function Z_N(t).  Energies are
    reported as whole multiples of "unit".  With --temperatures: Z, mean
    energy, heat capacity, free energy, entropy and level occupations from the
    exact canonical recursion (Borrmann-Franke), beside the grand-canonical
    occupation formulas at the chemical potential giving mean N.

    Example:

        $ enumerator levels --particles 3 --energies 0,1,2,3 --degeneracies 1,3,5,7 --rule BE --max-energy 6
        $ enumerator levels --preset trap --particles 100 --rule BE --max-energy 40 --temperatures 2,4 --json
        $ enumerator levels --preset einstein --oscillators 3 --max-energy 6 --microcanonical
    """
    from ..algorithms import levels as lv
    from . import render_levels

    system = _level_system(particles, energies, degeneracies, rule, capacity, preset, levels,
                           dimension, gap, oscillators)
    if max_energy is not None and not system.spectrum.finite:
        top = lv.parse_rational(max_energy, "--max-energy")
        listed = system.spectrum.through(math.floor(top / system.spectrum.unit))
        system = lv.System(listed, system.particles, system.rule, system.capacity)
    counts = lv.multiplicities(system, max_energy)
    points = None
    if temperatures is not None:
        values = [t.strip() for t in temperatures.split(",")]
        points = lv.canonical(system, values, digits=digits, levels=report_levels)
    micro_points = lv.microcanonical(system, max_energy) if micro else None
    if plot is not None:
        render_levels.plot_levels(plot, system, counts, points or ())
    if as_json:
        emit_json(render_levels.levels_payload(system, counts, points, micro_points))
        return
    render_levels.show_levels(system, counts, points, micro_points, max_energy, plot)
