r"""Lookup tables: a grid of exact counts over balls x urns, built into the store.

A table fixes a rule, a quantity and uniform bounds (``minimum``, ``capacity``)
and spans ``n`` in a range of balls and ``r`` in a range of urns.  Its cells
are ordinary store entries (the same keys as ``UrnModel(...).configurations()``
and friends), so a built table answers single lookups and single lookups
fill tables.

Each row (fixed ``r``, every ``n``) comes from one generating-function pass:

* configurations, no capacity: the binomial row ``C(m + r - 1, r - 1)``
  (the series of ``(1 - x)^{-r}``), ``m = n - r a``;
* configurations with capacity ``c``: the coefficients of
  ``(1 + x + ... + x^{c-a})^r`` up to the top degree, one FLINT power
  (Riordan, *An Introduction to Combinatorial Analysis*, 1958, ch. 5);
* MB microstates: ``n! [x^n] (sum_{k=a}^{c} x^k / k!)^r``, the power of the
  factorial-scaled window in exact integers (Flajolet & Sedgewick,
  *Analytic Combinatorics*, 2009, §II.2); ``r^n`` when unbounded;
* profiles: the Gaussian binomial product
  ``prod_{i=1}^{r} (1 - q^{c-a+i}) / (1 - q^i)`` truncated at the top
  degree (Andrews, *The Theory of Partitions*, 1976, Thm 3.1).

A build commits row by row, so an interrupted build (Ctrl-C, a killed
process) keeps every finished row and a rerun computes only what is missing.
Several processes may build overlapping tables at once; each cell is stored
once.
"""

from __future__ import annotations

import re
import tempfile
import time
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable, Dict, Iterable, List, Optional, Tuple

import gmpy2
from flint import fmpz_poly

from ..core import series
from ..core.errors import InvalidParameters, StoreError, TooLarge
from ..core.exact import text_int
from ..core.model import UrnModel
from ..core.rules import Rule
from .context import current_store, open_store
from .database import Store
from .keys import ALGORITHM_VERSIONS, Key, key_digest, row_intact

__all__ = [
    "BuildReport",
    "EXPORT_FORMATS",
    "TableData",
    "TableSpec",
    "bench_workloads",
    "build_table",
    "export_table",
    "list_tables",
    "load_table",
    "parse_range",
    "row_values",
]

mpz = gmpy2.mpz

#: Quantities a table can hold.
QUANTITIES = ("configurations", "microstates", "profiles")
#: Largest number of cells in one table.
MAX_CELLS = 5_000_000
#: Export formats of :func:`export_table`.
EXPORT_FORMATS = ("csv", "json", "markdown", "latex")

_RANGE = re.compile(r"\s*(\d+)\s*(?:\.\.\s*(\d+)\s*)?")


def parse_range(text: str, name: str) -> range:
    """Parse ``"0..200"`` (both ends included) or a single ``"7"`` into a ``range``."""
    match = _RANGE.fullmatch(str(text))
    if not match:
        raise InvalidParameters(
            f"{name} must be a range like 0..200 (both ends included) or one whole number (got {text!r})"
        )
    first = int(match.group(1))
    last = int(match.group(2)) if match.group(2) is not None else first
    if last < first:
        raise InvalidParameters(f"{name} range {text!r} runs backwards; write the smaller end first")
    return range(first, last + 1)


def _range_text(values: range) -> str:
    return f"{values.start}..{values.stop - 1}"


