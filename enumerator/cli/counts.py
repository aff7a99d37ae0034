"""``count``, ``prob``, ``dist`` and ``list``: counts, probabilities, laws and listings of one model."""

from typing import Annotated, Optional

import typer

from ..core.model import as_count
from .options import (
    Balls,
    Bounds,
    Capacity,
    EventLimit,
    Json,
    ListFormat,
    Minimum,
    NoCache,
    RuleOpt,
    Store,
    Urns,
    build_model,
    parse_config,
    store_scope,
)
from .render import approx, describe, emit_json, exact, show_table, write_vectors

__all__ = ["commands"]

#: The commands of this module, merged into the root application by :mod:`enumerator.cli.app`.
commands = typer.Typer()


@commands.command("count")
def count_command(
    balls: Balls,
    urns: Urns = None,
    rule: RuleOpt = "MB",
    capacity: Capacity = None,
    minimum: Minimum = None,
    bounds: Bounds = None,
    store: Store = None,
    no_cache: NoCache = False,
    as_json: Json = False,
) -> None:
    """Count the admissible occupancy vectors and the equally likely outcomes.

    configurations: how many occupancy vectors (k1,...,kr) fit the bounds.
    microstates: how many equally likely outcomes there are under the rule
    (MB: assignments of distinguishable balls to urns; BE and FD: the vectors
    themselves).  Both are exact, however many digits they have.

    Example:

        $ enumerator count -n 3 -r 2 --rule BE
        $ enumerator count -n 10 -r 4 --capacity 3 --json
        $ enumerator count -n 5 --bounds "0:2,1:,0:3"
    """
    with store_scope(store, no_cache):
        model = build_model(balls, urns, rule, capacity, minimum, bounds)
        configurations = model.configurations()
        microstates = model.microstates()
        if as_json:
            emit_json(
                {
                    "rule": model.rule.value,
                    "balls": exact(model.balls),
                    "urns": exact(model.urns),
                    "configurations": exact(configurations),
                    "microstates": exact(microstates),
                }
            )
            return
        show_table(
            describe(model),
            ["quantity", "exact value"],
            [
                ["configurations", exact(configurations)],
                ["microstates", exact(microstates)],
            ],
        )


@commands.command("prob")
def prob_command(
    balls: Balls,
    config: Annotated[
        Optional[str],
        typer.Option(
            "--config",
            help='The occupancy vector "k1,k2,...,kr": one whole number per urn, summing to n.',
        ),
    ] = None,
    event: Annotated[
        Optional[str],
        typer.Option(
            "--event",
            help='An event instead of one vector, e.g. "max <= 1", "empty == 3", '
            '"k1 >= 2 and not count(== 2) >= 3" (see enumerator.events).',
        ),
    ] = None,
    urns: Urns = None,
    rule: RuleOpt = "MB",
    capacity: Capacity = None,
    minimum: Minimum = None,
    bounds: Bounds = None,
    limit: EventLimit = None,
    as_json: Json = False,
) -> None:
    """Give the exact probability of one occupancy vector, or of an event, under the rule.

    --config: MB n!/(k1!...kr!) assignments out of all admissible ones; BE and
    FD one vector out of all admissible vectors.  A vector that breaks a bound
    has probability exactly 0; one of the wrong length or sum is an error.

    --event: a statement about the vector built from max, min, empty,
    occupied, k1..kr and count(OP J), compared with == != < <= > >= and joined
    by and, or, not and parentheses.  Give exactly one of --config and --event.

    Example:

        $ enumerator prob -n 3 -r 3 --config 2,0,1
        $ enumerator prob -n 3 -r 3 --config 2,0,1 --rule BE --json
        $ enumerator prob -n 23 -r 365 --event "max <= 1"
        $ enumerator prob -n 10 -r 6 --event "empty >= 2 or k1 == 0" --json
    """
    from ..core.errors import InvalidParameters

    if (config is None) == (event is None):
        raise InvalidParameters(
            'give exactly one of --config (one occupancy vector, e.g. 2,0,1) '
            'or --event (an event, e.g. "max <= 1")'
        )
    # The facade does not remember probabilities, so prob offers no --store/--no-cache.
    model = build_model(balls, urns, rule, capacity, minimum, bounds)
    if event is not None:
        from ..algorithms.events import event_probability

        probability = event_probability(model, event, limit=_limit(limit))
        field, text, title = "event", event, f"{describe(model)}; event {event}"
    else:
        vector = parse_config(config)
        probability = model.probability(vector)
        text = ",".join(map(str, vector))
        field, title = "config", f"{describe(model)}; configuration ({text})"
    if as_json:
        emit_json(
            {
                "rule": model.rule.value,
                "balls": exact(model.balls),
                "urns": exact(model.urns),
                field: text,
                "probability": exact(probability),
                "approx": approx(probability),
            }
        )
        return
    show_table(
        title,
        ["quantity", "value"],
        [
            ["probability (exact)", exact(probability)],
            ["probability (approx)", f"{approx(probability):.6g}"],
        ],
    )


