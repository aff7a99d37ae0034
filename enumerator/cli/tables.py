"""``table ...`` and ``cache ...``: lookup tables and the result store (the work is in :mod:`enumerator.store`)."""

import sys
from enum import Enum
from typing import Annotated, Iterable, Optional

import typer

from ..core.model import as_count
from .options import (
    MODEL_PANEL,
    Capacity,
    Json,
    MaxMemory,
    MaxSeconds,
    Minimum,
    RuleOpt,
    Store,
    cluster_option,
    limits_scope,
    whole_option,
    workers_option,
)
from .render import abbreviate, console, emit_json, exact, plural, show_table

__all__ = ["commands", "grid_range"]

#: The commands of this module, merged into the root application by :mod:`enumerator.cli.app`.
commands = typer.Typer()

table_app = typer.Typer(
    help="Lookup tables: exact counts over a grid of balls x urns, built into the result store.",
    no_args_is_help=True,
)
cache_app = typer.Typer(
    help="Look after the result store: statistics, verification, clearing, export.",
    no_args_is_help=True,
)
commands.add_typer(table_app, name="table")
commands.add_typer(cache_app, name="cache")

#: ``table export --output`` and ``cache export --output``.
OutputFile = Annotated[Optional[str], typer.Option("--output", "-o", help="Write to this file instead of stdout.")]

#: ``table build --workers/--cluster``: the rows are computed on the cluster (in the default help panel).
BuildWorkers = workers_option("Compute the rows on a local Dask cluster of K processes "
                              "(needs Dask: the cluster extra of enumerator).", panel=None)
BuildCluster = cluster_option("Compute the rows on the running Dask scheduler at ADDRESS, e.g. tcp://host:8786.",
                              panel=None)

BallsRange = Annotated[
    str,
    typer.Option("--balls", "-n", metavar="RANGE",
                 help="Balls n of the grid: a range such as 0..200 (both ends included) or one number.",
                 rich_help_panel=MODEL_PANEL),
]
UrnsRange = Annotated[
    str,
    typer.Option("--urns", "-r", metavar="RANGE",
                 help="Urns r of the grid: a range such as 1..50 (both ends included) or one number.",
                 rich_help_panel=MODEL_PANEL),
]
TableName = Annotated[str, typer.Argument(help="The table's name (see 'enumerator table list').")]


def grid_range(text: str, flag: str, minimum: int = 0, capped: bool = True) -> range:
    """Read a range of the grid, ``"0..200"`` (both ends included) or one number, each end as ``--balls`` reads it.

    Parameters
    ----------
    text : str
        ``A..B`` or ``A``; each end in digits or as a power (``1..2^10``).
    flag : str
        The option, for the messages (``--balls``).
    minimum : int
        The least value of the range (1 for urns).
    capped : bool
        Refuse more values than a table holds cells (``table build``); a
        window of ``table show`` is clipped to its table instead.

    Returns
    -------
    range
        ``range(A, B + 1)``.

    Raises
    ------
    InvalidParameters
        A malformed end (the message of
        :func:`enumerator.core.groups.parse_count`, sized before any power
        is expanded), an end below *minimum*, or a range that runs backwards.
    TooLarge
        *capped* and more values than
        :data:`enumerator.store.tables.MAX_CELLS`, so nothing downstream
        meets a range too long to measure.

    Notes
    -----
    Cost: linear in the length of *text*.

    Examples
    --------
    >>> grid_range("0..2^3", "--balls"), grid_range(" 7 ", "--urns")
    (range(0, 9), range(7, 8))
    """
    from ..core.errors import InvalidParameters, TooLarge
    from ..core.groups import parse_count
    from ..store.tables import MAX_CELLS

    parts = str(text).split("..")
    if len(parts) == 1:
        first = last = parse_count(parts[0], flag, minimum)
    elif len(parts) == 2:
        first = parse_count(parts[0], f"the first end of {flag}", minimum)
        last = parse_count(parts[1], f"the last end of {flag}", minimum)
    else:
        raise InvalidParameters(
            f"{flag} must be a range like 0..200 (both ends included) or one whole number (got {str(text)[:40]!r})"
        )
    if last < first:
        raise InvalidParameters(f"{flag} range {str(text).strip()!r} runs backwards; write the smaller end first")
    if capped and last - first + 1 > MAX_CELLS:
        raise TooLarge(f"{flag} {str(text).strip()} spans {last - first + 1:,} values, more than the "
                       f"{MAX_CELLS:,} cells a table holds; choose a shorter range")
    return range(first, last + 1)


