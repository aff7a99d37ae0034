"""``enumerator compare``: an approximation beside the exact value as the system grows.

The catalogue, the sweep, the errors and the observed orders are
:mod:`enumerator.algorithms.asymptotics`; this module parses the options and
prints (a wide table, CSV, one JSON object, or a plot).
"""

from __future__ import annotations

import sys
from typing import Annotated, Iterable, Optional, Sequence

import typer

from .options import OUTPUT_PANEL, Json, NoCache, Store, store_scope
from .render import console, emit_json

__all__ = ["commands"]

#: The commands of this module, merged into the root application by :mod:`enumerator.cli.app`.
commands = typer.Typer()

_OUTPUT = OUTPUT_PANEL
_SWEEP = "Sweep (a whole number, or an expression of the --vary name)"


def _tie_option(flag: str, *short: str, help: str):
    """A sweep option that takes a whole number or an expression of the varied name.

    Parameters
    ----------
    flag, *short : str
        The option's names.
    help : str
        Its help text.

    Returns
    -------
    typer.models.OptionInfo
    """
    return typer.Option(flag, *short, metavar="N|EXPR", help=help, rich_help_panel=_SWEEP)


def _wide_table(title: str, columns: Sequence[str], rows: Iterable[Sequence[str]]) -> None:
    """Print a rich table at its natural width (wider than the terminal if it must).

    The cells of ``compare`` are short, already-rounded numbers (the whole
    values are in --json/--csv), so the table is never folded and never
    spills values below itself the way :func:`~enumerator.cli.render.show_table`
    does for long counts.

    Parameters
    ----------
    title : str
        Printed in bold above the table.
    columns : sequence of str
        Column names.
    rows : iterable of sequence of str
        The cells.

    Notes
    -----
    Imports rich on first use.  Cost: linear in the total length of the cells.
    """
    from rich.console import Console
    from rich.table import Table

    rows = [list(row) for row in rows]
    table = Table()
    for i, name in enumerate(columns):
        table.add_column(name, justify="left" if i == 0 else "right", no_wrap=True)
    for row in rows:
        table.add_row(*row)
    natural = 1 + sum(3 + max(len(name), *(len(row[i]) for row in rows)) for i, name in enumerate(columns))
    wide = Console(file=sys.stdout, highlight=False, soft_wrap=False, width=max(console().width, natural))
    wide.print(title, style="bold", markup=False)
    wide.print(table)


