r"""Comparing an approximation with the exact value, point by point.

:func:`compare` evaluates one catalogue entry at a list of
:class:`~enumerator.algorithms.asymptotics.sweeps.Point`\ s and returns a
:class:`Comparison`: per point the exact value, the approximation, the
absolute and relative errors, and overall the observed convergence order
(:func:`~enumerator.algorithms.asymptotics.sweeps.observed_order`).
:func:`compare_sweep` compares one or more entries over one sweep.

*Honest numbers.*  The working precision starts at 30 digits plus guard
digits for the size of the numbers involved (digits of ``n``, ``r`` and of
``|ln exact|``: the formulas lose about that many digits, e.g. in
``exp``) and is doubled until the relative error is at least ``10^10`` times
the rounding bound, so about ten leading digits of every printed error are
the approximation's.  Floats appear only in fields named ``approx``.

*Undefined errors.*  When the exact value is 0 (say no collision is
impossible because there are more balls than urns), the relative error is
``None`` and the point is left out of the order fit, as are points with an
error of exactly 0.

*Never abort a sweep.*  Before its exact side is computed, each point's
cost (:meth:`~enumerator.algorithms.asymptotics.catalogue.Approximation.cost`)
is checked against the limits in force (:func:`enumerator.core.limits.check`).
A point beyond them, or one whose error no precision up to :data:`MAX_DPS`
resolves, becomes a *skipped* :class:`Row` that says why, and the sweep goes
on.  :func:`iter_rows` yields the rows one by one as they are computed, so a
caller can print each at once; :func:`plan_sweep` checks every entry's
points first, so an entry that cannot run at all fails on its own
(:class:`Plan` with an ``error``) without stopping the others.

*Numbers beyond float range.*  Errors are mpmath numbers, whose exponents
are unbounded; :func:`float_or_text` gives a float where one represents the
value and mpmath's decimal text otherwise (``"4.2e+272"``,
``"3.1e-1598"``), never ``inf``, ``0.0`` for a nonzero value, or ``None``.

Cost: per point, the entry's exact side once and its approximation at
``P, 2P, 4P, ...`` digits until the error is resolved (``P`` the starting
precision; at most :data:`MAX_DPS` digits).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import Iterable, Iterator, List, Optional, Sequence, Tuple, Union

import mpmath

from ...core import limits
from ...core.errors import EnumeratorError, InvalidParameters, TooLarge, Unsupported
from .catalogue import CATALOGUE, Approximation, approximation
from .formulas import Exact, decimal_digits, ln_size, to_mpf
from .sweeps import NUMERIC, Point, observed_order, parse_range, sweep

__all__ = [
    "ALL",
    "Comparison",
    "MAX_DPS",
    "Plan",
    "Row",
    "compare",
    "compare_sweep",
    "evaluate",
    "finish",
    "float_or_text",
    "ignored_note",
    "iter_rows",
    "local_order",
    "plan_sweep",
]

mpf = mpmath.mpf

#: Largest working precision (decimal digits) the error evaluation may use.
MAX_DPS = 200_000
#: Required ratio of a printed relative error to its rounding bound.
_HONEST = 10
#: The name that stands for every catalogue entry.
ALL = "all"
#: The largest and the smallest positive normal double.
_FLOAT_MAX = mpf(1.7976931348623157e308)
_FLOAT_MIN = mpf(2.2250738585072014e-308)
#: Why a row has no relative error although it was computed.
UNDEFINED_RELATIVE = "the exact value is 0, so the relative error is undefined"


def float_or_text(value) -> Union[float, str, None]:
    """*value* as a float when a double holds it, else as mpmath's decimal text.

    Parameters
    ----------
    value : mpf, float or None

    Returns
    -------
    float, str or None
        ``None`` only for ``None``; a float for 0 and for magnitudes within the
        normal double range; otherwise 17 significant digits of mpmath text
        (``"1.1481306952742545e+602"``), so nothing overflows to ``inf`` or
        underflows to ``0.0``.

    Notes
    -----
    Two comparisons against the normal double range
    (``2.2e-308 .. 1.8e308``) and one conversion or ``mpmath.nstr``:
    constant cost (17 digits).

    Examples
    --------
    >>> float_or_text(mpf(2) ** -2000), float_or_text(mpf(2) ** 2000), float_or_text(mpf("0.25"))
    ('8.7098098162172167e-603', '1.1481306952742545e+602', 0.25)
    """
    if value is None:
        return None
    if isinstance(value, float):
        if math.isfinite(value):
            return value
        value = mpf(value)
    if value == 0:
        return 0.0
    magnitude = abs(value)
    if _FLOAT_MIN <= magnitude <= _FLOAT_MAX:
        return float(value)
    return mpmath.nstr(value, 17)


# ---------------------------------------------------------------------------
# Comparing
# ---------------------------------------------------------------------------
@dataclass(frozen=True)
class Row:
    """One point of a comparison.

    ``exact`` is exact (``int`` or ``Fraction``); ``approx``,
    ``absolute_error_approx`` and ``relative_error_approx`` are mpf values at
    ``dps`` digits (errors on the approximation's scale; ``None`` when the
    relative error is undefined because the exact value is 0).  A *skipped*
    point has only ``point`` and ``error``, the reason it was not computed
    (beyond the limits, or an error no precision up to :data:`MAX_DPS`
    resolves).
    """

    point: Point
    exact: Optional[Exact] = None
    approx: object = None
    absolute_error_approx: object = None
    relative_error_approx: object = None
    dps: int = 0
    error: Optional[EnumeratorError] = None

    @property
    def skipped(self) -> Optional[str]:
        """Why the point was not computed (``None`` for a computed row)."""
        return None if self.error is None else str(self.error)

    @property
    def note(self) -> Optional[str]:
        """Why a value of the row is missing: the skip reason, or an undefined relative error."""
        if self.error is not None:
            return str(self.error)
        if self.relative_error_approx is None:
            return UNDEFINED_RELATIVE
        return None

    def approx_text(self) -> str:
        """The approximation as a decimal string with enough digits to show its error."""
        rel = self.relative_error_approx
        wanted = 20
        if rel is not None and rel > 0:
            wanted = max(wanted, int(-mpmath.log10(rel)) + 15)
        return mpmath.nstr(self.approx, min(wanted, self.dps - 5), min_fixed=-5, max_fixed=20)

    def relative_float(self) -> Optional[float]:
        """The relative error as a float; ``None`` when undefined, skipped or beyond float range."""
        value = float_or_text(self.relative_error_approx)
        return value if isinstance(value, float) else None


@dataclass(frozen=True)
class Comparison:
    """The result of :func:`compare`: rows, the varied parameter and the observed order.

    ``error`` is set (and ``rows`` empty) for an approximation that could not
    run at all in a sweep of several (:func:`compare_sweep`).
    """

    approximation: Approximation
    rows: Tuple[Row, ...]
    variable: str = "balls"
    order_approx: Optional[float] = None
    error: Optional[EnumeratorError] = None

    def local_orders(self) -> List[Optional[float]]:
        """Per row, the order between it and the computed row before (``None`` where undefined)."""
        out: List[Optional[float]] = []
        before = None
        for row in self.rows:
            out.append(local_order(before, row, self.variable))
            if row.error is None:
                before = row
        return out


def local_order(before: Optional[Row], row: Row, variable: str) -> Optional[float]:
    """The order between a computed row and the computed row *before* it (``None`` where undefined).

    Parameters
    ----------
    before : Row or None
        The previous computed row of the sweep.
    row : Row
    variable : str
        The varied parameter (``"balls"``, ``"urns"``, ...).

    Returns
    -------
    float or None
        The observed order ``p`` (relative error ``~ C x^{-p}``) between the
        two points; ``None`` without a previous row, for a skipped row, or
        where an error is zero or undefined.

    Notes
    -----
    :func:`~enumerator.algorithms.asymptotics.sweeps.observed_order` of the two points; constant cost.
    """
    if before is None or row.error is not None:
        return None
    return observed_order(
        [before.point.value(variable), row.point.value(variable)],
        [before.relative_error_approx, row.relative_error_approx],
    )


def _where(entry: Approximation, point: Point) -> str:
    parts = [f"balls={point.balls}"]
    for name in ("urns", "capacity", "minimum", "at"):
        if name in entry.uses and point.value(name) is not None:
            parts.append(f"{name}={point.value(name)}")
    return ", ".join(parts)


def _evaluate(entry: Approximation, point: Point) -> Row:
    exact = entry.exact(point)
    if entry.scale == "log" and exact <= 0:
        raise Unsupported(f"{entry.name} compares logarithms but the exact value is {exact}")
    guard = entry.guard(point) + decimal_digits(max(1, int(ln_size(exact)) + 1))
    dps = 30 + guard
    while True:
        with mpmath.workdps(dps):
            value = entry.approximate(point)
            e = to_mpf(exact)
            if entry.scale == "log":
                scale = mpmath.log(e)
                absolute = abs(mpmath.log(value) - scale)
            else:
                scale = e
                absolute = abs(value - e)
            if scale != 0:
                relative = absolute / abs(scale)
            else:
                relative = mpf(0) if absolute == 0 else None
            bound = mpf(10) ** (guard + _HONEST - dps)
            honest = relative is None or relative >= bound or (relative == 0 and dps >= 4 * (30 + guard))
            if honest or dps >= MAX_DPS:
                if not honest:
                    raise TooLarge(
                        f"{entry.name} at {_where(entry, point)}: the error is below what {MAX_DPS} "
                        "digits resolve; use smaller parameters"
                    )
                return Row(point, exact, +value, +absolute, None if relative is None else +relative, dps)
        dps = min(2 * dps, MAX_DPS)


def evaluate(entry: Approximation, point: Point) -> Row:
    """Compare *entry* with its exact value at one checked *point*, or say why not.

    Parameters
    ----------
    entry : Approximation
    point : Point
        Already checked and completed by ``entry.check``.

    Returns
    -------
    Row
        Computed, or skipped with its ``error``: the exact side's estimated
        cost is beyond the limits in force, the error is below what
        :data:`MAX_DPS` digits resolve, the computation ran out of memory,
        or a library error at this point.

    Notes
    -----
    :func:`enumerator.core.limits.check` of ``entry.cost(point)`` and of
    writing the exact side in decimal (``entry.answer_bits``) first, so a
    point out of reach is refused before any work; then the exact side and
    the approximation at increasing precision (module docstring).
    """
    try:
        bits = entry.answer_bits(point)
        # the exact side is also written out in decimal, which for huge answers costs more than computing it
        writing = limits.Cost(seconds=limits.decimal_seconds(bits),
                              memory=int(limits.TEXT_BYTES_PER_DIGIT * bits * math.log10(2)))
        limits.check(entry.cost(point) + writing, f"the exact side of {entry.name} at {_where(entry, point)}",
                     advice="use smaller parameters")
        return _evaluate(entry, point)
    except EnumeratorError as error:
        return Row(point, error=error)
    except MemoryError:
        return Row(point, error=TooLarge(
            f"the exact side of {entry.name} at {_where(entry, point)} ran out of memory; "
            "lower max_memory= so that it is refused before it starts, or use smaller parameters",
            parameters=["max_memory"],
        ))


def iter_rows(entry: Approximation, points: Iterable[Point],
              rejected: Optional[Sequence[Optional[EnumeratorError]]] = None) -> Iterator[Row]:
    """Yield :func:`evaluate` of each checked point, in order, as each is computed.

    Parameters
    ----------
    entry : Approximation
    points : iterable of Point
        Checked by ``entry.check`` (:func:`plan_sweep` does it).
    rejected : sequence, optional
        Per point, the error ``entry.check`` raised (``None`` for a valid
        point): such a point is yielded as a skipped row with that error.

    Yields
    ------
    Row
        Computed or skipped; a skipped point never stops the sweep.

    Notes
    -----
    Lazy: each row costs one :func:`evaluate` (its exact side checked
    against the limits first by ``entry.cost``, then the approximation), and
    nothing is kept, so memory is that of one row.

    Examples
    --------
    >>> entry = approximation("empty-mean")
    >>> [row.exact for row in iter_rows(entry, [entry.check(Point(balls=n, urns=2)) for n in (1, 2)])]
    [Fraction(1, 1), Fraction(1, 2)]
    """
    for i, point in enumerate(points):
        error = None if rejected is None else rejected[i]
        yield Row(point, error=error) if error is not None else evaluate(entry, point)


def finish(entry: Approximation, rows: Sequence[Row], variable: str = "balls") -> Comparison:
    """The :class:`Comparison` of computed and skipped *rows*: the observed order over the computed ones.

    Parameters
    ----------
    entry : Approximation
    rows : sequence of Row
        In sweep order, skipped rows included.
    variable : str
        The varied parameter.

    Returns
    -------
    Comparison

    Notes
    -----
    :func:`~enumerator.algorithms.asymptotics.sweeps.observed_order`, linear in the number of rows.
    """
    done = [row for row in rows if row.error is None]
    order = observed_order([row.point.value(variable) for row in done],
                           [row.relative_error_approx for row in done])
    return Comparison(entry, tuple(rows), variable, order)


def compare(name: Union[str, Approximation], points: Iterable[Point], variable: str = "balls") -> Comparison:
    """Evaluate approximation *name* against the exact quantity at every point.

    Parameters
    ----------
    name : str or Approximation
        A catalogue name (:data:`~enumerator.algorithms.asymptotics.catalogue.CATALOGUE`) or an entry.
    points : iterable of Point
        Checked and completed by the entry's ``check``.
    variable : str
        The parameter the order is measured against (one of ``NUMERIC``).

    Returns
    -------
    Comparison
        Its ``order_approx`` is :func:`observed_order` of the relative errors
        against *variable* (``None`` for a single point).  A point beyond the
        limits, or whose error is below what :data:`MAX_DPS` digits
        resolve, is a skipped row that says why (:func:`evaluate`).

    Raises
    ------
    InvalidParameters
        An unknown name or variable, no points, a point the entry rejects.

    Notes
    -----
    Per point: the cost check, the exact side once, then the approximation
    at a working precision doubled from ``30 + guard`` digits until the
    relative error is at least ``10^10`` times the rounding bound (module
    docstring).  Cost: the entry's exact side plus ``O(log(P/P0))``
    evaluations of its formula.

    Examples
    --------
    >>> result = compare("birthday", [Point(balls=23, urns=365)])
    >>> float(result.rows[0].exact)
    0.4927027656760146
    >>> result.rows[0].approx_text()[:8]
    '0.499998'
    """
    entry = name if isinstance(name, Approximation) else approximation(name)
    if variable not in NUMERIC:
        raise InvalidParameters(f"the varied parameter must be one of {', '.join(NUMERIC)} (got {variable!r})")
    checked = [entry.check(point) for point in points]
    if not checked:
        raise InvalidParameters("compare needs at least one point")
    return finish(entry, tuple(iter_rows(entry, checked)), variable)


# ---------------------------------------------------------------------------
# Several approximations over one sweep
# ---------------------------------------------------------------------------
@dataclass(frozen=True)
class Plan:
    """One approximation of a sweep, with its checked points, or the reason it cannot run.

    ``rejected`` holds, per point, the error the entry's ``check`` raised for
    it (``None`` for a valid point; the point is then kept as given): those
    points are skipped rows, the others are computed.  ``ignored`` names the
    given parameters this entry does not read (when several entries are
    named, each reads its own; the caller may say so once).
    """

    approximation: Approximation
    points: Tuple[Point, ...]
    variable: str
    error: Optional[EnumeratorError] = None
    rejected: Optional[Tuple[Optional[EnumeratorError], ...]] = None
    ignored: Tuple[str, ...] = ()

    def rows(self) -> Iterator[Row]:
        """:func:`iter_rows` of this plan: its rows one by one as they are computed."""
        return iter_rows(self.approximation, self.points, self.rejected)


def _split_names(names) -> Tuple[List[Approximation], bool]:
    """The named entries, and whether *names* was ``"all"`` (every catalogue entry)."""
    if isinstance(names, str):
        names = [part for part in names.split(",")]
    names = list(names)
    if any(isinstance(part, str) and part.strip().lower() == ALL for part in names):
        if len([part for part in names if str(part).strip()]) > 1:
            raise InvalidParameters(f"{ALL} already names every approximation; give it alone")
        return list(CATALOGUE.values()), True
    entries = []
    for part in names:
        if isinstance(part, Approximation):
            entries.append(part)
        elif str(part).strip():
            entries.append(approximation(part))
    if not entries:
        raise InvalidParameters(f"name at least one approximation: {', '.join(CATALOGUE)} (or {ALL})")
    return entries, False


def _unused(entry: Approximation, given) -> List[str]:
    return sorted(set(given) - {"balls"} - set(entry.uses))


def _unused_error(entry: Approximation, unused: Sequence[str]) -> InvalidParameters:
    options = ", ".join(f"{name}=" for name in unused)
    return InvalidParameters(
        f"{entry.name} does not use {options}; leave it out (it uses balls"
        + "".join(f", {u}" for u in entry.uses) + ")",
        parameters=list(unused),
    )


def _unused_by_every(entries: Sequence[Approximation], unused: Sequence[str]) -> InvalidParameters:
    options = ", ".join(f"{name}=" for name in unused)
    return InvalidParameters(
        f"none of {', '.join(entry.name for entry in entries)} uses {options}; leave it out",
        parameters=list(unused),
    )


def plan_sweep(names, vary: Optional[str] = None, step=None, geometric=None, **parameters) -> List[Plan]:
    """Build one sweep and check its points for each named approximation.

    Parameters
    ----------
    names : str or sequence
        ``"stirling1,stirling2"``, a list of names or entries, or ``"all"``
        (every catalogue entry).
    vary, step, geometric, **parameters
        As :func:`~enumerator.algorithms.asymptotics.sweeps.sweep` takes them.

    Returns
    -------
    list of Plan
        One per approximation, in order.  A point the entry rejects (a
        value outside its domain) is kept with its error in ``rejected``
        and becomes a skipped row; when it rejects every point (a parameter
        it needs is missing, say) the plan carries the first ``error`` and
        no points.  With several entries each reads the parameters it uses
        and lists the others in ``ignored``; one that does not use the
        varied parameter fails on its own.

    Raises
    ------
    InvalidParameters
        No name, an unknown name, a parameter that a single named
        approximation does not use, or that none of several named ones uses
        (a forgotten or misspelt option is an error rather than silently
        ignored; with ``"all"`` each entry ignores what it does not use),
        and whatever the sweep raises.
    TooLarge
        More points than :data:`~enumerator.algorithms.asymptotics.sweeps.MAX_POINTS`.

    Notes
    -----
    The sweep once, then ``check`` of every point per entry: cost linear in
    the number of points and entries.
    """
    entries, every = _split_names(names)
    given = {k for k, v in parameters.items() if v is not None}
    varied = parse_range(vary)[0] if vary is not None else None
    if varied is not None:
        given.add(varied)
    if len(entries) == 1 and not every:
        unused = _unused(entries[0], given)
        if unused:
            raise _unused_error(entries[0], unused)
    elif not every:
        unused = sorted(set.intersection(*(set(_unused(entry, given)) for entry in entries)))
        if unused:
            raise _unused_by_every(entries, unused)
    variable, points = sweep(vary, step=step, geometric=geometric, **parameters)
    plans = []
    for entry in entries:
        if varied is not None and varied != "balls" and varied not in entry.uses:
            plans.append(Plan(entry, (), variable, _unused_error(entry, [varied])))
            continue
        ignored = () if every else tuple(_unused(entry, given))
        checked, rejected = [], []
        for point in points:
            point = _drop_unused(entry, point)
            try:
                checked.append(entry.check(point))
                rejected.append(None)
            except EnumeratorError as error:
                checked.append(point)
                rejected.append(error)
        if all(error is not None for error in rejected):
            plans.append(Plan(entry, (), variable, rejected[0], ignored=ignored))
        elif any(error is not None for error in rejected):
            plans.append(Plan(entry, tuple(checked), variable, None, tuple(rejected), ignored))
        else:
            plans.append(Plan(entry, tuple(checked), variable, ignored=ignored))
    return plans


def ignored_note(plans: Sequence[Plan], spell=None) -> Optional[str]:
    """One line naming, per entry, the given parameters it does not read; ``None`` when there are none.

    Parameters
    ----------
    plans : sequence of Plan
        From :func:`plan_sweep`.
    spell : mapping, optional
        Library parameter name to its spelling (the CLI's flags); default
        ``name=``.

    Returns
    -------
    str or None

    Examples
    --------
    >>> plans = plan_sweep("empty-mean,saddle", balls=20, urns=10, capacity=3)
    >>> ignored_note(plans)
    'empty-mean ignores capacity='
    """
    spell = spell or {}
    parts = [
        f"{plan.approximation.name} ignores " + ", ".join(spell.get(name, f"{name}=") for name in plan.ignored)
        for plan in plans if plan.ignored
    ]
    return "; ".join(parts) if parts else None


def _drop_unused(entry: Approximation, point: Point) -> Point:
    """*point* without the parameters *entry* does not read (for ``"all"``)."""
    cleared = {name: None for name in ("urns", "rule", "capacity", "minimum", "at", "pattern", "factor")
               if name not in entry.uses}
    return replace(point, **cleared) if cleared else point


def compare_sweep(names, vary: Optional[str] = None, step=None, geometric=None, **parameters) -> List[Comparison]:
    """Compare one or more approximations over one :func:`~enumerator.algorithms.asymptotics.sweeps.sweep`.

    Parameters
    ----------
    names : str or sequence
        ``"stirling1,stirling2"``, a list of names or entries, or ``"all"``.
    vary, step, geometric, **parameters
        As :func:`~enumerator.algorithms.asymptotics.sweeps.sweep` takes them.
        Each approximation reads the parameters it uses (``balls`` always;
        the rest as listed in its ``uses``); a parameter that a single named
        approximation, or none of several, uses is an error, so that a
        forgotten or misspelt option is not silently ignored
        (:func:`plan_sweep`).

    Returns
    -------
    list of Comparison
        One per approximation, in order.  An approximation that cannot run
        does not stop the others: its comparison has the ``error`` and no
        rows.  Points beyond the limits are skipped rows (:func:`evaluate`).

    Raises
    ------
    InvalidParameters
        No name, an unknown name, a parameter no named approximation uses,
        whatever :func:`~enumerator.algorithms.asymptotics.sweeps.sweep`
        raises, and, when no approximation can run, the first one's error.

    Notes
    -----
    One sweep, shared by every name; cost the sum of the :func:`compare` calls.

    Examples
    --------
    >>> [c.approximation.name for c in compare_sweep("stirling1,stirling2", "balls=10..20", step=10, urns="balls")]
    ['stirling1', 'stirling2']
    """
    plans = plan_sweep(names, vary, step=step, geometric=geometric, **parameters)
    if all(plan.error is not None for plan in plans):
        raise plans[0].error
    out = []
    for plan in plans:
        if plan.error is not None:
            out.append(Comparison(plan.approximation, (), plan.variable, None, plan.error))
        else:
            out.append(finish(plan.approximation, tuple(plan.rows()), plan.variable))
    return out