@dataclass(frozen=True)
class TableSpec:
    """What a table holds: rule, quantity, uniform bounds, the balls and urns ranges."""

    rule: str
    quantity: str
    minimum: int
    capacity: Optional[int]
    balls: range
    urns: range

    @classmethod
    def make(cls, rule="BE", balls="0..10", urns="1..10", capacity=None, minimum=0,
             quantity: Optional[str] = None) -> "TableSpec":
        """Validate and normalise a table description (ranges as ``range`` or ``"a..b"``).

        *quantity* defaults to the equally likely outcomes (``microstates``);
        for BE and FD those are the configurations, and are stored as such.
        """
        rule_ = Rule.parse(rule)
        balls = balls if isinstance(balls, range) else parse_range(balls, "balls")
        urns = urns if isinstance(urns, range) else parse_range(urns, "urns")
        if balls.step != 1 or urns.step != 1 or not len(balls) or not len(urns):
            raise InvalidParameters("balls and urns must be non-empty ranges of consecutive numbers")
        if urns.start < 1:
            raise InvalidParameters(f"urns must start at 1 or more (got {_range_text(urns)})")
        quantity = "microstates" if quantity is None else str(quantity).strip().lower()
        if quantity not in QUANTITIES:
            raise InvalidParameters(
                f"quantity must be one of {', '.join(QUANTITIES)} (got {quantity!r})"
            )
        if rule_ is not Rule.MB and quantity == "microstates":
            quantity = "configurations"
        cells = len(balls) * len(urns)
        if cells > MAX_CELLS:
            raise TooLarge(
                f"the table would have {cells} cells, above the limit {MAX_CELLS}; narrow balls= or urns=",
                parameters=["balls", "urns"],
            )
        # the model validates the bounds (and normalises FD's capacity to 1)
        probe = UrnModel(balls=0, urns=urns.start, rule=rule_, capacity=capacity,
                          minimum=0 if minimum is None else minimum)
        (group,) = probe.groups  # uniform: one group, whatever the number of urns
        a, b = group.lower, group.upper
        return cls(rule_.value, quantity, a, b, range(balls.start, balls.stop), range(urns.start, urns.stop))

    @property
    def cells(self) -> int:
        """The number of cells ``len(balls) * len(urns)``."""
        return len(self.balls) * len(self.urns)

    def bounds_text(self, r: int) -> str:
        """The canonical bounds of the ``r``-urn models in this table."""
        one = f"{self.minimum}:" if self.capacity is None else f"{self.minimum}:{self.capacity}"
        return f"{r}*{one}"

    def default_name(self) -> str:
        """A name made of the definition, e.g. ``BE-configurations-n0..200-r1..50``."""
        name = f"{self.rule}-{self.quantity}-n{_range_text(self.balls)}-r{_range_text(self.urns)}"
        if self.minimum:
            name += f"-min{self.minimum}"
        if self.capacity is not None and not (self.rule == "FD" and self.capacity == 1):
            name += f"-cap{self.capacity}"
        return name

    def describe(self) -> str:
        """One line for people."""
        bounds = f"at least {self.minimum}" if self.minimum else ""
        if self.capacity is not None:
            bounds += (", " if bounds else "") + f"at most {self.capacity}"
        bounds = f" ({bounds} per urn)" if bounds else ""
        return (
            f"{self.rule} {self.quantity}, balls {_range_text(self.balls)} x urns "
            f"{_range_text(self.urns)}{bounds}"
        )

    def as_row(self, name: str) -> dict:
        """The definition as a ``enumerator_tables`` row."""
        return {
            "name": name, "quantity": self.quantity, "rule": self.rule, "minimum": self.minimum,
            "capacity": self.capacity, "balls_first": self.balls.start, "balls_last": self.balls.stop - 1,
            "urns_first": self.urns.start, "urns_last": self.urns.stop - 1,
        }

    @classmethod
    def from_row(cls, row: dict) -> "TableSpec":
        """Rebuild a spec from a stored definition."""
        return cls(row["rule"], row["quantity"], row["minimum"], row["capacity"],
                   range(row["balls_first"], row["balls_last"] + 1),
                   range(row["urns_first"], row["urns_last"] + 1))


# ---------------------------------------------------------------------------
# one row in one pass
# ---------------------------------------------------------------------------

