"""``count``, ``prob``, ``dist`` and ``list``: counts, probabilities, laws and listings of one model."""

from contextlib import contextmanager
from typing import Annotated, Optional

import typer

from ..core.model import as_count
from .options import (
    Balls,
    Bounds,
    Capacity,
    ClusterAddress,
    EventLimit,
    Json,
    ListFormat,
    MaxMemory,
    MaxSeconds,
    Minimum,
    NoCache,
    RuleOpt,
    Store,
    Urns,
    Weights,
    Workers,
    build_model,
    limits_scope,
    output_folder,
    parse_config,
    store_scope,
    whole_option,
    workers_option,
)
from .render import approx, describe, emit_json, exact, show_table, write_sparse, write_vectors

__all__ = ["commands"]

#: The commands of this module, merged into the root application by :mod:`enumerator.cli.app`.
commands = typer.Typer()

#: ``list --workers``: the workers write the shards of ``--output-dir`` themselves.
ListWorkers = workers_option("With --output-dir: list and write the shards on a local Dask cluster of K "
                             "processes (needs Dask: the cluster extra of enumerator).")


@commands.command("count")
def count_command(
    balls: Balls,
    urns: Urns = None,
    rule: RuleOpt = "MB",
    capacity: Capacity = None,
    minimum: Minimum = None,
    bounds: Bounds = None,
    weights: Weights = None,
    store: Store = None,
    no_cache: NoCache = False,
    max_memory: MaxMemory = None,
    max_seconds: MaxSeconds = None,
    as_json: Json = False,
) -> None:
    """Count the admissible occupancy vectors and the equally likely outcomes.

    configurations: how many occupancy vectors (k1,...,kr) fit the bounds.
    microstates: how many equally likely outcomes there are under the rule
    (MB: assignments of distinguishable balls to urns; BE and FD: the vectors
    themselves); with --weights, the total weight of the vectors (the
    normaliser of the law).  Both are exact, however many digits they have:
    tables round a long value (with its digit count) and write it whole
    below; --json keeps every digit.

    Example:

        $ enumerator count -n 3 -r 2 --rule BE
        $ enumerator count -n 10 -r 4 --capacity 3 --json
        $ enumerator count -n 5 --bounds "0:2,1:,0:3"
        $ enumerator count -n 10 -r 2^64 --rule BE
        $ enumerator count -n 4 --bounds "1000x0:3,2x1:" --rule BE
    """
    with store_scope(store, no_cache), limits_scope(max_memory, max_seconds):
        model = build_model(balls, urns, rule, capacity, minimum, bounds, weights)
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
                ["configurations", configurations],
                ["microstates", microstates],
            ],
        )


