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

Weights and groups: a group of ``c`` urns of weight ``w`` contributes its
window at ``w x`` raised to the power ``c`` — ``(sum_{k=a}^{b} (w x)^k)^c``
(BE/FD) or ``(sum_{k=a}^{b} (w x)^k / k!)^c`` (MB) — so ``[x^n]`` (times ``n!``
for MB) is the total weight of the configurations, the normaliser of the law.
Nothing is expanded per urn: the function is a product over groups.

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
from fractions import Fraction
from typing import List, Optional, Tuple, Union

import gmpy2
import sympy
from flint import fmpz_poly

from ..core import series
from ..core.errors import InvalidParameters
from ..core.limits import check
from ..core.model import UrnModel, as_count
from ..core.rules import Rule
from .expressions import extract_coefficients, parse_expression, plain_ints, symbol
from .group_rows import combine, group_row, integer_weights, rows_cost
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


def _weighted_groups(model: UrnModel):
    """``((a, b, w), count)`` with equal bounds and weights merged, ordered by bounds then weight."""
    merged: Counter = Counter()
    for g in model.groups:
        merged[(g.lower, g.upper, g.weight)] += g.count
    return sorted(merged.items(), key=lambda item: (item[0][0], math.inf if item[0][1] is None else item[0][1],
                                                    item[0][2]))


def _scaled(x, weight: Fraction):
    """``w x`` as SymPy (``x`` itself for weight 1)."""
    return x if weight == 1 else sympy.Rational(weight.numerator, weight.denominator) * x


def generating_function(model: UrnModel, var="x") -> sympy.Expr:
    r"""Return the model's generating function as a SymPy expression in *var*.

    Ordinary for BE and FD (``[x^n]`` counts configurations), exponential for
    MB (``n! [x^n]`` counts microstates); see :func:`kind`.  Urns with equal
    bounds and weights are grouped into one power, whatever their number; a
    group of weight ``w`` has its window at ``w x``, so ``[x^n]`` is then the
    total weight (the normaliser).  The number of balls of *model* plays no
    part (the function covers every ``n``).

    Notes
    -----
    A product over the ``G`` groups (Flajolet & Sedgewick, *Analytic
    Combinatorics*, 2009, ch. I–II): ``O(G)`` SymPy nodes (``O(G (b - a))``
    for bounded MB windows), never one per urn.

    >>> generating_function(UrnModel(balls=3, urns=4, rule="BE"))
    (1 - x)**(-4)
    >>> generating_function(UrnModel(balls=3, urns=4, rule="FD"))
    (x + 1)**4
    >>> generating_function(UrnModel(balls=3, urns=4, rule="MB", minimum=1))
    (exp(x) - 1)**4
    >>> generating_function(UrnModel(balls=2, groups=[(2**64, 0, None, 1), (1, 0, None, 3)], rule="BE"))
    1/((1 - 3*x)*(1 - x)**18446744073709551616)
    """
    x = symbol(var)
    _check_windows(model)
    factors = [_window(model.rule, a, b, _scaled(x, w)) ** e for (a, b, w), e in _weighted_groups(model)]
    return sympy.Mul(*factors)