def row_values(rule: str, quantity: str, urns: int, minimum: int, capacity: Optional[int],
               top: int) -> Tuple[List[int], str]:
    """Return ``([value(n) for n in 0..top], method)`` for ``r = urns`` fixed.

    One generating-function pass gives the whole row (see the module
    docstring); the values equal the single counts of
    :mod:`enumerator.counting` for the same models.  Cost: one FLINT power of
    a length-``top`` series (or ``O(top)`` big multiplications for the
    closed-form rows).
    """
    r, a, b = urns, minimum, capacity
    out = [0] * (top + 1)
    low = r * a
    span_top = top - low  # largest m = n - r a in the row
    if quantity == "microstates" and rule != "MB":
        quantity = "configurations"
    if quantity == "configurations":
        if span_top < 0:
            return out, "table row: no admissible vector"
        if b is None:
            row = series.binomial_row(r, span_top)
            method = "table row: binomial row C(m+r-1, r-1)"
        else:
            poly = series.power(series.window(0, b - a), r, span_top)
            row = series.coefficients(poly, span_top)
            method = "table row: FLINT power (1+x+...+x^(c-a))^r"
        for m in range(span_top + 1):
            out[low + m] = int(row[m])
        return out, method
    if quantity == "microstates":
        if a == 0 and b is None:
            value = mpz(1)
            for n in range(top + 1):
                out[n] = int(value)
                value *= r
            return out, "table row: r^n"
        if span_top < 0:
            return out, "table row: no admissible assignment"
        top_urn = a + span_top if b is None else min(b, a + span_top)
        if top_urn == a:
            out[low] = int(gmpy2.divexact(gmpy2.fac(low), gmpy2.fac(a) ** r))
            return out, "table row: n!/(a!)^r"
        if a == 0 and r > 2 * (top + 1):
            return _occupied_urns_row(r, top_urn, top), "table row: sum over occupied urns C(r,j) n! [x^n] (e_c(x)-1)^j"
        poly = series.power(series.falling_window(a, top_urn), r, span_top)
        coeffs = series.coefficients(poly, span_top)
        scale = gmpy2.fac(top_urn) ** r
        fac_n = gmpy2.fac(low)
        for m in range(span_top + 1):
            n = low + m
            if m:
                fac_n *= n
            c = coeffs[m]
            if c:
                out[n] = int(gmpy2.divexact(mpz(c) * fac_n, scale))
        return out, "table row: EGF power n! [x^n] (sum x^k/k!)^r"
    if quantity == "profiles":
        if span_top < 0:
            return out, "table row: no admissible profile"
        length = span_top + 1
        poly = fmpz_poly([1])
        for i in range(1, min(r, span_top) + 1):
            poly = poly.mul_low(fmpz_poly([1 if j % i == 0 else 0 for j in range(length)]), length)
        if b is not None:
            for i in range(1, r + 1):
                step = b - a + i
                if step > span_top:
                    break
                poly = poly.mul_low(series.one_minus_power(step, 1, span_top), length)
        row = series.coefficients(poly, span_top)
        for m in range(length):
            out[low + m] = int(row[m])
        return out, "table row: Gaussian binomial product"
    raise InvalidParameters(f"quantity must be one of {', '.join(QUANTITIES)} (got {quantity!r})")


def _occupied_urns_row(r: int, top_urn: int, top: int) -> List[int]:
    """MB microstates ``n! [x^n] (1 + q)^r`` for ``n <= top``, by the number ``j`` of occupied urns.

    ``q = sum_{k=1}^{top_urn} x^k / k!`` (an occupied urn with at most
    ``top_urn`` balls), so ``(1 + q)^r = sum_j C(r, j) q^j`` and only
    ``j <= top`` reach degree ``top``: the row never raises anything to the
    power ``r`` (any size, ``2**64`` urns included).  ``q^j`` is kept in
    integers scaled by ``top_urn!^j``; ``C(r, j)`` is updated from
    ``C(r, j - 1)`` by one multiplication and one exact division.
    Flajolet & Sedgewick, *Analytic Combinatorics*, 2009, §II.3 (EGFs of
    allocations with bounded urns).  Cost: ``top`` truncated products of
    length ``top + 1``.
    """
    length = top + 1
    scaled = fmpz_poly([0] + [int(c) for c in series.coefficients(series.falling_window(1, top_urn), top_urn - 1)])
    scale = gmpy2.fac(top_urn)
    out = [mpz(0)] * length
    out[0] = mpz(1)  # j = 0: the empty allocation
    power = fmpz_poly([1])
    choose = mpz(1)
    fac = [mpz(1)] * length
    for n in range(1, length):
        fac[n] = fac[n - 1] * n
    for j in range(1, length):
        power = power.mul_low(scaled, length)
        choose = gmpy2.divexact(choose * (r - j + 1), j)
        divisor = scale ** j
        coeffs = series.coefficients(power, top)
        for n in range(j, length):
            c = coeffs[n]
            if c:
                out[n] += choose * gmpy2.divexact(mpz(c) * fac[n], divisor)
    return [int(v) for v in out]


