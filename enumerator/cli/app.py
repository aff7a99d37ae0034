"""The ``enumerator`` command line: a thin typer layer over the library.

Every command parses its options into an :class:`~enumerator.model.Occupancy`
(:func:`build_model`), calls one or two library functions and prints the answer
either as rich tables for people or, with ``--json``, as one JSON object for
programs (:func:`emit_json`).  No counting happens here.

Layout, for whoever adds a command:

1. shared options, defined once as ``Annotated`` aliases (``Balls``, ``Urns``,
   ``RuleOpt``, ``Capacity``, ``Minimum``, ``Bounds``, ``Store``, ``NoCache``,
   ``Json``) — reuse them so every command spells its options the same way;
2. helpers: :func:`build_model` (options -> model), :func:`store_scope`
   (``--store``/``--no-cache`` -> the result store used inside the block),
   :func:`exact` and :func:`emit_json` (the JSON encoding), :func:`show_table`
   (rich tables that never cut a long number), :func:`parse_config`,
   :func:`format_rows` (fast CSV/JSON rows from numpy blocks);
3. the commands, one function each; the docstring is the ``--help`` text
   (one line, then an Example block);
4. the error wrapper, ``_Group.main``, which turns every failure into one
   line on stderr: exit 2 for bad input (any
   :class:`~enumerator.errors.EnumeratorError`, any usage error), exit 1 for
   an internal failure (traceback only with ``ENUMERATOR_DEBUG=1``).

JSON encoding (DESIGN.md): exact integers are strings of decimal digits,
exact rationals are ``str(Fraction)`` (``"p/q"`` in lowest terms, ``"p"`` when
``q = 1``), floats appear only in fields named ``approx``/``float``.
"""

from __future__ import annotations

import json
import os
import re
import sys
import traceback
from contextlib import contextmanager
from enum import Enum
from fractions import Fraction
from typing import Annotated, Iterable, Optional, Sequence

import numpy as np
import typer
from rich.console import Console
from rich.table import Table
from typer.core import TyperGroup

try:  # recent typer releases vendor click as typer._click
    from typer._click.exceptions import ClickException, NoArgsIsHelpError
except ImportError:  # pragma: no cover - older typer on top of click
    from click.exceptions import ClickException, NoArgsIsHelpError

from ..core.errors import EnumeratorError, InvalidConfiguration
from ..core.model import as_count
from ..core.rules import Rule
from ..facade import Occupancy

__all__ = ["app", "build_model", "emit_json", "exact", "format_rows", "main", "show_table", "store_scope"]

#: A value column narrower than this still gets the value in the table.
NARROW = 12


# --------------------------------------------------------------------------
# The error wrapper
# --------------------------------------------------------------------------
class _Group(TyperGroup):
    """The application's command group: one place that handles every failure."""

    def main(self, args=None, prog_name=None, complete_var=None, standalone_mode=True, **extra):
        # Counts of 100,000+ digits must print in full (and big ranks parse).
        sys.set_int_max_str_digits(0)
        try:
            result = super().main(
                args=args, prog_name=prog_name, complete_var=complete_var,
                standalone_mode=False, **extra,
            )
        except EnumeratorError as error:
            _fail(f"Error: {error}", 2)
        except NoArgsIsHelpError as error:
            error.show()
            sys.exit(error.exit_code)
        except ClickException as error:
            hint = ""
            ctx = getattr(error, "ctx", None)
            if ctx is not None:
                hint = f" Try '{ctx.command_path} --help'."
            message = error.format_message().strip()
            if message and message[-1] not in ".?!":
                message += "."
            _fail(f"Error: {message}{hint}", error.exit_code)
        except BrokenPipeError:
            # The reader stopped early (``enumerator list | head``): not a failure.
            _silence_stdout()
            sys.exit(0)
        except KeyboardInterrupt:
            _fail("Interrupted.", 130)
        except Exception as error:  # noqa: BLE001 - the last line of defence
            if os.environ.get("ENUMERATOR_DEBUG", "").strip() not in ("", "0"):
                traceback.print_exc()
            _fail(
                f"Internal error: {type(error).__name__}: {error} "
                "(this is a bug; set ENUMERATOR_DEBUG=1 for a traceback)",
                1,
            )
        sys.exit(result if isinstance(result, int) else 0)

    def invoke(self, ctx):
        try:
            return super().invoke(ctx)
        except BrokenPipeError:
            # The reader stopped early (``enumerator list | head``): not a failure.
            # Caught here, before click's own EPIPE handler turns it into exit 1.
            _silence_stdout()
            raise typer.Exit(0) from None


def _fail(message: str, code: int) -> None:
    """Write *message* as one line on stderr and exit with *code*."""
    line = " ".join(str(message).split())
    try:
        sys.stdout.flush()
    except (BrokenPipeError, ValueError):
        _silence_stdout()
    sys.stderr.write(line + "\n")
    sys.stderr.flush()
    sys.exit(code)


