r"""Sweeps: the points of a comparison, one parameter varied and the others tied to it.

A :class:`Point` holds the parameters of one comparison.  :func:`sweep`
builds the points from a range of one parameter (``"balls=10..1000"``,
:func:`parse_range`) with the other parameters fixed or tied to it by a tiny
integer arithmetic (:func:`parse_tie`: a recursive-descent parser, never
``eval``).  :func:`observed_order` is the convergence order seen along a
sweep: minus the least-squares slope of ``ln |relative error|`` against
``ln x``, so that an error ``~ x^{-p}`` gives ``p``.

The text forms (a range, a tie, a pattern, a Boltzmann factor) are part of
the Python API as well as the command line's, so they are parsed here.

Cost: a sweep of ``m`` points evaluates each tie ``m`` times, each in time
linear in the length of its expression.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from fractions import Fraction
from typing import List, Optional, Sequence, Tuple

import mpmath

from ...core.errors import InvalidParameters, TooLarge
from ...core.model import as_count

__all__ = [
    "MAX_POINTS",
    "NUMERIC",
    "Point",
    "Tie",
    "observed_order",
    "parse_factor",
    "parse_pattern",
    "parse_range",
    "parse_tie",
    "sweep",
]

mpf = mpmath.mpf

#: Most points one sweep may hold.
MAX_POINTS = 10_000


# ---------------------------------------------------------------------------
# Points
# ---------------------------------------------------------------------------
@dataclass(frozen=True)
class Point:
    """The parameters of one comparison.

    ``balls`` (``n``) and ``urns`` (``r``) as in :class:`~enumerator.core.model.UrnModel`;
    ``rule``, ``capacity`` and ``minimum`` for the saddle-point entry; ``at``
    the ``j`` of the empty-urn and profile entries; ``pattern`` the shape of
    the configurations of the entropy entry; ``factor`` the Boltzmann factor
    ``e^{-ε/T}`` (a ``Fraction`` in ``(0, 1)``) of the grand-canonical entry.
    Fields an approximation does not use stay ``None``.
    """

    balls: int
    urns: Optional[int] = None
    rule: Optional[str] = None
    capacity: Optional[int] = None
    minimum: Optional[int] = None
    at: Optional[int] = None
    pattern: Optional[Tuple[int, ...]] = None
    factor: Optional[Fraction] = None

    def value(self, name: str) -> Optional[int]:
        """The parameter *name* (``"balls"``, ``"urns"``, ...)."""
        return getattr(self, name)


#: Parameters that a tie may set and a sweep may vary.
NUMERIC = ("balls", "urns", "capacity", "minimum", "at")


def parse_factor(value) -> Fraction:
    """A Boltzmann factor ``e^{-ε/T}``: an exact fraction strictly between 0 and 1.

    Parameters
    ----------
    value : Fraction, int or str
        ``"1/2"``, ``"0.3"`` (decimal text is exact).

    Returns
    -------
    Fraction

    Raises
    ------
    InvalidParameters
        Not a number, not exact (a float), or outside ``(0, 1)``.

    Notes
    -----
    ``fractions.Fraction`` parses the text; cost linear in its length.

    Examples
    --------
    >>> parse_factor("0.25")
    Fraction(1, 4)
    """
    if isinstance(value, Fraction):
        number = value
    elif isinstance(value, (int, str)) and not isinstance(value, bool):
        try:
            number = Fraction(str(value).strip())
        except (ValueError, ZeroDivisionError):
            raise InvalidParameters(
                f"factor must be a fraction like 1/2 or 0.3 (got {value!r})"
            ) from None
    else:
        raise InvalidParameters(f"factor must be an exact fraction like 1/2, not {type(value).__name__}")
    if not 0 < number < 1:
        raise InvalidParameters(
            f"factor is e^(-spacing/T), so it must lie strictly between 0 and 1 (got {number})"
        )
    return number



def observed_order(xs: Sequence, errors: Sequence) -> Optional[float]:
    """Minus the least-squares slope of ``ln |error|`` against ``ln x``.

    Parameters
    ----------
    xs : sequence
        The varied parameter at each point (``None`` or ``<= 0``: left out).
    errors : sequence
        The errors at those points (mpmath numbers, floats or ``None``).

    Returns
    -------
    float or None
        ``p`` for an error ``~ C x^{-p}``; ``None`` unless two distinct ``x``
        remain once points with an error of 0 or ``None`` are left out.

    Notes
    -----
    Ordinary least squares on the log-log points.  The logarithms come from
    mpmath (errors may be below float range) and the fit is done in floats:
    the result is an approximation.  Cost linear in the number of points.

    Examples
    --------
    >>> round(observed_order([10, 100, 1000], [1e-2, 1e-4, 1e-6]), 12)
    2.0
    """
    pairs = [
        (float(mpmath.log(x)), float(mpmath.log(abs(mpf(e)))))
        for x, e in zip(xs, errors)
        if e is not None and e != 0 and x is not None and x > 0
    ]
    if len({u for u, _ in pairs}) < 2:
        return None
    mean_u = sum(u for u, _ in pairs) / len(pairs)
    mean_v = sum(v for _, v in pairs) / len(pairs)
    num = sum((u - mean_u) * (v - mean_v) for u, v in pairs)
    den = sum((u - mean_u) ** 2 for u, _ in pairs)
    return -num / den


# ---------------------------------------------------------------------------
# Sweeps and ties: a tiny integer arithmetic, never eval
# ---------------------------------------------------------------------------
_TOKEN = re.compile(r"\s*(?:(\d+)|([A-Za-z_]\w*)|(//|[-+*/()]))")


@dataclass(frozen=True)
class Tie:
    """A parameter given as a number or an arithmetic expression of the varied parameter.

    Grammar (integers, one name, ``+ - * / //``, unary minus, parentheses;
    usual precedence, left to right)::

        expr  := term (("+" | "-") term)*
        term  := unary (("*" | "/" | "//") unary)*
        unary := ("+" | "-") unary | INT | NAME | "(" expr ")"

    Evaluated exactly with ``Fraction``: ``/`` is exact division and ``//``
    rounds down.  The value at every point must be a whole number (write
    ``balls//2`` to round down).  A recursive-descent parser builds a small
    tree; nothing is passed to ``eval``.
    """

    text: str
    tree: tuple
    variable: Optional[str]

    def __call__(self, value: Optional[int] = None) -> int:
        result = _evaluate_tree(self.tree, value, self)
        if result.denominator != 1:
            raise InvalidParameters(
                f"{self.text!r} is {result} at {self.variable}={value}, not a whole number; "
                "use // to round down (e.g. balls//2) or a step= that keeps it whole",
                parameters=["step"],
            )
        return int(result)

    @property
    def constant(self) -> bool:
        """True when the expression does not mention the varied parameter."""
        return not _mentions(self.tree)


def _mentions(tree) -> bool:
    kind = tree[0]
    if kind == "name":
        return True
    if kind == "int":
        return False
    return any(_mentions(t) for t in tree[1:] if isinstance(t, tuple))


def _evaluate_tree(tree, value, tie) -> Fraction:
    kind = tree[0]
    if kind == "int":
        return Fraction(tree[1])
    if kind == "name":
        if value is None:
            raise InvalidParameters(
                f"{tie.text!r} uses {tree[1]} but nothing is varied; add vary= {tree[1]}=START..STOP",
                parameters=["vary"],
            )
        return Fraction(value)
    if kind == "neg":
        return -_evaluate_tree(tree[1], value, tie)
    left = _evaluate_tree(tree[1], value, tie)
    right = _evaluate_tree(tree[2], value, tie)
    if kind == "+":
        return left + right
    if kind == "-":
        return left - right
    if kind == "*":
        return left * right
    if right == 0:
        raise InvalidParameters(f"{tie.text!r} divides by zero at {tie.variable}={value}")
    if kind == "/":
        return left / right
    return Fraction(math.floor(left / right))


#: Most tokens, nesting levels and digits of a number in a parameter expression (:func:`parse_tie`):
#: the parser and the evaluation recurse along the tree, so both are bounded before any recursion.
_MOST_TOKENS = 400
_MOST_DEPTH = 100
_MOST_DIGITS = 4000  # as for numbers on the command line


def _shown(source: str) -> str:
    """*source* for a message: whole when short, else its start and length."""
    return repr(source) if len(source) <= 60 else f"the expression {source[:40]!r}... ({len(source)} characters)"


def parse_tie(text, variable: Optional[str] = None) -> Tie:
    """Parse a parameter value: an integer or an expression of *variable* (see :class:`Tie`).

    Parameters
    ----------
    text : int or str
        ``365``, ``"balls//2"``, ``"balls*balls+1"``.
    variable : str, optional
        The one name the expression may mention (the varied parameter);
        ``None`` when nothing is varied.

    Returns
    -------
    Tie
        Call it with the varied value to get the whole number.

    Raises
    ------
    InvalidParameters
        A boolean, an empty value, a name other than *variable*, or text the
        grammar does not read (the message gives the column).

    Notes
    -----
    A tokenizer and a recursive-descent parser of the grammar in :class:`Tie`
    (the classic expression grammar, e.g. A. V. Aho, M. S. Lam, R. Sethi and
    J. D. Ullman, *Compilers*, 2nd ed., 2006, ch. 2); nothing is passed to
    ``eval``.  Cost linear in the length of *text*.

    Examples
    --------
    >>> parse_tie("balls//2", "balls")(11)
    5
    """
    if isinstance(text, bool):
        raise InvalidParameters("a parameter must be a whole number or an expression, not a boolean")
    if isinstance(text, int):
        return Tie(str(text), ("int", int(text)), variable)
    source = str(text)
    tokens = []
    position = 0
    while position < len(source):
        if source[position:].strip() == "":
            break
        match = _TOKEN.match(source, position)
        if not match:
            raise InvalidParameters(
                f"cannot read {source!r} at column {position + 1}: use whole numbers, "
                f"{variable or 'the varied parameter'}, + - * / // and parentheses"
            )
        number, name, op = match.groups()
        column = match.start(match.lastindex) + 1
        if number is not None and len(number) > _MOST_DIGITS:
            raise InvalidParameters(
                f"the number at column {column} of {_shown(source)} has more than {_MOST_DIGITS} digits; "
                "use smaller numbers"
            )
        if name is not None and name != variable:
            allowed = f"only {variable} may appear" if variable else "nothing is varied, so only numbers may appear"
            raise InvalidParameters(f"{source!r} mentions {name!r} at column {column}; {allowed}")
        tokens.append((("int", int(number)) if number else ("name", name) if name else ("op", op), column))
        position = match.end()
    if not tokens:
        raise InvalidParameters("a parameter value is empty; give a whole number or an expression")
    if len(tokens) > _MOST_TOKENS:
        raise InvalidParameters(
            f"{_shown(source)} has {len(tokens)} tokens, more than the {_MOST_TOKENS} a parameter may have; "
            "write it shorter"
        )
    index = 0
    depth = 0

    def peek():
        return tokens[index][0] if index < len(tokens) else ("end", None)

    def fail(message):
        column = tokens[index][1] if index < len(tokens) else len(source) + 1
        raise InvalidParameters(f"cannot read {source!r} at column {column}: {message}")

    def expr():
        nonlocal index
        tree = term()
        while peek() in (("op", "+"), ("op", "-")):
            op = peek()[1]
            index += 1
            tree = (op, tree, term())
        return tree

    def term():
        nonlocal index
        tree = unary()
        while peek() in (("op", "*"), ("op", "/"), ("op", "//")):
            op = peek()[1]
            index += 1
            tree = (op, tree, unary())
        return tree

    def unary():
        nonlocal index, depth
        token = peek()
        if token in (("op", "-"), ("op", "+"), ("op", "(")):
            depth += 1
            if depth > _MOST_DEPTH:
                raise InvalidParameters(f"{_shown(source)} nests signs and parentheses more than {_MOST_DEPTH} "
                                        "levels deep; write it flatter")
        if token in (("op", "-"), ("op", "+")):
            index += 1
            inner = unary()
            depth -= 1
            return ("neg", inner) if token[1] == "-" else inner
        if token[0] in ("int", "name"):
            index += 1
            return token
        if token == ("op", "("):
            index += 1
            inner = expr()
            if peek() != ("op", ")"):
                fail("expected ')'")
            index += 1
            depth -= 1
            return inner
        fail("expected a number, a name or '('")

    tree = expr()
    if index != len(tokens):
        fail("unexpected text after the expression")
    return Tie(source, tree, variable)


_RANGE = re.compile(r"\s*([A-Za-z_]\w*)\s*=\s*(\d+)\s*\.\.\s*(\d+)\s*")


def parse_range(text: str) -> Tuple[str, int, int]:
    """Parse ``"balls=10..1000"`` into ``("balls", 10, 1000)``.

    Parameters
    ----------
    text : str
        ``NAME=START..STOP`` with NAME one of :data:`NUMERIC` and whole
        numbers ``START <= STOP`` (spaces allowed around each part).

    Returns
    -------
    tuple of (str, int, int)

    Raises
    ------
    InvalidParameters
        Text of another shape, an unknown name, ``START > STOP``.

    Notes
    -----
    One regular expression; cost linear in the length of *text*.  (The store's
    tables read a plain ``START..STOP`` of their own, without a name.)

    Examples
    --------
    >>> parse_range(" urns = 2 .. 9 ")
    ('urns', 2, 9)
    """
    match = _RANGE.fullmatch(str(text))
    if not match:
        raise InvalidParameters(
            f"vary= must look like balls=10..1000 (a parameter, =, START..STOP with whole numbers); got {text!r}",
            parameters=["vary"],
        )
    name, start, stop = match.group(1), int(match.group(2)), int(match.group(3))
    if name not in NUMERIC:
        raise InvalidParameters(f"vary= names one of {', '.join(NUMERIC)} (got {name!r})", parameters=["vary"])
    if start > stop:
        raise InvalidParameters(
            f"vary= {text}: START {start} is above STOP {stop}; give START <= STOP", parameters=["vary"]
        )
    return name, start, stop


def _grid(start: int, stop: int, step: Optional[int], geometric: Optional[int]) -> List[int]:
    if step is not None and geometric is not None:
        raise InvalidParameters("give step= or geometric=, not both", parameters=["step", "geometric"])
    if step is not None:
        step = as_count(step, "step", 1)
        count = (stop - start) // step + 1
        if count > MAX_POINTS:
            raise TooLarge(
                f"the sweep has {count} points, above {MAX_POINTS}; use a larger step=", parameters=["step"]
            )
        return list(range(start, stop + 1, step))
    points = 10 if geometric is None else as_count(geometric, "geometric", 1)
    if points > MAX_POINTS:
        raise TooLarge(f"geometric= {points} is above {MAX_POINTS} points; ask for fewer", parameters=["geometric"])
    if start == stop or points == 1:
        return [start] if points == 1 or start == stop else [start, stop]
    if start < 1:
        raise InvalidParameters(
            "geometric= spaces points on a log scale, so START must be at least 1", parameters=["geometric"]
        )
    with mpmath.workdps(40):
        ratio = mpf(stop) / start
        values = [int(mpmath.nint(start * ratio ** (mpf(i) / (points - 1)))) for i in range(points)]
    return sorted(set(values))


def parse_pattern(value) -> Tuple[int, ...]:
    """A pattern ``"3,2,1"`` (or a sequence of whole numbers) as a tuple of ints.

    Parameters
    ----------
    value : str or sequence of int

    Returns
    -------
    tuple of int

    Raises
    ------
    InvalidParameters
        An entry that is not a whole number ``>= 0``.

    Notes
    -----
    Cost linear in the number of entries.

    Examples
    --------
    >>> parse_pattern("3, 2,1")
    (3, 2, 1)
    """
    items = value.split(",") if isinstance(value, str) else list(value)
    out = []
    for i, item in enumerate(items, start=1):
        if isinstance(item, str):
            if not re.fullmatch(r"\s*\d+\s*", item):
                raise InvalidParameters(
                    f"pattern entry {i} ({item.strip()!r}) is not a whole number; write e.g. pattern= 3,2,1",
                    parameters=["pattern"],
                )
            item = int(item)
        out.append(as_count(item, f"pattern entry {i}"))
    return tuple(out)


def sweep(vary: Optional[str] = None, step=None, geometric=None, **parameters) -> Tuple[str, List[Point]]:
    """Build the points of a comparison: one parameter varied, the others fixed or tied.

    Parameters
    ----------
    vary : str, optional
        ``"NAME=START..STOP"`` (NAME one of ``balls``, ``urns``, ``capacity``,
        ``minimum``, ``at``; :func:`parse_range`).  Without it the result is
        the single point of fixed values.
    step : int, optional
        The values are ``START, START+step, ...`` up to STOP.
    geometric : int, optional
        Or this many values spaced evenly on a log scale from START to STOP
        (rounded, duplicates dropped); the default is 10 such values.
    **parameters
        ``balls``, ``urns``, ``capacity``, ``minimum``, ``at``: an ``int`` or a
        :class:`Tie` expression of the varied name (``urns="balls//2"``);
        ``rule`` (a rule name), ``pattern`` (whole numbers, ``"3,2,1"``) and
        ``factor`` (a fraction, ``"1/2"``) are fixed.  ``None`` values are
        ignored.

    Returns
    -------
    variable : str
        The varied name (``"balls"`` for a single point).
    points : list of Point

    Raises
    ------
    InvalidParameters
        An unknown parameter, a malformed range or tie, the varied parameter
        also given a value, both *step* and *geometric*, a value below 0 at
        some point, no ``balls`` at all.
    TooLarge
        More than :data:`MAX_POINTS` points.

    Notes
    -----
    Geometric spacing rounds ``START (STOP/START)^{i/(k-1)}`` at 40 digits.
    Cost: each tie evaluated once per point, linear in its length.

    Examples
    --------
    >>> variable, points = sweep("balls=10..40", step=10, urns="balls//2")
    >>> variable, [(p.balls, p.urns) for p in points]
    ('balls', [(10, 5), (20, 10), (30, 15), (40, 20)])
    """
    fixed = {k: v for k, v in parameters.items() if v is not None}
    unknown = set(fixed) - set(NUMERIC) - {"rule", "pattern", "factor"}
    if unknown:
        raise InvalidParameters(f"unknown parameter(s) {', '.join(sorted(unknown))}")
    if vary is None:
        if step is not None or geometric is not None:
            raise InvalidParameters(
                "step= and geometric= need vary= NAME=START..STOP", parameters=["step", "geometric", "vary"]
            )
        variable, values = "balls", [None]
    else:
        variable, start, stop = parse_range(vary)
        if variable in fixed:
            raise InvalidParameters(
                f"{variable} is varied by vary=; do not also give it a value", parameters=["vary"]
            )
        values = _grid(start, stop, step, geometric)
    ties = {k: parse_tie(fixed[k], None if vary is None else variable) for k in NUMERIC if k in fixed}
    pattern = None if fixed.get("pattern") is None else parse_pattern(fixed["pattern"])
    if vary is None and "balls" not in ties:
        raise InvalidParameters("give balls= N, or vary= balls=START..STOP", parameters=["balls", "vary"])
    points = []
    for value in values:
        numbers = {k: tie(value) for k, tie in ties.items()}
        if value is not None:
            numbers[variable] = value
        for k, v in numbers.items():
            if v < 0:
                where = "" if value is None else f" at {variable}={value}"
                raise InvalidParameters(f"{k} is {v}{where}; it must be at least 0", parameters=[k])
        points.append(Point(
            balls=numbers["balls"],
            urns=numbers.get("urns"),
            rule=fixed.get("rule"),
            capacity=numbers.get("capacity"),
            minimum=numbers.get("minimum"),
            at=numbers.get("at"),
            pattern=pattern,
            factor=None if fixed.get("factor") is None else parse_factor(fixed["factor"]),
        ))
    return variable, points

