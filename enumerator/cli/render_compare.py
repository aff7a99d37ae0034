"""Rendering of ``enumerator compare``: the catalogue, tables, JSON, CSV and plots of comparisons.

The comparisons themselves are :mod:`enumerator.algorithms.asymptotics`;
this module only turns them into text, one JSON object or a picture:

- :func:`catalogue_rows` and :func:`catalogue_text` -- the ``--list`` forms;
- :func:`comparisons_payload` -- the ``--json`` contract (exact values as
  strings, floats only in ``*_approx`` fields);
- :func:`comparisons_csv` -- the ``--csv`` rows (:data:`CSV_COLUMNS`);
- :func:`show_comparisons` -- wide rich tables, the observed order beside
  the theory's, and the source;
- :func:`plot_comparisons` -- relative errors against the varied parameter,
  log-log (matplotlib, imported on use).
"""

from __future__ import annotations

import csv
import io
import sys
from typing import Iterable, List, Optional, Sequence, Tuple

import mpmath

from ..algorithms.asymptotics import CATALOGUE, Comparison
from ..algorithms.asymptotics.formulas import to_mpf
from ..core.errors import InvalidParameters, Unsupported
from ..core.exact import exact_text
from .render import console

__all__ = [
    "CSV_COLUMNS",
    "catalogue_rows",
    "catalogue_text",
    "comparison_payload",
    "comparison_table",
    "comparisons_csv",
    "comparisons_payload",
    "describe_order",
    "plot_comparisons",
    "show_comparisons",
]

#: The columns of :func:`comparisons_csv`, in order.
CSV_COLUMNS = (
    "approximation", "balls", "urns", "capacity", "minimum", "at", "factor", "exact", "approx",
    "absolute_error_approx", "relative_error_approx", "local_order_approx",
)


# ---------------------------------------------------------------------------
# The catalogue (--list)
# ---------------------------------------------------------------------------
def catalogue_rows() -> List[dict]:
    """The catalogue as plain dicts, the ``--list --json`` entries.

    Returns
    -------
    list of dict
        One dict per approximation, keys ``name``, ``quantity``, ``formula``,
        ``scale``, ``order`` (``"p/q"`` or ``None``), ``regime``, ``uses``
        (``balls`` first) and ``source``, in catalogue order.

    Notes
    -----
    Cost: linear in the size of the catalogue.
    """
    return [
        {
            "name": entry.name,
            "quantity": entry.quantity,
            "formula": entry.formula,
            "scale": entry.scale,
            "order": None if entry.order is None else exact_text(entry.order),
            "regime": entry.regime,
            "uses": ["balls", *entry.uses],
            "source": entry.source,
        }
        for entry in CATALOGUE.values()
    ]


def catalogue_text(entries: Sequence[dict]) -> str:
    """The catalogue for people: four lines per entry (name, formula, order and uses, source).

    Parameters
    ----------
    entries : sequence of dict
        As :func:`catalogue_rows` returns them.

    Returns
    -------
    str
        The text, each entry ending in a blank line.

    Notes
    -----
    Cost: linear in the length of the text.
    """
    lines = []
    for e in entries:
        order = f"order {e['order']} when {e['regime']}" if e["order"] else "no order claimed"
        lines.append(
            f"{e['name']}: {e['quantity']}\n    ≈ {e['formula']}\n    {order}; "
            f"uses {', '.join(e['uses'])}; {e['scale']} scale\n    source: {e['source']}\n"
        )
    return "".join(lines)


# ---------------------------------------------------------------------------
# JSON
# ---------------------------------------------------------------------------
def comparison_payload(comparison: Comparison) -> dict:
    """The ``--json`` object of one comparison.

    Parameters
    ----------
    comparison : Comparison

    Returns
    -------
    dict
        ``{"approximation": name, "rows": [{"balls", "urns", "exact",
        "approx", "relative_error_approx"}, ...], "order_approx": float or
        None}``; ``exact`` is exact text (``"p"`` or ``"p/q"``), ``approx``
        decimal text with enough digits to show the error.

    Notes
    -----
    Cost: linear in the number of rows and the length of their values.
    """
    return {
        "approximation": comparison.approximation.name,
        "rows": [
            {
                "balls": row.point.balls,
                "urns": row.point.urns,
                "exact": exact_text(row.exact),
                "approx": row.approx_text(),
                "relative_error_approx": row.relative_float(),
            }
            for row in comparison.rows
        ],
        "order_approx": comparison.order_approx,
    }