class TableFormat(str, Enum):
    """Formats of ``enumerator table export``."""

    csv = "csv"
    json = "json"
    markdown = "markdown"
    latex = "latex"
    parquet = "parquet"


class TableLayout(str, Enum):
    """Layouts of ``enumerator table export``: one line per cell, or the n x r matrix."""

    long = "long"
    wide = "wide"


class EntryFormat(str, Enum):
    """Formats of ``enumerator cache export``."""

    csv = "csv"
    jsonl = "jsonl"


def _open_store(location: Optional[str], create: bool = False):
    """The store named by ``--store``, else the default one.

    Parameters
    ----------
    location : str or None
        A SQLite file path or a database URL.
    create : bool
        Make the store when there is none there: only ``table build`` does.
        Every other command here only reads or removes, so where there is
        no store it sees an empty one and nothing is created (no folder, no
        file, no tables).

    Returns
    -------
    Store

    Raises
    ------
    StoreError
        The store cannot be opened.

    Notes
    -----
    Table and cache commands always work on a store, so ``--no-cache`` has no
    meaning for them.  Cost: opening the store (importing SQLAlchemy on first use).
    """
    from ..store.context import open_store

    return open_store(location, create=create)


def _write_output(lines: Iterable[str], output: Optional[str]) -> int:
    """Write *lines* to the file *output*, or to stdout.

    Parameters
    ----------
    lines : iterable of str
        Each with its own line ending.
    output : str or None
        ``--output``: a file path; ``None`` for stdout.

    Returns
    -------
    int
        How many lines were written.

    Raises
    ------
    StoreError
        The file cannot be written (the message names ``--output``).

    Notes
    -----
    Streams: nothing is held beyond one line.  A file is written under a
    temporary name beside *output* and renamed when whole, so an export that
    fails half way (a damaged cell, an interrupt) leaves no partial file
    under the final name.  Cost: linear in the output.
    """
    import os

    count = 0
    if output is None:
        for line in lines:
            sys.stdout.write(line)
            count += 1
        sys.stdout.flush()
        return count
    partial = f"{output}.partial-{os.getpid()}"
    try:
        try:
            with open(partial, "w", encoding="utf-8", newline="") as handle:
                for line in lines:
                    handle.write(line)
                    count += 1
            os.replace(partial, output)
        except OSError as error:
            from ..core.errors import StoreError

            raise StoreError(f"cannot write {output} ({error.strerror}); choose another --output") from None
    finally:
        if os.path.exists(partial):
            os.remove(partial)
    return count


def _range_text(values: range) -> str:
    """A grid range as the ``START..STOP`` text it was given in (both ends included).

    Parameters
    ----------
    values : range

    Returns
    -------
    str
    """
    return f"{values.start}..{values.stop - 1}"


def _label(spec) -> str:
    """What a table holds, in words true for every rule and quantity.

    E.g. ``MB microstates, at least 1 per urn``, ``FD configurations, at
    most 1 per urn``, ``profiles (urns unlabelled, the same under every
    rule), any number per urn``.

    Parameters
    ----------
    spec : TableSpec

    Returns
    -------
    str
    """
    return f"{spec.what()}, {spec.bounds_words()}"