@commands.command("compare")
def compare_command(
    names: Annotated[
        Optional[str],
        typer.Argument(
            metavar="NAME[,NAME...]",
            help="Approximation(s) from the catalogue, comma-separated (see --list).",
            show_default=False,
        ),
    ] = None,
    vary: Annotated[
        Optional[str],
        typer.Option("--vary", metavar="NAME=START..STOP", rich_help_panel=_SWEEP,
                     help="Vary one parameter (balls, urns, capacity, minimum, at) over START..STOP."),
    ] = None,
    step: Annotated[
        Optional[int],
        typer.Option("--step", rich_help_panel=_SWEEP, help="Points START, START+S, ... (up to STOP)."),
    ] = None,
    geometric: Annotated[
        Optional[int],
        typer.Option("--geometric", metavar="K", rich_help_panel=_SWEEP,
                     help="K points evenly spaced on a log scale from START to STOP (the default, K=10)."),
    ] = None,
    balls: Annotated[Optional[str], _tie_option("--balls", "-n", help="Number of balls n.")] = None,
    urns: Annotated[
        Optional[str],
        _tie_option("--urns", "-r", help='Number of urns r, e.g. 365 or "balls//2" or "balls*balls".'),
    ] = None,
    rule: Annotated[
        Optional[str],
        typer.Option("--rule", metavar="MB|BE|FD", rich_help_panel=_SWEEP, help="Rule of saddle (BE, FD or MB) and grand-canonical (BE or FD); default BE."),
    ] = None,
    capacity: Annotated[Optional[str], _tie_option("--capacity", help="At most this many balls per urn (saddle).")] = None,
    minimum: Annotated[Optional[str], _tie_option("--minimum", help="At least this many balls per urn (saddle).")] = None,
    at: Annotated[
        Optional[str],
        _tie_option("--at", help="The j of poisson/normal (P(at most j empty urns)), boltzmann (urns holding j) "
                    "and grand-canonical (level j)."),
    ] = None,
    pattern: Annotated[
        Optional[str],
        typer.Option("--pattern", metavar="W1,W2,...", rich_help_panel=_SWEEP,
                     help="entropy: configurations proportional to this pattern (default: equal shares)."),
    ] = None,
    factor: Annotated[
        Optional[str],
        typer.Option("--factor", metavar="P/Q", rich_help_panel=_SWEEP,
                     help="grand-canonical: Boltzmann factor e^(-spacing/T), a fraction in (0, 1) (default 1/2)."),
    ] = None,
    as_csv: Annotated[
        bool, typer.Option("--csv", rich_help_panel=_OUTPUT, help="Print CSV rows (exact values whole)."),
    ] = False,
    plot: Annotated[
        Optional[str],
        typer.Option("--plot", metavar="FILE.png", rich_help_panel=_OUTPUT,
                     help="Also draw |relative error| against the varied parameter, log-log, to FILE.png."),
    ] = None,
    show_list: Annotated[
        bool, typer.Option("--list", help="List the catalogue of approximations and exit."),
    ] = False,
    store: Store = None,
    no_cache: NoCache = False,
    as_json: Json = False,
) -> None:
    """Compare an approximation with the exact value as the system grows.

    Prints, per point, the exact value, the approximation, their absolute and
    relative errors and the local order, then the observed convergence order
    (least-squares slope of ln|relative error| against ln of the varied
    parameter, sign flipped: an error ~ n^-p gives p) beside the theory's.
    Other parameters are fixed (--urns 365) or tied to the varied one by
    whole numbers and + - * / // (--urns "balls//2"; / is exact and each
    value must come out whole).  The exact side is exact (JSON "exact": "p"
    or "p/q"); approximations are evaluated with mpmath at a precision that
    makes the printed errors the approximation's, not rounding.  A single
    point (fixed values, no --vary) has order_approx null.

    Example:

        $ enumerator compare --list
        $ enumerator compare birthday --balls 23 --urns 365 --json
        $ enumerator compare stirling1,stirling2,stirling3 --vary balls=10..1000 --urns balls --plot stirling.png
        $ enumerator compare saddle --vary balls=100..10000 --urns "balls//2" --capacity 3 --csv
        $ enumerator compare grand-canonical --vary balls=10..160 --urns balls --factor 1/2
    """
    from ..algorithms import asymptotics
    from ..core.errors import InvalidParameters

    if show_list:
        entries = asymptotics.catalogue_rows()
        if as_json:
            emit_json({"approximations": entries})
            return
        lines = []
        for e in entries:
            order = f"order {e['order']} when {e['regime']}" if e["order"] else "no order claimed"
            lines.append(
                f"{e['name']}: {e['quantity']}\n    ≈ {e['formula']}\n    {order}; "
                f"uses {', '.join(e['uses'])}; {e['scale']} scale\n    source: {e['source']}\n"
            )
        sys.stdout.write("".join(lines))
        sys.stdout.flush()
        return
    if names is None:
        raise InvalidParameters("name an approximation, e.g. enumerator compare birthday (see --list)")
    if as_csv and as_json:
        raise InvalidParameters("give --csv or --json, not both")
    with store_scope(store, no_cache):
        comparisons = asymptotics.compare_sweep(
            names, vary, step=step, geometric=geometric, balls=balls, urns=urns, rule=rule,
            capacity=capacity, minimum=minimum, at=at, pattern=pattern, factor=factor,
        )
    if plot is not None:
        asymptotics.plot_comparisons(comparisons, plot)
    if as_json:
        payloads = [c.to_json() for c in comparisons]
        emit_json(payloads[0] if len(payloads) == 1 else {"comparisons": payloads})
        return
    if as_csv:
        sys.stdout.write(asymptotics.comparisons_csv(comparisons))
        sys.stdout.flush()
        return
    out = console()
    for i, comparison in enumerate(comparisons):
        entry = comparison.approximation
        if i:
            out.print()
        columns, rows = asymptotics.comparison_table(comparison)
        scale = " (errors of ln W: log scale)" if entry.scale == "log" else ""
        _wide_table(f"{entry.name}: {entry.quantity} ≈ {entry.formula}{scale}", columns, rows)
        out.print(asymptotics.describe_order(comparison), markup=False)
        out.print(f"source: {entry.source}", markup=False)
    if plot is not None:
        out.print(f"plot: {plot}", markup=False)