@commands.command("prob")
def prob_command(
    balls: Balls,
    config: Annotated[
        Optional[str],
        typer.Option(
            "--config",
            help='The occupancy vector "k1,k2,...,kr": one whole number per urn, summing to n; or, at '
                 'any number of urns, the occupied urns as "URN:COUNT" pairs ("3:2 7:1", urns from 1), '
                 'as sparse listings and samples write them.',
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
    weights: Weights = None,
    limit: EventLimit = None,
    workers: Workers = None,
    cluster: ClusterAddress = None,
    store: Store = None,
    no_cache: NoCache = False,
    max_memory: MaxMemory = None,
    max_seconds: MaxSeconds = None,
    as_json: Json = False,
) -> None:
    """Give the exact probability of one occupancy vector, or of an event, under the rule.

    --config: MB n!/(k1!...kr!) assignments out of all admissible ones; BE and
    FD one vector out of all admissible vectors.  A vector that breaks a bound
    has probability exactly 0; one of the wrong length or sum is an error.
    At any number of urns, --config "URN:COUNT ..." gives the occupied urns
    only (the form of sparse listings and samples; the other urns are empty),
    at a cost in the pairs, never in the urns.

    --event: a statement about the vector built from max, min, empty,
    occupied, k1..kr and count(OP J), compared with == != < <= > >= and joined
    by and, or, not and parentheses.  Give exactly one of --config and --event.
    With --weights, MB urn i receives each ball with probability w_i/sum(w);
    BE/FD vectors are weighted by prod(w_i^k_i).  Event probabilities are
    remembered in the result store under the event's canonical text.

    --workers K / --cluster ADDRESS: an event with no exact shortcut (one
    mixing counting statistics, say) is decided by listing every
    configuration; that listing then runs on a Dask cluster in equal rank
    shards, and the exact per-shard sums are added (the same answer as one
    process; --limit still applies).  The answer is remembered like any
    other, and a remembered one is given without listing.  An event the
    planner counts without listing is answered here; a note on stderr
    (JSON: "note") says which of these happened.

    Example:

        $ enumerator prob -n 3 -r 3 --config 2,0,1
        $ enumerator prob -n 3 -r 3 --config 2,0,1 --rule BE --json
        $ enumerator prob -n 23 -r 365 --event "max <= 1"
        $ enumerator prob -n 10 -r 6 --event "empty >= 2 or k1 == 0" --json
        $ enumerator prob -n 23 --weights "365x4,1" --event "max <= 1"
        $ enumerator prob -n 100000 -r 2^64 --event "max <= 1"
        $ enumerator prob -n 12 -r 9 --event "empty == 3 and count(== 1) == 2" --workers 2
    """
    from ..core.errors import InvalidParameters

    if (config is None) == (event is None):
        raise InvalidParameters(
            'give exactly one of --config (one occupancy vector, e.g. 2,0,1) '
            'or --event (an event, e.g. "max <= 1")'
        )
    with store_scope(store, no_cache), limits_scope(max_memory, max_seconds):
        # Through the facade: event probabilities are remembered under the
        # event's canonical text, and a configuration's normaliser is the
        # remembered microstates (where the law needs one).
        model = build_model(balls, urns, rule, capacity, minimum, bounds, weights)
        on_cluster = _cluster_requested(workers, cluster)
        note = None
        if event is not None and on_cluster:
            probability, note = _event_on_cluster(model, event, _limit(limit), workers, cluster)
            field, text, title = "event", event, f"{describe(model)}; event {event}"
        elif event is not None:
            probability = model.event_probability(event, limit=_limit(limit))
            field, text, title = "event", event, f"{describe(model)}; event {event}"
        else:
            vector = parse_config(config)
            probability = model.probability(vector)
            if isinstance(vector, dict):  # sparse: the pairs in urn order, as sparse listings write them
                text = " ".join(f"{urn}:{count}" for urn, count in sorted(vector.items()))
            else:
                text = ",".join(map(str, vector))
            field, title = "config", f"{describe(model)}; configuration ({text})"
            if on_cluster:
                note = _NO_CLUSTER.format(what="the probability of one vector")
    if note is not None:
        _say(note)
    if as_json:
        payload = {
            "rule": model.rule.value,
            "balls": exact(model.balls),
            "urns": exact(model.urns),
            field: text,
            "probability": exact(probability),
            "approx": approx(probability),
        }
        if note is not None:
            payload["note"] = note
        emit_json(payload)
        return
    show_table(
        title,
        ["quantity", "value"],
        [
            ["probability (exact)", probability],
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


#: The note of --workers/--cluster when the answer needed no listing.
_NO_CLUSTER = "{what} needed no listing, so no cluster: it was computed in this process"
#: The note of --workers/--cluster when the listed answer was already in the store.
_REMEMBERED_CLUSTER = "{what} was remembered in the store, so no cluster: nothing was listed"


def _cluster_requested(workers: Optional[int], cluster: Optional[str]) -> bool:
    """Whether ``--workers`` or ``--cluster`` was given (not both).

    Raises
    ------
    InvalidParameters
        Both were given.
    """
    from ..core.errors import InvalidParameters

    if workers is not None and cluster is not None:
        raise InvalidParameters("give workers= or cluster=, not both", parameters=["workers", "cluster"])
    return workers is not None or cluster is not None


def _say(note: str) -> None:
    """One line on stderr: ``Note: ...``."""
    import sys

    sys.stderr.write(f"Note: {note}.\n")


@contextmanager
def _shard_progress(label: str):
    """A progress bar on stderr (only on a terminal) fed as ``progress(ranks done, ranks in all)``."""
    from rich.console import Console
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeRemainingColumn

    err = Console(stderr=True)
    bar = Progress(TextColumn(label), BarColumn(), MofNCompleteColumn(), TimeRemainingColumn(),
                   console=err, disable=not err.is_terminal, transient=True)
    task = bar.add_task(label, total=None)

    def advance(done: int, total: int) -> None:
        bar.update(task, completed=done, total=total)

    with bar:
        yield advance


def _where(workers, cluster) -> str:
    return f"{workers} local workers" if workers is not None else f"the cluster at {cluster}"


def _event_on_cluster(model, event: str, limit: int, workers, cluster):
    """``(probability, note)`` of ``prob --event`` with ``--workers``/``--cluster``.

    Parameters
    ----------
    model : Occupancy
    event : str
    limit : int
        ``--limit``: the most configurations listed.
    workers, cluster
        The options (one of them given).

    Returns
    -------
    tuple
        The exact probability, and the note printed beside it.

    Notes
    -----
    The event planner is run first without its listing fallback
    (:func:`enumerator.algorithms.events.event_needs_listing`); an event it
    counts by itself goes through the facade (and the store) as without the
    options.  Otherwise the answer comes through the facade with the
    cluster as its computation: a remembered answer is returned with no
    listing, else every configuration is listed on the cluster
    (:func:`enumerator.store.cluster.event_count_distributed`) and the
    answer is remembered like any other.
    """
    from ..algorithms.counting import exact_fraction
    from ..store.cluster import event_count_distributed, event_needs_listing

    if not event_needs_listing(model, event, limit):
        return model.event_probability(event, limit=limit), _NO_CLUSTER.format(what="the event")
    ran = []

    def on_cluster(text: str):
        ran.append(text)
        with _shard_progress("listing configurations on the cluster") as advance:
            count, total = event_count_distributed(model, text, limit=limit, workers=workers, cluster=cluster,
                                                   progress=advance)
        return exact_fraction(count, total)

    probability = model.event_probability(event, limit=limit, compute=on_cluster)
    return probability, _listing_note(model, ran, "the probability of the event", workers, cluster)


def _listing_note(model, ran, what: str, workers, cluster) -> str:
    """The note of a listing answer: listed on the cluster now, or remembered from before."""
    from ..algorithms.counting import count_configurations

    if not ran:
        return _REMEMBERED_CLUSTER.format(what=what)
    return f"listed all {count_configurations(model)} configurations in rank shards on {_where(workers, cluster)}"


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
    weights: Weights = None,
    moments_only: Annotated[
        bool,
        typer.Option(
            "--moments-only",
            help="Print only the exact mean and variance, without the law: for empty, occupied, "
            "exactly:J and atleast:J from binomial moments (sums over urn groups and pairs of "
            "groups), at any number of urns.",
        ),
    ] = False,
    limit: EventLimit = None,
    workers: Workers = None,
    cluster: ClusterAddress = None,
    store: Store = None,
    no_cache: NoCache = False,
    max_memory: MaxMemory = None,
    max_seconds: MaxSeconds = None,
    as_json: Json = False,
) -> None:
    """Give the exact distribution of a statistic: every value's probability, mean, variance.

    The probabilities are exact fractions over the whole support and sum to
    exactly 1.  A profile is written as its parts in decreasing order joined
    by "+", e.g. 3+1+1+0; profiles have no mean or variance (null in JSON).
    --moments-only skips the law and prints the exact mean and variance
    (JSON: statistic, mean, variance, mean_approx, variance_approx); for the
    counting statistics (empty, occupied, exactly:J, atleast:J) the cost
    depends on n and the urn groups, never on the number of urns.

    --workers K / --cluster ADDRESS: a law found by listing every
    configuration (the profile of a weighted model; a counting statistic
    under many differing per-urn bounds) is listed on a Dask cluster in
    equal rank shards, the exact counts per value added over the shards
    (the same law as one process; --limit still applies).  The law is
    remembered like any other, and a remembered one is given without
    listing.  Any other law is computed here; a note on stderr (JSON:
    "note") says which of these happened.

    Example:

        $ enumerator dist -n 10 -r 4 --stat empty
        $ enumerator dist -n 2000 -r 500 --stat max --json
        $ enumerator dist -n 6 -r 3 --rule BE --stat profile
        $ enumerator dist -n 1000000 -r 4294967296 --stat occupied --moments-only --json
        $ enumerator dist -n 9 --weights "1,2,3,4,5,6" --stat profile --workers 2
    """
    with store_scope(store, no_cache), limits_scope(max_memory, max_seconds):
        model = build_model(balls, urns, rule, capacity, minimum, bounds, weights)
        on_cluster = _cluster_requested(workers, cluster)
        if moments_only:
            if on_cluster:
                _say(_NO_CLUSTER.format(what="the mean and variance"))
            _print_moments(model, stat, _limit(limit), as_json)
            return
        note = None
        if on_cluster:
            law, note = _law_on_cluster(model, stat, _limit(limit), workers, cluster)
            _say(note)
        else:
            law = model.distribution(stat, limit=_limit(limit))
        moment = (lambda x: None if x is None else exact(x))
        if as_json:
            payload = {
                "statistic": law.statistic,
                "pmf": {_value_text(v): exact(p) for v, p in law.pmf.items()},
                "mean": moment(law.mean),
                "variance": moment(law.variance),
            }
            if note is not None:
                payload["note"] = note
            emit_json(payload)
            return
        rows = [[_value_text(v), p, f"{approx(p):.6g}"] for v, p in law.pmf.items()]
        show_table(f"{describe(model)}; distribution of {law.statistic}",
                   [law.statistic, "probability (exact)", "approx"], rows)
        if law.mean is not None:
            show_table(
                f"Moments of {law.statistic}",
                ["moment", "exact", "approx"],
                [
                    ["mean", law.mean, f"{approx(law.mean):.6g}"],
                    ["variance", law.variance, f"{approx(law.variance):.6g}"],
                ],
            )


def _law_on_cluster(model, stat: str, limit: int, workers, cluster):
    """``(law, note)`` of ``dist`` with ``--workers``/``--cluster``.

    Parameters
    ----------
    model : Occupancy
    stat : str
        The ``--stat`` value.
    limit : int
        ``--limit``: the most configurations listed.
    workers, cluster
        The options (one of them given).

    Returns
    -------
    tuple
        The :class:`~enumerator.algorithms.statistics.Distribution`, and the
        note printed beside it.

    Notes
    -----
    :func:`enumerator.store.cluster.distribution_needs_listing` tells from
    the model and the statistic alone whether the exact route lists every
    configuration; only then does the cluster list them
    (:func:`enumerator.store.cluster.distribution_distributed`), unless the
    law is remembered in the store; either way it comes through the facade
    and is remembered like any other.  Otherwise the law comes through the
    facade and the store as without the options.
    """
    from ..store.cluster import distribution_distributed, distribution_needs_listing

    if not distribution_needs_listing(model, stat):
        return model.distribution(stat, limit=limit), _NO_CLUSTER.format(what=f"the law of {stat}")
    ran = []

    def on_cluster(name: str):
        ran.append(name)
        with _shard_progress("listing configurations on the cluster") as advance:
            return distribution_distributed(model, name, limit=limit, workers=workers, cluster=cluster,
                                            progress=advance)

    law = model.distribution(stat, limit=limit, compute=on_cluster)
    return law, _listing_note(model, ran, f"the law of {stat}", workers, cluster)


def _moments(model, stat: str, limit: int):
    """The exact mean and variance of *stat* without its law where the library can.

    Parameters
    ----------
    model : Occupancy
    stat : str
        The ``--stat`` value.
    limit : int
        As for the law (statistics read off their law).

    Returns
    -------
    tuple
        ``(statistic name, mean, variance)``, exact.

    Notes
    -----
    :func:`enumerator.algorithms.statistics.statistic_moments` answers every
    model: closed binomial/trinomial moments or binomial moments summed over
    groups and pairs of groups for the counting statistics (cost independent
    of the number of urns), the law for max, min and urn:I.
    """
    from ..algorithms.statistics import statistic_moments

    result = statistic_moments(model, stat, limit)
    return result.statistic, result.mean, result.variance


def _print_moments(model, stat: str, limit: int, as_json: bool) -> None:
    """Print ``dist --moments-only``: the JSON object or a small table."""
    from ..core.errors import InvalidParameters

    name, mean, variance = _moments(model, stat, limit)
    if mean is None:
        raise InvalidParameters(f"statistic {name!r} has no mean or variance; choose a numeric statistic")
    if as_json:
        emit_json(
            {
                "statistic": name,
                "mean": exact(mean),
                "variance": exact(variance),
                "mean_approx": approx(mean),
                "variance_approx": approx(variance),
            }
        )
        return
    show_table(
        f"{describe(model)}; moments of {name}",
        ["moment", "exact", "approx"],
        [
            ["mean", mean, f"{approx(mean):.6g}"],
            ["variance", variance, f"{approx(variance):.6g}"],
        ],
    )


#: Rows per numpy block when listing; large enough to amortise the call.
_BLOCK = 1 << 14
#: About how many cells (rows times urns) one block of a dense listing holds.
_BLOCK_CELLS = 1 << 22
#: Beyond this many urns a listing or sample is written sparsely (a dense row
#: of a million entries is no use to anyone, and 2^64 entries cannot exist).
SPARSE_URNS = 1 << 20
#: Most vectors a sparse listing writes without an explicit range.
_SPARSE_ROWS = 10 ** 6

Sparse = Annotated[
    bool,
    typer.Option(
        "--sparse",
        help="Write each vector sparsely: the occupied urns with their counts (csv: "
        "urn:count pairs; jsonl/--json: \\[urn, count] pairs). Automatic above 1,048,576 urns.",
    ),
]


def _block_rows(urns: int) -> int:
    """Rows per listing block: :data:`_BLOCK`, fewer for many urns (about :data:`_BLOCK_CELLS` cells)."""
    return max(1, min(_BLOCK, _BLOCK_CELLS // max(1, urns)))


@commands.command("list")
def list_command(
    balls: Balls,
    urns: Urns = None,
    rule: RuleOpt = "MB",
    capacity: Capacity = None,
    minimum: Minimum = None,
    bounds: Bounds = None,
    weights: Weights = None,
    limit: Annotated[
        Optional[int],
        whole_option("--limit", name="limit", help="Print at most this many configurations."),
    ] = None,
    start: Annotated[
        int,
        whole_option("--start", name="start", help="First lexicographic rank to print (0-based)."),
    ] = 0,
    stop: Annotated[
        Optional[int],
        whole_option("--stop", name="stop", help="Stop before this rank (default: the end; not before --start)."),
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
    sparse: Sparse = False,
    output_dir: Annotated[
        Optional[str],
        typer.Option(
            "--output-dir",
            metavar="DIR",
            callback=output_folder,
            help="Write the listing to files in DIR instead of stdout, one per shard of the rank "
            "range: ranks-START-STOP.csv (or .jsonl), each with its own header. With --workers/--cluster "
            "the workers write their shards themselves (DIR must be reachable from every worker).",
        ),
    ] = None,
    shards: Annotated[
        Optional[int],
        whole_option("--shards", name="shards", minimum=1, metavar="N",
                     help="With --output-dir: the number of files, equal rank ranges "
                     "(default: 4 per worker on a cluster, else 1)."),
    ] = None,
    workers: ListWorkers = None,
    cluster: ClusterAddress = None,
    max_memory: MaxMemory = None,
    max_seconds: MaxSeconds = None,
    as_json: Json = False,
) -> None:
    """List the admissible occupancy vectors in lexicographic order, streaming.

    Ranks start at 0; --start/--stop select the ranks [start, stop) without
    walking the earlier ones, so a long listing can be split into shards.
    Nothing is held in memory.  With --json the output is one JSON object
    whose "configurations" field is the array of the listed vectors (arrays
    of integers, as in jsonl) and whose "listed" field counts them.  A
    listing planned to take longer than the time limit is refused before
    it starts (list a range instead, or raise --max-seconds).  With --sparse,
    or more than 1,048,576 urns, each vector is written as its occupied urns
    and their counts (csv: rank,occupied with "urn:count" pairs).

    --output-dir DIR writes the listing to files instead, one per equal shard
    of the rank range (--shards N), and prints what it wrote (a table, or
    with --json the fields directory, listed and files: file, start, stop,
    listed).  With --workers K / --cluster ADDRESS the shards are listed and
    written on a Dask cluster, each by one worker; a shard whose worker dies
    is written again by another, and a file is complete whenever it exists.

    Example:

        $ enumerator list -n 3 -r 3 --rule BE
        $ enumerator list -n 20 -r 6 --start 1000 --limit 5 --format jsonl
        $ enumerator list -n 20 -r 8 --output-dir shards --workers 2 --shards 8
        $ enumerator list -n 2 -r 18446744073709551616 --rule FD --limit 3
    """
    # A listing streams and is never remembered: no --store/--no-cache.
    with limits_scope(max_memory, max_seconds):
        model = build_model(balls, urns, rule, capacity, minimum, bounds, weights)
        start = as_count(start, "--start")
        if stop is not None:
            stop = as_count(stop, "--stop")
            if stop < start:
                from ..core.errors import InvalidParameters

                raise InvalidParameters(f"--stop {stop} is before --start {start}: the ranks listed are "
                                        f"[start, stop); give a --stop of at least {start}, or leave it out")
        if start:
            from ..algorithms.counting import count_configurations  # the pure count: no store
            from ..core.errors import InvalidParameters

            total = count_configurations(model)  # kept per model, so the listing's own count is free
            if start > total:
                raise InvalidParameters(f"--start {start} is past the end: the listing has {total} "
                                        f"configurations (ranks 0 to {total - 1}); give a --start of at most {total}"
                                        if total else f"--start {start} is past the end: {model} admits no "
                                        "configuration, so there is nothing to list")
        if limit is not None:
            limit = as_count(limit, "--limit")
            stop = start + limit if stop is None else min(stop, start + limit)
        on_cluster = _cluster_requested(workers, cluster)
        if output_dir is not None:
            _list_to_files(model, output_dir, start, stop, shards, fmt, sparse, workers, cluster, as_json)
            return
        if on_cluster or shards is not None:
            from ..core.errors import InvalidParameters

            raise InvalidParameters("--workers, --cluster and --shards write a listing to files: "
                                    "add --output-dir DIR")
        head = '"rule": "%s", "balls": "%d", "urns": "%d", "start": "%d"' % (
            model.rule.value, model.balls, model.urns, start)
        if sparse or model.urns > SPARSE_URNS:
            rows = _sparse_rows(model, start, stop)
            write_sparse(rows, fmt, head if as_json else None, "listed", "rank", start)
            return
        from ..algorithms.listing import check_listing

        size = _block_rows(model.urns)
        check_listing(model, start, stop)  # the time of the whole range; the blocks are small
        blocks = (block for block in model.iter_blocks(size, start, stop) if len(block))
        write_vectors(blocks, model.urns, fmt, head if as_json else None, "listed")


def _list_to_files(model, directory: str, start: int, stop: Optional[int], shards: Optional[int], fmt,
                   sparse: bool, workers, cluster, as_json: bool) -> None:
    """``list --output-dir``: one file per shard (on the cluster when asked), then what was written.

    Parameters
    ----------
    model : Occupancy
    directory : str
        ``--output-dir``.
    start, stop : int
        The rank range (*stop* None: the end).
    shards : int or None
        ``--shards``.
    fmt : ListFormat
        ``csv`` (a header per file) or ``jsonl``.
    sparse : bool
        ``--sparse``: refused here (files are dense).
    workers, cluster
        The cluster options (at most one given).
    as_json : bool
        Print the summary as one JSON object.

    Raises
    ------
    InvalidParameters
        With --sparse or above 1,048,576 urns.

    Notes
    -----
    :func:`enumerator.store.cluster.listing_to_files`; the whole range's
    time is checked first (:func:`~enumerator.algorithms.listing.check_listing`),
    as for a listing to stdout.
    """
    from ..algorithms.listing import check_listing
    from ..core.errors import InvalidParameters
    from ..store.cluster import listing_to_files
    from .render import format_rows

    if sparse or model.urns > SPARSE_URNS:
        raise InvalidParameters("--output-dir writes dense rows; drop --sparse, or list to stdout with --sparse "
                                f"(automatic above {SPARSE_URNS:,} urns)")
    check_listing(model, start, stop)
    csv = fmt is ListFormat.csv
    header = ",".join(f"k{i}" for i in range(1, model.urns + 1)) + "\n" if csv else None
    formatter = format_rows if csv else _jsonl_rows
    with _shard_progress("writing the listing") as advance:
        files = listing_to_files(model, directory, formatter, extension=fmt.value, header=header, start=start,
                                 stop=stop, shards=shards, block=_block_rows(model.urns), workers=workers,
                                 cluster=cluster, progress=advance)
    listed = sum(f["listed"] for f in files)
    if as_json:
        emit_json({
            "rule": model.rule.value, "balls": exact(model.balls), "urns": exact(model.urns),
            "directory": directory, "listed": exact(listed),
            "files": [{"file": f["file"], "start": exact(f["start"]), "stop": exact(f["stop"]),
                       "listed": exact(f["listed"])} for f in files],
        })
        return
    show_table(f"{describe(model)}; {listed} configurations written to {directory}",
               ["file", "ranks", "listed"],
               [[f["file"], f"{f['start']}..{f['stop'] - 1}", f["listed"]] for f in files])


def _jsonl_rows(block) -> str:
    """A block's rows as JSON arrays, one per line (``list --format jsonl``)."""
    from .render import format_rows

    return format_rows(block, "[", "]\n")


def _sparse_rows(model, start: int, stop: Optional[int]):
    """The vectors of ranks ``[start, stop)`` as occupied urns, after checking the range's size.

    Parameters
    ----------
    model : Occupancy
    start : int
    stop : int or None
        ``None``: the end of the listing.

    Returns
    -------
    iterator of tuple of (int, int)
        :func:`enumerator.algorithms.listing.iter_sparse`: the first rank
        unranked, each next vector its lexicographic successor on the
        occupied urns and groups (never per urn).

    Raises
    ------
    TooLarge
        When the range holds more than :data:`_SPARSE_ROWS` vectors.
    """
    from ..algorithms.counting import count_configurations
    from ..algorithms.listing import iter_sparse
    from ..core.errors import TooLarge

    # The pure count, not the facade's remembered one: a listing never touches the store.
    total = count_configurations(model)
    end = total if stop is None else min(stop, total)
    if end - start > _SPARSE_ROWS:
        raise TooLarge(
            f"a sparse listing of {end - start:,} configurations is beyond {_SPARSE_ROWS:,}; "
            "list a range of ranks (start=, stop=, or limit=)",
            parameters=["start", "stop", "limit"],
        )
    return iter_sparse(model, start, end)