def _stored_after_interrupt(spec, label: str, target, totals: dict) -> str:
    """How many cells of an interrupted build are stored, counted in the store.

    The rows reported done can under-count: the row being written when
    Ctrl-C came may have been committed, and other builders may have stored
    cells meanwhile.  So the store is asked (one count query); when that
    fails too, the rows reported done give a lower bound ("at least").

    Parameters
    ----------
    spec : TableSpec
    label : str
        The table's name.
    target : Store
    totals : dict
        ``computed`` and ``reused`` of the rows reported done.

    Returns
    -------
    str
    """
    from ..core.errors import EnumeratorError
    from ..store.tables import StoredTable

    try:
        return str(StoredTable(label, spec, target).stored())
    except (EnumeratorError, KeyboardInterrupt):
        return f"at least {totals['computed'] + totals['reused']}"


@table_app.command("build")
def table_build_command(
    balls: BallsRange,
    urns: UrnsRange,
    rule: RuleOpt = "MB",
    capacity: Capacity = None,
    minimum: Minimum = None,
    quantity: Annotated[
        Optional[str],
        typer.Option("--quantity", metavar="NAME",
                     help="microstates (default: the equally likely outcomes; for BE and FD the "
                     "configurations), configurations, or profiles."),
    ] = None,
    name: Annotated[
        Optional[str],
        typer.Option("--name", help="Name of the table (default: made from its definition)."),
    ] = None,
    store: Store = None,
    workers: BuildWorkers = None,
    cluster: BuildCluster = None,
    max_memory: MaxMemory = None,
    max_seconds: MaxSeconds = None,
    as_json: Json = False,
) -> None:
    """Build a lookup table of exact counts over balls x urns into the result store.

    Each row (fixed r, every n) comes from one generating-function pass;
    cells already stored are reused, and every row is saved as soon as it is
    done, so an interrupted build (Ctrl-C) resumes where it stopped when the
    same command is run again.  Several builds may run at once on one store.
    With --workers or --cluster the rows are computed on a Dask cluster in
    batches of about a second each and written here as they arrive; the
    cells are the same as a single-process build's.

    Before any cell is computed the whole build is planned: its time (the
    rows left, each rated by the route it takes, plus the writes; divided
    by the workers with --workers/--cluster), one row's memory and the
    size it adds to the store.  Past --max-seconds or --max-memory (or
    ENUMERATOR_MAX_SECONDS / ENUMERATOR_MAX_MEMORY), or beyond the free
    disk space of a SQLite store's folder, it is refused with what it
    would take.  A table holds at most 5,000,000 cells (the wide export
    keeps 12 bytes a cell in memory); build a larger grid as several tables
    over parts of the urns range.

    Example:

        $ enumerator table build --rule BE --balls 0..200 --urns 1..50
        $ enumerator table build --rule MB --balls 0..100 --urns 1..20 --capacity 4 --name shelves
        $ enumerator table build --rule MB --balls 0..400 --urns 1..100 --capacity 50 --workers 2
    """
    from rich.console import Console
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeRemainingColumn

    from ..store.tables import TableSpec, build_table

    spec = TableSpec.make(rule, grid_range(balls, "--balls"), grid_range(urns, "--urns", 1),
                          capacity=capacity, minimum=minimum, quantity=quantity)
    distributed = workers is not None or cluster is not None
    if distributed:
        # checked before the store is opened: a refused build leaves the store as it was
        if workers is not None and cluster is not None:
            raise typer.BadParameter("give --workers or --cluster, not both")
        from ..store.cluster import build_table_distributed, check_cluster
        from ..store.cluster import plan_table_distributed as build_plan_distributed

        check_cluster(workers=workers, cluster=cluster)
    label = name or spec.default_name()
    probe = _open_store(store)
    if not probe.exists:
        # planned before the store is made: a refused build leaves no file behind
        # (an existing store is planned by the build itself, before it writes)
        from ..store.tables import check_table_plan, plan_table

        with limits_scope(max_memory, max_seconds):
            if distributed:
                plan = build_plan_distributed(spec, probe, name=label, workers=workers, cluster=cluster)
            else:
                plan = plan_table(spec, probe, name=label)
            check_table_plan(plan, probe)
    target = _open_store(store, create=True)
    err = Console(stderr=True)
    progress = Progress(
        TextColumn("[bold]{task.description}"), BarColumn(), MofNCompleteColumn(),
        TextColumn("rows  r={task.fields[urns]}  {task.fields[computed]} computed, "
                   "{task.fields[reused]} reused"),
        TimeRemainingColumn(), console=err, disable=not err.is_terminal, transient=True,
    )
    totals = {"computed": 0, "reused": 0}
    with progress:
        task = progress.add_task(label, total=len(spec.urns), urns=spec.urns.start, computed=0, reused=0)

        def advance(r, computed, reused):
            totals["computed"] += computed
            totals["reused"] += reused
            progress.update(task, advance=1, urns=r, **totals)

        try:
            with limits_scope(max_memory, max_seconds):
                if distributed:
                    report = build_table_distributed(spec, name=name, store=target, workers=workers,
                                                     cluster=cluster, progress=advance)
                else:
                    report = build_table(spec, name=name, store=target, progress=advance)
        except KeyboardInterrupt:
            progress.stop()
            sys.stderr.write(
                f"Interrupted: {_stored_after_interrupt(spec, label, target, totals)} of {spec.cells} "
                f"cells of table {label} are stored; run the same command again to finish "
                "(stored cells are not recomputed).\n"
            )
            raise typer.Exit(130) from None
    if as_json:
        emit_json({
            "name": report.name, "rule": spec.rule, "quantity": spec.quantity,
            "minimum": exact(spec.minimum),
            "capacity": None if spec.capacity is None else exact(spec.capacity),
            "balls": _range_text(spec.balls), "urns": _range_text(spec.urns),
            "cells": exact(spec.cells), "computed": exact(report.computed),
            "reused": exact(report.reused), "stored": exact(report.stored),
            "store": target.name, "read_only": report.read_only,
            "seconds_approx": report.seconds_approx,
        })
        return
    show_table(
        f"Table {report.name}: {_label(spec)}",
        ["", "value"],
        [
            ["balls", _range_text(spec.balls)],
            ["urns", _range_text(spec.urns)],
            ["cells", exact(spec.cells)],
            ["computed now", exact(report.computed)],
            ["found stored", exact(report.reused)],
            ["seconds (approx)", f"{report.seconds_approx:.3g}"],
            ["store", target.name + (" (read-only: nothing saved)" if report.read_only else "")],
        ],
    )


