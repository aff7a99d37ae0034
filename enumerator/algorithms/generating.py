r"""Generating functions of occupancy models, and exact coefficient extraction.

A model's generating function counts its admissible occupancy vectors for
every number of balls at once (Flajolet & Sedgewick, *Analytic
Combinatorics*, 2009, ch. I–II):

* BE and FD, *ordinary*: urn ``i`` with bounds ``a_i..b_i`` contributes
  ``x^{a_i} + ... + x^{b_i}``, so the function is
  ``prod_i x^{a_i} (1 - x^{b_i - a_i + 1}) / (1 - x)`` — ``(1 - x)^{-r}``
  unbounded, ``(1 + x)^r`` for FD, ``((1 - x^{c+1}) / (1 - x))^r`` with a
  uniform capacity ``c``; ``[x^n]`` is the number of configurations;
* MB, *exponential*: urn ``i`` contributes ``sum_{k=a_i}^{b_i} x^k / k!``
  (``exp(x)`` unbounded, ``exp(x) - 1`` with at least one ball), so the
  function is ``exp(r x)``, ``(exp(x) - 1)^r``, ...; ``n! [x^n]`` is the
  number of microstates (labelled products, Flajolet & Sedgewick §II.2).

A marking variable ``u`` attached to the urns whose occupancy lies in a
chosen set gives the bivariate function whose ``[x^n u^j]`` counts the
outcomes with exactly ``j`` marked urns (Flajolet & Sedgewick §III.2).

Numbers come from the project's exact series kernel (:mod:`enumerator.core.series`),
never from SymPy's ``series()``: :func:`coefficient_row` gives a model's
counts for every ball number ``0..N`` in one pass.  User-written expressions
(:func:`parse_expression`, :func:`extract_coefficients`) are
:mod:`enumerator.algorithms.expressions`, importable from here too.

Which factor an urn contributes (ordinary or exponential) is the rule's
:attr:`~enumerator.core.rules.RuleDescription.generating`; which urns a
marking variable marks is the statistic's entry in the registry
(:mod:`enumerator.algorithms.vocabulary`).
"""

from __future__ import annotations

import math
from collections import Counter
from typing import List, Optional, Tuple

import gmpy2
import sympy
from flint import fmpz_poly

from ..core import series
from ..core.errors import InvalidParameters
from ..core.model import UrnModel, as_count
from ..core.rules import Rule
from .expressions import extract_coefficients, parse_expression, plain_ints, symbol
from .vocabulary import REGISTRY, parse_statistic

__all__ = [
    "MARKS",
    "bivariate_generating_function",
    "coefficient_row",
    "extract_coefficients",
    "generating_function",
    "kind",
    "parse_expression",
    "parse_mark",
]

mpz = gmpy2.mpz

#: The marking choices of :func:`bivariate_generating_function`: the statistics
#: of the registry that count urns (those with a marking window).
MARKS = tuple(entry.label for entry in REGISTRY.values() if entry.named and entry.marking is not None)


# ---------------------------------------------------------------------------
# the model's generating function, symbolic
# ---------------------------------------------------------------------------

def kind(model: UrnModel) -> str:
    """``"exponential"`` for MB (labelled balls), ``"ordinary"`` for BE and FD (the rule's description)."""
    return model.rule.generating


def _ordinary_window(a: int, b: Optional[int], x) -> sympy.Expr:
    """``x^a + ... + x^b`` in closed form (``b = None``: ``x^a / (1 - x)``)."""
    if b is None:
        return x**a / (1 - x)
    if b == a:
        return x**a
    if b == a + 1:
        return x**a * (1 + x)
    return x**a * (1 - x ** (b - a + 1)) / (1 - x)


def _exponential_window(a: int, b: Optional[int], x) -> sympy.Expr:
    """``sum_{k=a}^{b} x^k / k!`` (``b = None``: ``exp(x)`` minus its first ``a`` terms)."""
    if b is None:
        head = sympy.Add(*[x**k / sympy.factorial(k) for k in range(a)])
        return sympy.exp(x) - head
    return sympy.Add(*[x**k / sympy.factorial(k) for k in range(a, b + 1)])


_WINDOWS = {"exponential": _exponential_window, "ordinary": _ordinary_window}


def _window(rule: Rule, a: int, b: Optional[int], x) -> sympy.Expr:
    """One urn's factor ``sum_{k=a}^{b}`` of the rule's kind (ordinary or exponential)."""
    return _WINDOWS[rule.generating](a, b, x)