def _silence_stdout() -> None:
    """Point stdout at /dev/null so the interpreter's final flush cannot fail."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError, AttributeError):
        pass


app = typer.Typer(
    cls=_Group,
    name="enumerator",
    help=(
        "Exact counts, probabilities and listings for n balls placed in r labelled urns.\n\n"
        "Rules: MB (Maxwell–Boltzmann) distinguishable balls, every assignment of balls "
        "to urns equally likely; BE (Bose–Einstein) identical balls, every occupancy "
        "vector equally likely; FD (Fermi–Dirac) identical balls, at most one per urn, "
        "every occupancy vector equally likely.\n\n"
        "Add --json to any command for one JSON object (exact numbers as strings)."
    ),
    add_completion=False,
    no_args_is_help=True,
    pretty_exceptions_enable=False,
    context_settings={"help_option_names": ["-h", "--help"]},
)


def main(argv: Optional[Sequence[str]] = None) -> None:
    """Run the command line tool (the ``enumerator`` console script)."""
    typer.main.get_command(app).main(args=argv)


# --------------------------------------------------------------------------
# Shared options (define once, reuse everywhere)
# --------------------------------------------------------------------------
_MODEL = "Model"
_OUTPUT = "Store and output"

Balls = Annotated[
    int,
    typer.Option(
        "--balls", "-n",
        help="Number of balls n (particles, keys, items), a whole number >= 0.",
        rich_help_panel=_MODEL,
    ),
]
Urns = Annotated[
    Optional[int],
    typer.Option(
        "--urns", "-r",
        help="Number of labelled urns r (states, sites, bins), >= 1. "
        "May be left out when --bounds gives one bound per urn.",
        rich_help_panel=_MODEL,
    ),
]
RuleOpt = Annotated[
    str,
    typer.Option(
        "--rule",
        metavar="MB|BE|FD",
        help="Counting rule. MB: distinguishable balls, each assignment of balls to urns "
        "equally likely. BE: identical balls, each occupancy vector equally likely. "
        "FD: identical balls, at most one per urn, each occupancy vector equally likely. "
        "Any case.",
        rich_help_panel=_MODEL,
    ),
]
Capacity = Annotated[
    Optional[int],
    typer.Option(
        "--capacity",
        help="Uniform upper bound: at most this many balls in every urn (FD: at most 1).",
        rich_help_panel=_MODEL,
    ),
]
Minimum = Annotated[
    Optional[int],
    typer.Option(
        "--minimum",
        help="Uniform lower bound: at least this many balls in every urn (default 0).",
        rich_help_panel=_MODEL,
    ),
]
Bounds = Annotated[
    Optional[str],
    typer.Option(
        "--bounds",
        help='Per-urn bounds "a:b,a:b,..." (lower:upper for each urn in turn; "a:" means '
        "no upper bound). Use instead of --capacity/--minimum.",
        rich_help_panel=_MODEL,
    ),
]
Store = Annotated[
    Optional[str],
    typer.Option(
        "--store",
        metavar="PATH-OR-URL",
        help="Result store to remember results in: a SQLite file path or a database URL "
        "(default: $ENUMERATOR_STORE, else store/ in a source checkout, else the user cache).",
        rich_help_panel=_OUTPUT,
    ),
]
NoCache = Annotated[
    bool,
    typer.Option(
        "--no-cache",
        help="Compute afresh; neither read nor write the result store (wins over --store).",
        rich_help_panel=_OUTPUT,
    ),
]
Json = Annotated[
    bool,
    typer.Option(
        "--json",
        help="Print one JSON object: exact integers as decimal strings, rationals as "
        '"p/q", floats only in fields named approx.',
        rich_help_panel=_OUTPUT,
    ),
]


EventLimit = Annotated[
    Optional[int],
    typer.Option(
        "--limit",
        help="dist/prob: the most configurations (or profiles) handled one by one when no exact "
        "shortcut applies; above it the command stops with an error (default 1000000).",
        rich_help_panel=_OUTPUT,
    ),
]


class ListFormat(str, Enum):
    """Row formats of ``enumerator list``."""

    csv = "csv"
    jsonl = "jsonl"


# --------------------------------------------------------------------------
# Helpers
# --------------------------------------------------------------------------
def build_model(
    balls: int,
    urns: Optional[int] = None,
    rule: "Rule | str" = Rule.MB,
    capacity: Optional[int] = None,
    minimum: Optional[int] = None,
    bounds: Optional[str] = None,
) -> Occupancy:
    """Return the :class:`Occupancy` described by the shared model options.

    Validation is the model's: malformed input raises
    :class:`~enumerator.errors.InvalidParameters`, which the error wrapper
    prints as one line with exit code 2.
    """
    return Occupancy(
        balls=balls,
        urns=urns,
        rule=rule,
        capacity=capacity,
        minimum=minimum,
        bounds=bounds,
    )


@contextmanager
def store_scope(location: Optional[str], no_cache: bool):
    """Run the block against the result store chosen by ``--store`` / ``--no-cache``.

    ``--no-cache`` computes everything afresh and stores nothing (it wins over
    ``--store``); ``--store PATH-OR-URL`` remembers results there; neither
    leaves the store's own default (``ENUMERATOR_STORE``, else the checkout's
    ``store/`` folder, else the user cache directory; see
    :mod:`enumerator.store`).
    """
    from .. import store as results

    if no_cache:
        with results.bypass():
            yield
    elif location is not None:
        with results.using(location):
            yield
    else:
        yield


def exact(value) -> str:
    """Encode an exact ``int`` or ``Fraction`` for JSON (decimal / ``p/q`` string), any size."""
    from ..core.exact import exact_text

    return exact_text(value)


def emit_json(payload: dict) -> None:
    """Print *payload* as one JSON object on one line of stdout."""
    sys.stdout.write(json.dumps(payload, ensure_ascii=False) + "\n")
    sys.stdout.flush()


def _console() -> Console:
    # Built per call so that a redirected sys.stdout (tests, pipes) is honoured.
    return Console(file=sys.stdout, highlight=False, soft_wrap=False)


def show_table(title: str, columns: Sequence[str], rows: Iterable[Sequence[str]]) -> None:
    """Print a rich table; values too wide for it follow the table in full.

    A rich table folds long cells, which would cut a 100,000-digit count into
    pieces; such a cell gives its length instead and the value is then written
    on a line of its own, unbroken, as ``<row> = <value>`` (two columns) or
    ``<row>, <column> = <value>``.  The width each value column may use is
    what the terminal leaves after the first column, shared equally.
    """
    rows = [list(row) for row in rows]
    console = _console()
    first = max([len(columns[0])] + [len(row[0]) for row in rows])
    share = (console.width - first - 3 * len(columns) - 1) // max(1, len(columns) - 1)
    share = max(share, NARROW)
    table = Table()
    for i, name in enumerate(columns):
        table.add_column(name, justify="left" if i == 0 else "right", overflow="fold")
    spill = []
    for row in rows:
        cells = [row[0]]
        for i, cell in enumerate(row[1:], start=1):
            if len(cell) <= share:
                cells.append(cell)
                continue
            label = row[0] if len(columns) == 2 else f"{row[0]}, {columns[i]}"
            spill.append((label, cell))
            unit = "digits" if cell.isdigit() else "characters"
            note = f"{len(cell):,} {unit}, see below"
            cells.append(note if len(note) <= share else "see below")
        table.add_row(*cells)
    console.print(title, style="bold")
    console.print(table)
    for label, cell in spill:
        sys.stdout.write(f"{label} = {cell}\n")
    sys.stdout.flush()


_WHOLE = re.compile(r"[+-]?\d+")


def parse_config(text: str) -> tuple:
    """Parse ``"2,0,1"`` into a tuple of ints (length, sum and signs are the model's to check)."""
    items = text.split(",")
    values = []
    for position, item in enumerate(items, start=1):
        item = item.strip()
        if not _WHOLE.fullmatch(item):
            raise InvalidConfiguration(
                f"config entry {position} ({item!r}) is not a whole number; "
                'write one occupancy per urn separated by commas, e.g. --config 2,0,1'
            )
        values.append(int(item))
    return tuple(values)


def _approx(value: Fraction) -> float:
    # Fraction.__float__ divides the exact integers, correctly rounded.
    return float(value)


def _describe(model: Occupancy) -> str:
    """One line naming the model for the title of a table."""
    text = f"{model.rule.title} ({model.rule.value}): {model.balls} balls in {model.urns} urns"
    if not model.is_uniform:
        return text + ", bounds " + model.canonical_bounds()
    low, high = model.bounds[0]
    limits = []
    if low:
        limits.append(f"at least {low}")
    if high is not None and not (model.rule is Rule.FD and high == 1):
        limits.append(f"at most {high}")
    if limits:
        text += ", " + " and ".join(limits) + " per urn"
    return text


# --------------------------------------------------------------------------
# Commands
# --------------------------------------------------------------------------
@app.command("count")
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
            _describe(model),
            ["quantity", "exact value"],
            [
                ["configurations", exact(configurations)],
                ["microstates", exact(microstates)],
            ],
        )


