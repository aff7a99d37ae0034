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

A table is read back in bounded batches (:meth:`StoredTable.cells`): pages
of at most :data:`KEY_BATCH` keys in ``(r, n)`` order (keyset pagination;
``n`` and ``r`` are decimal text, compared by length then digits), then the
values by row id, at most :data:`VALUE_BATCH` cells or
:data:`VALUE_DIGITS` digits at a time.  So export, a window of
``table show`` and ``table list`` (one count query per table) need the
same memory whatever the table's size: under 80 MB for a table of
``10^6`` cells.  Exports are long (one line per cell) or wide (the
``n x r`` matrix, transposed through a temporary file), as text or as
Parquet (:func:`export_parquet`, with pyarrow).
"""

from __future__ import annotations

import json
import math
import re
import tempfile
import time
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable, Dict, Iterable, Iterator, List, Optional, Tuple, Union

import gmpy2
from flint import fmpz_poly

from ..algorithms.counting_costs import log2_factorial_approx
from ..core import limits, series
from ..core.errors import InvalidParameters, StoreError, TooLarge, Unsupported
from ..core.exact import text_int
from ..core.model import UrnModel
from ..core.rules import Rule
from .context import current_store, open_store
from .database import Store
from .keys import ALGORITHM_VERSIONS, Key, key_digest, row_intact

__all__ = [
    "BuildReport",
    "EXPORT_FORMATS",
    "EXPORT_LAYOUTS",
    "StoredTable",
    "TableData",
    "TablePlan",
    "TableSpec",
    "bench_workloads",
    "build_table",
    "check_table_plan",
    "claim_table",
    "export_lines",
    "export_parquet",
    "export_table",
    "list_tables",
    "load_table",
    "log10_approx",
    "need_store",
    "open_table",
    "parse_range",
    "plan_table",
    "row_values",
    "value_approx",
    "wide_rows",
]

mpz = gmpy2.mpz

#: Quantities a table can hold.
QUANTITIES = ("configurations", "microstates", "profiles")
#: Largest number of cells in one table.  It keeps the one reader whose memory
#: grows with the table bounded (the wide export holds 12 bytes a cell: 60 MB
#: here, :class:`_Spill`); a larger grid is built as several tables over parts
#: of the urns range.  Time and store size are planned separately
#: (:func:`plan_table`).
MAX_CELLS = 5_000_000
#: Export formats: the text ones of :func:`export_lines`, and Parquet (:func:`export_parquet`).
EXPORT_FORMATS = ("csv", "json", "markdown", "latex", "parquet")
#: Export layouts: one line per cell, or the ``n x r`` matrix.
EXPORT_LAYOUTS = ("long", "wide")

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
                f"the table would have {cells} cells, above the limit of {MAX_CELLS} cells a table; narrow "
                "balls= or urns=, or build the grid as several tables over parts of the urns range",
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

    @property
    def bounds_after_urns(self) -> str:
        """The bounds text after ``r`` (``"*0:"``, ``"*1:4"``): :meth:`bounds_text` is ``str(r)`` plus it."""
        return self.bounds_text(0)[1:]

    def what(self) -> str:
        """What the cells count, true for every table: ``"MB microstates"``, ``"FD configurations"``, ``"profiles ..."``.

        Profiles (occupancy patterns with the urns unlabelled) do not depend
        on the rule, only on the bounds, so no rule is named for them.
        """
        if self.quantity == "profiles":
            return "profiles (urns unlabelled, the same under every rule)"
        return f"{self.rule} {self.quantity}"

    def bounds_words(self) -> str:
        """The uniform bounds in words: ``"at least 1 and at most 4 per urn"``, ``"any number per urn"``.

        FD's one ball per urn is stated (``"at most 1 per urn"``), as is any
        capacity.
        """
        limits = []
        if self.minimum:
            limits.append(f"at least {self.minimum}")
        if self.capacity is not None:
            limits.append(f"at most {self.capacity}")
        return " and ".join(limits) + " per urn" if limits else "any number per urn"

    def describe(self) -> str:
        """One line for people, e.g. ``"FD configurations, at most 1 per urn, balls 0..10 x urns 1..4"``."""
        return (
            f"{self.what()}, {self.bounds_words()}, balls {_range_text(self.balls)} x urns "
            f"{_range_text(self.urns)}"
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


def need_store(store=None) -> Store:
    """The store tables are built in and read from: *store*, else the active one.

    Parameters
    ----------
    store : Store, StoreHandle, str or None
        A store or its location; ``None`` means
        :func:`~enumerator.store.context.current_store`.

    Returns
    -------
    Store

    Raises
    ------
    StoreError
        When no store is given and remembering is switched off (``no_cache=``
        or ``ENUMERATOR_NO_CACHE``), or the store cannot be opened.

    Notes
    -----
    Shared by the single-process table routes here and the cluster build
    (:mod:`enumerator.store.cluster`).  Cost: that of
    :func:`~enumerator.store.context.open_store`.
    """
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


# ---------------------------------------------------------------------------
# planning a build: its time, memory and store size, before any cell
# ---------------------------------------------------------------------------

#: Rows whose cost is estimated one by one at most: a table with more rows
#: left is estimated from this many of them, evenly spaced, each standing for
#: its share of the rows.
PLAN_ROWS = 512
#: Balls of a row at which the digits are estimated at most (evenly spaced,
#: each standing for its share of the row).
PLAN_BALLS = 1024
#: Count queries spent at most finding which rows of a resumed table are stored ...
PLAN_QUERIES = 48
#: ... and seconds (each query scans the table's stored cells once).
PLAN_QUERY_SECONDS = 0.4
#: Bytes a stored cell takes beside its digits (key, digest, checksum,
#: method text, the two indexes), measured on SQLite: 300 to 350.
CELL_OVERHEAD_BYTES = 340
#: The write path, measured (CPU, SQLite, the reference machine): per row
#: (one read of the stored balls, one transaction), per cell (key digest,
#: checksum, row) and per digit (decimal conversion and the bytes written).
ROW_WRITE_SECONDS = 1.5e-3
CELL_WRITE_SECONDS = 25e-6
DIGIT_WRITE_SECONDS = 30e-9

_LN2 = math.log(2.0)
_LOG10_2 = math.log10(2.0)


@dataclass(frozen=True)
class TablePlan:
    """What a build of a table would take, estimated before any cell is computed (:func:`plan_table`).

    Attributes
    ----------
    name : str
        The table's name.
    spec : TableSpec
        Its definition.
    cells : int
        Cells left to compute: the table's cells less those stored (exact,
        one count query).
    rows : int
        Rows with a cell left to compute (estimated when a stretch of rows
        is partly stored and the query budget ran out).
    seconds_approx : float
        Estimated seconds of the whole build: the rows' computation
        (divided by *workers*) plus the writes.
    compute_seconds_approx, write_seconds_approx : float
        Its two parts: the rows' computation in one process, and the
        writes (done by one process whatever the workers).
    memory : int
        Estimated peak bytes of one row's computation (rows are computed
        one at a time per process).
    digits_approx : int
        Estimated decimal digits of the cells left.
    store_bytes_approx : int
        Estimated bytes they add to the store (digits plus
        :data:`CELL_OVERHEAD_BYTES` a cell).
    workers : int
        The processes the rows' computation is divided by.
    sampled : bool
        True when the estimate extrapolates a sample of the rows or of the
        balls (:data:`PLAN_ROWS`, :data:`PLAN_BALLS`).
    """

    name: str
    spec: TableSpec
    cells: int
    rows: int
    seconds_approx: float
    memory: int
    digits_approx: int
    store_bytes_approx: int
    compute_seconds_approx: float = 0.0
    write_seconds_approx: float = 0.0
    workers: int = 1
    sampled: bool = False

    def spread(self, workers: int) -> "TablePlan":
        """The same plan with the rows' computation divided over *workers* processes."""
        from dataclasses import replace

        workers = max(1, int(workers))
        return replace(self, workers=workers,
                       seconds_approx=self.compute_seconds_approx / workers + self.write_seconds_approx)

    def describe(self) -> str:
        """One phrase for messages: ``"building table T (40,100 cells to compute, about 28.0 MB in the store)"``."""
        return (f"building table {self.name} ({self.cells:,} cells to compute, about "
                f"{limits.size_text(self.store_bytes_approx)} in the store)")


