"""Rendering of ``enumerator compare``: the catalogue, tables, JSON, CSV and plots of comparisons.

The comparisons themselves are :mod:`enumerator.algorithms.asymptotics`;
this module only turns them into text, one JSON object or a picture:

- :func:`catalogue_rows` and :func:`catalogue_text` -- the ``--list`` forms;
- :func:`stream_comparisons` -- runs the plans of a sweep and prints every
  point the moment it is computed, in one of three forms:
  the table for people, CSV (:data:`CSV_COLUMNS`), or one JSON object
  written piece by piece (valid JSON once complete, byte for byte what
  ``json.dumps`` of :func:`comparisons_payload` would print);
- :func:`comparisons_payload` -- the ``--json`` contract (exact values as
  strings, floats only in ``*_approx`` fields, mpmath text for errors
  beyond double range, a ``"skipped"`` or ``"note"`` wherever a value is
  missing);
- :func:`comparisons_csv` and :func:`show_comparisons` -- the same forms
  of finished comparisons;
- :func:`plot_comparisons` -- relative errors against the varied parameter,
  log-log (matplotlib, imported on use).
"""

from __future__ import annotations

import csv
import io
import json
import sys
from typing import Callable, List, Optional, Sequence, TextIO, Tuple

import mpmath

from ..algorithms.asymptotics import CATALOGUE, Comparison, Plan, Row, finish, float_or_text
from ..algorithms.asymptotics.comparison import local_order
from ..algorithms.asymptotics.formulas import to_mpf
from ..core.errors import EnumeratorError, InvalidParameters
from ..core.exact import exact_text
from .render import pyplot

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
    "row_payload",
    "show_comparisons",
    "stream_comparisons",
]

#: The columns of :func:`comparisons_csv`, in order (``note``: why a value is missing).
CSV_COLUMNS = (
    "approximation", "balls", "urns", "capacity", "minimum", "at", "factor", "exact", "approx",
    "absolute_error_approx", "relative_error_approx", "local_order_approx", "note",
)

#: How an error's message is spelled for the reader (the CLI passes one that writes flags).
Spell = Callable[[EnumeratorError], str]


def _plain(error: EnumeratorError) -> str:
    return str(error)


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
def row_payload(row: Row, spell: Spell = _plain, extra: Sequence[str] = ()) -> dict:
    """The ``--json`` object of one row.

    Parameters
    ----------
    row : Row
    spell : callable
        Turns a skip reason (an error) into text.
    extra : sequence of str
        The other parameters the approximation uses (``capacity``,
        ``minimum``, ``at``, ``factor``), written after ``urns`` so that
        the points of a sweep over one of them can be told apart.

    Returns
    -------
    dict
        Computed: ``{"balls", "urns", <extra>, "exact", "approx",
        "relative_error_approx"}`` (``exact`` exact text, ``approx`` decimal
        text, the error a float or, beyond double range, mpmath's decimal
        text; an extra parameter a whole number, ``factor`` exact text
        ``"p/q"``), plus ``"note"`` when the relative error is undefined
        (``null``).  Skipped: ``{"balls", "urns", <extra>, "skipped": reason}``.

    Notes
    -----
    Cost: linear in the length of the exact value's text.
    """
    point = {"balls": row.point.balls, "urns": row.point.urns}
    for name in extra:
        value = row.point.value(name)
        point[name] = value if value is None or isinstance(value, int) else exact_text(value)
    if row.error is not None:
        return {**point, "skipped": spell(row.error)}
    payload = {
        **point,
        "exact": exact_text(row.exact),
        "approx": row.approx_text(),
        "relative_error_approx": float_or_text(row.relative_error_approx),
    }
    if row.relative_error_approx is None:
        payload["note"] = row.note
    return payload


def comparison_payload(comparison: Comparison, spell: Spell = _plain) -> dict:
    """The ``--json`` object of one comparison.

    Parameters
    ----------
    comparison : Comparison
    spell : callable, optional
        Turns an error into text.

    Returns
    -------
    dict
        ``{"approximation": name, "rows": [row, ...], "order_approx": float or
        None}`` with each row as :func:`row_payload` gives it
        (``order_approx`` is ``None`` unless two computed points have a
        nonzero error); ``{"approximation": name, "error": reason}`` for an
        approximation that could not run.

    Notes
    -----
    Cost: linear in the number of rows and the length of their values.
    """
    if comparison.error is not None:
        return {"approximation": comparison.approximation.name, "error": spell(comparison.error)}
    return {
        "approximation": comparison.approximation.name,
        "rows": [row_payload(row, spell, _extra_columns(comparison)) for row in comparison.rows],
        "order_approx": comparison.order_approx,
    }


