"""The shared command-line options and the helpers that turn them into library values.

Every model command spells its options the same way by using these
``Annotated`` aliases as parameter types: ``Balls``, ``Urns``, ``RuleOpt``,
``Capacity``, ``Minimum``, ``Bounds``, ``Weights`` (the model), ``Store``,
``NoCache`` (the result store), ``MaxMemory``, ``MaxSeconds`` (the work
limits), ``Json`` (the output).  :func:`build_model` turns the model options
into an :class:`~enumerator.facade.Occupancy`, :func:`store_scope` applies
``--store``/``--no-cache`` to a block, :func:`limits_scope` applies
``--max-memory``/``--max-seconds``, and :func:`parse_config` reads an
occupancy vector.

``--balls``, ``--urns`` and every other whole-number option (declared with
:func:`whole_option` or :func:`count_parser`) are read digit by digit, or as a
power ``B^E`` with an optional ``+K``/``-K``
(:func:`enumerator.core.groups.parse_count`): any size (``2^64`` urns and
beyond) reaches the model as an ``int``, and text such as ``1e999999999``,
``2^99999999`` or a number of millions of digits is refused before it is
expanded, in one line naming the option.  Names (``--rule``) are checked
when read (:func:`rule_parser`), and exact numbers that the library reads
with ``Fraction`` are sized first (:func:`check_exact_numbers`).

Importing this module is cheap (typer only): the store is imported when a
command enters :func:`store_scope`.
"""

from __future__ import annotations

import re
from contextlib import contextmanager
from enum import Enum
from typing import Annotated, Iterator, Optional

import typer

from ..core.errors import InvalidConfiguration, InvalidParameters
from ..core.groups import parse_count
from ..core.model import UrnModel
from ..core.rules import Rule
from ..facade import Occupancy

__all__ = [
    "MODEL_PANEL",
    "OUTPUT_PANEL",
    "Balls",
    "Bounds",
    "CLUSTER_PANEL",
    "Capacity",
    "ClusterAddress",
    "EventLimit",
    "Json",
    "LIMITS_PANEL",
    "ListFormat",
    "MaxMemory",
    "MaxSeconds",
    "Minimum",
    "NoCache",
    "RuleOpt",
    "Store",
    "Urns",
    "Weights",
    "Workers",
    "build_model",
    "build_problem",
    "check_exact_numbers",
    "count_parser",
    "limits_scope",
    "parse_config",
    "rule_parser",
    "store_scope",
    "whole_option",
]

#: Help panels: the model's options, and where results go.
MODEL_PANEL = "Model"
OUTPUT_PANEL = "Store and output"
LIMITS_PANEL = "Limits"


_NEGATIVE = re.compile(r"\s*-\s*[0-9]{1,40}\s*")


def count_parser(name: str, minimum: int):
    """A typer ``parser`` reading a whole number of any size digit by digit (see the module docstring).

    Parameters
    ----------
    name : str
        What the number is, for the message (``"balls"``, ``"particles of A"``).
    minimum : int
        The least value accepted.

    Returns
    -------
    callable
        Text -> ``int``; a value that is not a whole number of at least
        *minimum* raises ``typer.BadParameter``, which the CLI prints as one
        line naming the option (``Invalid value for '--size': size must be at
        least 0 (got -1)``).  An ``int`` (a default) is checked the same way.

    Notes
    -----
    :func:`enumerator.core.groups.parse_count` does the reading, so a power
    is sized before it is expanded.  Cost: linear in the length of the text.
    """

    def parse(text) -> int:
        if isinstance(text, int) and not isinstance(text, bool):
            value = text  # a default, or a value handed over in-process
        elif _NEGATIVE.fullmatch(str(text)):
            value = int(str(text).replace(" ", ""))  # a whole number, only below the minimum
        else:
            try:
                return parse_count(str(text), name, minimum)
            except InvalidParameters as error:
                raise typer.BadParameter(str(error)) from None
        if value < minimum:
            raise typer.BadParameter(f"{name} must be at least {minimum} (got {value})")
        return value

    parse.__name__ = name
    return parse


