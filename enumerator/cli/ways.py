"""``ways``: the twelvefold way of n balls into r urns."""

from typing import Annotated

import typer

from ..core.model import as_count
from .options import MODEL_PANEL, Balls, Json, MaxMemory, MaxSeconds, count_parser, limits_scope
from .render import emit_json, exact, show_table

__all__ = ["commands"]

#: The commands of this module, merged into the root application by :mod:`enumerator.cli.app`.
commands = typer.Typer()

_PER_URN = [("any", "any number"), ("at_most_one", "at most one"), ("at_least_one", "at least one")]


@commands.command("ways")
def ways_command(
    balls: Balls,
    urns: Annotated[
        int,
        typer.Option("--urns", "-r", metavar="INTEGER", parser=count_parser("urns", 1),
                     help="Number of urns r, >= 1.", rich_help_panel=MODEL_PANEL),
    ],
    max_memory: MaxMemory = None,
    max_seconds: MaxSeconds = None,
    as_json: Json = False,
) -> None:
    """Print the twelvefold way: n balls into r urns, twelve exact counts.

    Balls labelled (distinguishable) or unlabelled (identical), urns labelled
    or unlabelled, and any number / at most one / at least one ball per urn.
    Labelled balls into labelled urns, any number, is MB's r^n; unlabelled
    balls into labelled urns is BE (any) and FD (at most one).

    Example:

        $ enumerator ways -n 5 -r 3
        $ enumerator ways -n 5 -r 3 --json
    """
    # The twelvefold way is not a remembered quantity of the facade, so this
    # command never touches the store and offers no --store/--no-cache (an
    # option that only created an empty store file would mislead).
    from ..algorithms.counting import twelvefold

    n = as_count(balls, "balls")
    r = as_count(urns, "urns", 1)
    with limits_scope(max_memory, max_seconds):
        ways = twelvefold(n, r)
    if as_json:
        emit_json(
            {
                "balls": exact(n),
                "urns": exact(r),
                "ways": [
                    {
                        "balls": way["balls"],
                        "urns": way["urns"],
                        "per_urn": way["per_urn"],
                        "count": exact(way["count"]),
                    }
                    for way in ways
                ],
            }
        )
        return
    lookup = {(w["balls"], w["urns"], w["per_urn"]): w["count"] for w in ways}
    rows = [
        [f"{ball_kind} balls, {urn_kind} urns"]
        + [lookup[(ball_kind, urn_kind, key)] for key, _ in _PER_URN]
        for ball_kind in ("labelled", "unlabelled")
        for urn_kind in ("labelled", "unlabelled")
    ]
    show_table(
        f"The twelvefold way: {n} balls into {r} urns (columns: balls per urn)",
        ["balls and urns"] + [title for _, title in _PER_URN],
        rows,
    )