def comparisons_payload(comparisons: Sequence[Comparison], spell: Spell = _plain, several: bool = False) -> dict:
    """The ``--json`` object of a run: one comparison's object, or ``{"comparisons": [...]}`` for several.

    Parameters
    ----------
    comparisons : sequence of Comparison
        At least one.
    spell : callable, optional
        Turns an error into text.
    several : bool
        Use the ``{"comparisons": [...]}`` form even for one (``all``).

    Returns
    -------
    dict

    Notes
    -----
    Cost: that of :func:`comparison_payload` for each.
    """
    payloads = [comparison_payload(c, spell) for c in comparisons]
    return payloads[0] if len(payloads) == 1 and not several else {"comparisons": payloads}


def _dumps(value) -> str:
    return json.dumps(value, ensure_ascii=False)


class _JsonWriter:
    """One JSON object written as its rows come: the text ``json.dumps`` of the whole would give."""

    def __init__(self, out: TextIO, several: bool, spell: Spell):
        self.out, self.several, self.spell = out, several, spell
        self.first_comparison = True
        self.first_row = True
        self.extra: List[str] = []
        if several:
            out.write('{"comparisons": [')

    def _open(self) -> None:
        if self.several and not self.first_comparison:
            self.out.write(", ")
        self.first_comparison = False

    def begin(self, plan: Plan) -> None:
        self._open()
        self.out.write('{"approximation": ' + _dumps(plan.approximation.name) + ', "rows": [')
        self.first_row = True
        self.extra = _extra_columns(plan)

    def row(self, row: Row, local: Optional[float]) -> None:
        if not self.first_row:
            self.out.write(", ")
        self.first_row = False
        self.out.write(_dumps(row_payload(row, self.spell, self.extra)))
        self.out.flush()

    def end(self, comparison: Comparison) -> None:
        self.out.write('], "order_approx": ' + _dumps(comparison.order_approx) + "}")
        self.out.flush()

    def failed(self, plan: Plan) -> None:
        self._open()
        self.out.write(_dumps({"approximation": plan.approximation.name, "error": self.spell(plan.error)}))
        self.out.flush()

    def close(self, plot: Optional[str]) -> None:
        self.out.write("]}\n" if self.several else "\n")
        self.out.flush()


# ---------------------------------------------------------------------------
# Tables for people
# ---------------------------------------------------------------------------
def _short(value, digits: int = 10) -> str:
    return mpmath.nstr(value, digits, min_fixed=-5, max_fixed=digits)


def _extra_columns(comparison_or_plan) -> List[str]:
    uses = comparison_or_plan.approximation.uses
    return [name for name in ("capacity", "minimum", "at", "factor") if name in uses]


def _columns(entry, extra) -> List[str]:
    log = entry.scale == "log"
    return ["balls", "urns"] + extra + [
        "exact", "approx",
        "abs error of ln" if log else "abs error",
        "rel error of ln" if log else "rel error",
        "local order",
    ]


def _exact_cell(row: Row) -> str:
    """The exact value if it is short, else ``≈`` and 10 digits (never writing a huge value out)."""
    value = row.exact
    numerator, denominator = value.numerator, value.denominator
    if int(numerator).bit_length() + int(denominator).bit_length() <= 56:
        text = exact_text(value)
        if len(text) <= 16:
            return text
    with mpmath.workdps(max(row.dps, 30)):
        return "≈" + _short(to_mpf(value))


def _row_cells(row: Row, extra: Sequence[str], local: Optional[float], spell: Spell) -> List[str]:
    cells = [str(row.point.balls), str(row.point.urns)] + [str(row.point.value(name)) for name in extra]
    if row.error is not None:
        return cells + ["skipped: " + spell(row.error)]
    rel = row.relative_error_approx
    return cells + [
        _exact_cell(row),
        _short(row.approx),
        mpmath.nstr(row.absolute_error_approx, 4),
        "undefined" if rel is None else mpmath.nstr(rel, 4),
        "" if local is None else f"{local:.2f}",
    ]