def _log2_factorials(k):
    """``log2 k!`` of a float array by Stirling's series (A&S 6.1.38 with the ``1/12k`` term); 0 below 2."""
    import numpy as np

    k = np.asarray(k, dtype=np.float64)
    safe = np.maximum(k, 1.0)
    out = (safe * np.log(safe) - safe + 0.5 * np.log(2 * np.pi * safe) + 1.0 / (12.0 * safe)) / _LN2
    return np.where(k < 2, 0.0, out)


def _log2_binomials(top, k):
    """``log2 C(top, k)`` of float arrays (Stirling), 0 where ``k <= 0`` or ``k >= top``."""
    import numpy as np

    top = np.asarray(top, dtype=np.float64)
    k = np.clip(np.asarray(k, dtype=np.float64), 0.0, None)
    value = _log2_factorials(top) - _log2_factorials(k) - _log2_factorials(np.maximum(top - k, 0.0))
    return np.maximum(value, 0.0)


def _log2_partitions(m):
    """``log2 p(m)`` by the Hardy–Ramanujan asymptotic ``e^{pi sqrt(2m/3)} / (4 sqrt(3) m)``, at least 0."""
    import numpy as np

    m = np.maximum(np.asarray(m, dtype=np.float64), 1.0)
    return np.maximum(math.pi * np.sqrt(2.0 * m / 3.0) / _LN2 - np.log2(4.0 * math.sqrt(3.0) * m), 0.0)


def _row_log2(spec: TableSpec, r: int, balls):
    """``(log2 estimate, zero mask)`` of the cells ``(n, r)`` for the array *balls*.

    The estimates are the sizes the counting planner works from
    (:mod:`enumerator.algorithms.counting_costs`), taken as the smaller of a
    few upper bounds, each off by a small factor at worst in the digits:
    configurations ``C(m + r - 1, m)`` with ``m = n - r a``, and with a
    room ``s = c - a`` at most ``(s + 1)^r`` and symmetric in ``m <-> r s -
    m`` (Riordan, 1958, ch. 5); MB ``r^n``, with bounds at most ``n! /
    (a!)^r`` times the configurations (each is a multinomial coefficient);
    profiles the Hardy–Ramanujan size of ``p(m)``, at most the
    configurations and, with a room, ``C(r + s, r)`` (Andrews, 1976,
    Thm 3.1).  Cost: ``O(len(balls))`` vectorised.
    """
    import numpy as np

    a, b = spec.minimum, spec.capacity
    n = np.asarray(balls, dtype=np.float64)
    m = n - r * a
    zero = m < 0
    room = None if b is None else b - a
    if room is not None:
        zero |= m > r * room
    mm = np.clip(m, 0.0, None) if room is None else np.clip(np.minimum(m, r * room - m), 0.0, None)
    configurations = _log2_binomials(mm + r - 1, mm)
    if room is not None:
        configurations = np.minimum(configurations, r * math.log2(room + 1))
    if spec.quantity == "profiles":
        value = np.minimum(_log2_partitions(mm), configurations)
        if room is not None:
            value = np.minimum(value, float(_log2_binomials(r + room, room)))
    elif spec.quantity == "microstates" and spec.rule == "MB":
        value = n * math.log2(r)
        if a or b is not None:
            bound = _log2_factorials(n) - r * float(_log2_factorials(a)) + configurations
            value = np.minimum(value, bound)
    else:
        value = configurations
    return np.where(zero, 0.0, np.maximum(value, 0.0)), zero


def _poly_seconds(length: float, bits: float) -> float:
    """One truncated FLINT product of two series of *length* coefficients of *bits* bits."""
    total = max(1.0, length * (bits + 2 * math.log2(length + 1)))
    return length / limits.STEPS_PER_SECOND + limits.product_seconds(total)


def _step_seconds(steps: float, bits: float) -> float:
    """*steps* big-by-small operations (a small multiplication, an exact division) on *bits*-bit numbers."""
    return steps * (1.0 / limits.STEPS_PER_SECOND + bits / limits.MULTIPLY_BITS_PER_SECOND)


