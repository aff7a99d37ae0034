r"""Asymptotic approximations, and how far each is from the exact value.

A catalogue of classical approximations of occupancy quantities, each one a
named approximation paired with the exact quantity (an exact ``int`` or
``Fraction``) it approximates and its published source, and the means to
compare the two as the system grows.  The package has four rooms, and this
module gives their public names in one place (as :mod:`networkx.algorithms`
gathers its topic modules):

:mod:`~enumerator.algorithms.asymptotics.sweeps`
    the points of a comparison: one parameter varied over a range, the
    others fixed or tied to it by a tiny integer arithmetic (never
    ``eval``), and the observed convergence order along a sweep;
:mod:`~enumerator.algorithms.asymptotics.formulas`
    the building blocks: Stirling's series, configurations proportional to
    a pattern, the exact law of the number of empty urns, precision sizing;
:mod:`~enumerator.algorithms.asymptotics.catalogue`
    the approximations (Stirling's series, the entropy of a configuration,
    the birthday problem, empty urns: mean, Poisson and normal laws, the
    saddle-point estimate of bounded counts, Boltzmann's geometric law,
    grand-canonical occupations) with their exact sides;
:mod:`~enumerator.algorithms.asymptotics.comparison`
    exact against approximate, point by point, at a working precision that
    makes the printed errors the approximation's, not rounding; rows one by
    one as they are computed (:func:`iter_rows`), points beyond the limits
    skipped with the reason, and approximations that fail on their own.

>>> result = compare_sweep("stirling1,stirling2", "balls=10..1000", geometric=3, urns="balls")
>>> [(c.approximation.name, round(c.order_approx)) for c in result]
[('stirling1', 1), ('stirling2', 3)]
"""

from __future__ import annotations

from .catalogue import CATALOGUE, Approximation, approximation
from .comparison import (
    ALL,
    Comparison,
    Plan,
    Row,
    compare,
    compare_sweep,
    evaluate,
    finish,
    float_or_text,
    iter_rows,
    plan_sweep,
)
from .formulas import apportion, empty_urns_at_most, stirling_log_factorial
from .sweeps import NUMERIC, Point, Tie, observed_order, parse_factor, parse_pattern, parse_range, parse_tie, sweep

__all__ = [
    "ALL",
    "Approximation",
    "CATALOGUE",
    "Comparison",
    "NUMERIC",
    "Plan",
    "Point",
    "Row",
    "Tie",
    "apportion",
    "approximation",
    "compare",
    "compare_sweep",
    "empty_urns_at_most",
    "evaluate",
    "finish",
    "float_or_text",
    "iter_rows",
    "observed_order",
    "parse_factor",
    "parse_pattern",
    "parse_range",
    "parse_tie",
    "plan_sweep",
    "stirling_log_factorial",
    "sweep",
]
