"""``enumerator contact``: two systems of particles on energy levels in thermal contact.

Thermal contact is :func:`enumerator.algorithms.levels.thermal_contact`; this
module parses the options of the two sides, calls the library and hands the
result to :mod:`enumerator.cli.render_contact` (one JSON object, a table or a
plot).  The command neither reads nor writes the result store, so it does not
offer ``--store``/``--no-cache``.
"""

from typing import Annotated, Optional

import typer

from .options import OUTPUT_PANEL, Json
from .render import emit_json

__all__ = ["commands"]

#: The commands of this module, merged into the root application by :mod:`enumerator.cli.app`.
commands = typer.Typer()

_OUTPUT = OUTPUT_PANEL


def _side_options(side: str):
    """The option bundle of one side (a or b) of ``enumerator contact``.

    Parameters
    ----------
    side : str
        ``"a"`` or ``"b"``: the suffix of every option and the name of its help panel.

    Returns
    -------
    dict of str to typer.models.OptionInfo
    """
    panel = f"System {side.upper()}"
    return {
        "oscillators": typer.Option(f"--oscillators-{side}", rich_help_panel=panel,
                                    help=f"{side.upper()} is an Einstein solid of this many oscillators."),
        "particles": typer.Option(f"--particles-{side}", rich_help_panel=panel, help="Number of particles."),
        "energies": typer.Option(f"--energies-{side}", rich_help_panel=panel, metavar="E1,E2,...",
                                 help="Level energies."),
        "degeneracies": typer.Option(f"--degeneracies-{side}", rich_help_panel=panel, metavar="G1,G2,...",
                                     help="Level degeneracies (default all 1)."),
        "rule": typer.Option(f"--rule-{side}", rich_help_panel=panel, metavar="MB|BE|FD",
                             help="Rule of this side (default --rule, else MB)."),
        "capacity": typer.Option(f"--capacity-{side}", rich_help_panel=panel, help="BE: at most this many per state."),
        "preset": typer.Option(f"--preset-{side}", rich_help_panel=panel, metavar="NAME",
                               help="harmonic, trap, two-level or einstein."),
        "levels": typer.Option(f"--levels-{side}", rich_help_panel=panel, help="harmonic/trap: number of levels."),
        "dimension": typer.Option(f"--dimension-{side}", rich_help_panel=panel, help="trap: dimension."),
        "gap": typer.Option(f"--gap-{side}", rich_help_panel=panel, help="two-level: gap."),
    }


_A = _side_options("a")
_B = _side_options("b")


@commands.command("contact")
def contact_command(
    energy: Annotated[
        str,
        typer.Option("--quanta", "--energy", metavar="E",
                     help="Total energy shared by A and B (for Einstein solids: the number of quanta)."),
    ],
    oscillators_a: Annotated[Optional[int], _A["oscillators"]] = None,
    particles_a: Annotated[Optional[int], _A["particles"]] = None,
    energies_a: Annotated[Optional[str], _A["energies"]] = None,
    degeneracies_a: Annotated[Optional[str], _A["degeneracies"]] = None,
    rule_a: Annotated[Optional[str], _A["rule"]] = None,
    capacity_a: Annotated[Optional[int], _A["capacity"]] = None,
    preset_a: Annotated[Optional[str], _A["preset"]] = None,
    levels_a: Annotated[Optional[int], _A["levels"]] = None,
    dimension_a: Annotated[Optional[int], _A["dimension"]] = None,
    gap_a: Annotated[Optional[str], _A["gap"]] = None,
    oscillators_b: Annotated[Optional[int], _B["oscillators"]] = None,
    particles_b: Annotated[Optional[int], _B["particles"]] = None,
    energies_b: Annotated[Optional[str], _B["energies"]] = None,
    degeneracies_b: Annotated[Optional[str], _B["degeneracies"]] = None,
    rule_b: Annotated[Optional[str], _B["rule"]] = None,
    capacity_b: Annotated[Optional[int], _B["capacity"]] = None,
    preset_b: Annotated[Optional[str], _B["preset"]] = None,
    levels_b: Annotated[Optional[int], _B["levels"]] = None,
    dimension_b: Annotated[Optional[int], _B["dimension"]] = None,
    gap_b: Annotated[Optional[str], _B["gap"]] = None,
    rule: Annotated[
        Optional[str],
        typer.Option("--rule", metavar="MB|BE|FD", help="Rule of both systems unless --rule-a/--rule-b say otherwise."),
    ] = None,
    plot: Annotated[
        Optional[str],
        typer.Option("--plot", metavar="FILE.png", rich_help_panel=_OUTPUT,
                     help="Draw the probability of each split E_A."),
    ] = None,
    as_json: Json = False,
) -> None:
    """Two systems in thermal contact: the exact energy split Ω_A(E_A) Ω_B(E - E_A).

    Every split of the total energy is listed with its exact multiplicity and
    probability (all microstates of A+B equally likely), and the most
    probable split is named (the lowest E_A on a tie).  Each side is an
    Einstein solid (--oscillators-a N) or any spectrum, given as for
    'enumerator levels' with -a/-b suffixes.

    Example:

        $ enumerator contact --oscillators-a 300 --oscillators-b 200 --quanta 100 --json
        $ enumerator contact --oscillators-a 3 --oscillators-b 3 --quanta 6
        $ enumerator contact --preset-a two-level --particles-a 10 --preset-b trap --particles-b 4 --rule-b BE --energy 12
    """
    from ..algorithms import levels as lv
    from . import render_contact

    side_a = lv.make_system(
        particles=particles_a, energies=energies_a, degeneracies=degeneracies_a, rule=rule_a or rule,
        capacity=capacity_a, preset=preset_a, levels=levels_a, dimension=dimension_a, gap=gap_a,
        oscillators=oscillators_a,
    )
    side_b = lv.make_system(
        particles=particles_b, energies=energies_b, degeneracies=degeneracies_b, rule=rule_b or rule,
        capacity=capacity_b, preset=preset_b, levels=levels_b, dimension=dimension_b, gap=gap_b,
        oscillators=oscillators_b,
    )
    result = lv.thermal_contact(side_a, side_b, energy)
    if plot is not None:
        render_contact.plot_contact(plot, result, side_a.label, side_b.label)
    if as_json:
        emit_json(render_contact.contact_payload(result))
        return
    render_contact.show_contact(result, side_a.label, side_b.label, energy, plot)