def comparison_table(comparison: Comparison, spell: Spell = _plain) -> Tuple[List[str], List[List[str]]]:
    """Column names and text rows of *comparison* for people.

    Parameters
    ----------
    comparison : Comparison
    spell : callable, optional
        Turns a skip reason into text.

    Returns
    -------
    columns : list of str
        ``balls``, ``urns``, the other parameters the approximation uses,
        ``exact``, ``approx``, the two errors (``of ln`` on the log scale)
        and ``local order``.
    rows : list of list of str
        One per point; a skipped point has its parameters and then one cell
        ``skipped: reason``.

    Notes
    -----
    An exact value longer than 16 characters is shown rounded to 10 digits
    and marked ``≈`` (the ``--json`` and ``--csv`` forms carry it whole; the
    choice is made from bit lengths, so a huge value is never written out
    here); the approximation is shown to 10 digits, the errors to 4.  Cost:
    linear in the number of rows, at each row's working precision.
    """
    extra = _extra_columns(comparison)
    columns = _columns(comparison.approximation, extra)
    rows = [_row_cells(row, extra, local, spell)
            for row, local in zip(comparison.rows, comparison.local_orders())]
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
    seen = ("n/a (needs two computed points with a nonzero error)" if comparison.order_approx is None
            else f"{comparison.order_approx:.3f}")
    theory = "" if entry.order is None else f"; theory: {exact_text(entry.order)} when {entry.regime}"
    return f"observed order (slope of ln|rel error| vs ln {comparison.variable}, sign flipped) ≈ {seen}{theory}"


#: Width of each value column of the streamed table (a longer cell widens its own line only).
_WIDTHS = {"exact": 17, "approx": 17, "abs error": 10, "rel error": 10, "abs error of ln": 15,
           "rel error of ln": 15, "local order": 11}


class _TableWriter:
    """The table for people, one line per point printed as soon as it is computed.

    Column widths are fixed before the first row (from the sweep's parameter
    values and the usual width of rounded numbers), so nothing waits for the
    whole sweep.  Titles and lines are written literally (``[x^n]`` stays).
    """

    def __init__(self, out: TextIO, spell: Spell):
        self.out, self.spell = out, spell
        self.count = 0

    def _line(self, cells: Sequence[str]) -> None:
        parts = []
        for i, cell in enumerate(cells):
            width = self.widths[i] if i < len(self.widths) else 0
            if cell.startswith("skipped: "):
                parts.append(cell)
            else:
                parts.append(cell.rjust(width))
        self.out.write("  ".join(parts).rstrip() + "\n")
        self.out.flush()

    def _title(self, entry) -> None:
        if self.count:
            self.out.write("\n")
        self.count += 1
        scale = " (errors of ln W: log scale)" if entry.scale == "log" else ""
        self.out.write(f"{entry.name}: {entry.quantity} ≈ {entry.formula}{scale}\n")

    def begin(self, plan: Plan) -> None:
        entry = plan.approximation
        self._title(entry)
        self.extra = _extra_columns(plan)
        columns = _columns(entry, self.extra)
        self.widths = []
        for name in columns:
            if name in _WIDTHS:
                self.widths.append(max(len(name), _WIDTHS[name]))
            else:
                values = [len(str(point.value(name))) for point in plan.points]
                self.widths.append(max([len(name), *values]))
        self._line(columns)
        self._line(["-" * w for w in self.widths])

    def row(self, row: Row, local: Optional[float]) -> None:
        self._line(_row_cells(row, self.extra, local, self.spell))

    def end(self, comparison: Comparison) -> None:
        self.out.write(describe_order(comparison) + "\n")
        self.out.write(f"source: {comparison.approximation.source}\n")
        self.out.flush()

    def failed(self, plan: Plan) -> None:
        self._title(plan.approximation)
        self.out.write(f"not compared: {self.spell(plan.error)}\n")
        self.out.flush()

    def close(self, plot: Optional[str]) -> None:
        if plot is not None:
            self.out.write(f"plot: {plot}\n")
        self.out.flush()


