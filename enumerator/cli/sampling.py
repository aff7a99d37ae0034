"""``sample``: exact random draws from the rule's law, streamed (never through the result store)."""

from typing import Annotated, Optional

import typer

from ..core.model import as_count
from .options import (
    Balls,
    Bounds,
    Capacity,
    Json,
    ListFormat,
    Minimum,
    RuleOpt,
    Urns,
    build_problem,
)
from .render import write_vectors

__all__ = ["commands"]

#: The commands of this module, merged into the root application by :mod:`enumerator.cli.app`.
commands = typer.Typer()


@commands.command("sample")
def sample_command(
    balls: Balls,
    urns: Urns = None,
    rule: RuleOpt = "MB",
    capacity: Capacity = None,
    minimum: Minimum = None,
    bounds: Bounds = None,
    size: Annotated[int, typer.Option("--size", help="How many configurations to draw.")] = 10,
    seed: Annotated[
        Optional[int],
        typer.Option("--seed", help="Seed (a whole number): the same seed gives the same draws. "
                     "Default: a fresh random seed (shown in --json)."),
    ] = None,
    fmt: Annotated[
        ListFormat,
        typer.Option(
            "--format",
            case_sensitive=False,
            help="csv: a header k1,...,kr then one row per draw; jsonl: one JSON array per line.",
        ),
    ] = ListFormat.csv,
    method: Annotated[
        Optional[str],
        typer.Option(
            "--method",
            metavar="stars-and-bars|subset|uniform-balls|rejection|sequential",
            help="Force one exact method where it applies (same law; the default picks the fastest).",
        ),
    ] = None,
    as_json: Json = False,
) -> None:
    """Draw random configurations exactly from the rule's law, streaming.

    BE and FD: every admissible occupancy vector equally likely; MB: vector k
    with probability n!/(k1!...kr!) over the microstates. Exact integer
    arithmetic throughout (no floating-point bias); --seed makes the draws
    reproducible, and a smaller --size gives the first rows of a larger one.

    Example:

        $ enumerator sample -n 10 -r 4 --rule BE --size 5 --seed 1
        $ enumerator sample -n 1000 -r 100 --size 100000 --seed 7 > draws.csv
        $ enumerator sample -n 6 -r 3 --capacity 3 --size 3 --seed 2 --format jsonl
    """
    import itertools
    import secrets

    from ..algorithms.sampling import iter_sample_blocks, sampling_method

    # The bare description, not the facade: draws never go through the result store.
    model = build_problem(balls, urns, rule, capacity, minimum, bounds)
    size = as_count(size, "--size")
    seed = secrets.randbits(63) if seed is None else as_count(seed, "--seed")
    stream = iter_sample_blocks(model, size, seed, method)
    first = next(stream, None)  # plans the draw, so a bad model fails before any output
    blocks = (block for block in itertools.chain([first] if first is not None else [], stream) if len(block))
    head = None
    if as_json:
        head = '"rule": "%s", "balls": "%d", "urns": "%d", "seed": "%d", "method": "%s"' % (
            model.rule.value, model.balls, model.urns, seed, method or sampling_method(model))
    write_vectors(blocks, model.urns, fmt, head, "size")