def rule_parser(text) -> str:
    """A typer ``parser`` checking a rule's name (``MB``, ``BE``, ``FD``, any case) at parse time.

    Parameters
    ----------
    text : str
        The option's text.

    Returns
    -------
    str
        *text* unchanged (the model reads it).

    Raises
    ------
    typer.BadParameter
        Another name; printed as one line naming the option the user typed
        (``--rule``, ``--rule-a``), with the message of
        :meth:`enumerator.core.rules.Rule.parse`.
    """
    try:
        Rule.parse(text)
    except InvalidParameters as error:
        raise typer.BadParameter(str(error)) from None
    return text if isinstance(text, str) else Rule.parse(text).value


def whole_option(*flags: str, name: str, minimum: int = 0, help: str, **settings) -> typer.models.OptionInfo:
    """A ``typer.Option`` for a whole number read as ``--balls`` is read (digits, or a power such as ``2^64``).

    Parameters
    ----------
    *flags : str
        The option's flags (``"--size"``).
    name : str
        What the number is, in its messages (``"size"``).
    minimum : int
        The least value accepted (0 by default).
    help : str
        The ``--help`` text.
    **settings
        Any other ``typer.Option`` setting (``rich_help_panel``, ``metavar``).

    Returns
    -------
    typer.models.OptionInfo
        For a parameter annotated ``int`` or ``Optional[int]``.

    Notes
    -----
    Every whole-number option of the CLI is declared with this (or
    :func:`count_parser`), so each reads numbers the same way and refuses
    them with the same one line (see :func:`count_parser`).  Cost: constant.
    """
    settings.setdefault("metavar", "INTEGER")
    return typer.Option(*flags, parser=count_parser(name, minimum), help=help, **settings)


Balls = Annotated[
    int,
    typer.Option(
        "--balls", "-n",
        metavar="INTEGER",
        parser=count_parser("balls", 0),
        help="Number of balls n (particles, keys, items), a whole number >= 0.",
        rich_help_panel=MODEL_PANEL,
    ),
]
Urns = Annotated[
    Optional[int],
    typer.Option(
        "--urns", "-r",
        metavar="INTEGER",
        parser=count_parser("urns", 1),
        help="Number of labelled urns r (states, sites, bins), >= 1, any size, in digits or as a power "
        "(-r 2^64, -r 2^32-1; 2^64 urns cost nothing per urn). May be left out when --bounds or --weights lists the urns.",
        rich_help_panel=MODEL_PANEL,
    ),
]
RuleOpt = Annotated[
    str,
    typer.Option(
        "--rule",
        metavar="MB|BE|FD",
        parser=rule_parser,
        help="Counting rule. MB: distinguishable balls, each assignment of balls to urns "
        "equally likely. BE: identical balls, each occupancy vector equally likely. "
        "FD: identical balls, at most one per urn, each occupancy vector equally likely. "
        "Any case.",
        rich_help_panel=MODEL_PANEL,
    ),
]
Capacity = Annotated[
    Optional[int],
    whole_option(
        "--capacity",
        name="capacity",
        help="Uniform upper bound: at most this many balls in every urn (FD: at most 1).",
        rich_help_panel=MODEL_PANEL,
    ),
]
Minimum = Annotated[
    Optional[int],
    whole_option(
        "--minimum",
        name="minimum",
        help="Uniform lower bound: at least this many balls in every urn (default 0).",
        rich_help_panel=MODEL_PANEL,
    ),
]
Bounds = Annotated[
    Optional[str],
    typer.Option(
        "--bounds",
        help='Per-urn bounds "a:b,a:b,..." (lower:upper for each urn in turn; "a:" means '
        'no upper bound); an item COUNTxa:b stands for COUNT urns alike, e.g. "1000x0:3,2x1:". '
        "Use instead of --capacity/--minimum.",
        rich_help_panel=MODEL_PANEL,
    ),
]
Weights = Annotated[
    Optional[str],
    typer.Option(
        "--weights",
        help='Per-urn weights "w,w,...", positive rationals (3, 2/7, 0.25); an item COUNTxw '
        'stands for COUNT urns alike, e.g. "365x400,97". MB: a ball lands in urn i with '
        "probability w_i / sum(w). BE/FD: a vector k has weight prod(w_i^k_i). Default: all 1.",
        rich_help_panel=MODEL_PANEL,
    ),
]
MaxMemory = Annotated[
    Optional[str],
    typer.Option(
        "--max-memory",
        metavar="SIZE",
        help="Refuse work planned to need more memory than this (e.g. 512M, 8G; "
        "default $ENUMERATOR_MAX_MEMORY, else 4G).",
        rich_help_panel=LIMITS_PANEL,
    ),
]
MaxSeconds = Annotated[
    Optional[float],
    typer.Option(
        "--max-seconds",
        metavar="S",
        help="Refuse work planned to take longer than this many seconds "
        "(default $ENUMERATOR_MAX_SECONDS, else 600).",
        rich_help_panel=LIMITS_PANEL,
    ),
]
Store = Annotated[
    Optional[str],
    typer.Option(
        "--store",
        metavar="PATH-OR-URL",
        help="Result store to remember results in: a SQLite file path or a database URL "
        "(default: $ENUMERATOR_STORE, else store/ in a source checkout, else the user cache).",
        rich_help_panel=OUTPUT_PANEL,
    ),
]
NoCache = Annotated[
    bool,
    typer.Option(
        "--no-cache",
        help="Compute afresh; neither read nor write the result store (wins over --store).",
        rich_help_panel=OUTPUT_PANEL,
    ),
]
Json = Annotated[
    bool,
    typer.Option(
        "--json",
        help="Print one JSON object: exact integers as decimal strings, rationals as "
        '"p/q", floats only in fields named approx.',
        rich_help_panel=OUTPUT_PANEL,
    ),
]
EventLimit = Annotated[
    Optional[int],
    whole_option(
        "--limit",
        name="limit",
        minimum=1,
        help="dist/prob: the most configurations (or profiles) handled one by one when no exact "
        "shortcut applies; above it the command stops with an error (default 1000000).",
        rich_help_panel=OUTPUT_PANEL,
    ),
]