def show_comparisons(comparisons: Sequence[Comparison], plot: Optional[str] = None,
                     spell: Spell = _plain) -> None:
    """Print each comparison as a table, its observed order and its source; then the plot's path.

    Parameters
    ----------
    comparisons : sequence of Comparison
    plot : str, optional
        The file a plot was written to, named last.
    spell : callable, optional
        Turns an error into text.

    Notes
    -----
    The same text :func:`stream_comparisons` prints as the rows come.  Cost:
    that of :func:`comparison_table` for each.
    """
    _replay(_TableWriter(sys.stdout, spell), comparisons, plot)


def _replay(writer, comparisons: Sequence[Comparison], plot: Optional[str]) -> None:
    for comparison in comparisons:
        plan = Plan(comparison.approximation, tuple(row.point for row in comparison.rows),
                    comparison.variable, comparison.error)
        if comparison.error is not None:
            writer.failed(plan)
            continue
        writer.begin(plan)
        for row, local in zip(comparison.rows, comparison.local_orders()):
            writer.row(row, local)
        writer.end(comparison)
    writer.close(plot)


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


class _CsvWriter:
    """CSV with a header (:data:`CSV_COLUMNS`), one line per point as it is computed."""

    def __init__(self, out: TextIO, spell: Spell):
        self.out, self.spell = out, spell
        self.writer = csv.writer(out, lineterminator="\n")
        self.writer.writerow(CSV_COLUMNS)

    def begin(self, plan: Plan) -> None:
        self.entry = plan.approximation

    def row(self, row: Row, local: Optional[float]) -> None:
        p, uses = row.point, self.entry.uses
        cells = [
            self.entry.name, p.balls, p.urns,
            p.capacity if "capacity" in uses else "",
            p.minimum if "minimum" in uses else "",
            p.at if "at" in uses else "",
            p.factor if "factor" in uses else "",
        ]
        if row.error is not None:
            cells += ["", "", "", "", "", self.spell(row.error)]
        else:
            cells += [
                exact_text(row.exact), row.approx_text(),
                _float_text(row.absolute_error_approx), _float_text(row.relative_error_approx),
                _float_text(local), row.note or "",
            ]
        self.writer.writerow(cells)
        self.out.flush()

    def end(self, comparison: Comparison) -> None:
        pass

    def failed(self, plan: Plan) -> None:
        self.writer.writerow([plan.approximation.name] + [""] * (len(CSV_COLUMNS) - 2)
                             + ["not compared: " + self.spell(plan.error)])
        self.out.flush()

    def close(self, plot: Optional[str]) -> None:
        self.out.flush()


def comparisons_csv(comparisons: Sequence[Comparison], spell: Spell = _plain) -> str:
    """All rows of *comparisons* as CSV text with a header (:data:`CSV_COLUMNS`).

    Parameters
    ----------
    comparisons : sequence of Comparison
    spell : callable, optional
        Turns an error into text.

    Returns
    -------
    str
        The header and one line per row of every comparison, ``\\n``-terminated.

    Notes
    -----
    ``exact`` is exact (``p`` or ``p/q``); ``approx`` and the ``*_approx``
    error and order columns are decimal numbers (17 significant digits for
    the errors, never overflowing to ``inf``); parameters a comparison does
    not use, and undefined errors or orders, are empty, and ``note`` says
    why a value is missing (a skipped point, an undefined relative error,
    an approximation that could not run).  Cost: linear in the number of
    rows and the length of their values.
    """
    out = io.StringIO()
    _replay(_CsvWriter(out, spell), comparisons, None)
    return out.getvalue()