@app.command("prob")
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
    store: Store = None,
    no_cache: NoCache = False,
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
    with store_scope(store, no_cache):
        model = build_model(balls, urns, rule, capacity, minimum, bounds)
        if event is not None:
            from ..algorithms.events import event_probability

            probability = event_probability(model, event, limit=_limit(limit))
            field, text, title = "event", event, f"{_describe(model)}; event {event}"
        else:
            vector = parse_config(config)
            probability = model.probability(vector)
            text = ",".join(map(str, vector))
            field, title = "config", f"{_describe(model)}; configuration ({text})"
        if as_json:
            emit_json(
                {
                    "rule": model.rule.value,
                    "balls": exact(model.balls),
                    "urns": exact(model.urns),
                    field: text,
                    "probability": exact(probability),
                    "approx": _approx(probability),
                }
            )
            return
        show_table(
            title,
            ["quantity", "value"],
            [
                ["probability (exact)", exact(probability)],
                ["probability (approx)", f"{_approx(probability):.6g}"],
            ],
        )


def _limit(limit: Optional[int]) -> int:
    """The ``--limit`` of dist/prob, or the library default."""
    from ..algorithms.statistics import DEFAULT_LIMIT

    return DEFAULT_LIMIT if limit is None else as_count(limit, "--limit", 1)


def _value_text(value) -> str:
    """A statistic's value as a JSON key: decimal digits, or a profile's parts joined by '+'."""
    if isinstance(value, tuple):
        return "+".join(map(str, value))
    return str(value)


@app.command("dist")
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
        rows = [[_value_text(v), exact(p), f"{_approx(p):.6g}"] for v, p in law.pmf.items()]
        show_table(f"{_describe(model)}; distribution of {law.statistic}",
                   [law.statistic, "probability (exact)", "approx"], rows)
        if law.mean is not None:
            show_table(
                f"Moments of {law.statistic}",
                ["moment", "exact", "approx"],
                [
                    ["mean", exact(law.mean), f"{_approx(law.mean):.6g}"],
                    ["variance", exact(law.variance), f"{_approx(law.variance):.6g}"],
                ],
            )


#: Rows per numpy block when listing; large enough to amortise the call.
_BLOCK = 1 << 14


@app.command("list")
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
    store: Store = None,
    no_cache: NoCache = False,
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
    with store_scope(store, no_cache):
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


def write_vectors(blocks, urns: int, fmt, json_head: Optional[str], count_field: str) -> None:
    """Stream blocks of occupancy vectors to stdout as csv, jsonl, or one JSON object.

    With *json_head* (the object's leading fields, already encoded) the
    vectors go under ``"configurations"`` and their number under
    *count_field*; otherwise csv (header ``k1,...,kr``) or jsonl per *fmt*.
    """
    out = sys.stdout
    if json_head is not None:
        out.write("{" + json_head + ', "configurations": [')
        written = 0
        for block in blocks:
            # Rows "[k1,...,kr]," with the last comma dropped; one more comma between blocks.
            out.write(("," if written else "") + format_rows(block, "[", "],")[:-1])
            written += len(block)
        out.write('], "%s": "%d"}\n' % (count_field, written))
    elif fmt is ListFormat.csv:
        out.write(",".join(f"k{i}" for i in range(1, urns + 1)) + "\n")
        for block in blocks:
            out.write(format_rows(block))
    else:
        for block in blocks:
            out.write(format_rows(block, "[", "]\n"))
    out.flush()


