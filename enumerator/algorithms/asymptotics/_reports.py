"""Tables, CSV and plots of comparisons (moving to the CLI layer)."""

from __future__ import annotations

import csv
import io
from typing import List, Sequence, Tuple

import mpmath

from ...core.errors import InvalidParameters, Unsupported
from ...core.exact import exact_text
from .catalogue import CATALOGUE, _to_mpf
from .comparison import Comparison

__all__ = ["CSV_COLUMNS", "catalogue_rows", "comparison_table", "comparisons_csv", "describe_order", "plot_comparisons"]


# ---------------------------------------------------------------------------
# Output helpers shared by the CLI and scripts
# ---------------------------------------------------------------------------
def _short(value, digits: int = 10) -> str:
    return mpmath.nstr(value, digits, min_fixed=-5, max_fixed=digits)


def comparison_table(comparison: Comparison) -> Tuple[List[str], List[List[str]]]:
    """Column names and text rows of *comparison* for people.

    An exact value longer than 16 characters is shown rounded to 10 digits
    and marked ``≈`` (the ``--json`` and ``--csv`` forms carry it whole);
    the approximation is shown to 10 digits, the errors to 4.
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
                text = "≈" + _short(_to_mpf(row.exact))
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
    """One line: the observed order and what theory says."""
    entry = comparison.approximation
    seen = "n/a (needs two points with a nonzero error)" if comparison.order_approx is None else f"{comparison.order_approx:.3f}"
    theory = "" if entry.order is None else f"; theory: {exact_text(entry.order)} when {entry.regime}"
    return f"observed order (slope of ln|rel error| vs ln {comparison.variable}, sign flipped) ≈ {seen}{theory}"


def catalogue_rows() -> List[dict]:
    """The catalogue as plain dicts (name, quantity, formula, scale, order, regime, uses, source)."""
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


CSV_COLUMNS = (
    "approximation", "balls", "urns", "capacity", "minimum", "at", "factor", "exact", "approx",
    "absolute_error_approx", "relative_error_approx", "local_order_approx",
)


def _float_text(value) -> str:
    # mpmath's decimal text: no overflow to inf for errors of counts beyond 1e308
    if value is None:
        return ""
    if isinstance(value, float):
        return repr(value)
    return mpmath.nstr(value, 17, min_fixed=-5, max_fixed=17)


def comparisons_csv(comparisons: Sequence[Comparison]) -> str:
    """All rows of *comparisons* as CSV text with a header (:data:`CSV_COLUMNS`).

    ``exact`` is exact (``p`` or ``p/q``); ``approx`` and the ``*_approx``
    error and order columns are decimal numbers (17 significant digits for
    the errors, never overflowing to ``inf``); parameters a comparison does
    not use, and undefined errors or orders, are empty.
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


def plot_comparisons(comparisons: Sequence[Comparison], path: str) -> None:
    """Draw the relative errors of *comparisons* against the varied parameter, log-log, to *path*.

    One line per approximation, labelled with its observed order; points
    with a zero or undefined error are left out.  Uses matplotlib's
    non-interactive Agg backend (install the ``plot`` extra).
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