#: Help panel of the cluster options.
CLUSTER_PANEL = "Cluster"


def workers_option(help: str, panel: Optional[str] = CLUSTER_PANEL):
    """The ``--workers K`` option (``K >= 1``) with a command's own *help* text and help *panel*.

    Commands whose workers do something other than :data:`Workers` says
    (build table rows, write listing shards) declare their own alias with it.

    Parameters
    ----------
    help : str
        The option's ``--help`` text.
    panel : str or None
        The rich help panel (None: the default ``Options`` panel).

    Returns
    -------
    typing.Annotated
        ``Optional[int]`` with its ``typer.Option``, for a parameter's annotation.
    """
    return Annotated[Optional[int], whole_option("--workers", name="workers", minimum=1, metavar="K", help=help,
                                                 rich_help_panel=panel)]


def cluster_option(help: str, panel: Optional[str] = CLUSTER_PANEL):
    """The ``--cluster ADDRESS`` option with a command's own *help* text and help *panel*.

    Parameters
    ----------
    help : str
        The option's ``--help`` text.
    panel : str or None
        The rich help panel (None: the default ``Options`` panel).

    Returns
    -------
    typing.Annotated
        ``Optional[str]`` with its ``typer.Option``, for a parameter's annotation.
    """
    return Annotated[Optional[str], typer.Option("--cluster", metavar="ADDRESS", help=help, rich_help_panel=panel)]


def _writable_folder(folder: str, what: str) -> None:
    """Refuse (``typer.BadParameter``) when *folder* is missing, not a folder or not writable."""
    import os

    if not os.path.isdir(folder):
        raise typer.BadParameter(f"cannot write {what}: {folder!r} is not an existing folder; create it first")
    if not os.access(folder, os.W_OK | os.X_OK):
        raise typer.BadParameter(f"cannot write {what}: the folder {folder!r} is not writable; choose another")