def _check_windows(model: UrnModel) -> None:
    """Refuse bounded MB windows whose SymPy sums would hold too many terms (``b - a`` per group)."""
    if model.rule.generating != "exponential":
        return
    terms = sum((g.upper - g.lower + 1) if g.upper is not None else g.lower for g in model.groups)
    if terms > 100_000:
        raise InvalidParameters(
            f"the exponential windows of this model hold {terms:,} terms in all, too many to write "
            "symbolically; use coefficient_row for its numbers",
        )


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
    gives back :func:`generating_function`.  Groups and weights as there:
    one factor per group of equal urns, windows at ``w x``.

    >>> bivariate_generating_function(UrnModel(balls=3, urns=2, rule="BE"), "empty")
    (u - 1 + 1/(1 - x))**2
    """
    x = symbol(var)
    u = symbol(marker, "marker")
    if u == x:
        raise InvalidParameters("the marker and the variable must be different names (say u and x)")
    how, j = parse_mark(mark)
    _check_windows(model)
    factors = []
    for (a, b, w), e in _weighted_groups(model):
        wx = _scaled(x, w)
        whole = _window(model.rule, a, b, wx)
        if how == "exactly":
            if j < a or (b is not None and j > b):
                factor = whole
            else:
                exponential = model.rule.generating == "exponential"
                weight = sympy.Rational(1, math.factorial(j)) if exponential else sympy.Integer(1)
                factor = whole + (u - 1) * weight * wx**j
        else:
            low = max(a, j)
            if b is not None and low > b:
                factor = whole
            elif low == a:
                factor = u * whole
            else:
                factor = _window(model.rule, a, low - 1, wx) + u * _window(model.rule, low, b, wx)
        factors.append(factor**e)
    return sympy.Mul(*factors)


# ---------------------------------------------------------------------------
# coefficient rows of a model
# ---------------------------------------------------------------------------

def _ordinary_row(groups, top: int) -> List[int]:
    """``[x^m] prod_g (x^{a_g} + ... + x^{b_g})^{c_g}`` for ``m = 0..top``; *groups* are ``(c, a, b)``."""
    low = sum(c * a for c, a, _ in groups)
    span_top = top - low
    if span_top < 0:
        return [0] * (top + 1)
    unbounded = 0
    spans: Counter = Counter()
    for c, a, b in groups:
        if b is None or b - a >= span_top:
            unbounded += c  # a window reaching past the truncation acts as 1/(1-x)
        elif b > a:
            spans[b - a] += c
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


def _exponential_row(groups, top: int) -> List[int]:
    """``m! [x^m] prod_g (sum_{k=a_g}^{b_g} x^k / k!)^{c_g}`` for ``m = 0..top``; *groups* are ``(c, a, b)``.

    Every factor is held as ``top! * Q_i(x)`` (``Q_i`` the window divided by
    ``x^{a_i}``), an integer polynomial because ``a_i + k <= top``; products
    and powers divide the extra ``top!`` out after each multiplication
    (:func:`enumerator.series.scaled_power`), so coefficients stay the size of
    the counts.
    """
    r = sum(c for c, _, _ in groups)
    if all(a == 0 and (b is None or b >= top) for _, a, b in groups):
        out, value = [], 1
        for _ in range(top + 1):
            out.append(value)
            value *= r
        return out
    low = sum(c * a for c, a, _ in groups)
    span_top = top - low
    if span_top < 0:
        return [0] * (top + 1)
    fac = gmpy2.fac
    scale = fac(top)
    constant = mpz(1)
    merged: Counter = Counter()
    for c, a, b in groups:
        high = a + span_top if b is None else min(b, a + span_top)
        if high == a:
            if a:
                constant *= fac(a) ** c  # the factor (x^a / a!)^c only rescales (c <= top / a)
        else:
            merged[(a, high)] += c
    factors = []
    for (a, high), e in sorted(merged.items()):
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


def coefficient_row(model: UrnModel, upto=None, count: Optional[str] = None) -> List[Union[int, Fraction]]:
    r"""Return the model's counts for every number of balls ``m = 0..upto``, in one pass.

    *count* is ``"configurations"`` (the ordinary coefficients, weights
    ignored) or ``"microstates"`` (the total weight: ``m!`` times the
    exponential coefficients for MB, the ordinary weighted ones for BE/FD);
    the default is microstates for MB and for weighted models, else
    configurations, the two being equal for unweighted BE/FD.  *upto*
    defaults to the model's number of balls.  Entry ``m`` equals
    ``model.with_balls(m).configurations()`` (or ``.microstates()``).

    Returns
    -------
    list of int, or list of Fraction
        Python ``int`` when every entry is an integer (always without
        weights), else ``fractions.Fraction`` for all of them.

    Raises
    ------
    TooLarge
        When the rows would exceed the active limits (checked first, from
        ``upto``, the number of groups and the digits of the counts).

    Notes
    -----
    By groups, never per urn: the binomial row ``C(m + r - 1, r - 1)``
    without upper bounds; one window power by the three-term recurrence of
    :func:`enumerator.core.series.window_power_row` for uniform capacities
    (``O(N)`` big operations); a FLINT product of window powers for mixed
    bounds; for MB, exponential windows scaled by ``N!`` multiplied with
    one exact division after each product, or Miller's recurrence
    (:mod:`enumerator.algorithms.group_rows`) for groups of ``2^32`` urns
    or more.  Weights ``w_g = W_g / D`` (integers ``W_g``): each group's row
    is multiplied by ``W_g^m``, the groups combined (products, binomial
    convolutions for MB), and entry ``m`` divided by ``D^m``.  Cost
    ``O(G)`` products of ``N + 1`` coefficients
    (:func:`enumerator.algorithms.group_rows.rows_cost`).

    >>> coefficient_row(UrnModel(balls=6, urns=3, rule="BE", capacity=2))
    [1, 3, 6, 7, 6, 3, 1]
    >>> coefficient_row(UrnModel(balls=4, urns=2, rule="MB", minimum=1))
    [0, 0, 2, 6, 14]
    >>> coefficient_row(UrnModel(balls=2, weights=[1, 2], rule="BE"))
    [1, 3, 7]
    """
    top = model.balls if upto is None else as_count(upto, "upto")
    if count is None:
        count = "microstates" if model.weighted else model.rule.description.outcomes
    if count not in ("configurations", "microstates"):
        raise InvalidParameters(f"count must be 'configurations' or 'microstates' (got {count!r})",
                                parameters=["count"])
    kind = "exponential" if model.rule.generating == "exponential" and count == "microstates" else "ordinary"
    weighted = model.weighted and count == "microstates"
    ints, d = integer_weights([g.weight for g in model.groups]) if weighted else ([1] * len(model.groups), 1)
    spec = [(g.count, g.lower, g.upper, w) for g, w in zip(model.groups, ints)]
    check(rows_cost(kind, spec, top, rows=1), f"the coefficient row up to {top:,} balls",
          advice="lower upto=", parameters=["upto"])
    groups = [(c, a, b) for c, a, b, _ in spec]
    if not weighted:
        if kind == "ordinary":
            return _ordinary_row(groups, top)
        if all(c < 2**32 for c, _, _ in groups):
            return _exponential_row(groups, top)
    row = None
    for c, a, b, w in spec:
        here = group_row(kind, c, a, b, top, w)
        row = here if row is None else combine(kind, row, here, top)
    if d == 1:
        return [int(v) for v in row]
    out, power = [], 1
    for v in row:
        out.append(Fraction(int(v), power))
        power *= d
    if all(v.denominator == 1 for v in out):
        return [int(v) for v in out]
    return out