def _limit(limit: Optional[int]) -> int:
    """The ``--limit`` of dist/prob, or the library default.

    Parameters
    ----------
    limit : int or None
        The option's value.

    Returns
    -------
    int
        At least 1.

    Raises
    ------
    InvalidParameters
        *limit* is not a whole number >= 1.
    """
    from ..algorithms.statistics import DEFAULT_LIMIT

    return DEFAULT_LIMIT if limit is None else as_count(limit, "--limit", 1)


def _value_text(value) -> str:
    """A statistic's value as a JSON key: decimal digits, or a profile's parts joined by '+'.

    Parameters
    ----------
    value : int or tuple of int

    Returns
    -------
    str
    """
    if isinstance(value, tuple):
        return "+".join(map(str, value))
    return str(value)


@commands.command("dist")
def dist_command(
    balls: Balls,
    stat: Annotated[
        str,
        typer.Option(
            "--stat",
            metavar="empty|occupied|max|min|urn:I|exactly:J|atleast:J|profile",
            help="The statistic: empty or occupied urns, the largest or smallest occupancy, "
            "urn I's occupancy (1-based), the number of urns holding exactly / at least J "
            "balls, or the occupancy profile (the occupancies sorted, urns unlabelled).",
        ),
    ],
    urns: Urns = None,
    rule: RuleOpt = "MB",
    capacity: Capacity = None,
    minimum: Minimum = None,
    bounds: Bounds = None,
    limit: EventLimit = None,
    store: Store = None,
    no_cache: NoCache = False,
    as_json: Json = False,
) -> None:
    """Give the exact distribution of a statistic: every value's probability, mean, variance.

    The probabilities are exact fractions over the whole support and sum to
    exactly 1.  A profile is written as its parts in decreasing order joined
    by "+", e.g. 3+1+1+0; profiles have no mean or variance (null in JSON).

    Example:

        $ enumerator dist -n 10 -r 4 --stat empty
        $ enumerator dist -n 2000 -r 500 --stat max --json
        $ enumerator dist -n 6 -r 3 --rule BE --stat profile
    """
    with store_scope(store, no_cache):
        model = build_model(balls, urns, rule, capacity, minimum, bounds)
        law = model.distribution(stat, limit=_limit(limit))
        moment = (lambda x: None if x is None else exact(x))
        if as_json:
            emit_json(
                {
                    "statistic": law.statistic,
                    "pmf": {_value_text(v): exact(p) for v, p in law.pmf.items()},
                    "mean": moment(law.mean),
                    "variance": moment(law.variance),
                }
            )
            return
        rows = [[_value_text(v), exact(p), f"{approx(p):.6g}"] for v, p in law.pmf.items()]
        show_table(f"{describe(model)}; distribution of {law.statistic}",
                   [law.statistic, "probability (exact)", "approx"], rows)
        if law.mean is not None:
            show_table(
                f"Moments of {law.statistic}",
                ["moment", "exact", "approx"],
                [
                    ["mean", exact(law.mean), f"{approx(law.mean):.6g}"],
                    ["variance", exact(law.variance), f"{approx(law.variance):.6g}"],
                ],
            )


#: Rows per numpy block when listing; large enough to amortise the call.
_BLOCK = 1 << 14


@commands.command("list")
def list_command(
    balls: Balls,
    urns: Urns = None,
    rule: RuleOpt = "MB",
    capacity: Capacity = None,
    minimum: Minimum = None,
    bounds: Bounds = None,
    limit: Annotated[
        Optional[int],
        typer.Option("--limit", help="Print at most this many configurations."),
    ] = None,
    start: Annotated[
        int,
        typer.Option("--start", help="First lexicographic rank to print (0-based)."),
    ] = 0,
    stop: Annotated[
        Optional[int],
        typer.Option("--stop", help="Stop before this rank (default: the end)."),
    ] = None,
    fmt: Annotated[
        ListFormat,
        typer.Option(
            "--format",
            case_sensitive=False,
            help="csv: a header k1,...,kr then one row per configuration; "
            "jsonl: one JSON array of integers per line.",
        ),
    ] = ListFormat.csv,
    as_json: Json = False,
) -> None:
    """List the admissible occupancy vectors in lexicographic order, streaming.

    Ranks start at 0; --start/--stop select the ranks [start, stop) without
    walking the earlier ones, so a long listing can be split into shards.
    Nothing is held in memory.  With --json the output is one JSON object
    whose "configurations" field is the array of the listed vectors (arrays
    of integers, as in jsonl) and whose "listed" field counts them.

    Example:

        $ enumerator list -n 3 -r 3 --rule BE
        $ enumerator list -n 20 -r 6 --start 1000 --limit 5 --format jsonl
    """
    # A listing streams and is never remembered: no --store/--no-cache.
    model = build_model(balls, urns, rule, capacity, minimum, bounds)
    start = as_count(start, "--start")
    if stop is not None:
        stop = as_count(stop, "--stop")
    if limit is not None:
        limit = as_count(limit, "--limit")
        stop = start + limit if stop is None else min(stop, start + limit)
    blocks = (block for block in model.iter_blocks(_BLOCK, start, stop) if len(block))
    head = '"rule": "%s", "balls": "%d", "urns": "%d", "start": "%d"' % (
        model.rule.value, model.balls, model.urns, start)
    write_vectors(blocks, model.urns, fmt, head if as_json else None, "listed")
