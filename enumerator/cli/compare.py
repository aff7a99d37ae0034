"""``enumerator compare``: an approximation beside the exact value as the system grows.

The catalogue, the sweep, the errors and the observed orders are
:mod:`enumerator.algorithms.asymptotics`; this module parses the options,
plans the sweep (:func:`~enumerator.algorithms.asymptotics.plan_sweep`) and
hands it to :func:`enumerator.cli.render_compare.stream_comparisons`, which
prints each point as it is computed (a table, CSV or one JSON object), then
draws the plot.  The exit status is decided here from what ran.
"""

import sys
from typing import Annotated, Optional

import typer

from .options import (
    OUTPUT_PANEL,
    Json,
    MaxMemory,
    MaxSeconds,
    NoCache,
    Store,
    limits_scope,
    plot_option,
    store_scope,
    whole_option,
)
from .render import emit_json

__all__ = ["commands"]

#: The commands of this module, merged into the root application by :mod:`enumerator.cli.app`.
commands = typer.Typer()

_OUTPUT = OUTPUT_PANEL

#: ``compare --plot``.
ComparePlot = plot_option("Also draw |relative error| against the varied parameter, log-log, to FILE.png.")
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


@commands.command("compare")
def compare_command(
    names: Annotated[
        Optional[str],
        typer.Argument(
            metavar="NAME[,NAME...]|all",
            help="Approximation(s) from the catalogue, comma-separated (see --list), or all.",
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
        whole_option("--step", name="step", minimum=1, rich_help_panel=_SWEEP,
                     help="Points START, START+S, ... (up to STOP)."),
    ] = None,
    geometric: Annotated[
        Optional[int],
        whole_option("--geometric", name="geometric", minimum=1, metavar="K", rich_help_panel=_SWEEP,
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
    plot: ComparePlot = None,
    show_list: Annotated[
        bool, typer.Option("--list", help="List the catalogue of approximations and exit."),
    ] = False,
    store: Store = None,
    no_cache: NoCache = False,
    max_memory: MaxMemory = None,
    max_seconds: MaxSeconds = None,
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

    Each point is printed as soon as it is computed (table, CSV, or one JSON
    object written row by row).  A point whose exact side is estimated
    beyond --max-seconds/--max-memory is not computed: it is a skipped row
    saying why (JSON "skipped"), and the sweep goes on.  Errors beyond the
    float range are printed as decimal text ("4.2e+272"), never null; a null
    relative error (exact value 0) comes with a "note".  Several names, or
    all (the whole catalogue), run one after the other, and one that cannot
    run (a missing --capacity, say) does not stop the others. With several
    names each reads the options it uses, and one line on stderr ("note:
    empty-mean ignores --capacity") names those an entry ignores; an option
    that none of them uses is an error, as for a single name.

    Exit status: 0 when every named approximation computed at least one
    point (with all: when any did); 2 otherwise, after everything else is
    printed, with one Error line on stderr naming each failure.

    Example:

        $ enumerator compare --list
        $ enumerator compare birthday --balls 23 --urns 365 --json
        $ enumerator compare stirling1,stirling2,stirling3 --vary balls=10..1000 --urns balls --plot stirling.png
        $ enumerator compare saddle --vary balls=100..10000 --urns "balls//2" --capacity 3 --csv
        $ enumerator compare grand-canonical --vary balls=10..160 --urns balls --factor 1/2
        $ enumerator compare empty-mean --vary balls=10..1000000 --urns "balls//2"
        $ enumerator compare all --vary balls=10..1000 --urns "balls//2" --capacity 3 --max-seconds 5
    """
    from ..algorithms.asymptotics import ALL, plan_sweep
    from ..algorithms.asymptotics.comparison import ignored_note
    from ..core.errors import InvalidParameters
    from . import render_compare
    from .app import FLAGS

    if show_list:
        entries = render_compare.catalogue_rows()
        if as_json:
            emit_json({"approximations": entries})
            return
        sys.stdout.write(render_compare.catalogue_text(entries))
        sys.stdout.flush()
        return
    if names is None:
        raise InvalidParameters("name an approximation, e.g. enumerator compare birthday (see --list)")
    if as_csv and as_json:
        raise InvalidParameters("give --csv or --json, not both")
    every = names.strip().lower() == ALL

    def spell(error):
        return error.spelled(FLAGS)

    if factor is not None:  # sized before the library's Fraction reads it (1e-99999999 would not end)
        from ..algorithms.levels.spectra import size_number_text

        size_number_text(factor, "--factor")
    with store_scope(store, no_cache), limits_scope(max_memory, max_seconds):
        plans = plan_sweep(
            names, vary, step=step, geometric=geometric, balls=balls, urns=urns, rule=rule,
            capacity=capacity, minimum=minimum, at=at, pattern=pattern, factor=factor,
        )
        if all(plan.error is not None for plan in plans):
            raise plans[0].error
        note = ignored_note(plans, FLAGS)
        if note:
            # one line, before the output, so that a pipe of stdout stays clean
            sys.stderr.write(f"note: {note}\n")
            sys.stderr.flush()
        form = "json" if as_json else "csv" if as_csv else "table"
        comparisons = render_compare.stream_comparisons(
            plans, form, several=every or len(plans) > 1, spell=spell,
        )
    if plot is not None:
        render_compare.plot_comparisons([c for c in comparisons if c.error is None], plot)
        if form == "table":
            sys.stdout.write(f"plot: {plot}\n")
            sys.stdout.flush()
    failures = []
    for comparison in comparisons:
        if comparison.error is not None:
            failures.append(f"{comparison.approximation.name}: {spell(comparison.error)}")
        elif all(row.error is not None for row in comparison.rows):
            failures.append(f"{comparison.approximation.name}: every point was skipped "
                            f"({spell(comparison.rows[0].error)})")
    ran = len(comparisons) - len(failures)
    if failures and (not every or ran == 0):
        # one line, as every error of the command line (app._fail)
        sys.stdout.flush()
        sys.stderr.write(" ".join(("Error: " + "; ".join(failures)).split()) + "\n")
        sys.stderr.flush()
        raise typer.Exit(2)