def generating_function(model: UrnModel, var="x") -> sympy.Expr:
    r"""Return the model's generating function as a SymPy expression in *var*.

    Ordinary for BE and FD (``[x^n]`` counts configurations), exponential for
    MB (``n! [x^n]`` counts microstates); see :func:`kind`.  Urns with equal
    bounds are grouped into one power; the number of balls of *model* plays
    no part (the function covers every ``n``).

    >>> generating_function(UrnModel(balls=3, urns=4, rule="BE"))
    (1 - x)**(-4)
    >>> generating_function(UrnModel(balls=3, urns=4, rule="FD"))
    (x + 1)**4
    >>> generating_function(UrnModel(balls=3, urns=4, rule="MB", minimum=1))
    (exp(x) - 1)**4
    """
    x = symbol(var)
    groups = Counter(model.bounds)
    factors = [_window(model.rule, a, b, x) ** e for (a, b), e in sorted(groups.items(), key=_bound_key)]
    return sympy.Mul(*factors)


def _bound_key(item):
    (a, b), _ = item
    return (a, math.inf if b is None else b)


def parse_mark(mark) -> Tuple[str, int]:
    """Parse a marking choice: ``empty``, ``occupied``, ``exactly:J`` or ``atleast:J``.

    Parameters
    ----------
    mark : str or (str, int)
        A counting statistic of the registry (:data:`MARKS`), or the pair
        ``("exactly", J)`` / ``("atleast", J)``.

    Returns
    -------
    (str, int)
        ``("exactly", J)`` or ``("atleast", J)``: the urns holding exactly
        (at least) ``J`` balls are marked; ``empty`` is ``exactly:0`` and
        ``occupied`` is ``atleast:1`` (each entry's marking window).

    Raises
    ------
    InvalidParameters
        for anything else, naming the choices.

    Notes
    -----
    One registry look-up, ``O(len(mark))``.

    Examples
    --------
    >>> parse_mark("occupied")
    ('atleast', 1)
    """
    if isinstance(mark, tuple) and len(mark) == 2 and mark[0] in ("exactly", "atleast"):
        return mark[0], as_count(mark[1], "the occupancy J of the mark")
    try:
        stat = parse_statistic(str(mark).strip().lower())
    except InvalidParameters:
        stat = None
    if stat is None or stat.entry.marking is None:
        raise InvalidParameters(
            f"mark must be one of {', '.join(MARKS)} with J a whole number (got {mark!r})"
        )
    return stat.entry.marking(stat.parameter)


def bivariate_generating_function(model: UrnModel, mark="empty", var="x", marker="u") -> sympy.Expr:
    r"""Return the generating function with a marking variable *marker* for chosen urns.

    Each urn's factor ``F(x)`` becomes ``F(x) + (u - 1) G(x)``, where
    ``G`` is the part of ``F`` whose occupancies are marked (*mark*, see
    :func:`parse_mark`), so ``[x^n u^j]`` (times ``n!`` for MB) counts the
    outcomes of ``n`` balls with exactly ``j`` marked urns (Flajolet &
    Sedgewick, *Analytic Combinatorics*, 2009, §III.2).  Setting ``u = 1``
    gives back :func:`generating_function`.

    >>> bivariate_generating_function(UrnModel(balls=3, urns=2, rule="BE"), "empty")
    (u - 1 + 1/(1 - x))**2
    """
    x = symbol(var)
    u = symbol(marker, "marker")
    if u == x:
        raise InvalidParameters("the marker and the variable must be different names (say u and x)")
    how, j = parse_mark(mark)
    factors = []
    for (a, b), e in sorted(Counter(model.bounds).items(), key=_bound_key):
        whole = _window(model.rule, a, b, x)
        if how == "exactly":
            if j < a or (b is not None and j > b):
                factor = whole
            else:
                exponential = model.rule.generating == "exponential"
                weight = sympy.Rational(1, math.factorial(j)) if exponential else sympy.Integer(1)
                factor = whole + (u - 1) * weight * x**j
        else:
            low = max(a, j)
            if b is not None and low > b:
                factor = whole
            elif low == a:
                factor = u * whole
            else:
                factor = _window(model.rule, a, low - 1, x) + u * _window(model.rule, low, b, x)
        factors.append(factor**e)
    return sympy.Mul(*factors)


# ---------------------------------------------------------------------------
# coefficient rows of a model
# ---------------------------------------------------------------------------