def plot_path(text) -> Optional[str]:
    """Check a ``--plot`` file before any work: a format matplotlib writes, in a writable folder.

    Parameters
    ----------
    text : str or None
        The path given to ``--plot``.

    Returns
    -------
    str or None
        *text* unchanged.

    Raises
    ------
    typer.BadParameter
        An unknown file format (the message lists the known ones), a path
        that is a folder, or a folder that is missing or not writable, so a
        long computation never ends in a failed save.

    Notes
    -----
    The formats are matplotlib's own list (imported only when ``--plot``
    is given); without matplotlib the check is left to the plot itself,
    which names the missing extra.
    """
    import os

    if text is None:
        return None
    path = str(text)
    if os.path.isdir(path):
        raise typer.BadParameter(f"{path!r} is a folder; give a file name such as plot.png")
    suffix = os.path.splitext(path)[1].lstrip(".").lower()
    try:
        from matplotlib.backend_bases import FigureCanvasBase
    except ImportError:
        formats = None
    else:
        formats = FigureCanvasBase.get_supported_filetypes()
    if formats is not None and suffix not in formats:
        known = ", ".join(sorted(formats))
        raise typer.BadParameter(f"cannot draw {path!r}: give a file name ending in one of {known} (e.g. plot.png)")
    _writable_folder(os.path.dirname(path) or ".", f"the plot to {path!r}")
    return path


def output_folder(text) -> Optional[str]:
    """Check an ``--output-dir`` before any work: an existing folder, or one that can be made in a writable one.

    Raises
    ------
    typer.BadParameter
        *text* names a file, or its parent folder is missing or not writable.
    """
    import os

    if text is None:
        return None
    path = str(text)
    if os.path.isdir(path):
        _writable_folder(path, f"the listing into {path!r}")
    elif os.path.exists(path):
        raise typer.BadParameter(f"{path!r} is a file, not a folder; give a folder for the listing's files")
    else:
        _writable_folder(os.path.dirname(os.path.abspath(path)), f"the folder {path!r}")
    return path


def plot_option(help: str):
    """The ``--plot FILE.png`` option (in the output panel) with a command's own *help* text.

    Parameters
    ----------
    help : str
        What the command draws.

    Returns
    -------
    typing.Annotated
        ``Optional[str]`` with its ``typer.Option``, for a parameter's annotation.
    """
    return Annotated[Optional[str], typer.Option("--plot", metavar="FILE.png", rich_help_panel=OUTPUT_PANEL,
                                                 help=help, callback=plot_path)]


Workers = workers_option(
    "Where the answer needs every configuration listed, list it on a local Dask cluster "
    "of K processes, in equal shards of the rank range (needs Dask: the cluster extra of "
    "enumerator). Where it does not, the answer is computed here and a note says so."
)
ClusterAddress = cluster_option("As --workers, on the running Dask scheduler at ADDRESS, e.g. tcp://host:8786.")


class ListFormat(str, Enum):
    """Row formats of ``enumerator list`` and ``enumerator sample``."""

    csv = "csv"
    jsonl = "jsonl"


def build_model(
    balls: int,
    urns: Optional[int] = None,
    rule: "Rule | str" = Rule.MB,
    capacity: Optional[int] = None,
    minimum: Optional[int] = None,
    bounds: Optional[str] = None,
    weights: Optional[str] = None,
) -> Occupancy:
    """Return the problem described by the shared model options.

    Parameters
    ----------
    balls, urns, rule, capacity, minimum, bounds, weights
        The values of ``--balls``, ``--urns``, ``--rule``, ``--capacity``,
        ``--minimum``, ``--bounds`` and ``--weights`` (``None`` where not
        given); bounds and weights may use run-length items ``COUNTxITEM``.

    Returns
    -------
    Occupancy
        The validated, immutable model.

    Raises
    ------
    InvalidParameters
        Malformed input (validation is the model's); the error wrapper prints
        it as one line with exit code 2.

    Notes
    -----
    Cost: the model's validation, linear in the length of ``--bounds`` and
    ``--weights``; nothing per urn.
    """
    return Occupancy(balls=balls, urns=urns, rule=rule, capacity=capacity, minimum=minimum, bounds=bounds,
                     weights=weights)