# ---------------------------------------------------------------------------
# build, list, load, export
# ---------------------------------------------------------------------------

@dataclass
class BuildReport:
    """What a build did: cells computed now, cells found stored, rows, seconds."""

    name: str
    spec: TableSpec
    computed: int = 0
    reused: int = 0
    stored: int = 0
    rows_computed: int = 0
    seconds_approx: float = 0.0
    read_only: bool = False


def _need_store(store) -> Store:
    target = open_store(store) if store is not None else current_store()
    if target is None:
        raise StoreError(
            "tables live in the result store, which is switched off (no_cache= or "
            "ENUMERATOR_NO_CACHE); drop no_cache= or unset ENUMERATOR_NO_CACHE"
        )
    return target


def claim_table(spec: "TableSpec", name: str, target: Store) -> None:
    """Record the definition of table *name* in *target*, or check that the one stored there is the same.

    Raises
    ------
    InvalidParameters
        When a table of that name exists with another definition.

    Notes
    -----
    One upsert of the definition row; shared by the single-process and the
    distributed builds so they can never disagree on what a name means.
    """
    wanted = spec.as_row(name)
    saved = target.save_table(wanted)
    if saved is not None and not _same_definition(saved, wanted):
        raise InvalidParameters(
            f"a table named {name!r} already exists with another definition "
            f"({TableSpec.from_row(saved).describe()}); choose another name= or drop it first",
            parameters=["name"],
        )


def _same_definition(a: dict, b: dict) -> bool:
    keys = ("quantity", "rule", "minimum", "capacity", "balls_first", "balls_last", "urns_first", "urns_last")
    return all(a[k] == b[k] for k in keys)


def build_table(spec: TableSpec, *, name: Optional[str] = None, store=None,
                progress: Optional[Callable[[int, int, int], None]] = None) -> BuildReport:
    """Fill every cell of *spec* into the store, one generating-function pass per row.

    Parameters
    ----------
    spec : TableSpec
        The table (:meth:`TableSpec.make`).
    name : str, optional
        Its name (default :meth:`TableSpec.default_name`).
    store : Store or location, optional
        Where to build it (default: the current store).
    progress : callable, optional
        Called after each row as ``progress(urns, computed, reused)``.

    Returns
    -------
    BuildReport
        Cells computed now, found stored, newly stored, rows computed, time.

    Raises
    ------
    InvalidParameters
        When a table of that name exists with another definition.
    StoreError
        When the store is switched off or fails.

    Notes
    -----
    Cells already stored (by an earlier or a concurrent build, or by single
    lookups) are not recomputed; each row is committed as soon as it is
    computed, so an interrupted build loses at most the row in progress.
    Cost: one generating-function pass per row with a missing cell (see the
    module docstring) and one write transaction per such row.
    """
    target = _need_store(store)
    name = name or spec.default_name()
    started = time.perf_counter()
    claim_table(spec, name, target)
    report = BuildReport(name=name, spec=spec)
    version = ALGORITHM_VERSIONS[spec.quantity]
    for r in spec.urns:
        bounds = spec.bounds_text(r)
        have = target.stored_balls(spec.quantity, spec.rule, bounds, r, version, values=False)
        missing = [n for n in spec.balls if n not in have]
        reused = len(spec.balls) - len(missing)
        report.reused += reused
        if missing:
            t0 = time.perf_counter_ns()
            values, method = row_values(spec.rule, spec.quantity, r, spec.minimum, spec.capacity, max(missing))
            share = (time.perf_counter_ns() - t0) // len(missing)
            report.stored += target.put_many(
                (spec.quantity, Key(spec.rule, n, bounds, r), version, values[n], "",
                 method + " (row time shared)", share)
                for n in missing
            )
            report.computed += len(missing)
            report.rows_computed += 1
        if progress is not None:
            progress(r, len(missing), reused)
    report.read_only = target.read_only
    report.seconds_approx = time.perf_counter() - started
    return report