def _row_cost(spec: TableSpec, r: int, top: int, bits: float) -> limits.Cost:
    """Seconds and bytes of :func:`row_values` for ``r`` urns up to ``top`` balls, entries of *bits* bits.

    Follows the routes of :func:`row_values`: the binomial row and ``r^n``
    in ``O(top)`` steps; a FLINT power (binary powering: about ``2 log2 r``
    truncated products, Knuth, *TAOCP* vol. 2, §4.6.3) of the window, whose
    MB coefficients are scaled by ``(c!)^r`` (``r log2 c!`` bits), plus one
    exact division per cell; the occupied-urns sum, ``top`` products and
    ``top^2 / 2`` steps; the Gaussian binomial product, ``min(r, m)``
    products (and as many again with a capacity).  Measured against the
    routes, within a factor of about 2 (``tests/test_table_plan.py``).
    """
    a, b = spec.minimum, spec.capacity
    span = top - r * a
    if span < 0:
        return limits.Cost()
    length = span + 1
    held = limits.Cost(memory=4 * length * limits.bigint_bytes(bits))
    powers = 2.0 * max(1.0, math.log2(max(r, 2)))
    if spec.quantity == "profiles":
        passes = min(r, span) + (0 if b is None else min(r, span // max(1, b - a + 1)))
        return limits.Cost(seconds=passes * _poly_seconds(length, bits), memory=held.memory)
    if spec.quantity == "configurations" or spec.rule != "MB":
        if b is None:
            return limits.Cost(seconds=_step_seconds(2 * length, bits), memory=held.memory)
        room = b - a
        if room * r <= series.FULL_POWER_RATIO * length:
            return limits.Cost(seconds=powers * _poly_seconds(min(length, room * r + 1), bits), memory=held.memory)
        return limits.Cost(seconds=_step_seconds(3 * length, bits), memory=held.memory)
    if a == 0 and b is None:
        return limits.Cost(seconds=_step_seconds(top + 1, bits), memory=held.memory)
    top_urn = a + span if b is None else min(b, a + span)
    if top_urn == a:
        return limits.Cost(seconds=limits.product_seconds(bits) * 4, memory=limits.bigint_bytes(bits) * 4)
    if a == 0 and r > 2 * (top + 1):
        scaled = top * log2_factorial_approx(top_urn) + 64
        seconds = top / 2 * _poly_seconds(top + 1, scaled) + _step_seconds(top * top / 2, bits)
        return limits.Cost(seconds=seconds, memory=4 * (top + 1) * limits.bigint_bytes(max(bits, scaled)))
    scaled = r * (log2_factorial_approx(top_urn) + 1.5) + 64
    seconds = (powers * _poly_seconds(min(length, top_urn * r + 1), scaled)
               + length * limits.product_seconds(scaled + bits))
    return limits.Cost(seconds=seconds, memory=3 * length * limits.bigint_bytes(scaled))


def _missing_stretches(spec: TableSpec, target: Store, stored: int) -> List[Tuple[range, float]]:
    """The stretches of rows with cells left, each with the share of its cells left.

    A stretch partly stored is halved (one count query for the first half)
    until it is all stored, all missing, a single row, or
    :data:`PLAN_QUERIES` queries or :data:`PLAN_QUERY_SECONDS` seconds are
    spent; a stretch left partly stored counts by the share of its cells
    left.  An interrupted build (rows are committed whole, in order) leaves
    one boundary, found in about ``log2(rows)`` queries.
    """
    if stored == 0:
        return [(spec.urns, 1.0)]
    if stored >= spec.cells:
        return []
    table = StoredTable("", spec, target)
    width = len(spec.balls)
    out: List[Tuple[range, float]] = []
    pending = [(spec.urns, stored)]
    queries = 0
    deadline = time.perf_counter() + PLAN_QUERY_SECONDS
    while pending:
        stretch, have = pending.pop()
        total = len(stretch) * width
        if have >= total:
            continue
        if have == 0 or len(stretch) == 1 or queries >= PLAN_QUERIES or time.perf_counter() > deadline:
            out.append((stretch, 1.0 - have / total))
            continue
        half = len(stretch) // 2
        first, second = stretch[:half], stretch[half:]
        in_first = table.stored(urns=first)
        queries += 1
        pending += [(second, have - in_first), (first, in_first)]
    return sorted(out, key=lambda item: item[0].start)


def _sample(stretches: List[Tuple[range, float]], budget: int) -> Tuple[List[Tuple[int, float]], bool]:
    """Rows ``(r, weight)`` standing for *stretches*: every row within *budget*, else evenly spaced ones."""
    rows = sum(len(stretch) for stretch, _ in stretches)
    if rows <= budget:
        return [(r, share) for stretch, share in stretches for r in stretch], False
    out = []
    for stretch, share in stretches:
        k = max(1, min(len(stretch), round(budget * len(stretch) / rows)))
        step = len(stretch) / k
        out += [(stretch[int((i + 0.5) * step)], share * step) for i in range(k)]
    return out, True


def plan_table(spec: TableSpec, store=None, *, name: Optional[str] = None, workers: int = 1) -> TablePlan:
    """Estimate what building *spec* would take, before any cell is computed.

    Parameters
    ----------
    spec : TableSpec
        The table (:meth:`TableSpec.make`).
    store : Store or location, optional
        The store it would be built in (default: the current store); its
        stored cells are left out of the plan.  A store that does not exist
        yet (``open_store(..., create=False)``) plans the whole table.
    name : str, optional
        The table's name, for messages (default :meth:`TableSpec.default_name`).
    workers : int
        Processes computing rows (the cluster route): the rows' time is
        divided by it, the writes (done by one client) are not.

    Returns
    -------
    TablePlan

    Notes
    -----
    Method: one count query gives the cells stored; when some are, a few
    more (at most :data:`PLAN_QUERIES` or :data:`PLAN_QUERY_SECONDS`,
    halving the urns range) find which rows are left.  Over those rows, the estimate is a **sum of per-row
    estimates** when there are at most :data:`PLAN_ROWS` rows, else a
    **sample of** :data:`PLAN_ROWS` **evenly spaced rows extrapolated**, each
    standing for its share.  A row's estimate is the cost of the route
    :func:`row_values` takes (:func:`_row_cost`: FLINT products rated by
    :func:`enumerator.core.limits.product_seconds`) plus the measured
    write path (:data:`ROW_WRITE_SECONDS`, :data:`CELL_WRITE_SECONDS`,
    :data:`DIGIT_WRITE_SECONDS`); its digits are the base-10 sizes of the
    counts estimated from ``log2`` bounds (:func:`_row_log2`), at every
    ball or at :data:`PLAN_BALLS` evenly spaced ones.  A row counts in full
    up to its top ball, even when some of its cells are stored (a row is
    one pass).  Estimates are rough, like every cost in
    :mod:`enumerator.core.limits`: the time within a factor of a few, the
    digits within a factor of two (upper bounds).  Cost: at most
    ``PLAN_ROWS * PLAN_BALLS`` vectorised evaluations and
    ``PLAN_QUERIES + 1`` count queries: well under a second for a table
    not built yet, whatever its size; a partly built one adds the count
    queries (each scans the stored cells once: 0.1 s for 3 * 10^5 cells).

    Examples
    --------
    >>> plan = plan_table(TableSpec.make("BE", "0..10", "1..4"), Store("sqlite://"))
    >>> plan.cells, plan.rows, plan.sampled
    (44, 4, False)
    """
    import numpy as np

    target = need_store(store)
    name = name or spec.default_name()
    stored = StoredTable(name, spec, target).stored()
    stretches = _missing_stretches(spec, target, stored)
    rows, row_sampled = _sample(stretches, PLAN_ROWS)
    balls = spec.balls
    if len(balls) <= PLAN_BALLS:
        points, per_point, ball_sampled = np.arange(balls.start, balls.stop, dtype=np.float64), 1.0, False
    else:
        points = np.floor(np.linspace(balls.start, balls.stop - 1, PLAN_BALLS))
        per_point, ball_sampled = len(balls) / PLAN_BALLS, True
    compute = writes = digits = 0.0
    memory = 0
    top = balls.stop - 1
    for r, weight in rows:
        log2s, zero = _row_log2(spec, r, points)
        row_digits = float(np.sum(np.where(zero, 1.0, np.floor(log2s * _LOG10_2) + 1.0))) * per_point
        cost = _row_cost(spec, r, top, float(log2s.max(initial=0.0)) + 64)
        compute += weight * cost.seconds
        memory = max(memory, cost.memory)
        writes += weight * (ROW_WRITE_SECONDS + len(balls) * CELL_WRITE_SECONDS)
        digits += weight * row_digits
    writes += digits * DIGIT_WRITE_SECONDS
    cells = spec.cells - stored
    return TablePlan(
        name=name, spec=spec, cells=cells,
        rows=round(sum(len(stretch) for stretch, _ in stretches)),
        seconds_approx=compute + writes,
        memory=memory, digits_approx=round(digits),
        store_bytes_approx=round(digits) + CELL_OVERHEAD_BYTES * cells,
        compute_seconds_approx=compute, write_seconds_approx=writes,
        sampled=row_sampled or ball_sampled,
    ).spread(workers)


def _free_bytes(target: Optional[Store]) -> Optional[Tuple[int, str]]:
    """``(free bytes, folder)`` where the SQLite file *target* lives (its nearest existing folder); None otherwise."""
    import shutil

    path = getattr(target, "path", None)
    if path is None:
        return None
    folder = Path(path).absolute().parent
    while not folder.exists() and folder != folder.parent:
        folder = folder.parent
    try:
        return shutil.disk_usage(folder).free, str(folder)
    except OSError:
        return None


def check_table_plan(plan: TablePlan, store=None) -> None:
    """Refuse a build whose :class:`TablePlan` is beyond the active limits or the free disk space.

    Parameters
    ----------
    plan : TablePlan
        From :func:`plan_table`.
    store : Store, optional
        The store it would be built in (one that does not exist yet
        included): for a SQLite file, the plan's store size is compared
        with the free space of its folder (:func:`shutil.disk_usage`).

    Raises
    ------
    TooLarge
        With one sentence: the table, the cells left, its store size, the
        time or memory and the limit (:func:`enumerator.core.limits.check`:
        ``max_seconds=`` / ``max_memory=`` or their environment variables),
        and what to change (the limit, the ranges, the workers); or the store
        size against the free disk space.

    Notes
    -----
    The time limit applies to the whole build (its seconds, divided by the
    workers for the cluster route), the memory limit to one row's peak.
    Cost: one :func:`shutil.disk_usage`.
    """
    if plan.cells == 0:
        return
    spread = "use more workers= or cluster=" if plan.workers > 1 else "spread the rows over workers= or cluster="
    limits.check(limits.Cost(seconds=plan.seconds_approx, memory=plan.memory), plan.describe(),
                 advice=f"narrow balls= or urns=, or {spread}",
                 parameters=["balls", "urns", "workers", "cluster"])
    free = _free_bytes(store)
    if free is not None and plan.store_bytes_approx > free[0]:
        raise TooLarge(
            f"{plan.describe()} would need about {limits.size_text(plan.store_bytes_approx)} of disk, more than the "
            f"{limits.size_text(free[0])} free in {free[1]}; narrow balls= or urns=, free space there, or choose "
            "another store=",
            parameters=["balls", "urns", "store"],
        )


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
    TooLarge
        Before anything is computed or written, when the whole build's
        :func:`plan_table` is beyond the active limits (its time against
        ``max_seconds=``, one row's memory against ``max_memory=``) or its
        store size beyond the free disk space (:func:`check_table_plan`).
    StoreError
        When the store is switched off or fails.

    Notes
    -----
    Cells already stored (by an earlier or a concurrent build, or by single
    lookups) are not recomputed, nor planned; each row is committed as soon as it is
    computed, so an interrupted build loses at most the row in progress.
    Cost: one generating-function pass per row with a missing cell (see the
    module docstring) and one write transaction per such row.
    """
    target = need_store(store)
    name = name or spec.default_name()
    started = time.perf_counter()
    # the whole build is planned, and refused past the limits, before anything is written
    check_table_plan(plan_table(spec, target, name=name), target)
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


#: Keys ``(r, n, row id, digits)`` read per query at most: the memory of one
#: page of keys, whatever the table's size.
KEY_BATCH = 20_000
#: Values read per query at most ...
VALUE_BATCH = 1_000
#: ... and their digits at most, so a batch of huge values stays small.
VALUE_DIGITS = 4_000_000
#: Urns named in one ``urns IN (...)`` query at most.
URN_BATCH = 500
#: Rows (long layout) or digits per Parquet row group, at most.
PARQUET_ROWS = 16_384
PARQUET_DIGITS = 1_000_000

#: One stored cell as read back: ``(n, r, decimal text, digits)``.
Cell = Tuple[int, int, str, int]


def _clip(wanted: Optional[range], whole: range) -> range:
    if wanted is None:
        return whole
    return range(max(wanted.start, whole.start), min(wanted.stop, whole.stop))


@dataclass(frozen=True)
class StoredTable:
    """A table found in a store (:func:`open_table`): its name, definition and store.

    Nothing is read until asked: :meth:`stored` counts cells in one query,
    :meth:`cells` streams them in bounded batches.
    """

    name: str
    spec: TableSpec
    store: Store

    def _fields(self) -> tuple:
        spec = self.spec
        return spec.quantity, spec.rule, ALGORITHM_VERSIONS[spec.quantity], spec.bounds_after_urns

    def stored(self, balls: Optional[range] = None, urns: Optional[range] = None) -> int:
        """Return how many cells of the table (or of the window *balls* x *urns*) are stored.

        Parameters
        ----------
        balls, urns : range, optional
            A window of the grid (default: the whole table), clipped to it.

        Returns
        -------
        int

        Notes
        -----
        One ``count(*)`` query (:meth:`~enumerator.store.database.Store.count_cells`).
        """
        balls, urns = _clip(balls, self.spec.balls), _clip(urns, self.spec.urns)
        if not balls or not urns:
            return 0
        return self.store.count_cells(*self._fields(), urns, balls)

    def cells(self, balls: Optional[range] = None, urns: Optional[range] = None) -> Iterator[Cell]:
        """Yield the stored cells (of the window *balls* x *urns*) as ``(n, r, text, digits)``, by ``r`` then ``n``.

        Parameters
        ----------
        balls, urns : range, optional
            A window of the grid (default: the whole table), clipped to it.

        Yields
        ------
        tuple
            ``(n, r, decimal text, digit count)`` of each stored cell.

        Raises
        ------
        StoreError
            On a damaged cell (checksum, digit count or key disagree).

        Notes
        -----
        Keyset pagination: each query reads at most :data:`KEY_BATCH` keys
        of at most :data:`URN_BATCH` urns (``urns IN (...)`` on the index,
        the ``n`` range as a WHERE term), then the values of at most
        :data:`VALUE_BATCH` cells or :data:`VALUE_DIGITS` digits by row id.
        Memory is one page of keys plus one batch of values, whatever the
        table's size; cost is one indexed pass over the window's rows.
        """
        balls, urns = _clip(balls, self.spec.balls), _clip(urns, self.spec.urns)
        if not balls or not urns:
            return
        fields = self._fields()
        per_query = max(1, min(URN_BATCH, KEY_BATCH // len(balls)))
        for start in range(urns.start, urns.stop, per_query):
            chunk = range(start, min(urns.stop, start + per_query))
            after = None
            while True:
                keys = self.store.cell_keys(*fields, chunk, balls, after=after, limit=KEY_BATCH)
                yield from self._values(keys)
                # a chunk of at most KEY_BATCH cells is read whole by one query
                if len(keys) < KEY_BATCH or len(chunk) * len(balls) <= KEY_BATCH:
                    break
                after = keys[-1][:2]

    def _values(self, keys: List[Tuple[int, int, int, int]]) -> Iterator[Cell]:
        batch: List[Tuple[int, int, int, int]] = []
        digits = 0
        for key in keys:
            if batch and (len(batch) >= VALUE_BATCH or digits + key[3] > VALUE_DIGITS):
                yield from self._checked(batch)
                batch, digits = [], 0
            batch.append(key)
            digits += key[3]
        if batch:
            yield from self._checked(batch)

    def _checked(self, batch: List[Tuple[int, int, int, int]]) -> Iterator[Cell]:
        quantity, rule, version, _ = self._fields()
        values = self.store.cell_values([key[2] for key in batch])
        for r, n, row_id, _ in batch:
            row = values.get(row_id)
            if row is None:
                continue  # removed since the keys were read (cache clear by another process)
            kind, text, digits, checksum, digest = row
            if (kind != "int" or not row_intact(digest, kind, text, digits, checksum)
                    or digest != key_digest(quantity, Key(rule, n, self.spec.bounds_text(r), r), "", version)):
                raise StoreError(
                    f"the store {self.store.name} holds a damaged cell (n={n}, r={r}) of this table; "
                    "run 'enumerator cache verify --fix --all' (a sample may miss it) or rebuild after 'enumerator cache clear'"
                )
            yield n, r, text, digits


@dataclass
class TableData:
    """A table read back: its definition and the stored cells read (all, or a window) as exact text."""

    name: str
    spec: TableSpec
    #: ``(n, r) -> (decimal text, digits)``
    cells: Dict[Tuple[int, int], Tuple[str, int]] = field(default_factory=dict)
    #: Cells of the whole table stored (None: all of them were read into *cells*).
    stored: Optional[int] = None

    @property
    def missing(self) -> int:
        """Cells of the whole grid not stored yet."""
        return self.spec.cells - (len(self.cells) if self.stored is None else self.stored)

    def value(self, balls: int, urns: int) -> int:
        """The exact value of one cell."""
        return text_int(self.cells[(balls, urns)][0])


def open_table(name: str, store=None) -> StoredTable:
    """Find the table *name* in the store (nothing else is read).

    Parameters
    ----------
    name : str
    store : Store, str or None
        The store or its location (default: the active store).

    Returns
    -------
    StoredTable
        Its cells are read on demand (:meth:`StoredTable.cells`).

    Raises
    ------
    InvalidParameters
        When the store has no table of that name (the message lists the
        known ones, or says there are none).
    """
    target = need_store(store)
    row = target.table(name)
    if row is None:
        known = [t["name"] for t in target.tables()]
        hint = f" (known: {', '.join(known)})" if known else " (the store has no tables yet)"
        raise InvalidParameters(
            f"no table named {name!r} in {target.name}{hint}; see 'enumerator table list' "
            "or build one with 'enumerator table build'"
        )
    return StoredTable(name, TableSpec.from_row(row), target)


def load_table(name: str, store=None, *, balls: Optional[range] = None,
               urns: Optional[range] = None) -> TableData:
    """Read the table *name*: every stored cell, or only the window *balls* x *urns* (checksums checked).

    With a window, only its cells are read (WHERE terms on ``n`` and ``r``)
    and :attr:`TableData.stored` counts the whole table's stored cells in
    one more query.  Memory: the cells read.
    """
    table = open_table(name, store)
    window = balls is not None or urns is not None
    cells = {(n, r): (text, digits) for n, r, text, digits in table.cells(balls, urns)}
    return TableData(name=name, spec=table.spec, cells=cells, stored=table.stored() if window else None)


def list_tables(store=None) -> List[Tuple[str, TableSpec, int]]:
    """Every table as ``(name, spec, cells stored)``: one query for the definitions, one count per table."""
    target = need_store(store)
    out = []
    for row in target.tables():
        table = StoredTable(row["name"], TableSpec.from_row(row), target)
        out.append((table.name, table.spec, table.stored()))
    return out


# ---------------------------------------------------------------------------
# export: long (one line per cell) or wide (n x r matrix), streamed
# ---------------------------------------------------------------------------

def _latex_number(text: str) -> str:
    # \seqsplit lets a long digit string break across lines inside a p{} column
    return text if len(text) <= 30 else f"\\seqsplit{{{text}}}"


def _source(table: Union[StoredTable, TableData]) -> Tuple[str, TableSpec, Callable[[], int],
                                                           Callable[[], Iterator[Cell]]]:
    """``(name, spec, missing, cells)`` of a stored table (streamed) or of cells already read.

    *missing* is a function: only the JSON documents state it, and for a
    stored table it costs a count query.
    """
    if isinstance(table, StoredTable):
        return table.name, table.spec, lambda: table.spec.cells - table.stored(), table.cells
    order = sorted(table.cells, key=lambda cell: (cell[1], cell[0]))

    def cells() -> Iterator[Cell]:
        for n, r in order:
            text, digits = table.cells[(n, r)]
            yield n, r, text, digits

    return table.name, table.spec, lambda: table.missing, cells


def _check_format(fmt: str, layout: str) -> Tuple[str, str]:
    fmt, layout = str(fmt).lower(), str(layout).lower()
    if fmt not in EXPORT_FORMATS:
        raise InvalidParameters(f"format must be one of {', '.join(EXPORT_FORMATS)} (got {fmt!r})")
    if layout not in EXPORT_LAYOUTS:
        raise InvalidParameters(f"layout must be one of {', '.join(EXPORT_LAYOUTS)} (got {layout!r})")
    return fmt, layout


def export_lines(table: Union[StoredTable, TableData], fmt: str = "csv",
                 layout: str = "long") -> Iterator[str]:
    """Yield a table's stored cells as text in *fmt* (``csv``, ``json``, ``markdown``, ``latex``).

    Parameters
    ----------
    table : StoredTable or TableData
        A table in a store (:func:`open_table`: the cells are streamed) or
        cells already read (:func:`load_table`).
    fmt : str
        ``csv``, ``json``, ``markdown`` or ``latex`` (``parquet`` is
        binary: :func:`export_parquet`).
    layout : str
        ``long``: one line per cell in the order of ``r`` then ``n``, with
        the exact value in full and its number of digits (the column that
        makes huge values readable at a glance); ``wide``: the ``n x r``
        matrix, one line per ``n`` and one column per ``r`` (a cell not
        stored is empty, or ``null`` in JSON).  Long JSON is the
        definition (``name``, ``rule``, ``quantity``, ``minimum``,
        ``capacity``, ``balls`` and ``urns`` as ``{"first", "last"}``,
        ``missing``) and ``cells``: ``[{"balls", "urns", "value",
        "digits"}]``; wide JSON is the same definition with ``"layout":
        "wide"``, ``columns`` (the ``r``) and ``rows``: ``[{"balls",
        "values"}]``.

    Yields
    ------
    str
        Pieces of the text, each ending a line except inside the JSON
        document (one line, like ``json.dumps``).  JSON follows the
        project's encoding: every exact integer is a string of decimal
        digits.

    Raises
    ------
    InvalidParameters
        For another *fmt* or *layout* (before anything is read).
    StoreError
        On a damaged cell.

    Notes
    -----
    Long: memory of one batch of cells (:meth:`StoredTable.cells`).  Wide:
    the cells are streamed once into a temporary file and each row is read
    back by offset (12 bytes per cell in memory, one row of values at a
    time: :func:`wide_rows`).  Cost: one pass over the cells, plus one count query for
    JSON (its ``missing``).
    """
    fmt, layout = _check_format(fmt, layout)
    if fmt == "parquet":
        raise InvalidParameters("parquet is a binary format: write it with export_parquet (--output FILE)")
    name, spec, missing, cells = _source(table)
    if layout == "wide":
        yield from _wide_lines(name, spec, missing, cells, fmt)
        return
    if fmt == "json":
        head = json.dumps(_json_head(name, spec, missing()), ensure_ascii=False)
        yield head[:-1] + ', "cells": ['
        first = True
        for n, r, text, digits in cells():
            cell = json.dumps({"balls": str(n), "urns": str(r), "value": text, "digits": str(digits)})
            yield cell if first else ", " + cell
            first = False
        yield "]}\n"
        return
    if fmt == "csv":
        yield "balls,urns,value,digits\n"
        for n, r, text, digits in cells():
            yield f"{n},{r},{text},{digits}\n"
        return
    title = f"{name}: {spec.describe()}"
    if fmt == "markdown":
        yield f"**{title}**\n\n| n | r | value | digits |\n| ---: | ---: | ---: | ---: |\n"
        for n, r, text, digits in cells():
            yield f"| {n} | {r} | {text} | {digits} |\n"
        return
    yield (
        "% needs \\usepackage{longtable} and \\usepackage{seqsplit}\n"
        "\\begin{longtable}{rrp{0.6\\linewidth}r}\n"
        f"\\caption{{{_latex_escape(title)}}}\\\\\n"
        "$n$ & $r$ & value & digits \\\\ \\hline\n"
        "\\endhead\n"
    )
    for n, r, text, digits in cells():
        yield f"{n} & {r} & {_latex_number(text)} & {digits} \\\\\n"
    yield "\\end{longtable}\n"


def _json_head(name: str, spec: TableSpec, missing: int) -> dict:
    return {
        "name": name,
        "rule": spec.rule,
        "quantity": spec.quantity,
        "minimum": str(spec.minimum),
        "capacity": None if spec.capacity is None else str(spec.capacity),
        "balls": {"first": str(spec.balls.start), "last": str(spec.balls.stop - 1)},
        "urns": {"first": str(spec.urns.start), "last": str(spec.urns.stop - 1)},
        "missing": str(missing),
    }


class _Spill:
    """The cells of a table written once to an unnamed temporary file, found by ``(row, column)``.

    ``offsets[i]`` (-1: not stored) and ``lengths[i]`` locate the value
    text of cell ``i = (n - first n) * len(urns) + (r - first r)``; NumPy
    arrays of 8 + 4 bytes per cell of the grid (60 MB for the largest
    table, ``MAX_CELLS``).  ``total`` is the length of all the texts.
    """

    def __init__(self, spec: TableSpec, cells: Iterable[Cell], handle):
        import numpy as np

        self.width = len(spec.urns)
        self.handle = handle
        self.offsets = np.full(spec.cells, -1, dtype=np.int64)
        self.lengths = np.zeros(spec.cells, dtype=np.uint32)  # a value text is far below 4 GB
        first_n, first_r, position = spec.balls.start, spec.urns.start, 0
        for n, r, text, _ in cells:
            data = text.encode("ascii")
            handle.write(data)
            at = (n - first_n) * self.width + (r - first_r)
            self.offsets[at], self.lengths[at] = position, len(data)
            position += len(data)
        handle.flush()
        self.total = position

    def read(self, at: int) -> Optional[bytes]:
        """The value text of cell *at* (None when it is not stored)."""
        where = int(self.offsets[at])
        if where < 0:
            return None
        self.handle.seek(where)
        return self.handle.read(int(self.lengths[at]))


def wide_rows(spec: TableSpec, cells: Iterable[Cell]) -> Iterator[Tuple[int, List[Optional[str]]]]:
    """Turn cells in any order into the rows ``(n, [value text or None for each r])`` of the matrix.

    Parameters
    ----------
    spec : TableSpec
        The grid the cells belong to.
    cells : iterable of tuple
        ``(n, r, decimal text, digits)``, in any order.

    Yields
    ------
    tuple
        ``(n, values)`` for each ``n`` of the grid in order; ``values`` has
        one text per ``r`` (``None`` for a cell not stored).

    Notes
    -----
    One pass over *cells* writes each value to an unnamed temporary file
    and records its offset and length (12 bytes per cell of the grid, see
    :class:`_Spill`); each row is then read back by offset.  Memory: the
    two arrays plus one row of values; disk: the values' digits.
    """
    with tempfile.TemporaryFile() as handle:
        spill = _Spill(spec, cells, handle)
        for row, n in enumerate(spec.balls):
            base = row * spill.width
            values = [spill.read(at) for at in range(base, base + spill.width)]
            yield n, [None if v is None else v.decode("ascii") for v in values]


def _wide_lines(name: str, spec: TableSpec, missing: Callable[[], int], cells: Callable[[], Iterator[Cell]],
                fmt: str) -> Iterator[str]:
    columns = [str(r) for r in spec.urns]
    rows = wide_rows(spec, cells())
    if fmt == "json":
        head = dict(_json_head(name, spec, missing()), layout="wide", columns=columns)
        text = json.dumps(head, ensure_ascii=False)
        yield text[:-1] + ', "rows": ['
        for i, (n, values) in enumerate(rows):
            row = json.dumps({"balls": str(n), "values": values})
            yield row if i == 0 else ", " + row
        yield "]}\n"
        return
    if fmt == "csv":
        yield "balls," + ",".join(f"urns={r}" for r in columns) + "\n"
        for n, values in rows:
            yield f"{n}," + ",".join("" if v is None else v for v in values) + "\n"
        return
    title = f"{name}: {spec.describe()}"
    if fmt == "markdown":
        yield (f"**{title}** (rows n, columns r)\n\n| n \\ r | " + " | ".join(columns) + " |\n"
               + "| ---: " * (len(columns) + 1) + "|\n")
        for n, values in rows:
            yield f"| {n} | " + " | ".join("" if v is None else v for v in values) + " |\n"
        return
    yield (
        "% needs \\usepackage{longtable} and \\usepackage{seqsplit}\n"
        f"\\begin{{longtable}}{{r{'r' * len(columns)}}}\n"
        f"\\caption{{{_latex_escape(title)}}}\\\\\n"
        "$n \\backslash r$ & " + " & ".join(columns) + " \\\\ \\hline\n"
        "\\endhead\n"
    )
    for n, values in rows:
        yield f"{n} & " + " & ".join("" if v is None else _latex_number(v) for v in values) + " \\\\\n"
    yield "\\end{longtable}\n"


def export_table(data: Union[StoredTable, TableData], fmt: str = "csv", layout: str = "long") -> str:
    """Return :func:`export_lines` joined into one text (small tables; stream large ones)."""
    return "".join(export_lines(data, fmt, layout))


def value_approx(text: str) -> float:
    """The nearest double of a decimal text (``inf`` beyond the double range, about ``1.8e308``).

    Parameters
    ----------
    text : str
        Decimal digits of a non-negative integer.

    Returns
    -------
    float
        Python's correctly rounded ``float(text)``; ``inf`` for more than
        309 digits without parsing them (constant cost there, else linear).
    """
    return math.inf if len(text) > 309 else float(text)


def log10_approx(text: str) -> float:
    """``log10`` of a non-negative decimal text to double precision (``-inf`` for 0), from its first 17 digits.

    Parameters
    ----------
    text : str
        Decimal digits of a non-negative integer, without leading zeros.

    Returns
    -------
    float
        ``(digits - 17) + log10(first 17 digits)``: the dropped digits
        change it by less than ``1e-16``; constant cost.
    """
    head = text[:17]
    if int(head) == 0:
        return -math.inf
    return (len(text) - len(head)) + math.log10(int(head))


def _pyarrow():
    try:
        import pyarrow
        import pyarrow.parquet
    except ImportError:
        raise Unsupported(
            "Parquet export needs the pyarrow package, which is not installed here; install it "
            "(pip install pyarrow, or pip install 'enumerator[parquet]') or export as csv or json"
        ) from None
    return pyarrow, pyarrow.parquet


def export_parquet(table: Union[StoredTable, TableData], path, layout: str = "long") -> int:
    """Write a table's stored cells to the Parquet file *path*; return the rows written.

    Parameters
    ----------
    table : StoredTable or TableData
        As :func:`export_lines`.
    path : str or os.PathLike
        The file to write (replaced).
    layout : str
        ``long``: columns ``balls``, ``urns``, ``value`` (exact decimal
        text), ``digits``, ``value_approx`` (the nearest double, ``inf``
        past ``1.8e308``) and ``log10_approx``; ``wide``: ``balls``, then
        for each ``r`` the exact text ``urns=r`` and the double
        ``urns=r_approx`` (null where a cell is not stored).  ``balls`` and
        ``urns`` are 64-bit integers, or decimal text when the table's
        ranges pass ``2**63``.

    Raises
    ------
    Unsupported
        When pyarrow is not installed (the message names it).
    InvalidParameters
        For another *layout*.
    StoreError
        On a damaged cell.

    Notes
    -----
    Long: row groups of at most :data:`PARQUET_ROWS` rows or
    :data:`PARQUET_DIGITS` digits, so memory stays that of one group.
    Wide: pyarrow keeps about 2 KB of metadata per column chunk (two per
    ``r`` in each row group) until the file is closed, so the number of
    groups is chosen to balance that against the size of one group (about
    the square root of the table's digits over its columns), and each
    value column is built from the spilled bytes in one buffer.  A table
    of ``10^6`` cells over 1000 urns (255 million digits) peaks near
    206 MB (against 79 MB for long CSV): the one layout whose memory grows,
    slowly, with the table.  The value texts get no dictionary
    (they are distinct) and no min/max statistics (the min/max of decimal
    texts is not numeric order).
    Cost: one pass over the cells (the wide layout spills them once to a
    temporary file, see :func:`wide_rows`).
    """
    _, layout = _check_format("parquet", layout)
    pa, pq = _pyarrow()
    name, spec, _, cells = _source(table)
    big = max(spec.balls.stop, spec.urns.stop) > 2**63
    number = pa.string() if big else pa.int64()

    def numbers(values):
        return [str(v) for v in values] if big else values

    written = 0
    if layout == "long":
        schema = pa.schema([("balls", number), ("urns", number), ("value", pa.string()), ("digits", pa.int64()),
                            ("value_approx", pa.float64()), ("log10_approx", pa.float64())])
        # no dictionary and no min/max for the value texts: they are distinct (a dictionary
        # would only cost memory), and the min/max of decimal texts is not numeric order
        with pq.ParquetWriter(str(path), schema, use_dictionary=["balls", "urns"],
                              write_statistics=["balls", "urns", "digits", "value_approx",
                                                "log10_approx"]) as writer:
            group: List[Cell] = []
            digits = 0

            def flush():
                columns = list(zip(*group))
                writer.write_batch(pa.record_batch([
                    pa.array(numbers(columns[0]), number), pa.array(numbers(columns[1]), number),
                    pa.array(columns[2], pa.string()), pa.array(columns[3], pa.int64()),
                    pa.array([value_approx(t) for t in columns[2]], pa.float64()),
                    pa.array([log10_approx(t) for t in columns[2]], pa.float64()),
                ], schema=schema))

            for cell in cells():
                group.append(cell)
                digits += cell[3]
                if len(group) >= PARQUET_ROWS or digits >= PARQUET_DIGITS:
                    flush()
                    written += len(group)
                    group, digits = [], 0
            if group:
                flush()
                written += len(group)
        return written
    fields = [("balls", number)]
    for r in spec.urns:
        fields += [(f"urns={r}", pa.string()), (f"urns={r}_approx", pa.float64())]
    schema = pa.schema(fields)
    with tempfile.TemporaryFile() as handle, pq.ParquetWriter(str(path), schema, use_dictionary=False,
                                                             write_statistics=False) as writer:
        import numpy as np

        spill = _Spill(spec, cells(), handle)
        # pyarrow keeps about 2 KB of metadata per column chunk until the file is closed,
        # and a group is held about twice (Arrow's columns, the writer's pages): G groups
        # of C columns cost about G C 2000 + 2 total / G bytes, least at this G
        groups = max(1, round(math.sqrt(2 * spill.total / (len(fields) * 2000))))
        budget = min(1 << 30, max(PARQUET_DIGITS, math.ceil(spill.total / groups)))
        row_digits = spill.lengths.reshape(len(spec.balls), spill.width).sum(axis=1, dtype=np.int64).tolist()
        start = 0
        while start < len(spec.balls):
            stop, digits = start + 1, row_digits[start]
            while stop < len(spec.balls) and stop - start < PARQUET_ROWS and digits + row_digits[stop] <= budget:
                digits += row_digits[stop]
                stop += 1
            writer.write_batch(_wide_group(pa, schema, spill, spec, start, stop, numbers(list(spec.balls[start:stop]))))
            written += stop - start
            start = stop
    return written


def _wide_group(pa, schema, spill: _Spill, spec: TableSpec, start: int, stop: int, balls: list):
    """The rows ``start..stop-1`` of the matrix as one Arrow record batch, built from the spilled bytes.

    Each value column is one Arrow buffer of the texts read from the spill
    file (no Python string per cell), with its offsets and validity
    computed by NumPy; the approximations are one float array per column.
    """
    import numpy as np

    rows = stop - start
    arrays = [pa.array(balls, schema.field(0).type)]
    base = np.arange(start, stop, dtype=np.int64) * spill.width
    for j in range(spill.width):
        at = base + j
        present = spill.offsets[at] >= 0
        texts = [spill.read(int(i)) for i in at[present]]
        ends = np.zeros(rows + 1, dtype=np.int32)
        ends[1:] = np.cumsum(np.where(present, spill.lengths[at], 0), dtype=np.int64)
        missing = rows - len(texts)
        validity = None if not missing else pa.py_buffer(np.packbits(present, bitorder="little"))
        arrays.append(pa.StringArray.from_buffers(rows, pa.py_buffer(ends), pa.py_buffer(b"".join(texts)),
                                                  validity, missing))
        approx = np.zeros(rows, dtype=np.float64)
        approx[present] = [value_approx(text) for text in texts]
        arrays.append(pa.array(approx, mask=~present))
    return pa.record_batch(arrays, schema=schema)


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