# ---------------------------------------------------------------------------
# Streaming
# ---------------------------------------------------------------------------
def stream_comparisons(plans: Sequence[Plan], form: str = "table", several: Optional[bool] = None,
                       plot: Optional[str] = None, spell: Spell = _plain,
                       out: Optional[TextIO] = None) -> List[Comparison]:
    """Run each plan point by point and print every row as soon as it is computed.

    Parameters
    ----------
    plans : sequence of Plan
        From :func:`~enumerator.algorithms.asymptotics.plan_sweep`.
    form : {"table", "csv", "json"}
        The table for people, CSV, or one JSON object.
    several : bool, optional
        JSON: the ``{"comparisons": [...]}`` form (default: when there is
        more than one plan).
    plot : str, optional
        A plot file drawn afterwards (named at the end of the table).
    spell : callable, optional
        Turns an error into text (the CLI writes parameters as flags).
    out : file, optional
        Default ``sys.stdout``.

    Returns
    -------
    list of Comparison
        One per plan (an approximation that could not run has its
        ``error``), for the plot and the exit status.

    Notes
    -----
    Each row is written and flushed before the next point is computed
    (:func:`~enumerator.algorithms.asymptotics.iter_rows`); a skipped point
    is a row with its reason, and the sweep goes on.  The JSON text, once
    complete, is exactly ``json.dumps`` of :func:`comparisons_payload`.
    Cost: the comparisons themselves plus linear output.
    """
    out = sys.stdout if out is None else out
    several = len(plans) > 1 if several is None else several
    if form == "json":
        writer = _JsonWriter(out, several, spell)
    elif form == "csv":
        writer = _CsvWriter(out, spell)
    else:
        writer = _TableWriter(out, spell)
    comparisons = []
    for plan in plans:
        if plan.error is not None:
            writer.failed(plan)
            comparisons.append(Comparison(plan.approximation, (), plan.variable, None, plan.error))
            continue
        writer.begin(plan)
        rows: List[Row] = []
        before = None
        for row in plan.rows():
            writer.row(row, local_order(before, row, plan.variable))
            rows.append(row)
            if row.error is None:
                before = row
        comparison = finish(plan.approximation, rows, plan.variable)
        writer.end(comparison)
        comparisons.append(comparison)
    writer.close(plot)
    return comparisons


# ---------------------------------------------------------------------------
# Plot
# ---------------------------------------------------------------------------
#: Beyond these decimal exponents matplotlib's log axes overflow; log10 values are drawn instead.
_LOG_AXIS_RANGE = 290


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
        Every relative error is zero, undefined or skipped, or *path* cannot be written.

    Notes
    -----
    One line per approximation, labelled with its observed order; points
    with a zero or undefined error, and skipped points, are left out.  The
    logarithms are taken by mpmath, so errors of any size are drawn: on
    log-log axes while every error lies within ``10^±290``, otherwise as
    ``log10 |relative error|`` on a linear axis (said in the label).  Uses
    matplotlib's non-interactive Agg backend (install the ``plot`` extra).
    Cost: linear in the number of rows, plus matplotlib's drawing.
    """
    plt = pyplot("--plot needs matplotlib; install enumerator[plot]")
    lines = []
    for comparison in comparisons:
        pairs = [
            (row.point.value(comparison.variable), float(mpmath.log10(row.relative_error_approx)))
            for row in comparison.rows
            if row.error is None and row.relative_error_approx is not None and row.relative_error_approx > 0
            and row.point.value(comparison.variable) > 0
        ]
        if pairs:
            lines.append((comparison, pairs))
    if not lines:
        raise InvalidParameters("nothing to plot: every relative error is zero, undefined or skipped")
    logs = [y for _, pairs in lines for _, y in pairs]
    in_range = max(abs(y) for y in logs) <= _LOG_AXIS_RANGE
    figure, axes = plt.subplots(figsize=(7, 4.5), dpi=110)
    variable = comparisons[0].variable
    for comparison, pairs in lines:
        order = comparison.order_approx
        label = comparison.approximation.name + ("" if order is None else f" (order ≈ {order:.2f})")
        xs = [x for x, _ in pairs]
        ys = [10.0 ** y for _, y in pairs] if in_range else [y for _, y in pairs]
        axes.plot(xs, ys, marker="o", markersize=3, label=label)
    axes.set_xscale("log")
    if in_range:
        axes.set_yscale("log")
    scale = {c.approximation.scale for c, _ in lines}
    what = "relative error" + (" of ln W" if scale == {"log"} else "")
    axes.set_xlabel(variable)
    axes.set_ylabel(what if in_range else f"log10 |{what}|")
    axes.set_title("exact vs approximate: " + ", ".join(c.approximation.name for c, _ in lines))
    axes.grid(True, which="both", linewidth=0.3)
    axes.legend()
    figure.tight_layout()
    try:
        figure.savefig(path)
    except OSError as error:
        raise InvalidParameters(f"cannot write the plot to {path!r}: {error.strerror or error}") from None
    finally:
        plt.close(figure)
