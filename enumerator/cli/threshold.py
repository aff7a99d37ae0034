"""``threshold``: the least number of balls (or urns) at which an event reaches a target probability."""

from enum import Enum
from fractions import Fraction
from typing import Annotated, Optional

import typer

from .options import (
    MODEL_PANEL,
    Bounds,
    Capacity,
    EventLimit,
    Json,
    MaxMemory,
    MaxSeconds,
    Minimum,
    RuleOpt,
    Weights,
    build_model,
    count_parser,
    limits_scope,
)
from .render import SPILL_DIGITS, approx, emit_json, exact, plural, show_table

__all__ = ["commands"]

#: The commands of this module, merged into the root application by :mod:`enumerator.cli.app`.
commands = typer.Typer()


def _probability(text) -> Fraction:
    """Parse ``--target`` exactly (``0.5``, ``1e-6``, ``999/1000``); a bad value is a usage error naming the flag."""
    from ..algorithms.threshold import parse_probability
    from ..core.errors import InvalidParameters

    if isinstance(text, Fraction):
        return text
    try:
        return parse_probability(text)
    except InvalidParameters as error:
        raise typer.BadParameter(str(error)) from None


class Vary(str, Enum):
    """The parameter ``threshold`` searches."""

    balls = "balls"
    urns = "urns"


@commands.command("threshold")
def threshold_command(
    vary: Annotated[
        Vary,
        typer.Option("--vary", case_sensitive=False,
                     help="The parameter to search: balls (with --urns or --bounds/--weights fixed) "
                     "or urns (with --balls fixed)."),
    ],
    event: Annotated[
        str,
        typer.Option("--event", help='The event, in the language of prob --event, e.g. "max >= 2".'),
    ],
    target: Annotated[
        Fraction,
        typer.Option("--target", metavar="P", parser=_probability,
                     help="The probability to reach: a decimal (0.5, 1e-6) or a fraction (999/1000), "
                     "above 0 and at most 1."),
    ],
    balls: Annotated[
        Optional[int],
        typer.Option("--balls", "-n", metavar="INTEGER", parser=count_parser("balls", 0),
                     help="Number of balls n, fixed when the urns vary.", rich_help_panel=MODEL_PANEL),
    ] = None,
    urns: Annotated[
        Optional[int],
        typer.Option("--urns", "-r", metavar="INTEGER", parser=count_parser("urns", 1),
                     help="Number of urns r, fixed when the balls vary (or give --bounds/--weights).",
                     rich_help_panel=MODEL_PANEL),
    ] = None,
    rule: RuleOpt = "MB",
    capacity: Capacity = None,
    minimum: Minimum = None,
    bounds: Bounds = None,
    weights: Weights = None,
    limit: EventLimit = None,
    max_memory: MaxMemory = None,
    max_seconds: MaxSeconds = None,
    as_json: Json = False,
) -> None:
    """Find the least number of balls (or urns) at which P(event) >= P, with exact probabilities.

    The other parameters stay fixed (-r 365, or -n 23; --rule, bounds and
    weights).  The answer is the least value v with P(event) >= P at v,
    with the exact probabilities at v and at v - 1 (none below the smallest
    value: 0 balls, 1 urn, I urns for an event naming kI, or the fewest
    urns that hold the balls within --capacity, e.g. n urns under FD).

    How it searches.  Bisection (an exponential search 1, 2, 4, ... then a
    binary search: O(log v) exact evaluations) where P is proved monotone in
    the varied parameter; otherwise a scan of every value from the smallest
    upward, up to 10,000 values, then a refusal.  Varying the balls, P is
    proved monotone for events built with and/or/not from comparisons
    (>=, >, <=, <) of max, min, occupied, kI, count(>= J) (which only grow
    as balls are added) or empty, count(<= J) (which only shrink), all
    pointing the same way, on a model that grows a ball at a time: MB with
    any weights and no bounds, BE with equal weights and no bounds (Polya's
    urn), FD with equal weights and no lower bound.  Varying the urns, it is
    proved for the collision events (max <= 1, max >= 2 and the like) on
    equal unbounded urns under MB or BE.  "method" in the output says which
    search ran.  For the collision events on equal free urns the answer is
    located by proved rational bounds on ln P(no collision), so only the two
    exact probabilities remain: a table computes them only up to 10,000
    digits and otherwise shows them rounded from the bounds (--json always
    computes them exactly; for 64-bit IDs at 1e-6 that is minutes).

    Example:

        $ enumerator threshold --vary balls -r 365 --event "max >= 2" --target 0.5
        $ enumerator threshold --vary balls -r 365 --event "max >= 3" --target 0.5 --json
        $ enumerator threshold --vary balls -r 2^32 --event "max >= 2" --target 1/2
        $ enumerator threshold --vary urns -n 100000 --event "max <= 1" --target 0.999
    """
    from ..algorithms.threshold import find_threshold

    kind = vary.value
    notes = []
    # Each value tried is a fresh model, evaluated once: nothing is remembered,
    # so the command offers no --store/--no-cache.
    with limits_scope(max_memory, max_seconds):
        if kind == "balls":
            if balls is not None:
                notes.append("--balls is what --vary balls searches; the value given is not used")
            model = build_model(0 if balls is None else balls, urns, rule, capacity, minimum, bounds, weights)
        else:
            from ..core.errors import InvalidParameters

            if balls is None:
                raise InvalidParameters("give the number of balls (--balls) when the urns vary")
            if bounds is not None or weights is not None:
                raise InvalidParameters(
                    "--bounds and --weights list the urns one by one, so they cannot vary; with --vary urns "
                    "give the bound every urn shares (--capacity, --minimum) instead"
                )
            if urns is not None:
                notes.append("--urns is what --vary urns searches; the value given is not used")
            model = build_model(balls, 1 if urns is None and bounds is None and weights is None else urns,
                                rule, capacity, minimum, bounds, weights)
        # a table does not write probabilities beyond SPILL_DIGITS digits, so it
        # need not compute them where proved bounds locate the answer
        found = find_threshold(model, kind, event, target, limit=limit,
                               exact_digits=None if as_json else SPILL_DIGITS)
    for text in notes:  # after the answer is found: an error stays one line
        _note(text)
    before = found.probability_before
    if as_json:
        emit_json(
            {
                "vary": found.vary,
                "value": exact(found.value),
                "probability": exact(found.probability),
                "probability_before": None if before is None else exact(before),
                "probability_approx": approx(found.probability),
                "probability_before_approx": None if before is None else approx(before),
                "method": found.method,
            }
        )
        return
    fixed = plural(model.urns, "urn") if kind == "balls" else plural(model.balls, "ball")
    if found.bounds is not None:
        rows, how = _bounded_rows(kind, found, target), "located by proved bounds"
    else:
        digits = _separating_digits(target, found.probability, before)
        rows = [
            [f"{kind} = {found.value}", found.probability, f"{approx(found.probability):.{digits}g}"],
        ]
        if before is not None:
            rows.insert(0, [f"{kind} = {found.value - 1}", before, f"{approx(before):.{digits}g}"])
        how = f"{found.evaluations} evaluations"
    show_table(
        f"Least {kind} with P({event}) >= {exact(target)}: {found.value} "
        f"({model.rule.value}, {fixed}; {found.method}, {how})",
        [kind, "P(event) (exact)", "approx"],
        rows,
    )
    if found.bounds is not None:
        import sys

        sys.stdout.write(_bounded_note(found))