def build_problem(
    balls: int,
    urns: Optional[int] = None,
    rule: "Rule | str" = Rule.MB,
    capacity: Optional[int] = None,
    minimum: Optional[int] = None,
    bounds: Optional[str] = None,
    weights: Optional[str] = None,
) -> UrnModel:
    """Return the bare problem description of the shared model options, for commands that never use the store.

    Parameters
    ----------
    balls, urns, rule, capacity, minimum, bounds, weights
        As for :func:`build_model`.

    Returns
    -------
    UrnModel
        The validated model without the facade's remembered methods, so
        nothing done with it can read or write the result store (``sample``
        uses it: draws are never remembered).

    Raises
    ------
    InvalidParameters
        Malformed input, with the same messages as :func:`build_model`.

    Notes
    -----
    Cost: the model's validation, linear in the length of ``--bounds`` and
    ``--weights``; nothing per urn.
    """
    return UrnModel(balls=balls, urns=urns, rule=rule, capacity=capacity, minimum=minimum, bounds=bounds,
                    weights=weights)


@contextmanager
def limits_scope(max_memory: Optional[str] = None, max_seconds: Optional[float] = None) -> Iterator[None]:
    """Run the block under the work limits chosen by ``--max-memory`` / ``--max-seconds``.

    Parameters
    ----------
    max_memory : str or None
        A size such as ``512M`` or ``8G`` (bytes without a suffix, or as a
        power such as ``2^30``).
    max_seconds : float or None
        Seconds.

    Yields
    ------
    None
        Every route planned inside the block checks its estimated cost
        against these limits (:func:`enumerator.core.limits.check`) and is
        refused with :class:`~enumerator.core.errors.TooLarge` beyond them.

    Raises
    ------
    InvalidParameters
        A malformed size or a non-positive number of seconds (the message
        names ``max_memory=``/``max_seconds=``, printed as the flags).

    Notes
    -----
    An option left out keeps the limit in force (``ENUMERATOR_MAX_MEMORY``,
    ``ENUMERATOR_MAX_SECONDS``, else the defaults of
    :mod:`enumerator.core.limits`).  Cost: constant.
    """
    from ..core.errors import InvalidParameters
    from ..core.limits import limited, parse_size

    memory = None
    if max_memory is not None:
        try:
            if "^" in max_memory:  # a number of bytes as a power, read as --balls reads one
                memory = parse_count(max_memory, "max_memory=", 1)
                if memory >= 2 ** 80:
                    raise InvalidParameters(f"max_memory= {max_memory!r} is beyond any machine; "
                                            "give a size such as 512M, 8G or 2^40")
            else:
                memory = parse_size(max_memory, "max_memory=")
        except InvalidParameters as error:
            raise InvalidParameters(str(error), parameters=["max_memory"]) from None
    if max_seconds is not None and not (0 < max_seconds < float("inf")):
        raise InvalidParameters(f"max_seconds= must be a positive number of seconds (got {max_seconds})",
                                parameters=["max_seconds"])
    with limited(memory=memory, seconds=max_seconds):
        yield


@contextmanager
def store_scope(location: Optional[str], no_cache: bool) -> Iterator[None]:
    """Run the block against the result store chosen by ``--store`` / ``--no-cache``.

    Parameters
    ----------
    location : str or None
        ``--store``: a SQLite file path or a database URL.
    no_cache : bool
        ``--no-cache``: compute afresh and store nothing (wins over *location*).

    Yields
    ------
    None
        Library calls inside the block read and write the chosen store.

    Raises
    ------
    StoreError
        The store cannot be opened (raised by the store layer).

    Notes
    -----
    With neither option the store's own default applies
    (``ENUMERATOR_STORE``, else the checkout's ``store/`` folder, else the
    user cache directory; see :mod:`enumerator.store`).  The store package is
    imported only when an option asks for it, so a command that never reads
    the store does not pay for SQLAlchemy here.  Cost: opening the store, on
    first use.
    """
    if no_cache:
        from ..store.context import bypass

        with bypass():
            yield
    elif location is not None:
        from ..store.context import using

        with using(location):
            yield
    else:
        yield


_WHOLE = re.compile(r"[+-]?\d+")
#: The exponent of a decimal such as 1e-3, in any item of a list.
_EXPONENT = re.compile(r"[eE]\s*([+-]?[0-9]+)")


