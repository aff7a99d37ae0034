"""Rendering for the command line: rich tables for people, JSON and CSV/JSONL rows for programs.

- :func:`exact` and :func:`emit_json` — the JSON encoding (DESIGN.md): exact
  integers are strings of decimal digits, exact rationals are
  ``str(Fraction)`` (``"p/q"`` in lowest terms, ``"p"`` when ``q = 1``);
  floats appear only in fields named ``approx``/``float``.  Exact values go
  through :mod:`enumerator.core.exact`, the project's one codec.
- :func:`show_table` — a rich table that never cuts a long number.
- :func:`write_vectors` and :func:`format_rows` — streaming CSV, JSONL or
  one JSON object from numpy blocks of occupancy vectors.

rich and numpy are imported inside the functions that use them, so a
command that prints JSON never loads rich and one that prints no vectors
never loads numpy.
"""

from __future__ import annotations

import json
import sys
from fractions import Fraction
from typing import TYPE_CHECKING, Iterable, Optional, Sequence

from ..core.rules import Rule
from .options import ListFormat

if TYPE_CHECKING:  # pragma: no cover - annotations only
    from rich.console import Console

    from ..facade import Occupancy

__all__ = [
    "NARROW",
    "abbreviate",
    "approx",
    "console",
    "describe",
    "emit_json",
    "exact",
    "format_rows",
    "show_table",
    "write_vectors",
]

#: A value column narrower than this still gets the value in the table.
NARROW = 12


def exact(value) -> str:
    """Encode an exact number for JSON and tables.

    Parameters
    ----------
    value : int or Fraction
        Any size.

    Returns
    -------
    str
        Decimal digits, or ``"p/q"`` in lowest terms.

    Notes
    -----
    Delegates to :func:`enumerator.core.exact.exact_text` (gmpy2 for large
    values).  Cost: quasi-linear in the number of digits.
    """
    from ..core.exact import exact_text

    return exact_text(value)


def emit_json(payload: dict) -> None:
    """Print *payload* as one JSON object on one line of stdout.

    Parameters
    ----------
    payload : dict
        Already encoded: exact numbers as strings (:func:`exact`).

    Notes
    -----
    Cost: linear in the size of the payload.
    """
    sys.stdout.write(json.dumps(payload, ensure_ascii=False) + "\n")
    sys.stdout.flush()


def approx(value: Fraction) -> float:
    """The nearest float to an exact fraction (for ``approx`` fields and cells only).

    Parameters
    ----------
    value : Fraction or int

    Returns
    -------
    float

    Notes
    -----
    ``Fraction.__float__`` divides the exact integers, correctly rounded.
    Cost: quasi-linear in the digits of the numerator and denominator.
    """
    return float(value)


def console() -> "Console":
    """A rich console on the current ``sys.stdout``.

    Returns
    -------
    rich.console.Console

    Notes
    -----
    Built per call so that a redirected ``sys.stdout`` (tests, pipes) is
    honoured.  The first call imports rich (tens of milliseconds).
    """
    from rich.console import Console

    return Console(file=sys.stdout, highlight=False, soft_wrap=False)


def show_table(title: str, columns: Sequence[str], rows: Iterable[Sequence[str]]) -> None:
    """Print a rich table; values too wide for it follow the table in full.

    Parameters
    ----------
    title : str
        Printed in bold above the table.
    columns : sequence of str
        Column names; the first column is the row label.
    rows : iterable of sequence of str
        The cells, already encoded.

    Notes
    -----
    A rich table folds long cells, which would cut a 100,000-digit count into
    pieces; such a cell gives its length instead and the value is then written
    on a line of its own, unbroken, as ``<row> = <value>`` (two columns) or
    ``<row>, <column> = <value>``.  The width each value column may use is
    what the terminal leaves after the first column, shared equally.  Cost:
    linear in the total length of the cells.
    """
    from rich.table import Table

    rows = [list(row) for row in rows]
    out = console()
    first = max([len(columns[0])] + [len(row[0]) for row in rows])
    share = (out.width - first - 3 * len(columns) - 1) // max(1, len(columns) - 1)
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
    out.print(title, style="bold")
    out.print(table)
    for label, cell in spill:
        sys.stdout.write(f"{label} = {cell}\n")
    sys.stdout.flush()


def abbreviate(text: str, width: int = 10) -> str:
    """A long number as ``head…[digits]``, for previews only (exports are exact).

    Parameters
    ----------
    text : str
        The number's decimal digits (or any text).
    width : int
        Texts up to this length are returned whole.

    Returns
    -------
    str
        *text*, or its first two characters and its length: ``12…[2302]``.

    Notes
    -----
    Cost: constant beyond the length check.
    """
    if len(text) <= width:
        return text
    return f"{text[:2]}…[{len(text)}]"


def describe(model: "Occupancy") -> str:
    """One line naming the model, for the title of a table.

    Parameters
    ----------
    model : Occupancy

    Returns
    -------
    str
        Rule, balls, urns and the bounds in words (uniform bounds) or in the
        canonical ``a:b,...`` form (per-urn bounds).

    Notes
    -----
    Cost: constant for uniform bounds, linear in the groups otherwise
    (the model's canonical bounds).
    """
    text = f"{model.rule.title} ({model.rule.value}): {model.balls} balls in {model.urns} urns"
    if not model.is_uniform:
        return text + ", bounds " + model.canonical_bounds()
    # The uniform bounds, read from the model's one group: never per urn, so a
    # title costs nothing however many urns there are.
    low, high = model.minimum, model.capacity
    limits = []
    if low:
        limits.append(f"at least {low}")
    if high is not None and not (model.rule is Rule.FD and high == 1):
        limits.append(f"at most {high}")
    if limits:
        text += ", " + " and ".join(limits) + " per urn"
    return text


def write_vectors(blocks, urns: int, fmt, json_head: Optional[str], count_field: str) -> None:
    """Stream blocks of occupancy vectors to stdout as csv, jsonl, or one JSON object.

    Parameters
    ----------
    blocks : iterable of numpy.ndarray
        Non-empty blocks of shape ``(rows, urns)``.
    urns : int
        The number of urns (the csv header ``k1,...,kr``).
    fmt : ListFormat
        ``csv`` or ``jsonl`` (ignored with *json_head*).
    json_head : str or None
        The JSON object's leading fields, already encoded; with it the
        vectors go under ``"configurations"`` and their number under
        *count_field*.
    count_field : str
        Name of the field counting the vectors in the JSON object.

    Notes
    -----
    Nothing is held beyond one block.  Cost: linear in the output, through
    :func:`format_rows`.
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

    Parameters
    ----------
    block : numpy.ndarray
        Shape ``(rows, urns)``, integer or object dtype.
    prefix, suffix : str
        ASCII text around each row.

    Returns
    -------
    str
        The rows, concatenated.

    Notes
    -----
    Vectorised with numpy: every entry is laid out as ``width`` decimal
    digits plus a comma in one byte array, leading zeros are masked away and
    the kept bytes are joined in one step — about five times faster than
    ``",".join`` over ``block.astype(str)`` (2 M rows of 10 urns in about a
    second).  Entries beyond 64-bit integers (object dtype) fall back to
    plain ``str``.  Cost: ``O(rows * urns * width)`` bytes of work and memory.
    """
    import numpy as np

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