@dataclass
class TableData:
    """A table read back: its definition and every stored cell as exact text."""

    name: str
    spec: TableSpec
    #: ``(n, r) -> (decimal text, digits)``
    cells: Dict[Tuple[int, int], Tuple[str, int]] = field(default_factory=dict)

    @property
    def missing(self) -> int:
        """Cells of the grid not stored yet."""
        return self.spec.cells - len(self.cells)

    def value(self, balls: int, urns: int) -> int:
        """The exact value of one cell."""
        return text_int(self.cells[(balls, urns)][0])


def _stored_cells(target: Store, spec: TableSpec, urns: Iterable[int]) -> Dict[Tuple[int, int], Tuple[str, int]]:
    version = ALGORITHM_VERSIONS[spec.quantity]
    cells = {}
    wanted = set(spec.balls)
    for r in urns:
        bounds = spec.bounds_text(r)
        for n, (kind, text, digits, checksum, digest) in target.stored_balls(
            spec.quantity, spec.rule, bounds, r, version
        ).items():
            if n not in wanted:
                continue
            if (kind != "int" or not row_intact(digest, kind, text, digits, checksum)
                    or digest != key_digest(spec.quantity, Key(spec.rule, n, bounds, r), "", version)):
                raise StoreError(
                    f"the store {target.name} holds a damaged cell (n={n}, r={r}) of this table; "
                    "run 'enumerator cache verify --fix' or rebuild after 'enumerator cache clear'"
                )
            cells[(n, r)] = (text, digits)
    return cells


def load_table(name: str, store=None) -> TableData:
    """Read the table *name* and its stored cells (checksums checked)."""
    target = _need_store(store)
    row = target.table(name)
    if row is None:
        known = [t["name"] for t in target.tables()]
        hint = f" (known: {', '.join(known)})" if known else " (the store has no tables yet)"
        raise InvalidParameters(
            f"no table named {name!r} in {target.name}{hint}; see 'enumerator table list' "
            "or build one with 'enumerator table build'"
        )
    spec = TableSpec.from_row(row)
    return TableData(name=name, spec=spec, cells=_stored_cells(target, spec, spec.urns))


def list_tables(store=None) -> List[Tuple[str, TableSpec, int]]:
    """Every table as ``(name, spec, cells stored)``."""
    target = _need_store(store)
    out = []
    for row in target.tables():
        spec = TableSpec.from_row(row)
        out.append((row["name"], spec, len(_stored_cells(target, spec, spec.urns))))
    return out


def _latex_number(text: str) -> str:
    # \seqsplit lets a long digit string break across lines inside a p{} column
    return text if len(text) <= 30 else f"\\seqsplit{{{text}}}"


def export_table(data: TableData, fmt: str = "csv") -> str:
    """Render a table's stored cells in *fmt* (``csv``, ``json``, ``markdown``, ``latex``).

    One line per cell in the order of ``r`` then ``n``, with the exact value
    in full and its number of digits (the column that makes huge values
    readable at a glance).  JSON follows the project's encoding: every exact
    integer is a string of decimal digits.
    """
    fmt = str(fmt).lower()
    if fmt not in EXPORT_FORMATS:
        raise InvalidParameters(f"format must be one of {', '.join(EXPORT_FORMATS)} (got {fmt!r})")
    spec = data.spec
    order = sorted(data.cells, key=lambda cell: (cell[1], cell[0]))
    if fmt == "json":
        import json

        payload = {
            "name": data.name,
            "rule": spec.rule,
            "quantity": spec.quantity,
            "minimum": str(spec.minimum),
            "capacity": None if spec.capacity is None else str(spec.capacity),
            "balls": {"first": str(spec.balls.start), "last": str(spec.balls.stop - 1)},
            "urns": {"first": str(spec.urns.start), "last": str(spec.urns.stop - 1)},
            "missing": str(data.missing),
            "cells": [
                {"balls": str(n), "urns": str(r), "value": data.cells[(n, r)][0],
                 "digits": str(data.cells[(n, r)][1])}
                for n, r in order
            ],
        }
        return json.dumps(payload, ensure_ascii=False) + "\n"
    if fmt == "csv":
        lines = ["balls,urns,value,digits"]
        lines.extend(f"{n},{r},{data.cells[(n, r)][0]},{data.cells[(n, r)][1]}" for n, r in order)
        return "\n".join(lines) + "\n"
    title = f"{data.name}: {spec.describe()}"
    if fmt == "markdown":
        lines = [f"**{title}**", "", "| n | r | value | digits |", "| ---: | ---: | ---: | ---: |"]
        lines.extend(f"| {n} | {r} | {data.cells[(n, r)][0]} | {data.cells[(n, r)][1]} |" for n, r in order)
        return "\n".join(lines) + "\n"
    # latex
    lines = [
        "% needs \\usepackage{longtable} and \\usepackage{seqsplit}",
        "\\begin{longtable}{rrp{0.6\\linewidth}r}",
        f"\\caption{{{_latex_escape(title)}}}\\\\",
        "$n$ & $r$ & value & digits \\\\ \\hline",
        "\\endhead",
    ]
    lines.extend(
        f"{n} & {r} & {_latex_number(data.cells[(n, r)][0])} & {data.cells[(n, r)][1]} \\\\"
        for n, r in order
    )
    lines.append("\\end{longtable}")
    return "\n".join(lines) + "\n"