def format_rows(block, prefix: str = "", suffix: str = "\n") -> str:
    """Write each row of a block of occupancies as ``prefix k1,...,kr suffix``.

    Vectorised with numpy: every entry is laid out as ``width`` decimal
    digits plus a comma in one byte array, leading zeros are masked away and
    the kept bytes are joined in one step — about five times faster than
    ``",".join`` over ``block.astype(str)`` (2 M rows of 10 urns in about a
    second).  Entries beyond 64-bit integers fall back to plain ``str``.
    """
    rows, urns = block.shape
    if block.dtype == object:
        return "".join(prefix + ",".join(map(str, row)) + suffix for row in block.tolist())
    values = block.astype(np.int64, copy=False)
    width = len(str(int(values.max())))
    digits = np.empty((rows, urns, width + 1), dtype=np.uint8)
    keep = np.ones((rows, urns, width + 1), dtype=bool)
    rest = values.copy()
    for j in range(width - 1, -1, -1):
        digits[:, :, j] = 48 + rest % 10
        rest //= 10
        if j < width - 1:
            keep[:, :, j] = values >= 10 ** (width - 1 - j)
    digits[:, :, width] = ord(",")
    def constant(text):
        raw = np.frombuffer(text.encode("ascii"), dtype=np.uint8)
        return np.broadcast_to(raw, (rows, raw.size)), np.ones((rows, raw.size), dtype=bool)

    body = (digits.reshape(rows, -1)[:, :-1], keep.reshape(rows, -1)[:, :-1])  # drop the last comma
    pieces = [constant(prefix)] * bool(prefix) + [body] + [constant(suffix)] * bool(suffix)
    table = np.concatenate([piece for piece, _ in pieces], axis=1)
    mask = np.concatenate([m for _, m in pieces], axis=1)
    return table[mask].tobytes().decode("ascii")


# -- generating functions, coefficient extraction, sampling ----------------
Upto = Annotated[
    Optional[int],
    typer.Option("--upto", metavar="N", help="Last degree (number of balls) of the coefficient row."),
]
Var = Annotated[
    str,
    typer.Option("--var", help="Name of the variable of the generating function."),
]


@app.command("gf")
def gf_command(
    balls: Balls,
    urns: Urns = None,
    rule: RuleOpt = "MB",
    capacity: Capacity = None,
    minimum: Minimum = None,
    bounds: Bounds = None,
    upto: Upto = None,
    mark: Annotated[
        Optional[str],
        typer.Option(
            "--mark",
            metavar="empty|occupied|exactly:J|atleast:J",
            help="Also print the bivariate function whose u marks these urns "
            "([x^n u^j] counts outcomes with j marked urns).",
        ),
    ] = None,
    var: Var = "x",
    store: Store = None,
    no_cache: NoCache = False,
    as_json: Json = False,
) -> None:
    """Print the model's generating function and its counts for 0..N balls.

    BE and FD: the ordinary generating function, [x^m] = configurations of m
    balls. MB: the exponential one, m! [x^m] = microstates of m balls. The
    row comes from one exact series pass; N is --upto (default: --balls).

    Example:

        $ enumerator gf -n 6 -r 3 --rule BE --capacity 2
        $ enumerator gf -n 8 -r 4 --rule MB --minimum 1 --json
        $ enumerator gf -n 5 -r 3 --rule BE --mark empty
    """
    from ..algorithms.generating import bivariate_generating_function, generating_function, kind

    with store_scope(store, no_cache):
        model = build_model(balls, urns, rule, capacity, minimum, bounds)
        top = model.balls if upto is None else as_count(upto, "--upto")
        function = generating_function(model, var)
        bivariate = None if mark is None else bivariate_generating_function(model, mark, var)
        row = model.coefficient_row(top)
    counts = "microstates" if model.rule is Rule.MB else "configurations"
    if as_json:
        payload = {
            "rule": model.rule.value,
            "generating_function": str(function),
            "kind": kind(model),
            "variable": str(var),
            "counts": counts,
            "coefficients": [exact(c) for c in row],
        }
        if bivariate is not None:
            payload["mark"] = mark
            payload["bivariate"] = str(bivariate)
        emit_json(payload)
        return
    reading = f"[{var}^m]" if model.rule is not Rule.MB else f"m! [{var}^m]"
    sys.stdout.write(f"{_describe(model)}\n")
    sys.stdout.write(f"{kind(model)} generating function ({reading} = {counts} of m balls):\n")
    sys.stdout.write(f"  {function}\n")
    if bivariate is not None:
        sys.stdout.write(f"bivariate, u marking the urns '{mark}':\n  {bivariate}\n")
    sys.stdout.flush()
    show_table(f"{counts} of m balls, m = 0..{top}", ["m", counts], [[str(m), exact(c)] for m, c in enumerate(row)])


@app.command("coeff")
def coeff_command(
    expression: Annotated[
        str,
        typer.Argument(
            metavar="EXPR",
            help='A generating function in one variable, e.g. "1/(1 - x - x^2)": whole numbers, '
            "the variable, + - * / ^ (or **) and parentheses; 2x means 2*x.",
        ),
    ],
    upto: Annotated[int, typer.Option("--upto", metavar="N", help="Last degree to expand to.")] = 10,
    var: Var = "x",
    as_json: Json = False,
) -> None:
    """Expand a generating function exactly and print its coefficients up to x^N.

    Polynomials, products, integer powers (negative too) and quotients are
    expanded by the exact series kernel, never in floating point. A
    denominator whose constant term is not 1 or -1 gives fractions, printed
    as p/q. Start the expression with a space (or put -- before it) if it
    begins with a minus sign.

    Example:

        $ enumerator coeff "1/(1 - x - x^2)" --upto 20
        $ enumerator coeff "1/((1-x)(1-x^2)(1-x^5)(1-x^10))" --upto 100 --json
        $ enumerator coeff "(1 + z)^5/(2 - z)" --var z --upto 6
    """
    from ..algorithms.generating import extract_coefficients

    top = as_count(upto, "--upto")
    values = extract_coefficients(expression, top, var)
    if as_json:
        emit_json({"expression": expression, "variable": var, "coefficients": [exact(c) for c in values]})
        return
    show_table(
        f"Coefficients of {expression.strip()} in powers of {var}",
        ["degree", "coefficient"],
        [[str(m), exact(c)] for m, c in enumerate(values)],
    )


