"""The shared command-line options and the helpers that turn them into library values.

Every model command spells its options the same way by using these
``Annotated`` aliases as parameter types: ``Balls``, ``Urns``, ``RuleOpt``,
``Capacity``, ``Minimum``, ``Bounds`` (the model), ``Store``, ``NoCache``
(the result store), ``Json`` (the output).  :func:`build_model` turns the
model options into an :class:`~enumerator.facade.Occupancy`,
:func:`store_scope` applies ``--store``/``--no-cache`` to a block, and
:func:`parse_config` reads an occupancy vector.

Importing this module is cheap (typer only): the store is imported when a
command enters :func:`store_scope`.
"""

from __future__ import annotations

import re
from contextlib import contextmanager
from enum import Enum
from typing import Annotated, Iterator, Optional

import typer

from ..core.errors import InvalidConfiguration
from ..core.model import UrnModel
from ..core.rules import Rule
from ..facade import Occupancy

__all__ = [
    "MODEL_PANEL",
    "OUTPUT_PANEL",
    "Balls",
    "Bounds",
    "Capacity",
    "EventLimit",
    "Json",
    "ListFormat",
    "Minimum",
    "NoCache",
    "RuleOpt",
    "Store",
    "Urns",
    "build_model",
    "build_problem",
    "parse_config",
    "store_scope",
]

#: Help panels: the model's options, and where results go.
MODEL_PANEL = "Model"
OUTPUT_PANEL = "Store and output"

Balls = Annotated[
    int,
    typer.Option(
        "--balls", "-n",
        help="Number of balls n (particles, keys, items), a whole number >= 0.",
        rich_help_panel=MODEL_PANEL,
    ),
]
Urns = Annotated[
    Optional[int],
    typer.Option(
        "--urns", "-r",
        help="Number of labelled urns r (states, sites, bins), >= 1. "
        "May be left out when --bounds gives one bound per urn.",
        rich_help_panel=MODEL_PANEL,
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
        rich_help_panel=MODEL_PANEL,
    ),
]
Capacity = Annotated[
    Optional[int],
    typer.Option(
        "--capacity",
        help="Uniform upper bound: at most this many balls in every urn (FD: at most 1).",
        rich_help_panel=MODEL_PANEL,
    ),
]
Minimum = Annotated[
    Optional[int],
    typer.Option(
        "--minimum",
        help="Uniform lower bound: at least this many balls in every urn (default 0).",
        rich_help_panel=MODEL_PANEL,
    ),
]
Bounds = Annotated[
    Optional[str],
    typer.Option(
        "--bounds",
        help='Per-urn bounds "a:b,a:b,..." (lower:upper for each urn in turn; "a:" means '
        "no upper bound). Use instead of --capacity/--minimum.",
        rich_help_panel=MODEL_PANEL,
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
    typer.Option(
        "--limit",
        help="dist/prob: the most configurations (or profiles) handled one by one when no exact "
        "shortcut applies; above it the command stops with an error (default 1000000).",
        rich_help_panel=OUTPUT_PANEL,
    ),
]


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
) -> Occupancy:
    """Return the problem described by the shared model options.

    Parameters
    ----------
    balls, urns, rule, capacity, minimum, bounds
        The values of ``--balls``, ``--urns``, ``--rule``, ``--capacity``,
        ``--minimum`` and ``--bounds`` (``None`` where not given).

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
    Cost: the model's validation, linear in the length of ``--bounds``.
    """
    return Occupancy(balls=balls, urns=urns, rule=rule, capacity=capacity, minimum=minimum, bounds=bounds)


def build_problem(
    balls: int,
    urns: Optional[int] = None,
    rule: "Rule | str" = Rule.MB,
    capacity: Optional[int] = None,
    minimum: Optional[int] = None,
    bounds: Optional[str] = None,
) -> UrnModel:
    """Return the bare problem description of the shared model options, for commands that never use the store.

    Parameters
    ----------
    balls, urns, rule, capacity, minimum, bounds
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
    Cost: the model's validation, linear in the length of ``--bounds``.
    """
    return UrnModel(balls=balls, urns=urns, rule=rule, capacity=capacity, minimum=minimum, bounds=bounds)


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


def parse_config(text: str) -> tuple:
    """Parse ``"2,0,1"`` into a tuple of ints.

    Parameters
    ----------
    text : str
        The value of ``--config``: one whole number per urn, comma-separated.

    Returns
    -------
    tuple of int
        The entries; length, sum and signs are the model's to check.

    Raises
    ------
    InvalidConfiguration
        An entry is not a whole number.

    Notes
    -----
    Cost: linear in the length of *text*.
    """
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