def comparisons_payload(comparisons: Sequence[Comparison]) -> dict:
    """The ``--json`` object of a run: one comparison's object, or ``{"comparisons": [...]}`` for several.

    Parameters
    ----------
    comparisons : sequence of Comparison
        At least one.

    Returns
    -------
    dict

    Notes
    -----
    Cost: that of :func:`comparison_payload` for each.
    """
    payloads = [comparison_payload(c) for c in comparisons]
    return payloads[0] if len(payloads) == 1 else {"comparisons": payloads}


# ---------------------------------------------------------------------------
# Tables for people
# ---------------------------------------------------------------------------
def _short(value, digits: int = 10) -> str:
    return mpmath.nstr(value, digits, min_fixed=-5, max_fixed=digits)


def comparison_table(comparison: Comparison) -> Tuple[List[str], List[List[str]]]:
    """Column names and text rows of *comparison* for people.

    Parameters
    ----------
    comparison : Comparison

    Returns
    -------
    columns : list of str
        ``balls``, ``urns``, the other parameters the approximation uses,
        ``exact``, ``approx``, the two errors (``of ln`` on the log scale)
        and ``local order``.
    rows : list of list of str
        One per point.

    Notes
    -----
    An exact value longer than 16 characters is shown rounded to 10 digits
    and marked ``≈`` (the ``--json`` and ``--csv`` forms carry it whole);
    the approximation is shown to 10 digits, the errors to 4.  Cost: linear
    in the number of rows, at each row's working precision.
    """
    entry = comparison.approximation
    extra = [name for name in ("capacity", "minimum", "at", "factor") if name in entry.uses]
    log = entry.scale == "log"
    columns = ["balls", "urns"] + extra + [
        "exact", "approx",
        "abs error of ln" if log else "abs error",
        "rel error of ln" if log else "rel error",
        "local order",
    ]
    rows = []
    for row, local in zip(comparison.rows, comparison.local_orders()):
        text = exact_text(row.exact)
        if len(text) > 16:
            with mpmath.workdps(row.dps):
                text = "≈" + _short(to_mpf(row.exact))
        rel = row.relative_error_approx
        rows.append(
            [str(row.point.balls), str(row.point.urns)]
            + [str(row.point.value(name)) for name in extra]
            + [
                text,
                _short(row.approx),
                mpmath.nstr(row.absolute_error_approx, 4),
                "undefined" if rel is None else mpmath.nstr(rel, 4),
                "" if local is None else f"{local:.2f}",
            ]
        )
    return columns, rows


def describe_order(comparison: Comparison) -> str:
    """One line: the observed order and what theory says.

    Parameters
    ----------
    comparison : Comparison

    Returns
    -------
    str

    Notes
    -----
    Cost: constant.
    """
    entry = comparison.approximation
    seen = "n/a (needs two points with a nonzero error)" if comparison.order_approx is None else f"{comparison.order_approx:.3f}"
    theory = "" if entry.order is None else f"; theory: {exact_text(entry.order)} when {entry.regime}"
    return f"observed order (slope of ln|rel error| vs ln {comparison.variable}, sign flipped) ≈ {seen}{theory}"


def _wide_table(title: str, columns: Sequence[str], rows: Iterable[Sequence[str]]) -> None:
    """Print a rich table at its natural width (wider than the terminal if it must).

    The cells of ``compare`` are short, already-rounded numbers (the whole
    values are in --json/--csv), so the table is never folded and never
    spills values below itself the way :func:`~enumerator.cli.render.show_table`
    does for long counts.

    Parameters
    ----------
    title : str
        Printed in bold above the table.
    columns : sequence of str
        Column names.
    rows : iterable of sequence of str
        The cells.

    Notes
    -----
    Imports rich on first use.  Cost: linear in the total length of the cells.
    """
    from rich.console import Console
    from rich.table import Table

    rows = [list(row) for row in rows]
    table = Table()
    for i, name in enumerate(columns):
        table.add_column(name, justify="left" if i == 0 else "right", no_wrap=True)
    for row in rows:
        table.add_row(*row)
    natural = 1 + sum(3 + max(len(name), *(len(row[i]) for row in rows)) for i, name in enumerate(columns))
    wide = Console(file=sys.stdout, highlight=False, soft_wrap=False, width=max(console().width, natural))
    wide.print(title, style="bold", markup=False)
    wide.print(table)


def show_comparisons(comparisons: Sequence[Comparison], plot: Optional[str] = None) -> None:
    """Print each comparison as a table, its observed order and its source; then the plot's path.

    Parameters
    ----------
    comparisons : sequence of Comparison
    plot : str, optional
        The file a plot was written to, named last.

    Notes
    -----
    Titles and lines are printed literally (``[x^n]`` is not rich markup).
    Cost: that of :func:`comparison_table` for each.
    """
    out = console()
    for i, comparison in enumerate(comparisons):
        entry = comparison.approximation
        if i:
            out.print()
        columns, rows = comparison_table(comparison)
        scale = " (errors of ln W: log scale)" if entry.scale == "log" else ""
        _wide_table(f"{entry.name}: {entry.quantity} ≈ {entry.formula}{scale}", columns, rows)
        out.print(describe_order(comparison), markup=False)
        out.print(f"source: {entry.source}", markup=False)
    if plot is not None:
        out.print(f"plot: {plot}", markup=False)