@app.command("sample")
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

    model = build_model(balls, urns, rule, capacity, minimum, bounds)
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


_PER_URN = [("any", "any number"), ("at_most_one", "at most one"), ("at_least_one", "at least one")]


@app.command("ways")
def ways_command(
    balls: Balls,
    urns: Annotated[
        int,
        typer.Option("--urns", "-r", help="Number of urns r, >= 1.", rich_help_panel=_MODEL),
    ],
    store: Store = None,
    no_cache: NoCache = False,
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
    with store_scope(store, no_cache):
        from ..algorithms.counting import twelvefold

        n = as_count(balls, "balls")
        r = as_count(urns, "urns", 1)
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
            + [exact(lookup[(ball_kind, urn_kind, key)]) for key, _ in _PER_URN]
            for ball_kind in ("labelled", "unlabelled")
            for urn_kind in ("labelled", "unlabelled")
        ]
        show_table(
            f"The twelvefold way: {n} balls into {r} urns (columns: balls per urn)",
            ["balls and urns"] + [title for _, title in _PER_URN],
            rows,
        )


# -- demo ------------------------------------------------------------------
_DEMO_BALLS = 3
_DEMO_SITES = 5
_DEMO_CONFIGS = [(3, 0, 0, 0, 0), (2, 1, 0, 0, 0), (1, 1, 1, 0, 0)]
_DEMO_CONFIG_NAMES = ["all three on site 1", "two on site 1 and one on site 2", "one each on sites 1, 2, 3"]
_DEMO_LISTED = 4
_DEMO_STORY = {
    Rule.MB: (
        "Tagged molecules (each carries a different isotope label), each landing on a "
        "site uniformly at random and independently of the others: all {micro} "
        "assignments are equally likely, and they fall into {conf} occupancy patterns "
        "of unequal weight."
    ),
    Rule.BE: (
        "Identical molecules that may stack on a site: each of the {conf} occupancy "
        "patterns is equally likely, so all three on site 1 has probability {pile} "
        "here against {pile_mb} under MB."
    ),
    Rule.FD: (
        "Identical molecules that block their site (at most one per site): only {conf} "
        "patterns remain, each equally likely, and any doubly occupied site has "
        "probability 0."
    ),
}


def _demo_cell(p: Fraction) -> str:
    return "0" if p == 0 else f"{exact(p)} ≈ {_approx(p):.4f}"


@app.command("demo")
def demo_command(as_json: Json = False) -> None:
    """Show the whole job on an invented scenario: gas molecules on catalyst sites.

    Three gas molecules adsorb onto a catalyst grain with five binding sites.
    The three rules are three different physical assumptions about the
    molecules; for each the demo prints the exact counts, the exact
    probability of three occupancy patterns and the first few patterns in
    lexicographic order.

    Example:

        $ enumerator demo
        $ enumerator demo --json
    """
    results = []
    for rule in (Rule.MB, Rule.BE, Rule.FD):
        model = build_model(_DEMO_BALLS, _DEMO_SITES, rule)
        probabilities = [model.probability(k) for k in _DEMO_CONFIGS]
        first = list(model.iter_configurations(0, _DEMO_LISTED))
        results.append((model, model.configurations(), model.microstates(), probabilities, first))

    if as_json:
        emit_json(
            {
                "scenario": f"{_DEMO_BALLS} gas molecules adsorbed on {_DEMO_SITES} catalyst sites",
                "balls": exact(_DEMO_BALLS),
                "urns": exact(_DEMO_SITES),
                "rules": [
                    {
                        "rule": model.rule.value,
                        "configurations": exact(conf),
                        "microstates": exact(micro),
                        "probabilities": [
                            {
                                "config": ",".join(map(str, k)),
                                "probability": exact(p),
                                "approx": _approx(p),
                            }
                            for k, p in zip(_DEMO_CONFIGS, probabilities)
                        ],
                        "first": [",".join(map(str, k)) for k in first],
                    }
                    for model, conf, micro, probabilities, first in results
                ],
            }
        )
        return

    console = _console()
    console.print(
        f"Scenario: {_DEMO_BALLS} gas molecules adsorb onto a catalyst grain with "
        f"{_DEMO_SITES} binding sites (the urns). Which occupancy patterns can arise, and "
        "how likely is each? That depends on what the molecules are:"
    )
    stories = Table.grid(padding=(0, 1))
    stories.add_column(no_wrap=True)
    stories.add_column()
    pile_mb = results[0][3][0]
    for model, conf, micro, probabilities, _ in results:
        story = _DEMO_STORY[model.rule].format(
            conf=conf, micro=micro, pile=exact(probabilities[0]), pile_mb=exact(pile_mb)
        )
        stories.add_row(f"  {model.rule.value} ({model.rule.title})", story)
    console.print(stories)
    console.print()
    show_table(
        "Exact counts",
        ["rule", "configurations", "microstates"],
        [[m.rule.value, exact(c), exact(u)] for m, c, u, _, _ in results],
    )
    console.print()
    show_table(
        "Exact probability of an occupancy pattern (≈ its approximate value)",
        ["pattern"] + [m.rule.value for m, *_ in results],
        [
            [",".join(map(str, k))] + [_demo_cell(r[3][i]) for r in results]
            for i, k in enumerate(_DEMO_CONFIGS)
        ],
    )
    console.print(
        "Patterns: "
        + "; ".join(f"{','.join(map(str, k))} is {name}" for k, name in zip(_DEMO_CONFIGS, _DEMO_CONFIG_NAMES))
        + "."
    )
    console.print()
    show_table(
        f"The first {_DEMO_LISTED} patterns in lexicographic order",
        ["rank"] + [m.rule.value for m, *_ in results],
        [
            [str(i)] + [",".join(map(str, r[4][i])) if i < len(r[4]) else "" for r in results]
            for i in range(_DEMO_LISTED)
        ],
    )
    console.print()
    console.print(
        f"Try: enumerator count -n {_DEMO_BALLS} -r {_DEMO_SITES} --rule BE;  "
        f"enumerator prob -n {_DEMO_BALLS} -r {_DEMO_SITES} --config 2,1,0,0,0;  "
        f"enumerator list -n {_DEMO_BALLS} -r {_DEMO_SITES} --rule FD"
    )


