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

Cost: per point, the entry's exact side once and its approximation at
``P, 2P, 4P, ...`` digits until the error is resolved (``P`` the starting
precision; at most :data:`MAX_DPS` digits).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Iterable, List, Optional, Tuple, Union

import mpmath

from ...core.errors import InvalidParameters, TooLarge, Unsupported
from .catalogue import CATALOGUE, Approximation, approximation
from .formulas import Exact, decimal_digits, ln_size, to_mpf
from .sweeps import NUMERIC, Point, observed_order, parse_range, sweep

__all__ = ["Comparison", "MAX_DPS", "Row", "compare", "compare_sweep"]

mpf = mpmath.mpf

#: Largest working precision (decimal digits) the error evaluation may use.
MAX_DPS = 200_000
#: Required ratio of a printed relative error to its rounding bound.
_HONEST = 10


# ---------------------------------------------------------------------------
# Comparing
# ---------------------------------------------------------------------------
@dataclass(frozen=True)
class Row:
    """One point of a comparison.

    ``exact`` is exact (``int`` or ``Fraction``); ``approx``,
    ``absolute_error_approx`` and ``relative_error_approx`` are mpf values at
    ``dps`` digits (errors on the approximation's scale; ``None`` when the
    relative error is undefined because the exact value is 0).
    """

    point: Point
    exact: Exact
    approx: object
    absolute_error_approx: object
    relative_error_approx: object
    dps: int

    def approx_text(self) -> str:
        """The approximation as a decimal string with enough digits to show its error."""
        rel = self.relative_error_approx
        wanted = 20
        if rel is not None and rel > 0:
            wanted = max(wanted, int(-mpmath.log10(rel)) + 15)
        return mpmath.nstr(self.approx, min(wanted, self.dps - 5), min_fixed=-5, max_fixed=20)

    def relative_float(self) -> Optional[float]:
        """The relative error as a float; ``None`` when undefined or beyond float range."""
        rel = self.relative_error_approx
        if rel is None:
            return None
        value = float(rel)
        return None if math.isinf(value) else value


@dataclass(frozen=True)
class Comparison:
    """The result of :func:`compare`: rows, the varied parameter and the observed order."""

    approximation: Approximation
    rows: Tuple[Row, ...]
    variable: str = "balls"
    order_approx: Optional[float] = None

    def local_orders(self) -> List[Optional[float]]:
        """Per row, the order between it and the row before (``None`` where undefined)."""
        out: List[Optional[float]] = [None]
        for before, after in zip(self.rows, self.rows[1:]):
            out.append(observed_order(
                [before.point.value(self.variable), after.point.value(self.variable)],
                [before.relative_error_approx, after.relative_error_approx],
            ))
        return out


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
                        f"{entry.name} at {point.balls} balls: the error is below what {MAX_DPS} "
                        "digits resolve; use smaller parameters"
                    )
                return Row(point, exact, +value, +absolute, None if relative is None else +relative, dps)
        dps = min(2 * dps, MAX_DPS)



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
        against *variable* (``None`` for a single point).

    Raises
    ------
    InvalidParameters
        An unknown name or variable, no points, a point the entry rejects.
    TooLarge
        An error below what :data:`MAX_DPS` digits resolve.
    Unsupported
        A log-scale entry whose exact value is not positive.

    Notes
    -----
    Per point: the exact side once, then the approximation at a working
    precision doubled from ``30 + guard`` digits until the relative error is
    at least ``10^10`` times the rounding bound (module docstring).  Cost: the
    entry's exact side plus ``O(log(P/P0))`` evaluations of its formula.

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
    rows = tuple(_evaluate(entry, entry.check(point)) for point in points)
    if not rows:
        raise InvalidParameters("compare needs at least one point")
    order = observed_order([row.point.value(variable) for row in rows],
                           [row.relative_error_approx for row in rows])
    return Comparison(entry, rows, variable, order)




def _split_names(names) -> List[Approximation]:
    if isinstance(names, str):
        names = [part for part in names.split(",")]
    entries = []
    for part in names:
        if isinstance(part, Approximation):
            entries.append(part)
        elif str(part).strip():
            entries.append(approximation(part))
    if not entries:
        raise InvalidParameters(f"name at least one approximation: {', '.join(CATALOGUE)}")
    return entries


def compare_sweep(names, vary: Optional[str] = None, step=None, geometric=None, **parameters) -> List[Comparison]:
    """Compare one or more approximations over one :func:`~enumerator.algorithms.asymptotics.sweeps.sweep`.

    Parameters
    ----------
    names : str or sequence
        ``"stirling1,stirling2"``, or a list of names or entries.
    vary, step, geometric, **parameters
        As :func:`~enumerator.algorithms.asymptotics.sweeps.sweep` takes them.
        Every parameter given (and the varied one) must be one that each named
        approximation uses (``balls`` always; the rest as listed in its
        ``uses``), so that a forgotten or misspelt option is an error rather
        than silently ignored.

    Returns
    -------
    list of Comparison
        One per name, in order.

    Raises
    ------
    InvalidParameters
        No name, an unknown name, a parameter an approximation does not use,
        and whatever :func:`~enumerator.algorithms.asymptotics.sweeps.sweep`
        and :func:`compare` raise.

    Notes
    -----
    One sweep, shared by every name; cost the sum of the :func:`compare` calls.

    Examples
    --------
    >>> [c.approximation.name for c in compare_sweep("stirling1,stirling2", "balls=10..20", step=10, urns="balls")]
    ['stirling1', 'stirling2']
    """
    entries = _split_names(names)
    given = {k for k, v in parameters.items() if v is not None}
    if vary is not None:
        given.add(parse_range(vary)[0])
    for entry in entries:
        unused = sorted(given - {"balls"} - set(entry.uses))
        if unused:
            options = ", ".join(f"{name}=" for name in unused)
            raise InvalidParameters(
                f"{entry.name} does not use {options}; leave it out (it uses balls"
                + "".join(f", {u}" for u in entry.uses) + ")",
                parameters=unused,
            )
    variable, points = sweep(vary, step=step, geometric=geometric, **parameters)
    return [compare(entry, points, variable) for entry in entries]