# ---------------------------------------------------------------------------
# CSV
# ---------------------------------------------------------------------------
def _float_text(value) -> str:
    # mpmath's decimal text: no overflow to inf for errors of counts beyond 1e308
    if value is None:
        return ""
    if isinstance(value, float):
        return repr(value)
    return mpmath.nstr(value, 17, min_fixed=-5, max_fixed=17)


def comparisons_csv(comparisons: Sequence[Comparison]) -> str:
    """All rows of *comparisons* as CSV text with a header (:data:`CSV_COLUMNS`).

    Parameters
    ----------
    comparisons : sequence of Comparison

    Returns
    -------
    str
        The header and one line per row of every comparison, ``\\n``-terminated.

    Notes
    -----
    ``exact`` is exact (``p`` or ``p/q``); ``approx`` and the ``*_approx``
    error and order columns are decimal numbers (17 significant digits for
    the errors, never overflowing to ``inf``); parameters a comparison does
    not use, and undefined errors or orders, are empty.  Cost: linear in the
    number of rows and the length of their values.
    """
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(CSV_COLUMNS)
    for comparison in comparisons:
        uses = comparison.approximation.uses
        for row, local in zip(comparison.rows, comparison.local_orders()):
            p = row.point
            writer.writerow([
                comparison.approximation.name, p.balls, p.urns,
                p.capacity if "capacity" in uses else "",
                p.minimum if "minimum" in uses else "",
                p.at if "at" in uses else "",
                p.factor if "factor" in uses else "",
                exact_text(row.exact), row.approx_text(),
                _float_text(row.absolute_error_approx), _float_text(row.relative_error_approx),
                _float_text(local),
            ])
    return out.getvalue()


# ---------------------------------------------------------------------------
# Plot
# ---------------------------------------------------------------------------
def plot_comparisons(comparisons: Sequence[Comparison], path: str) -> None:
    """Draw the relative errors of *comparisons* against the varied parameter, log-log, to *path*.

    Parameters
    ----------
    comparisons : sequence of Comparison
    path : str
        The image file to write (its suffix picks the format: ``.png``, ``.svg``, ...).

    Raises
    ------
    Unsupported
        matplotlib is not installed.
    InvalidParameters
        Every relative error is zero or undefined, or *path* cannot be written.

    Notes
    -----
    One line per approximation, labelled with its observed order; points
    with a zero or undefined error are left out.  Uses matplotlib's
    non-interactive Agg backend (install the ``plot`` extra).  Cost: linear
    in the number of rows, plus matplotlib's drawing.
    """
    try:
        import matplotlib

        matplotlib.use("Agg", force=True)
        import matplotlib.pyplot as plt
    except ImportError:  # pragma: no cover - depends on the environment
        raise Unsupported("--plot needs matplotlib; install enumerator[plot]") from None
    figure, axes = plt.subplots(figsize=(7, 4.5), dpi=110)
    drawn = 0
    variable = comparisons[0].variable if comparisons else "balls"
    for comparison in comparisons:
        pairs = [
            (row.point.value(comparison.variable), float(row.relative_error_approx))
            for row in comparison.rows
            if row.relative_error_approx is not None and row.relative_error_approx > 0
            and float(row.relative_error_approx) > 0
        ]
        if not pairs:
            continue
        order = comparison.order_approx
        label = comparison.approximation.name + ("" if order is None else f" (order ≈ {order:.2f})")
        axes.loglog([x for x, _ in pairs], [y for _, y in pairs], marker="o", markersize=3, label=label)
        drawn += 1
    if not drawn:
        plt.close(figure)
        raise InvalidParameters("nothing to plot: every relative error is zero or undefined")
    scale = {c.approximation.scale for c in comparisons}
    axes.set_xlabel(variable)
    axes.set_ylabel("relative error" + (" of ln W" if scale == {"log"} else ""))
    axes.set_title("exact vs approximate: " + ", ".join(c.approximation.name for c in comparisons))
    axes.grid(True, which="both", linewidth=0.3)
    axes.legend()
    figure.tight_layout()
    try:
        figure.savefig(path)
    except OSError as error:
        raise InvalidParameters(f"cannot write the plot to {path!r}: {error.strerror or error}") from None
    finally:
        plt.close(figure)