# --------------------------------------------------------------------------
# Lookup tables and the result store: ``enumerator table ...``, ``enumerator cache ...``
# (the work is in enumerator.tables and enumerator.store; these only parse and print)
# --------------------------------------------------------------------------
table_app = typer.Typer(
    help="Lookup tables: exact counts over a grid of balls x urns, built into the result store.",
    no_args_is_help=True,
)
cache_app = typer.Typer(
    help="Look after the result store: statistics, verification, clearing, export.",
    no_args_is_help=True,
)
app.add_typer(table_app, name="table")
app.add_typer(cache_app, name="cache")

BallsRange = Annotated[
    str,
    typer.Option("--balls", "-n", metavar="RANGE",
                 help="Balls n of the grid: a range such as 0..200 (both ends included) or one number.",
                 rich_help_panel=_MODEL),
]
UrnsRange = Annotated[
    str,
    typer.Option("--urns", "-r", metavar="RANGE",
                 help="Urns r of the grid: a range such as 1..50 (both ends included) or one number.",
                 rich_help_panel=_MODEL),
]
TableName = Annotated[str, typer.Argument(help="The table's name (see 'enumerator table list').")]


class TableFormat(str, Enum):
    """Formats of ``enumerator table export``."""

    csv = "csv"
    json = "json"
    markdown = "markdown"
    latex = "latex"


class EntryFormat(str, Enum):
    """Formats of ``enumerator cache export``."""

    csv = "csv"
    jsonl = "jsonl"


def _open_store(location: Optional[str]):
    """The store named by ``--store`` (else the default); table and cache commands always use one."""
    from .. import store as results

    return results.open_store(location)


def _write_output(lines: Iterable[str], output: Optional[str]) -> int:
    """Write *lines* to the file *output* (or stdout); return how many."""
    count = 0
    if output is None:
        for line in lines:
            sys.stdout.write(line)
            count += 1
        sys.stdout.flush()
        return count
    try:
        with open(output, "w", encoding="utf-8", newline="") as handle:
            for line in lines:
                handle.write(line)
                count += 1
    except OSError as error:
        from ..core.errors import StoreError

        raise StoreError(f"cannot write {output} ({error.strerror}); choose another --output") from None
    return count


def _range_text(values: range) -> str:
    return f"{values.start}..{values.stop - 1}"


def _bounds_words(spec) -> str:
    limits = []
    if spec.minimum:
        limits.append(f"at least {spec.minimum}")
    if spec.capacity is not None and not (spec.rule == "FD" and spec.capacity == 1):
        limits.append(f"at most {spec.capacity}")
    return " and ".join(limits) + " per urn" if limits else "any number per urn"