@table_app.command("list")
def table_list_command(store: Store = None, as_json: Json = False) -> None:
    """List the lookup tables in the store, with how many of their cells are built.

    Example:

        $ enumerator table list
        $ enumerator table list --json
    """
    from ..store.tables import list_tables

    target = _open_store(store)
    found = list_tables(store=target)
    if as_json:
        emit_json({
            "store": target.name,
            "tables": [
                {"name": name, "rule": spec.rule, "quantity": spec.quantity,
                 "minimum": exact(spec.minimum),
                 "capacity": None if spec.capacity is None else exact(spec.capacity),
                 "balls": _range_text(spec.balls), "urns": _range_text(spec.urns),
                 "cells": exact(spec.cells), "stored": exact(stored)}
                for name, spec, stored in found
            ],
        })
        return
    if not found:
        sys.stdout.write(f"No tables in {target.name} yet; build one with 'enumerator table build'.\n")
        return
    # one line per table, so a long name is never cut or folded
    lines = [f"Lookup tables in {target.name}:"]
    for name, spec, stored in found:
        lines.append(
            f"  {name}: {_label(spec)}, balls "
            f"{_range_text(spec.balls)} x urns {_range_text(spec.urns)}, {stored}/{spec.cells} cells built"
        )
    sys.stdout.write("\n".join(lines) + "\n")