def _ordinary_row(bounds, top: int) -> List[int]:
    """``[x^m] prod_i (x^{a_i} + ... + x^{b_i})`` for ``m = 0..top``."""
    low = sum(a for a, _ in bounds)
    span_top = top - low
    if span_top < 0:
        return [0] * (top + 1)
    unbounded = 0
    spans: Counter = Counter()
    for a, b in bounds:
        if b is None or b - a >= span_top:
            unbounded += 1  # a window reaching past the truncation acts as 1/(1-x)
        elif b > a:
            spans[b - a] += 1
    groups = sorted(spans.items())
    if not groups:
        values = series.binomial_row(unbounded, span_top) if unbounded else [1] + [0] * span_top
    elif len(groups) == 1:
        (span, e), = groups
        values = series.window_power_row(span, e, span_top, unbounded)
    else:
        (span, e), rest = groups[0], groups[1:]
        first = series.from_coefficients(series.window_power_row(span, e, span_top, unbounded))
        factors = [first] + [series.power(series.window(0, s), k, span_top) for s, k in rest]
        values = series.coefficients(series.product(factors, span_top), span_top)
    return [0] * low + plain_ints(values)


def _exponential_row(bounds, top: int) -> List[int]:
    """``m! [x^m] prod_i sum_{k=a_i}^{b_i} x^k / k!`` for ``m = 0..top``.

    Every factor is held as ``top! * Q_i(x)`` (``Q_i`` the window divided by
    ``x^{a_i}``), an integer polynomial because ``a_i + k <= top``; products
    and powers divide the extra ``top!`` out after each multiplication
    (:func:`enumerator.series.scaled_power`), so coefficients stay the size of
    the counts.
    """
    r = len(bounds)
    if all(a == 0 and (b is None or b >= top) for a, b in bounds):
        out, value = [], 1
        for _ in range(top + 1):
            out.append(value)
            value *= r
        return out
    low = sum(a for a, _ in bounds)
    span_top = top - low
    if span_top < 0:
        return [0] * (top + 1)
    fac = gmpy2.fac
    scale = fac(top)
    constant = mpz(1)
    groups: Counter = Counter()
    for a, b in bounds:
        high = a + span_top if b is None else min(b, a + span_top)
        if high == a:
            constant *= fac(a)  # the factor x^a / a! only rescales
        else:
            groups[(a, high)] += 1
    factors = []
    for (a, high), e in sorted(groups.items()):
        window = fmpz_poly([int(scale // fac(a + k)) for k in range(high - a + 1)])
        factors.append(series.scaled_power(window, e, span_top, scale))
    product = series.scaled_product(factors, span_top, scale)
    divisor = scale * constant
    out = [0] * (top + 1)
    m_fac = fac(low)
    divexact = gmpy2.divexact
    for j in range(span_top + 1):
        m = low + j
        if j:
            m_fac *= m
        c = series.coefficient(product, j)
        if c:
            out[m] = int(divexact(m_fac * c, divisor))
    return out


def coefficient_row(model: UrnModel, upto=None, count: Optional[str] = None) -> List[int]:
    r"""Return the model's counts for every number of balls ``m = 0..upto``, in one pass.

    *count* is ``"configurations"`` (the ordinary coefficients) or
    ``"microstates"`` (``m!`` times the exponential ones, MB); the default is
    microstates for MB and configurations for BE/FD, the two being equal
    for BE/FD.  *upto* defaults to the model's number of balls.  Entry ``m``
    equals ``model.with_balls(m).configurations()`` (or ``.microstates()``).

    Algorithms: the binomial row ``C(m + r - 1, r - 1)`` without upper
    bounds; one window power by the three-term recurrence of
    :func:`enumerator.series.window_power_row` for uniform capacities
    (``O(N)`` big operations); a FLINT product of window powers for mixed
    bounds; for MB, exponential windows scaled by ``N!`` multiplied with
    one exact division after each product.

    >>> coefficient_row(UrnModel(balls=6, urns=3, rule="BE", capacity=2))
    [1, 3, 6, 7, 6, 3, 1]
    >>> coefficient_row(UrnModel(balls=4, urns=2, rule="MB", minimum=1))
    [0, 0, 2, 6, 14]
    """
    top = model.balls if upto is None else as_count(upto, "upto")
    if count is None:
        count = model.rule.description.outcomes
    if count not in ("configurations", "microstates"):
        raise InvalidParameters(f"count must be 'configurations' or 'microstates' (got {count!r})")
    if model.rule.generating == "exponential" and count == "microstates":
        return _exponential_row(model.bounds, top)
    return _ordinary_row(model.bounds, top)