def _short(text: str, width: int = 10) -> str:
    """A long number as ``head…[digits]`` (previews only; exports are exact)."""
    if len(text) <= width:
        return text
    return f"{text[:2]}…[{len(text)}]"


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
    as_json: Json = False,
) -> None:
    """Build a lookup table of exact counts over balls x urns into the result store.

    Each row (fixed r, every n) comes from one generating-function pass;
    cells already stored are reused, and every row is saved as soon as it is
    done, so an interrupted build (Ctrl-C) resumes where it stopped when the
    same command is run again.  Several builds may run at once on one store.

    Example:

        $ enumerator table build --rule BE --balls 0..200 --urns 1..50
        $ enumerator table build --rule MB --balls 0..100 --urns 1..20 --capacity 4 --name shelves
    """
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeRemainingColumn

    from ..store.tables import TableSpec, build_table, parse_range

    spec = TableSpec.make(rule, parse_range(balls, "--balls"), parse_range(urns, "--urns"),
                          capacity=capacity, minimum=minimum, quantity=quantity)
    target = _open_store(store)
    label = name or spec.default_name()
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
            report = build_table(spec, name=name, store=target, progress=advance)
        except KeyboardInterrupt:
            progress.stop()
            sys.stderr.write(
                f"Interrupted: {totals['computed'] + totals['reused']} of {spec.cells} cells of "
                f"table {label} are stored; run the same command again to finish "
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
        f"Table {report.name}: {spec.rule} {spec.quantity}, {_bounds_words(spec)}",
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
            f"  {name}: {spec.rule} {spec.quantity}, {_bounds_words(spec)}, balls "
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

    Long values are shortened to head…tail with their digit count; 'table
    export' and --json give every value in full.

    Example:

        $ enumerator table show BE-configurations-n0..200-r1..50 --balls 0..10 --urns 1..5
    """
    from ..store.tables import load_table, parse_range

    data = load_table(name, store=_open_store(store))
    spec = data.spec
    rows = parse_range(balls, "--balls") if balls else range(spec.balls.start, min(spec.balls.stop, spec.balls.start + 20))
    fit = max(1, min(8, (_console().width - 10) // 13))  # value columns that fit the terminal
    cols = parse_range(urns, "--urns") if urns else range(spec.urns.start, min(spec.urns.stop, spec.urns.start + fit))
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
        f"{name}: {spec.rule} {spec.quantity}, {_bounds_words(spec)}; balls "
        f"{_range_text(spec.balls)} x urns {_range_text(spec.urns)}, "
        f"{spec.cells - data.missing}/{spec.cells} cells built",
        ["n \\ r"] + [str(r) for r in cols],
        [
            [str(n)] + [_short(data.cells[(n, r)][0]) if (n, r) in data.cells else "·" for r in cols]
            for n in rows
        ],
    )
    if any(len(data.cells[(n, r)][0]) > 10 for r in cols for n in rows if (n, r) in data.cells):
        sys.stdout.write("ab…[d]: a value of d digits that starts with ab; 'table export' gives them in full.\n")
    if data.missing:
        sys.stdout.write("· not built yet; run 'enumerator table build' with the same grid to finish.\n")


@table_app.command("export")
def table_export_command(
    name: TableName,
    fmt: Annotated[
        TableFormat,
        typer.Option("--format", case_sensitive=False,
                     help="csv, json, markdown or latex: one line per cell with n, r, the exact "
                     "value and its number of digits."),
    ] = TableFormat.csv,
    output: Annotated[
        Optional[str], typer.Option("--output", "-o", help="Write to this file instead of stdout."),
    ] = None,
    store: Store = None,
) -> None:
    """Export a lookup table with every value exact and in full.

    Example:

        $ enumerator table export BE-configurations-n0..200-r1..50 --format csv > be.csv
        $ enumerator table export shelves --format latex --output shelves.tex
    """
    from ..store.tables import export_table, load_table

    data = load_table(name, store=_open_store(store))
    _write_output([export_table(data, fmt.value)], output)
    if data.missing:
        sys.stderr.write(
            f"Note: {data.missing} of {data.spec.cells} cells of {name} are not built yet and are "
            "left out; run 'enumerator table build' with the same grid to finish.\n"
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
        int, typer.Option("--sample", help="Recompute this many entries, drawn at random."),
    ] = 200,
    verify_all: Annotated[bool, typer.Option("--all", help="Recompute every entry.")] = False,
    seed: Annotated[Optional[int], typer.Option("--seed", help="Seed of the random sample.")] = None,
    fix: Annotated[bool, typer.Option("--fix", help="Replace every wrong or damaged entry by the recomputed value.")] = False,
    store: Store = None,
    as_json: Json = False,
) -> None:
    """Recompute stored values (a sample, or --all) and report every mismatch.

    Exit code 0 when everything matches (or was fixed), 1 when a wrong or
    damaged entry remains.

    Example:

        $ enumerator cache verify --sample 500
        $ enumerator cache verify --all --fix
    """
    target = _open_store(store)
    report = target.verify(sample=None if verify_all else as_count(sample, "--sample"), seed=seed, fix=fix)
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
            sys.stdout.write(
                f"MISMATCH {m['quantity']} {m['rule']} n={m['balls']} bounds {m['bounds']}"
                f"{' ' + m['params'] if m['params'] else ''} v{m['version']}: {m['problem']}; "
                f"stored {_short(m['stored'], 40)}, recomputed {_short(m['expected'], 40)}\n"
            )
        sys.stdout.write(
            f"Checked {report['checked']} entries of {target.name}: {len(mismatches)} mismatches"
            + (f", {report['fixed']} fixed" if fix else "")
            + (f"; {report['skipped']} skipped (superseded version or no recomputer)" if report["skipped"] else "")
            + ".\n"
        )
    if mismatches and report["fixed"] < len(mismatches):
        raise typer.Exit(1)


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
    sys.stdout.write(f"Removed {removed} entries from {target.name}.\n")


@cache_app.command("export")
def cache_export_command(
    fmt: Annotated[
        EntryFormat,
        typer.Option("--format", case_sensitive=False,
                     help="csv (with a header) or jsonl (one JSON object a line); exact values in full."),
    ] = EntryFormat.jsonl,
    output: Annotated[
        Optional[str], typer.Option("--output", "-o", help="Write to this file instead of stdout."),
    ] = None,
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


# -- compare -----------------------------------------------------------------
_SWEEP = "Sweep (a whole number, or an expression of the --vary name)"


def _tie_option(flag: str, *short: str, help: str):
    return typer.Option(flag, *short, metavar="N|EXPR", help=help, rich_help_panel=_SWEEP)


def _wide_table(title: str, columns: Sequence[str], rows: Iterable[Sequence[str]]) -> None:
    """Print a rich table at its natural width (wider than the terminal if it must).

    The cells of ``compare`` are short, already-rounded numbers (the whole
    values are in --json/--csv), so the table is never folded and never
    spills values below itself the way :func:`show_table` does for long counts.
    """
    rows = [list(row) for row in rows]
    table = Table()
    for i, name in enumerate(columns):
        table.add_column(name, justify="left" if i == 0 else "right", no_wrap=True)
    for row in rows:
        table.add_row(*row)
    natural = 1 + sum(3 + max(len(name), *(len(row[i]) for row in rows)) for i, name in enumerate(columns))
    wide = Console(file=sys.stdout, highlight=False, soft_wrap=False, width=max(_console().width, natural))
    wide.print(title, style="bold", markup=False)
    wide.print(table)


@app.command("compare")
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
    console = _console()
    for i, comparison in enumerate(comparisons):
        entry = comparison.approximation
        if i:
            console.print()
        columns, rows = asymptotics.comparison_table(comparison)
        scale = " (errors of ln W: log scale)" if entry.scale == "log" else ""
        _wide_table(f"{entry.name}: {entry.quantity} ≈ {entry.formula}{scale}", columns, rows)
        console.print(asymptotics.describe_order(comparison), markup=False)
        console.print(f"source: {entry.source}", markup=False)
    if plot is not None:
        console.print(f"plot: {plot}", markup=False)


# -- levels and contact --------------------------------------------------------
_LEVELS = "Levels"
_PRESET = "Preset (instead of --energies/--degeneracies)"
_THERMO = "Thermodynamics"


def _levels_opt(flag: str, help: str, panel: str = _LEVELS, metavar: Optional[str] = None):
    return typer.Option(flag, help=help, rich_help_panel=panel, metavar=metavar)


def _level_system(particles, energies, degeneracies, rule, capacity, preset, levels, dimension, gap, oscillators):
    """Options -> :class:`~enumerator.levels.System` (validation is the library's)."""
    from ..algorithms import levels as lv

    return lv.make_system(
        particles=particles, energies=energies, degeneracies=degeneracies, rule=rule,
        capacity=capacity, preset=preset, levels=levels, dimension=dimension, gap=gap,
        oscillators=oscillators,
    )


def _float_cell(x) -> str:
    return "-" if x is None else f"{float(x):.6g}"


@app.command("levels")
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

    system = _level_system(particles, energies, degeneracies, rule, capacity, preset, levels,
                           dimension, gap, oscillators)
    unit = system.spectrum.unit
    if max_energy is not None and not system.spectrum.finite:
        top = lv.parse_rational(max_energy, "--max-energy")
        listed = system.spectrum.through(_floor_fraction(top / unit))
        system = lv.System(listed, system.particles, system.rule, system.capacity)
    counts = lv.multiplicities(system, max_energy)
    points = None
    if temperatures is not None:
        values = [t.strip() for t in temperatures.split(",")]
        points = lv.canonical(system, values, digits=digits, levels=report_levels)
    micro_points = lv.microcanonical(system, max_energy) if micro else None
    if plot is not None:
        lv.plot_levels(plot, system, counts, points or ())
    if as_json:
        emit_json(lv.levels_payload(system, counts, points, micro_points))
        return
    unit_note = "" if unit == 1 else f" (energies in units of {unit})"
    console = _console()
    if micro_points is not None:
        rows = [[str(m.energy), exact(m.multiplicity), _float_cell(m.ln_multiplicity_approx),
                 _float_cell(m.temperature_approx)] for m in micro_points]
        columns = ["E", "Ω(N, E)", "ln Ω (approx)", "T (approx)"]
    else:
        rows = [[str(e), exact(v)] for e, v in counts.items()]
        columns = ["E", "Ω(N, E)"]
    if not rows:
        console.print(f"{system.label}: no state has total energy at most {max_energy}.")
    else:
        show_table(f"Multiplicities: {system.label}{unit_note}", columns, rows)
    for p in points or ():
        console.print()
        show_table(
            f"Canonical ensemble at T = {float(p.temperature):g} ({p.digits} digits; k_B = 1)",
            ["quantity", "value (approx)"],
            [
                ["ln Z", _float_cell(p.ln_partition_function_approx)],
                ["mean energy U", _float_cell(p.mean_energy_approx)],
                ["heat capacity C", _float_cell(p.heat_capacity_approx)],
                ["free energy F", _float_cell(p.free_energy_approx)],
                ["entropy S", _float_cell(p.entropy_approx)],
                ["chemical potential (grand canonical)", _float_cell(p.chemical_potential_approx)],
            ],
        )
        gc = p.grand_canonical_occupations_approx or [None] * len(p.occupations_approx)
        show_table(
            f"Mean level occupations at T = {float(p.temperature):g}",
            ["level energy", "g", "canonical", "grand canonical", "difference"],
            [
                [str(system.spectrum.level_energy(i)), str(system.spectrum.degeneracies[i]),
                 _float_cell(c), _float_cell(g), _float_cell(None if g is None else c - g)]
                for i, (c, g) in enumerate(zip(p.occupations_approx, gc))
            ],
        )
    if plot is not None:
        console.print(f"plot: {plot}")


def _floor_fraction(value: Fraction) -> int:
    """Floor of an exact fraction."""
    return value.numerator // value.denominator


def _side_options(side: str):
    """The option bundle of one side (a or b) of ``enumerator contact``."""
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


@app.command("contact")
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

    side_a = _level_system(particles_a, energies_a, degeneracies_a, rule_a or rule, capacity_a,
                           preset_a, levels_a, dimension_a, gap_a, oscillators_a)
    side_b = _level_system(particles_b, energies_b, degeneracies_b, rule_b or rule, capacity_b,
                           preset_b, levels_b, dimension_b, gap_b, oscillators_b)
    result = lv.thermal_contact(side_a, side_b, energy)
    if plot is not None:
        lv.plot_contact(plot, result, side_a.label, side_b.label)
    if as_json:
        emit_json(lv.contact_payload(result))
        return
    console = _console()
    unit_note = "" if result.unit == 1 else f" (energies in units of {result.unit})"
    if not result.split:
        console.print(f"No microstate of A and B has total energy {energy}.")
        return
    rows = []
    for ea, count in result.split.items():
        p = result.probability.get(ea)
        rows.append([str(ea), str(result.energy - ea), exact(count), _float_cell(p)])
    show_table(
        f"Thermal contact{unit_note}: A = {side_a.label}; B = {side_b.label}; total energy {result.energy}",
        ["E_A", "E_B", "Ω_A Ω_B", "probability (approx)"],
        rows,
    )
    if result.most_probable is not None:
        p = result.probability[result.most_probable]
        console.print(
            f"total microstates: {exact(result.total)}\nmost probable split: E_A = {result.most_probable}, "
            f"probability {exact(p)} (≈ {float(p):.6g})"
        )
    if plot is not None:
        console.print(f"plot: {plot}")