def _latex_escape(text: str) -> str:
    for char, repl in (("\\", "\\textbackslash{}"), ("_", "\\_"), ("%", "\\%"), ("&", "\\&"),
                       ("#", "\\#"), ("$", "\\$"), ("{", "\\{"), ("}", "\\}")):
        text = text.replace(char, repl)
    return text


# ---------------------------------------------------------------------------
# workloads for scripts/bench.py
# ---------------------------------------------------------------------------

def bench_workloads(directory: Optional[str] = None) -> Dict[str, Callable[[], object]]:
    """Return named zero-argument workloads for the benchmark harness (``scripts/bench.py``).

    Parameters
    ----------
    directory : str, optional
        Where the workloads' store files go (default: a new temporary folder).

    Returns
    -------
    dict of str to callable
        ``warm_lookup``: one ``microstates`` answered from the store (a new
        model each call, given the store explicitly, so neither an
        instance's memory nor ``ENUMERATOR_NO_CACHE`` plays a part);
        ``table_cold``: the 201 x 50 BE table built into a new, empty store
        file; ``table_warm``: the same build again, every cell found
        stored; ``cold_count_stored`` / ``cold_count_pure``: a count of
        ~10+ ms with the store (a fresh key each call) and without it, to
        measure the overhead.

    Notes
    -----
    Setting up computes the warm lookup once and builds the warm table
    (about a second).  Timings belong to the harness, never to tests.
    """
    from functools import partial

    from ..algorithms.counting import count_microstates
    from . import context as store_module

    root = Path(directory or tempfile.mkdtemp(prefix="enumerator-bench-"))
    lookup_store = open_store(str(root / "lookup.sqlite"))
    model_args = dict(balls=300, urns=40, rule="MB", capacity=12)

    def warm_lookup():
        model = UrnModel(**model_args)
        return store_module.remember("microstates", model, partial(count_microstates, model),
                                     store=lookup_store)

    warm_lookup()

    spec = TableSpec.make("BE", "0..200", "1..50")
    counter = {"cold": 0, "count": 0}

    def table_cold():
        counter["cold"] += 1
        # a new file each call, opened and closed here (not kept open for the process)
        fresh = Store(str(root / f"table-{counter['cold']}.sqlite"))
        try:
            return build_table(spec, store=fresh)
        finally:
            fresh.close()

    warm_store = open_store(str(root / "table-warm.sqlite"))
    build_table(spec, store=warm_store)

    def table_warm():
        return build_table(spec, store=warm_store)

    count_store = open_store(str(root / "count.sqlite"))

    def cold_count_stored():
        counter["count"] += 1
        model = UrnModel(balls=4000 + counter["count"], urns=600, rule="MB", capacity=9)
        return store_module.remember("microstates", model, partial(count_microstates, model),
                                     store=count_store)

    def cold_count_pure():
        counter["count"] += 1
        model = UrnModel(balls=4000 + counter["count"], urns=600, rule="MB", capacity=9)
        return count_microstates(model)

    return {
        "warm_lookup": warm_lookup,
        "table_cold": table_cold,
        "table_warm": table_warm,
        "cold_count_stored": cold_count_stored,
        "cold_count_pure": cold_count_pure,
    }