def check_exact_numbers(text: Optional[str], flag: str) -> Optional[str]:
    """Refuse exact numbers too long to read (``1e999999999``) in *text*, before anything expands them.

    Parameters
    ----------
    text : str or None
        One number or a comma-separated list (``--energies``, ``--gap``,
        ``--energy``); ``None`` is passed through.
    flag : str
        The option, for the message.

    Returns
    -------
    str or None
        *text* unchanged.

    Raises
    ------
    InvalidParameters
        An item longer than :data:`enumerator.core.groups.MAX_DIGITS`
        characters, or with a decimal exponent beyond it: ``Fraction``
        would expand ``1e999999999`` into a billion digits.

    Notes
    -----
    The numbers themselves are read by the library; this only sizes them,
    as :func:`count_parser` sizes a power.  Cost: linear in the length of
    *text*.

    Examples
    --------
    >>> check_exact_numbers("0,1/2,2.5e3", "--energies")
    '0,1/2,2.5e3'
    """
    from ..core.groups import MAX_DIGITS

    if text is None:
        return None
    for position, item in enumerate(str(text).split(","), start=1):
        item = item.strip()
        exponent = _EXPONENT.search(item)
        if len(item) > MAX_DIGITS or (exponent and (len(exponent.group(1)) > 12
                                                    or abs(int(exponent.group(1))) > MAX_DIGITS)):
            which = f"{flag} {item[:40]!r}" if "," not in str(text) else f"item {position} of {flag} ({item[:40]!r})"
            raise InvalidParameters(f"{which} is too long to read exactly; numbers are limited to {MAX_DIGITS:,} digits")
    return text


def parse_config(text: str):
    """Parse ``--config``: ``"2,0,1"`` into a tuple of ints, or ``"3:2 7:1"`` into ``{urn: count}``.

    Parameters
    ----------
    text : str
        One whole number per urn, comma-separated; or, for any number of
        urns, the occupied urns as ``URN:COUNT`` pairs separated by blanks
        or commas (urns numbered from 1, powers such as ``2^64`` allowed), the
        form sparse listings and samples write.

    Returns
    -------
    tuple of int or dict of int to int
        The entries; length, sum, urn range and signs are the model's to check.

    Raises
    ------
    InvalidConfiguration
        An entry is not a whole number, or a pair is malformed or repeats an urn.

    Notes
    -----
    Cost: linear in the length of *text*.

    Examples
    --------
    >>> parse_config("2,0,1"), parse_config("3:2 2^64:1")
    ((2, 0, 1), {3: 2, 18446744073709551616: 1})
    """
    from ..core.errors import InvalidParameters
    from ..core.groups import MAX_DIGITS, parse_count

    if ":" in text:
        pairs = {}
        for position, item in enumerate(text.replace(",", " ").split(), start=1):
            urn_text, colon, count_text = item.partition(":")
            count_text = count_text.strip()
            if not colon or len(count_text) > MAX_DIGITS + 1 or not _WHOLE.fullmatch(count_text):
                raise InvalidConfiguration(
                    f"config pair {position} ({item!r}) is not URN:COUNT; write the occupied urns as pairs "
                    "such as --config \"3:2 7:1\" (urns from 1), or one occupancy per urn such as 2,0,1"
                )
            try:
                urn = parse_count(urn_text, f"the urn of config pair {position}", 1)
            except InvalidParameters as error:
                raise InvalidConfiguration(str(error)) from None
            if urn in pairs:
                raise InvalidConfiguration(f"urn {urn} appears twice in --config; give each occupied urn once")
            pairs[urn] = int(count_text)
        return pairs
    items = text.split(",")
    values = []
    for position, item in enumerate(items, start=1):
        item = item.strip()
        if len(item) > MAX_DIGITS + 1 or not _WHOLE.fullmatch(item):
            raise InvalidConfiguration(
                f"config entry {position} ({item!r}) is not a whole number; "
                'write one occupancy per urn separated by commas, e.g. --config 2,0,1, '
                'or the occupied urns as URN:COUNT pairs, e.g. --config "3:2 7:1"'
            )
        values.append(int(item))
    return tuple(values)