@table_app.command("show")
def table_show_command(
    name: TableName,
    balls: Annotated[
        Optional[str],
        typer.Option("--balls", "-n", metavar="RANGE", help="Rows to show (default: the first 20)."),
    ] = None,
    urns: Annotated[
        Optional[str],
        typer.Option("--urns", "-r", metavar="RANGE", help="Columns to show (default: as many as fit, up to 8)."),
    ] = None,
    store: Store = None,
    as_json: Json = False,
) -> None:
    """Show a lookup table: its definition and a window of its cells (n down, r across).

    Only the window's cells are read from the store, so a window of a huge
    table shows at once.  Long values are shortened to head…tail with their
    digit count; 'table export' and --json give every value in full.

    Example:

        $ enumerator table show BE-configurations-n0..200-r1..50 --balls 0..10 --urns 1..5
    """
    from ..store.tables import load_table, open_table

    target = _open_store(store)
    spec = open_table(name, store=target).spec
    rows = grid_range(balls, "--balls", capped=False) if balls else range(spec.balls.start, min(spec.balls.stop, spec.balls.start + 20))
    fit = max(1, min(8, (console().width - 10) // 13))  # value columns that fit the terminal
    cols = grid_range(urns, "--urns", 1, capped=False) if urns else range(spec.urns.start, min(spec.urns.stop, spec.urns.start + fit))
    windows = []
    clipped = []
    for window, full, flag in ((rows, spec.balls, "--balls"), (cols, spec.urns, "--urns")):
        inside = range(max(window.start, full.start), min(window.stop, full.stop))
        if not inside:
            from ..core.errors import InvalidParameters

            raise InvalidParameters(f"{flag} {_range_text(window)} is outside the table, which covers "
                                    f"{flag.lstrip('-')} {_range_text(full)}; choose a window inside it")
        windows.append(inside)  # the part of the window the table covers
        if inside != window:
            clipped.append(f"{flag} {_range_text(window)} reaches past the table; shown: {_range_text(inside)}")
    rows, cols = windows
    # only the window is read (WHERE on n and r), plus one count of the whole table
    data = load_table(name, store=target, balls=rows, urns=cols)
    if as_json:
        emit_json({
            "name": name, "rule": spec.rule, "quantity": spec.quantity,
            "minimum": exact(spec.minimum),
            "capacity": None if spec.capacity is None else exact(spec.capacity),
            "balls": _range_text(spec.balls), "urns": _range_text(spec.urns),
            "missing": exact(data.missing),
            "cells": [
                {"balls": exact(n), "urns": exact(r), "value": data.cells[(n, r)][0],
                 "digits": exact(data.cells[(n, r)][1])}
                for r in cols for n in rows if (n, r) in data.cells
            ],
        })
        return
    show_table(
        f"{name}: {_label(spec)}; balls "
        f"{_range_text(spec.balls)} x urns {_range_text(spec.urns)}, "
        f"{spec.cells - data.missing}/{spec.cells} cells built",
        ["n \\ r"] + [str(r) for r in cols],
        [
            [str(n)] + [abbreviate(data.cells[(n, r)][0]) if (n, r) in data.cells else "·" for r in cols]
            for n in rows
        ],
    )
    if any(len(data.cells[(n, r)][0]) > 10 for r in cols for n in rows if (n, r) in data.cells):
        sys.stdout.write("ab…[d]: a value of d digits that starts with ab; 'table export' gives them in full.\n")
    if data.missing:
        sys.stdout.write("· not built yet; run 'enumerator table build' with the same grid to finish.\n")
    for line in clipped:
        sys.stdout.write(line + ".\n")


@table_app.command("export")
def table_export_command(
    name: TableName,
    fmt: Annotated[
        TableFormat,
        typer.Option("--format", case_sensitive=False,
                     help="csv, json, markdown, latex, or parquet (needs pyarrow and --output; "
                     "exact values as text, approximate doubles beside them)."),
    ] = TableFormat.csv,
    layout: Annotated[
        TableLayout,
        typer.Option("--layout", case_sensitive=False,
                     help="long: one line per cell with n, r, the exact value and its number of "
                     "digits; wide: the n x r matrix, one line per n and one column per r."),
    ] = TableLayout.long,
    output: OutputFile = None,
    store: Store = None,
) -> None:
    """Export a lookup table with every value exact and in full.

    The cells are read from the store in bounded batches and written as
    they come, so memory stays small whatever the table's size.  Cells not
    built yet are left out (long) or left empty (wide), with a note.

    Example:

        $ enumerator table export BE-configurations-n0..200-r1..50 --format csv > be.csv
        $ enumerator table export shelves --layout wide --format csv --output shelves.csv
        $ enumerator table export shelves --format parquet --output shelves.parquet
        $ enumerator table export shelves --format latex --output shelves.tex
    """
    from ..store.tables import export_lines, export_parquet, open_table

    table = open_table(name, store=_open_store(store))
    if fmt is TableFormat.parquet:
        if output is None:
            raise typer.BadParameter("Parquet is a binary format; give --output FILE.parquet", param_hint="--output")
        try:
            export_parquet(table, output, layout.value)
        except OSError as error:
            from ..core.errors import StoreError

            raise StoreError(f"cannot write {output} ({error.strerror or error}); choose another --output") from None
    else:
        _write_output(export_lines(table, fmt.value, layout.value), output)
    missing = table.spec.cells - table.stored()
    if missing:
        sys.stderr.write(
            f"Note: {missing} of {table.spec.cells} cells of {name} are not built yet and are "
            f"{'left empty' if layout is TableLayout.wide else 'left out'}; run 'enumerator table build' "
            "with the same grid to finish.\n"
        )


@table_app.command("drop")
def table_drop_command(name: TableName, store: Store = None) -> None:
    """Forget a table's definition (its cells stay in the store for other lookups).

    Example:

        $ enumerator table drop shelves
    """
    from ..core.errors import InvalidParameters

    target = _open_store(store)
    if not target.delete_table(name):
        raise InvalidParameters(f"no table named {name!r} in {target.name}; see 'enumerator table list'")
    sys.stdout.write(f"Dropped table {name} (its cells stay in the store).\n")


@cache_app.command("stats")
def cache_stats_command(store: Store = None, as_json: Json = False) -> None:
    """Show what the result store holds: entries by quantity and rule, sizes, time saved.

    Example:

        $ enumerator cache stats
        $ enumerator cache stats --store /data/shared.sqlite --json
    """
    target = _open_store(store)
    stats = target.stats()
    if as_json:
        emit_json({
            "store": stats["store"], "read_only": stats["read_only"],
            "schema_version": exact(stats["schema_version"]),
            "entries": exact(stats["entries"]), "stale": exact(stats["stale"]),
            "tables": exact(stats["tables"]),
            "by_quantity": {q: {rule: exact(c) for rule, c in by.items()} for q, by in stats["by_quantity"].items()},
            "largest_digits": exact(stats["largest_digits"]), "total_digits": exact(stats["total_digits"]),
            "compute_seconds_approx": stats["compute_ns"] / 1e9,
            "file_bytes": exact(stats["file_bytes"]) if "file_bytes" in stats else None,
        })
        return
    rows = [["store", stats["store"] + (" (read-only)" if stats["read_only"] else "")],
            ["entries", exact(stats["entries"])]]
    for quantity, by in sorted(stats["by_quantity"].items()):
        rows.append([f"  {quantity}", ", ".join(f"{rule} {count}" for rule, count in sorted(by.items()))])
    rows += [
        ["superseded versions", exact(stats["stale"])],
        ["lookup tables", exact(stats["tables"])],
        ["largest value (digits)", exact(stats["largest_digits"])],
        ["all values (digits)", exact(stats["total_digits"])],
        ["compute time kept (s, approx)", f"{stats['compute_ns'] / 1e9:.3g}"],
    ]
    if "file_bytes" in stats:
        rows.append(["file size (bytes)", exact(stats["file_bytes"])])
    show_table("Result store", ["", "value"], rows)


@cache_app.command("verify")
def cache_verify_command(
    sample: Annotated[
        int, whole_option("--sample", name="sample", help="Recompute this many entries, drawn at random."),
    ] = 200,
    verify_all: Annotated[bool, typer.Option("--all", help="Recompute every entry.")] = False,
    seed: Annotated[Optional[int], whole_option("--seed", name="seed", help="Seed of the random sample.")] = None,
    fix: Annotated[bool, typer.Option("--fix", help="Replace every wrong or damaged entry by the recomputed value.")] = False,
    store: Store = None,
    max_memory: MaxMemory = None,
    max_seconds: MaxSeconds = None,
    as_json: Json = False,
) -> None:
    """Recompute stored values (a sample, or --all) and report every damaged or wrong entry.

    Every kind of damage is reported: a value that does not read or fails its
    checksum, a wrong value, a key, parameter text or time that does not read,
    a row filed under a wrong digest, a row of a quantity nothing stores.
    --fix recomputes each one in place, or removes it when nothing can be
    recomputed (the store only holds a cache; the next command that needs it
    computes it again).  The sample is drawn in the database and --all reads
    in batches, so a large store needs little memory.  Exit code 0 when every
    stored value is right (or was fixed), 1 when a wrong or damaged value
    remains; a row whose only damage is its time, or that nothing reads, is
    listed but gives no wrong answer.

    Example:

        $ enumerator cache verify --sample 500 --seed 7
        $ enumerator cache verify --all --fix
    """
    from ..facade import register_recomputers

    # every quantity a command stores can then be recomputed, and so repaired by --fix
    register_recomputers()
    from rich.console import Console
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeRemainingColumn

    target = _open_store(store)
    err = Console(stderr=True)
    progress = Progress(TextColumn("[bold]verify"), BarColumn(), MofNCompleteColumn(), TimeRemainingColumn(),
                        console=err, disable=not err.is_terminal, transient=True)
    with progress, limits_scope(max_memory, max_seconds):
        task = progress.add_task("verify", total=None)
        report = target.verify(sample=None if verify_all else as_count(sample, "--sample"), seed=seed, fix=fix,
                               progress=lambda done, total: progress.update(task, completed=done, total=total))
    mismatches = report["mismatches"]
    if as_json:
        emit_json({
            "store": target.name, "checked": exact(report["checked"]), "skipped": exact(report["skipped"]),
            "fixed": exact(report["fixed"]),
            "mismatches": [
                {"quantity": m["quantity"], "rule": m["rule"], "balls": exact(m["balls"]),
                 "bounds": m["bounds"], "params": m["params"], "version": exact(m["version"]),
                 "problem": m["problem"], "stored": m["stored"], "expected": m["expected"]}
                for m in mismatches
            ],
        })
    else:
        for m in mismatches:
            recomputed = (f"recomputed {abbreviate(m['expected'], 40)}" if m["expected"]
                          else "nothing to recompute (--fix removes it)")
            sys.stdout.write(
                f"MISMATCH {m['quantity']} {m['rule']} n={m['balls']} bounds {m['bounds']}"
                f"{' ' + m['params'] if m['params'] else ''} v{m['version']}: damaged entry, {m['problem']}; "
                f"stored {abbreviate(m['stored'], 40)}, {recomputed}\n"
            )
        left = len(mismatches) - report["fixed"]
        sys.stdout.write(
            f"Checked {report['checked']} entries of {target.name}: {len(mismatches)} damaged or wrong"
            + (f", {report['fixed']} fixed" if fix else "")
            + (f"; {report['skipped']} skipped (superseded version, no recomputer, or too large to "
               "recompute)" if report["skipped"] else "")
            + ".\n"
        )
        if left > 0:
            sys.stdout.write(
                "Repair them with 'enumerator cache verify --fix --all"
                + (f" --store {target.name}" if store else "")
                + "': each is recomputed, or removed when nothing can be (the store only holds a cache).\n"
                if not target.read_only else
                f"The store {target.name} is read-only, so they stay; ask its owner to run "
                "'enumerator cache verify --fix --all' on it.\n"
            )
    harmful = [m for m in mismatches if not m.get("harmless")]
    if harmful and report["fixed"] < len(mismatches):
        raise typer.Exit(1)


def _check_quantity(target, quantity: str) -> None:
    """Refuse a ``--quantity`` that no command stores and this store does not hold (a typo removes nothing).

    Cost: a dict lookup for a quantity a command stores, else one indexed
    seek; the stored names are listed (one seek each) only for the refusal.
    """
    from ..core.errors import InvalidParameters
    from ..facade import register_recomputers
    from ..store.keys import ALGORITHM_VERSIONS

    register_recomputers()
    if quantity in ALGORITHM_VERSIONS or target.holds_quantity(quantity):
        return
    # a refusal: only now are the stored names read (one index seek each)
    known = set(ALGORITHM_VERSIONS) | set(target.stored_quantities())
    raise InvalidParameters(f"no quantity {quantity!r} is stored by any command; choose one of "
                            f"{', '.join(sorted(known))}")


@cache_app.command("clear")
def cache_clear_command(
    stale: Annotated[bool, typer.Option("--stale", help="Only entries of superseded algorithm versions.")] = False,
    quantity: Annotated[Optional[str], typer.Option("--quantity", help="Only this quantity.")] = None,
    yes: Annotated[bool, typer.Option("--yes", "-y", help="Do not ask for confirmation.")] = False,
    store: Store = None,
    as_json: Json = False,
) -> None:
    """Delete stored results (all, one quantity, or only superseded versions).

    Clearing everything also forgets the lookup-table definitions.  Asks
    first unless --yes (or --stale, which only drops values no longer served).

    Example:

        $ enumerator cache clear --stale
        $ enumerator cache clear --quantity profiles --yes
    """
    target = _open_store(store)
    if quantity is not None:
        _check_quantity(target, quantity)
    if not (yes or stale):
        what = f"every {quantity} entry" if quantity else "every stored result and table definition"
        if not sys.stdin.isatty():
            from ..core.errors import InvalidParameters

            raise InvalidParameters(f"this would delete {what} in {target.name}; add --yes to confirm")
        typer.confirm(f"Delete {what} in {target.name}?", abort=True)
    removed = target.clear(quantity=quantity, stale_only=stale)
    if as_json:
        emit_json({"store": target.name, "removed": exact(removed)})
        return
    sys.stdout.write(f"Removed {plural(removed, 'entry')} from {target.name}.\n")


@cache_app.command("export")
def cache_export_command(
    fmt: Annotated[
        EntryFormat,
        typer.Option("--format", case_sensitive=False,
                     help="csv (with a header) or jsonl (one JSON object a line); exact values in full."),
    ] = EntryFormat.jsonl,
    output: OutputFile = None,
    store: Store = None,
) -> None:
    """Export every stored result with its key, exact value, digits, method and time.

    Example:

        $ enumerator cache export --format csv --output results.csv
        $ enumerator cache export | head -3
    """
    target = _open_store(store)
    count = _write_output(target.export_lines(fmt.value), output)
    if output is not None:
        sys.stdout.write(f"Wrote {count} lines to {output}.\n")