def _bounded_rows(kind: str, found, target) -> list:
    """Table rows of an answer whose exact probabilities were too long to compute for a table.

    The approximate column is the midpoint of the proved enclosure (relative
    width below 1e-20, so every digit shown is right); the exact column
    shows the same rounded value (:func:`_bounded_note` says why the
    fractions were not computed).
    """
    from .render import scientific

    here, before = found.bounds
    value = sum(here) / 2
    previous = None if before is None else sum(before) / 2
    digits = _separating_digits(target, value, previous)
    rows = [[f"{kind} = {found.value}", f"≈ {scientific(value)}", f"{approx(value):.{digits}g}"]]
    if previous is not None:
        rows.insert(0, [f"{kind} = {found.value - 1}", f"≈ {scientific(previous)}",
                        f"{approx(previous):.{digits}g}"])
    return rows


def _bounded_note(found) -> str:
    """The line under a table of :func:`_bounded_rows`."""
    return (f"The exact probabilities are fractions of about {found.digits:,} digits each, more than a table "
            "writes, so they were not computed; --json computes and writes them.\n")


def _separating_digits(target, probability, before) -> int:
    """Significant digits (6 to 17) at which the approximate column tells the two rows and the target apart.

    With a target of ``1e-6`` reached between ``0.99999999e-6`` and
    ``1.0000003e-6``, six digits would print all three alike.
    """
    values = [float(v) for v in (target, probability, before) if v is not None]
    for digits in range(6, 18):
        texts = {f"{v:.{digits}g}" for v in values}
        if len(texts) == len(set(values)):
            return digits
    return 17


def _note(text: str) -> None:
    """One line on stderr that does not change the answer or the exit code."""
    import sys

    sys.stderr.write(f"Note: {text}.\n")
