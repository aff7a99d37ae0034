r"""User-written generating functions: safe parsing and exact expansion.

:func:`parse_expression` reads a one-variable expression (whole numbers, the
variable, ``+ - * /``, powers, parentheses) without running any other
Python; :func:`extract_coefficients` expands it exactly in truncated power
series by the project's kernel (:mod:`enumerator.core.series`: FLINT
products and powers, Newton's iteration for reciprocals, Miller's
recurrence for a power of any size or a rational power), never by SymPy's
``series()``.  The generating functions of a model are
:mod:`enumerator.algorithms.generating`.
"""

from __future__ import annotations

import io
import keyword
import math
import tokenize
from fractions import Fraction
from typing import Dict, List, Optional, Tuple, Union

import gmpy2
import sympy
from flint import fmpq, fmpq_poly, fmpz_poly

from ..core import series
from ..core.errors import InvalidParameters, TooLarge
from ..core.exact import coprime_fraction, decimal_digits
from ..core.groups import MAX_DIGITS
from ..core.limits import STEPS_PER_SECOND, Cost, check
from ..core.model import as_count

__all__ = [
    "MAX_BINARY_EXPONENT",
    "MAX_CONSTANT_BITS",
    "MAX_EXPRESSION_CHARS",
    "MAX_NESTING",
    "MAX_POWER_BITS",
    "MESSAGE_DIGITS",
    "extract_coefficients",
    "expansion_cost",
    "miller_cost",
    "number_text",
    "parse_expression",
    "rational_power",
    "symbol",
]

#: Deepest nesting :func:`parse_expression` accepts: parentheses, signs and
#: powers nested inside one another (sums and products of any length are flat).
MAX_NESTING = 100
#: Longest expression text accepted.
MAX_EXPRESSION_CHARS = 100_000
#: Bytes one coefficient takes at the least while a series is expanded (an
#: ``fmpq`` in FLINT, its Python ``int`` or ``Fraction``, the list slot),
#: times the copies alive at once (operands, Newton's iterates, the output).
COEFFICIENT_BYTES = 64 * 6
#: Seconds per coefficient and tree node of the walk (FLINT's products are
#: quasi-linear; this is their rate on small coefficients, rounded up).
COEFFICIENT_SECONDS = 1.0 / STEPS_PER_SECOND


def expansion_cost(upto: int, nodes: int = 1) -> Cost:
    """The least cost of expanding an expression of *nodes* tree nodes to degree *upto*.

    Memory ``(upto + 1) * COEFFICIENT_BYTES``; seconds ``(upto + 1) * nodes``
    coefficient steps.  Coefficient growth is checked where it happens
    (powers, reciprocals).
    """
    return Cost(seconds=(upto + 1) * max(1, nodes) * COEFFICIENT_SECONDS, memory=(upto + 1) * COEFFICIENT_BYTES)


def _tree_size(tree) -> int:
    """The number of nodes of a SymPy tree, refusing one nested deeper than ``3 * MAX_NESTING`` (iterative)."""
    count = 0
    stack = [(tree, 0)]
    while stack:
        node, depth = stack.pop()
        count += 1
        if depth > 3 * MAX_NESTING:
            raise InvalidParameters(
                f"the expression nests more than {3 * MAX_NESTING} levels deep; write it with less nesting"
            )
        stack.extend((arg, depth + 1) for arg in node.args)
    return count

#: Largest number of bits a single exact constant (or constant term of a
#: power) may reach in :func:`extract_coefficients` before it refuses.
MAX_CONSTANT_BITS = 10_000_000
#: Largest estimated total size, in bits, of the coefficients of one
#: truncated power in :func:`extract_coefficients`.
MAX_POWER_BITS = 2**32
#: Largest whole exponent taken by binary powering (FLINT); larger ones, and
#: rational ones, go by Miller's recurrence, whose cost does not grow with
#: the exponent's size beyond its bits.
MAX_BINARY_EXPONENT = 10**12
#: Most terms Miller's recurrence is asked for before any cost estimate
#: (a pole raised to a huge power); the limits refuse far fewer.
MAX_MILLER_TERMS = 2**40
#: Numbers longer than this many digits are written by their digit count in messages.
MESSAGE_DIGITS = 40


def symbol(name, what: str = "var") -> sympy.Symbol:
    """Return *name* as a SymPy symbol, or raise if it is not a plain variable name.

    Parameters
    ----------
    name : str or sympy.Symbol
        A Python identifier that is not a keyword.
    what : str
        The parameter's name, for the error message.

    Returns
    -------
    sympy.Symbol

    Raises
    ------
    InvalidParameters
        for anything else.
    """
    if isinstance(name, sympy.Symbol):
        return name
    if not isinstance(name, str) or not name.isidentifier() or keyword.iskeyword(name):
        raise InvalidParameters(
            f"{what} must be a plain variable name such as x or z (got {name!r})"
        )
    return sympy.Symbol(name)



def plain_ints(values) -> List[int]:
    """``[int(v) for v in values]``, converting each shared object once (mirrored rows)."""
    seen: Dict[int, int] = {}
    out = []
    for v in values:
        key = id(v)
        value = seen.get(key)
        if value is None:
            value = seen[key] = int(v)
        out.append(value)
    return out



# ---------------------------------------------------------------------------
# user-written expressions: safe parsing
# ---------------------------------------------------------------------------

_ALLOWED_OPS = {"+", "-", "*", "/", "**", "^", "(", ")"}


def parse_expression(text: str, var="x") -> sympy.Expr:
    """Parse *text* into an unevaluated SymPy expression in the one variable *var*.

    Only whole numbers, the variable, ``+ - * /``, powers (``^`` or
    ``**``) and parentheses are accepted; a number written next to the
    variable or a parenthesis multiplies (``2x``, ``x(1+x)``,
    ``(1-x)(1+x)``).  The text is tokenised and checked token by token before
    anything is built, then handed to ``sympy.parse_expr`` with
    ``evaluate=False``, a namespace holding only the variable and SymPy's
    ``Integer``/``Add``/``Mul``/``Pow``, and no builtins — so no other
    Python is ever run.  Errors name the offending text and its column.

    >>> parse_expression("1/(1 - x - x^2)")
    1/(-x**2 - x + 1)
    """
    x = symbol(var)
    name = x.name
    if not isinstance(text, str):
        raise InvalidParameters(f"the expression must be text (got {type(text).__name__})")
    if not text.strip():
        raise InvalidParameters(f"the expression is empty; write e.g. 1/(1 - {name} - {name}^2)")
    hint = f"only the variable {name}, whole numbers, + - * / ^ and parentheses are allowed"
    if len(text) > MAX_EXPRESSION_CHARS:
        raise InvalidParameters(
            f"the expression has {len(text):,} characters; at most {MAX_EXPRESSION_CHARS:,} are accepted"
        )
    _check_parentheses(text)
    pieces: List[str] = []
    previous = None  # "number", "value" (the variable or ')'), or None after an operator
    try:
        tokens = list(tokenize.generate_tokens(io.StringIO(text).readline))
    except (tokenize.TokenError, IndentationError, SyntaxError) as error:
        raise InvalidParameters(f"cannot read the expression {text!r}: {error}; {hint}") from None
    depth = 0
    for tok in tokens:
        kind_, string, (_, column) = tok.type, tok.string, tok.start
        where = f"column {column + 1}"
        if kind_ in (tokenize.NEWLINE, tokenize.NL, tokenize.ENDMARKER, tokenize.INDENT, tokenize.DEDENT):
            continue
        if kind_ == tokenize.NUMBER:
            if len(string) > MAX_DIGITS and string.isdigit():
                raise InvalidParameters(
                    f"{where}: a number of {len(string):,} digits; numbers are limited to {MAX_DIGITS:,} digits"
                )
            if not string.isdigit():
                exact = ""
                if "." in string or "e" in string.lower():
                    exact = " (decimals are not exact: write a fraction such as 1/2)"
                raise InvalidParameters(f"{where}: {string!r} is not a whole number{exact}; {hint}")
            if previous == "number":
                raise InvalidParameters(f"{where}: two numbers in a row; put an operator between them")
            if previous:
                pieces.append("*")
            pieces.append(string)
            previous = "number"
        elif kind_ == tokenize.NAME:
            if string != name:
                what = "function" if _followed_by_paren(tokens, tok) else "name"
                raise InvalidParameters(
                    f"{where}: the {what} {string!r} is not allowed; {hint}"
                    + (f" (the variable is {name}; change it with var=)" if what == "name" else ""),
                    parameters=["var"] if what == "name" else (),
                )
            if previous:
                pieces.append("*")
            pieces.append(string)
            previous = "value"
        elif kind_ == tokenize.OP and string in _ALLOWED_OPS:
            if string == "(":
                if previous:
                    pieces.append("*")
                depth += 1
                previous = None
            elif string == ")":
                depth -= 1
                if depth < 0:
                    raise InvalidParameters(f"{where}: ')' has no matching '('")
                previous = "value"
            else:
                previous = None
            pieces.append("**" if string == "^" else string)
        else:
            raise InvalidParameters(f"{where}: {string!r} is not allowed; {hint}")
    if depth:
        raise InvalidParameters(f"the expression {text!r} has {depth} unclosed '('")
    tree = _Parser(pieces, x).parse()
    if not isinstance(tree, sympy.Basic):
        raise InvalidParameters(
            f"the expression {text!r} is not well formed; check for a missing operand, "
            f"operator or parenthesis; {hint}"
        )
    return tree


class _Parser:
    """Precedence climbing over the checked tokens, building an unevaluated SymPy tree.

    Grammar (Python's precedence, ``**`` right-associative and binding
    tighter than a sign on its left)::

        sum     := product (("+" | "-") product)*
        product := signed (("*" | "/") signed)*
        signed  := ("+" | "-") signed | power
        power   := atom ("**" signed)?
        atom    := NUMBER | NAME | "(" sum ")"

    Sums and products are collected into flat ``Add``/``Mul`` nodes (so a
    polynomial of ten thousand terms is one node, not a chain ten thousand
    deep); signs, powers and parentheses nest, at most :data:`MAX_NESTING`
    levels, so neither this parser nor the walks over the tree can exhaust
    the stack.  ``a - b`` is ``Add(a, Mul(-1, b))`` and ``a / b`` is
    ``Mul(a, Pow(b, -1))``, as SymPy writes them.  Returns ``None`` for a
    malformed token sequence.
    """

    def __init__(self, pieces: List[str], x: sympy.Symbol):
        self.pieces, self.x, self.at, self.depth = pieces, x, 0, 0

    def parse(self):
        try:
            tree = self.sum()
        except _Malformed:
            return None
        return tree if self.at == len(self.pieces) else None

    def _peek(self):
        return self.pieces[self.at] if self.at < len(self.pieces) else None

    def _deeper(self):
        self.depth += 1
        if self.depth > MAX_NESTING:
            raise InvalidParameters(
                f"the expression nests parentheses, signs or powers more than {MAX_NESTING} levels deep; "
                "write it with less nesting"
            )

    def sum(self):
        terms = [self.product()]
        while self._peek() in ("+", "-"):
            op = self.pieces[self.at]
            self.at += 1
            term = self.product()
            terms.append(term if op == "+" else sympy.Mul(sympy.Integer(-1), term, evaluate=False))
        return terms[0] if len(terms) == 1 else sympy.Add(*terms, evaluate=False)

    def product(self):
        factors = [self.signed()]
        while self._peek() in ("*", "/"):
            op = self.pieces[self.at]
            self.at += 1
            factor = self.signed()
            factors.append(factor if op == "*" else sympy.Pow(factor, sympy.Integer(-1), evaluate=False))
        return factors[0] if len(factors) == 1 else sympy.Mul(*factors, evaluate=False)

    def signed(self):
        op = self._peek()
        if op in ("+", "-"):
            self.at += 1
            self._deeper()
            inner = self.signed()
            self.depth -= 1
            if op == "+":
                return inner
            if inner.is_Integer:
                return sympy.Integer(-int(inner))
            return sympy.Mul(sympy.Integer(-1), inner, evaluate=False)
        return self.power()

    def power(self):
        base = self.atom()
        if self._peek() == "**":
            self.at += 1
            self._deeper()
            exponent = self.signed()
            self.depth -= 1
            return sympy.Pow(base, exponent, evaluate=False)
        return base

    def atom(self):
        token = self._peek()
        if token is None:
            raise _Malformed
        self.at += 1
        if token == "(":
            self._deeper()
            inner = self.sum()
            self.depth -= 1
            if self._peek() != ")":
                raise _Malformed
            self.at += 1
            return inner
        if token.isdigit():
            return sympy.Integer(int(token))
        if token == self.x.name:
            return self.x
        raise _Malformed


class _Malformed(Exception):
    """Internal: the token sequence does not follow the grammar."""


def _check_parentheses(text: str) -> None:
    """Point at the first unmatched parenthesis (tokenising would only say 'EOF')."""
    opened: List[int] = []
    for column, char in enumerate(text, start=1):
        if char == "(":
            opened.append(column)
        elif char == ")":
            if not opened:
                raise InvalidParameters(f"column {column}: ')' has no matching '('")
            opened.pop()
    if opened:
        raise InvalidParameters(f"column {opened[-1]}: '(' is never closed; add a ')'")


def _followed_by_paren(tokens, tok) -> bool:
    index = tokens.index(tok)
    return index + 1 < len(tokens) and tokens[index + 1].string == "("


# ---------------------------------------------------------------------------
# user-written expressions: exact expansion by the series kernel
# ---------------------------------------------------------------------------

class _NeedPrecision(Exception):
    """Internal: the working precision was too low; retry with more terms."""

    def __init__(self, extra: int):
        super().__init__(extra)
        self.extra = extra


class _Series:
    """``x^val * poly + O(x^(val + prec))`` with ``poly(0) != 0``; ``prec=None``: exact.

    A zero known only to ``O(x^k)`` is ``val=k, poly=0, prec=0``; the exact
    zero is ``poly=0, prec=None``.  A series made by the window recurrence
    or Miller's recurrence keeps its coefficient list (``mpz``, or reduced
    ``mpq``) in ``row`` and builds ``poly`` only when further arithmetic
    needs it.
    """

    __slots__ = ("val", "_poly", "prec", "row")

    def __init__(self, val: int, poly: Optional[fmpq_poly], prec: Optional[int], row=None):
        self.val, self._poly, self.prec, self.row = val, poly, prec, row

    @property
    def poly(self) -> fmpq_poly:
        if self._poly is None:
            self._poly = _row_poly(self.row)
        return self._poly

    @property
    def absolute(self):
        return math.inf if self.prec is None else self.val + self.prec

    def is_zero(self) -> bool:
        """True for the zero series, exact or known only to ``O(x^k)``."""
        if self._poly is None:
            return not any(self.row)
        return self._poly.is_zero()

    def is_exact_zero(self) -> bool:
        return self.prec is None and self.is_zero()


def _row_poly(row) -> fmpq_poly:
    """The ``fmpq_poly`` of a coefficient list of ints or reduced ``mpq`` (one common denominator, set once).

    Building an ``fmpq_poly`` coefficient by coefficient rescales the whole
    polynomial at each new denominator (quadratic); here the least common
    multiple is taken first (GMP ``lcm``) and the numerators scaled once.
    """
    if row and isinstance(row[0], gmpy2.mpq):
        denominator = gmpy2.mpz(1)
        for c in row:
            if c.denominator != 1 and denominator % c.denominator:
                denominator = gmpy2.lcm(denominator, c.denominator)
        numerators = [int(c.numerator * (denominator // c.denominator)) for c in row]
        return fmpq_poly(fmpz_poly(numerators), int(denominator))
    return fmpq_poly(fmpz_poly(plain_ints(row)))


def _normalise(val: int, poly: fmpq_poly, absolute, limit: int) -> _Series:
    """Strip leading zero terms; keep an exact series exact while it fits below *limit*.

    Anything at or above the working limit ``x^limit`` is dropped, and the
    series then carries ``O(x^limit)``.
    """
    if poly.is_zero():
        if absolute == math.inf:
            return _Series(0, poly, None)
        return _Series(int(min(absolute, limit)), fmpq_poly([]), 0)
    shift = 0
    while poly[shift] == 0:
        shift += 1
    if shift:
        poly = poly.right_shift(shift)
        val += shift
    if absolute == math.inf and val + poly.length() <= limit:
        return _Series(val, poly, None)
    absolute = int(min(absolute, limit))
    if val >= absolute:
        return _Series(absolute, fmpq_poly([]), 0)
    rel = absolute - val
    if poly.length() > rel:
        poly = poly.truncate(rel)
    return _Series(val, poly, rel)


class _Expander:
    """Walk a SymPy expression tree, evaluating it in the truncated-series kernel."""

    def __init__(self, x: sympy.Symbol, limit: int):
        self.x = x
        self.limit = limit
        self.memo: Dict[sympy.Basic, _Series] = {}

    # -- constructors ------------------------------------------------------
    def constant(self, value: Fraction) -> _Series:
        return _normalise(0, fmpq_poly([fmpq(value.numerator, value.denominator)]), math.inf, self.limit)

    def laurent(self, terms: Dict[int, Fraction]) -> _Series:
        terms = {k: c for k, c in terms.items() if c}
        if not terms:
            return _Series(0, fmpq_poly([]), None)
        low = min(terms)
        high = min(max(terms), self.limit - 1)
        if high < low:
            return _Series(self.limit, fmpq_poly([]), 0)
        coeffs = [fmpq(0)] * (high - low + 1)
        for k, c in terms.items():
            if k <= high:
                coeffs[k - low] = fmpq(c.numerator, c.denominator)
        absolute = math.inf if max(terms) < self.limit else self.limit
        return _normalise(low, fmpq_poly(coeffs), absolute, self.limit)

    # -- arithmetic --------------------------------------------------------
    def add(self, a: _Series, b: _Series) -> _Series:
        if a.is_exact_zero():
            return b
        if b.is_exact_zero():
            return a
        absolute = min(a.absolute, b.absolute)
        val = min(a.val, b.val)
        pa = a.poly.left_shift(a.val - val) if a.val > val else a.poly
        pb = b.poly.left_shift(b.val - val) if b.val > val else b.poly
        return _normalise(val, pa + pb, absolute, self.limit)

    def mul(self, a: _Series, b: _Series) -> _Series:
        if a.is_exact_zero() or b.is_exact_zero():
            return _Series(0, fmpq_poly([]), None)
        val = a.val + b.val
        precs = [p for p in (a.prec, b.prec) if p is not None]
        rel = min(precs + [self.limit - val])
        if rel <= 0:
            # Nothing is known below the working limit beyond O(x^(val + rel)).
            return _Series(min(val + max(rel, 0), self.limit), fmpq_poly([]), 0)
        poly = a.poly.mul_low(b.poly, rel)
        absolute = math.inf if not precs and a.poly.degree() + b.poly.degree() < rel else val + rel
        return _normalise(val, poly, absolute, self.limit)

    def inverse(self, a: _Series) -> _Series:
        if a.is_exact_zero():
            raise InvalidParameters("division by zero: a denominator of the expression is identically 0")
        if a.is_zero():
            # Only O(x^k) is known: the leading term lies beyond the working precision.
            raise _NeedPrecision(max(16, self.limit // 2))
        val = -a.val
        rel = self.limit - val
        if a.prec is not None:
            rel = min(rel, a.prec)
        if rel <= 0:
            return _Series(self.limit, fmpq_poly([]), 0)
        self._check_inverse(a.poly[0], rel)
        self._check_growth(a.poly, rel)
        return _normalise(val, series.inverse(a.poly, rel), val + rel, self.limit)

    def power(self, a: _Series, k) -> _Series:
        if k == 0:
            return self.constant(Fraction(1))
        if isinstance(k, Fraction):
            if k.denominator == 1 and abs(k) <= MAX_BINARY_EXPONENT:
                k = k.numerator
            else:
                return self.miller(a, k)
        if k < 0:
            return self.power(self.inverse(a), -k)
        if a.is_exact_zero():
            return a
        if a.is_zero():
            if a.val > 0:
                return _Series(min(self.limit, a.val * k), fmpq_poly([]), 0)
            raise _NeedPrecision(max(16, self.limit // 2))
        val = a.val * k
        rel = self.limit - val
        if a.prec is not None:
            rel = min(rel, a.prec)
        if rel <= 0:
            return _Series(self.limit, fmpq_poly([]), 0)
        self._check_power(a.poly, k, rel)
        absolute = math.inf if (a.prec is None and a.poly.degree() * k < rel) else val + rel
        if a.prec is None and a.poly.denom() == 1:
            span = series.window_span(a.poly.numer())
            if span is not None:
                # (1 + x + ... + x^span)^k by the three-term recurrence: O(rel) operations.
                row = series.window_power_row(span, k, rel - 1)
                return _Series(val, None, None if absolute == math.inf else rel, row)
        poly = _truncated_power(a.poly, k, rel)
        absolute = math.inf if (a.prec is None and a.poly.degree() * k < rel) else val + rel
        return _normalise(val, poly, absolute, self.limit)

    def miller(self, a: _Series, k: Fraction) -> _Series:
        """``a^k`` for a rational or huge exponent *k*, by Miller's recurrence.

        ``a = x^v c_0 (1 + ...)``: the result is ``x^(v k) c_0^k (1 + ...)^k``,
        a power series only when ``v k`` is whole and ``c_0^k`` rational
        (checked exactly); its relative precision is *a*'s (``[x^j]`` of the
        power reads ``a``'s first ``j`` terms).  Costs are checked by
        :func:`miller_cost` before computing.
        """
        if a.is_exact_zero():
            if k < 0:
                raise InvalidParameters("division by zero: a denominator of the expression is identically 0")
            return a
        if a.is_zero():
            # Only O(x^m) is known: the power is O(x^(m k)) when k > 0.
            if k > 0 and a.val > 0 and a.val * k >= self.limit:
                return _Series(self.limit, fmpq_poly([]), 0)
            raise _NeedPrecision(max(16, self.limit // 2))
        shifted = a.val * k
        if shifted.denominator != 1:
            raise InvalidParameters(
                f"the power {number_text(k)} of a series starting with x^{a.val} starts with "
                f"x^({number_text(shifted)}), which is not a power series; only a base whose "
                f"lowest power of the variable times the exponent is whole can take this exponent"
            )
        val = shifted.numerator
        if val >= self.limit:
            return _Series(self.limit, fmpq_poly([]), 0)
        poly = a.poly
        c0 = Fraction(int(poly[0].p), int(poly[0].q))
        lead = rational_power(c0, k, "the constant term")
        if a.prec is None and poly.degree() == 0:
            return _normalise(val, fmpq_poly([fmpq(lead.numerator, lead.denominator)]), math.inf, self.limit)
        rel = self.limit - val
        if a.prec is not None:
            rel = min(rel, a.prec)
        if rel <= 0:
            return _Series(self.limit, fmpq_poly([]), 0)
        if rel > MAX_MILLER_TERMS:
            raise TooLarge(
                f"the power {number_text(k)} of a series starting with x^{a.val} starts with "
                f"x^({number_text(val)}): expanding it would take {number_text(rel)} terms; lower the "
                "exponent or the order of the pole at 0",
            )
        terms = min(poly.length(), rel)
        unit = poly.truncate(terms) / fmpq(c0.numerator, c0.denominator)
        denominator = int(unit.denom())
        numer = unit.numer()
        norm = sum(abs(int(c)) for c in numer.coeffs())
        check(miller_cost(rel, terms, k, norm, denominator),
              f"raising a series to the power {number_text(k)} to {number_text(rel)} terms",
              advice="lower upto=", parameters=["upto"])
        if k.denominator == 1 and denominator == 1 and lead.denominator == 1:
            row = series.miller_power(numer.coeffs(), k.numerator, rel - 1)
            if lead != 1:
                row = [c * lead.numerator for c in row]
            return _Series(val, None, rel, row)
        values = [Fraction(int(numer[j]), denominator) for j in range(terms)]
        row = series.miller_rational_power(values, k, rel - 1)
        if lead != 1:
            scale = gmpy2.mpq(lead.numerator, lead.denominator)
            row = [c * scale for c in row]
        return _Series(val, None, rel, row)

    # -- size guards -------------------------------------------------------
    @staticmethod
    def _check_inverse(c0, rel: int) -> None:
        """Refuse a reciprocal whose coefficients would grow past :data:`MAX_POWER_BITS` in all."""
        c = Fraction(int(c0.p), int(c0.q))
        bits = max(abs(c.numerator).bit_length(), c.denominator.bit_length())
        # [x^j] 1/(c0 + ...) carries c0^(j+1) in its denominator: about j*bits bits.
        if bits > 1 and (bits - 1) * rel * rel // 2 > MAX_POWER_BITS:
            raise TooLarge(
                f"the reciprocal of a series with constant term {c} up to degree {rel - 1} would need "
                f"about {(bits - 1) * rel * rel // 16 // 2**20:,} MiB; lower upto=, or use a "
                "denominator with constant term 1 or -1",
                parameters=["upto"],
            )

    @staticmethod
    def _check_growth(poly: fmpq_poly, rel: int) -> None:
        """Refuse a reciprocal whose coefficients may grow geometrically past the memory limit.

        ``1/(c0 (1 - h))`` is ``sum h^k / c0``; with ``||h||_1 = t > 1`` its
        ``j``-th coefficient has at most ``j log2 t`` bits more than ``1/c0^(j+1)``,
        so the expansion to degree ``rel`` holds about ``rel^2 log2(t) / 2``
        bits (Fibonacci's ``1/(1 - x - x^2)``: ``t = 2``, against ``0.69`` per
        term in fact).  Checked with :func:`enumerator.core.limits.check`.
        """
        numer = poly.numer()
        c0 = abs(int(numer[0]))
        rest = sum(abs(int(c)) for c in numer.coeffs()[1:])
        if rest <= c0:
            return
        per_term = rest.bit_length() - c0.bit_length() + 1  # >= log2(rest / c0)
        bits = per_term * rel * rel // 2
        check(Cost(seconds=bits / 2e9, memory=3 * (bits // 8)),
              f"the reciprocal of a series up to degree {rel - 1:,}", advice="lower upto=", parameters=["upto"])

    @staticmethod
    def _check_power(poly: fmpq_poly, k: int, rel: int) -> None:
        """Refuse a truncated power whose coefficients would exceed :data:`MAX_POWER_BITS` in all.

        Bound per coefficient: ``k log2 ||p||_1`` (the coefficient sum of
        ``p^k``); with constant term 1 or -1 also ``j (log2(k + j) + log2 ||p||_1)``
        (a binomial ``C(k + j, j)`` times the norm to the ``j``).
        """
        numer = poly.numer()
        c0 = Fraction(int(numer[0]), int(poly.denom()))
        _guard_constant_power(c0, k, "the constant term")  # the power's constant term is c0^k
        norm_bits = sum(abs(int(c)) for c in numer.coeffs()).bit_length()
        den_bits = int(poly.denom()).bit_length() - 1
        per = k * norm_bits
        if den_bits == 0 and abs(int(numer[0])) == 1:
            per = min(per, rel * ((k + rel).bit_length() + norm_bits))
        per += k * den_bits
        if per * rel > MAX_POWER_BITS:
            raise TooLarge(
                f"raising a series to the power {k} up to degree {rel - 1} could need about "
                f"{per * rel // 8 // 2**20:,} MiB of coefficients; lower upto= or the exponent",
                parameters=["upto"],
            )

    # -- the tree walk -----------------------------------------------------
    def expand(self, node) -> _Series:
        cached = self.memo.get(node)
        if cached is not None:
            return cached
        result = self._expand(node)
        self.memo[node] = result
        return result

    def _expand(self, node) -> _Series:
        x = self.x
        if node.is_Rational:
            return self.constant(Fraction(int(node.p), int(node.q)))
        if node.is_Symbol:
            if node == x:
                return self.laurent({1: Fraction(1)})
            raise InvalidParameters(
                f"unknown symbol {node.name!r}: the expression may use only the variable {x.name}"
            )
        if node.is_Add:
            terms: Dict[int, Fraction] = {}
            rest = []
            for arg in node.args:
                mono = _monomial(arg, x)
                if mono is None:
                    rest.append(arg)
                else:
                    c, k = mono
                    terms[k] = terms.get(k, Fraction(0)) + c
            total = self.laurent(terms)
            for arg in rest:
                total = self.add(total, self.expand(arg))
            return total
        if node.is_Mul:
            mono = _monomial(node, x)
            if mono is not None:
                return self.laurent({mono[1]: mono[0]})
            result = self.constant(Fraction(1))
            for arg in node.args:
                result = self.mul(result, self.expand(arg))
            return result
        if node.is_Pow:
            base, exponent = node.args
            try:
                k = _exponent(exponent, x)
            except TooLarge:
                # An exponent too large to write: x^E (or a series without a
                # constant term to that power) is 0 below x^limit when E is
                # provably a huge positive whole number.
                if x in base.free_symbols and _huge_positive(exponent, x):
                    a = self.expand(base)
                    if a.val > 0 and not a.is_zero():
                        return _Series(self.limit, fmpq_poly([]), 0)
                raise
            if x not in base.free_symbols:
                return self.constant(rational_power(_constant_value(base, x), k))
            if base == x:
                if k.denominator != 1:
                    raise InvalidParameters(
                        f"the exponent {number_text(k)} is not a whole number, and {x.name}^({number_text(k)}) "
                        f"is not a power series; only whole powers of {x.name} itself are allowed (a series "
                        f"with constant term 1 may take any rational power, e.g. (1 + {x.name})^(1/2))"
                    )
                return self.laurent({k.numerator: Fraction(1)})
            return self.power(self.expand(base), k)
        raise InvalidParameters(_not_allowed(node, x))


def _not_allowed(node, x) -> str:
    allowed = f"build it from {x.name}, rational numbers, +, -, *, / and integer powers"
    if node.is_Float:
        return f"the decimal number {node} is not exact; write it as a fraction (e.g. 1/2); {allowed}"
    if isinstance(node, sympy.Function) or getattr(node, "is_Function", False):
        return f"the function {node.func.__name__}(...) is not allowed (only power series with rational coefficients built from polynomials); {allowed}"
    return f"{node} (a {type(node).__name__}) is not allowed; {allowed}"


def _monomial(node, x) -> Optional[Tuple[Fraction, int]]:
    """``(c, k)`` when *node* is ``c * x^k`` with rational ``c`` and integer ``k``, else ``None``."""
    if node.is_Rational:
        return Fraction(int(node.p), int(node.q)), 0
    if node == x:
        return Fraction(1), 1
    if node.is_Pow and node.args[0] == x and node.args[1].is_Integer:
        return Fraction(1), int(node.args[1])
    if node.is_Mul:
        c, k = Fraction(1), 0
        for arg in node.args:
            if arg.is_Rational:
                c *= Fraction(int(arg.p), int(arg.q))
            elif arg == x:
                k += 1
            elif arg.is_Pow and arg.args[0] == x and arg.args[1].is_Integer:
                k += int(arg.args[1])
            elif arg.is_Pow and arg.args[0].is_Rational and arg.args[1].is_Integer:
                value = Fraction(int(arg.args[0].p), int(arg.args[0].q))
                e = int(arg.args[1])
                if value == 0 and e < 0:
                    return None  # the walker reports the division by zero
                _guard_constant_power(value, e)
                c *= value**e
            else:
                return None
        return c, k
    return None


def number_text(value) -> str:
    """*value* (an int or Fraction) as text, or by its digit count when it is long.

    Messages write a number of at most :data:`MESSAGE_DIGITS` digits in
    full and a longer one as ``a 19,729-digit number`` (a fraction as
    ``a fraction of 19,729 / 3 digits``), so that a refusal stays one short
    line whatever the input.

    Examples
    --------
    >>> number_text(Fraction(1, 2)), number_text(-2**64), number_text(2**65536)
    ('1/2', '-18446744073709551616', 'a 19,729-digit number')
    """
    value = Fraction(value)
    top, bottom = decimal_digits(value.numerator), decimal_digits(value.denominator)
    if top + bottom <= MESSAGE_DIGITS:
        return str(value)
    sign = "-" if value < 0 else ""
    if value.denominator == 1:
        return f"a {sign and 'negative '}{top:,}-digit number"
    return f"a {sign and 'negative '}fraction of {top:,} / {bottom:,} digits"


def _guard_constant_power(value: Fraction, k: int, what: str = "the constant") -> None:
    bits = max(abs(value.numerator).bit_length(), value.denominator.bit_length())
    if bits > 1 and (bits - 1) * abs(k) > MAX_CONSTANT_BITS:
        raise TooLarge(
            f"{what} {number_text(value)} raised to the power {number_text(k)} would have about "
            f"{(bits - 1) * abs(k):,} bits; use a smaller exponent"
            if decimal_digits((bits - 1) * abs(k)) <= MESSAGE_DIGITS else
            f"{what} {number_text(value)} raised to the power {number_text(k)} would have more bits "
            "than any memory holds; use a smaller exponent"
        )


def _exact_root(value: int, q: int) -> Optional[int]:
    """The ``q``-th root of ``value >= 0`` when it is whole, else ``None`` (gmpy2 ``iroot``)."""
    if value in (0, 1):
        return value
    if q >= value.bit_length():
        return None  # 2^q > value > 1: no whole root
    root, exact = gmpy2.iroot(gmpy2.mpz(value), q)
    return int(root) if exact else None


def rational_power(value: Fraction, k, what: str = "the constant") -> Fraction:
    """``value^k`` for a rational *k*, exactly, or raise when it is irrational or too large.

    Parameters
    ----------
    value : Fraction
        The base.
    k : int or Fraction
        The exponent ``p/q`` in lowest terms, any size.
    what : str
        How the message names *value*.

    Returns
    -------
    Fraction
        ``(value^(1/q))^p``, with the real ``q``-th root (negative for a
        negative base and odd ``q``).

    Raises
    ------
    InvalidParameters
        ``0`` to a negative power, or a base with no rational ``q``-th root.
    TooLarge
        A result of more than :data:`MAX_CONSTANT_BITS` bits.

    Notes
    -----
    The root is checked exactly with GMP's ``mpz_root`` (gmpy2 ``iroot``)
    on the numerator and denominator: ``O(M(b) log b)`` for a ``b``-bit base.

    Examples
    --------
    >>> rational_power(Fraction(9, 4), Fraction(-3, 2)), rational_power(Fraction(-8), Fraction(1, 3))
    (Fraction(8, 27), Fraction(-2, 1))
    """
    value, k = Fraction(value), Fraction(k)
    if value == 0:
        if k < 0:
            raise InvalidParameters("division by zero: a denominator of the expression is 0")
        return Fraction(0)
    if value in (1, -1) and k.denominator == 1:
        return Fraction(-1) if value == -1 and k.numerator & 1 else Fraction(1)
    q, p = k.denominator, k.numerator
    if q != 1:
        if value < 0 and q % 2 == 0:
            raise InvalidParameters(
                f"{what} {number_text(value)} is negative, so its power {number_text(k)} (an even root) "
                "is not a real number; such a power has no rational coefficients"
            )
        top = _exact_root(abs(value.numerator), q)
        bottom = _exact_root(value.denominator, q)
        if top is None or bottom is None:
            root = "square" if q == 2 else "cube" if q == 3 else f"{number_text(q)}-th power"
            raise InvalidParameters(
                f"{what} {number_text(value)} is not a perfect {root}, so its power {number_text(k)} is "
                f"irrational and the expansion has no rational coefficients; a rational exponent needs a "
                f"constant term whose power is rational (1, or e.g. a perfect {root} for this exponent)"
            )
        value = Fraction(-top if value < 0 else top, bottom)
    _guard_constant_power(value, p, what)
    return value**p


def _constant_value(node, x) -> Fraction:
    """The exact rational value of an expression free of the variable."""
    if node.is_Rational:
        return Fraction(int(node.p), int(node.q))
    if node.is_Add:
        return sum((_constant_value(arg, x) for arg in node.args), Fraction(0))
    if node.is_Mul:
        value = Fraction(1)
        for arg in node.args:
            value *= _constant_value(arg, x)
        return value
    if node.is_Pow:
        base, exponent = node.args
        return rational_power(_constant_value(base, x), _exponent(exponent, x))
    raise InvalidParameters(_not_allowed(node, x))


def _exponent(node, x) -> Fraction:
    """The exponent of a power: an exact rational constant (any size), else a clear error."""
    if x in node.free_symbols:
        raise InvalidParameters(
            f"the exponent {_short(node)} contains {x.name}; only constant (rational) exponents are allowed"
        )
    if node.is_Integer:
        return Fraction(int(node))
    return _constant_value(node, x)


def _huge_positive(node, x) -> bool:
    """True when *node* is, from its shape, a whole number ``b^e >= 2^MAX_CONSTANT_BITS``.

    That is a power whose base is a whole number ``>= 2`` (or itself such a
    power) and whose exponent is a positive whole number (or itself such a
    power) too large to evaluate: towers like ``2^2^2^2^2^2``.  Cost: one
    evaluation per level, each within :data:`MAX_CONSTANT_BITS` bits.
    """
    if not node.is_Pow:
        return False
    base, exponent = node.args
    if x in base.free_symbols or x in exponent.free_symbols:
        return False
    for part in (base, exponent):
        try:
            value = _constant_value(part, x)
        except TooLarge:
            if not _huge_positive(part, x):
                return False
        else:
            if value.denominator != 1 or value < (2 if part is base else 1):
                return False
    return True


def _short(node) -> str:
    """A node as text, cut to 60 characters for a message."""
    text = str(node)
    return text if len(text) <= 60 else text[:57] + "..."


def _product_seconds(small: float, big: float) -> float:
    """Seconds for GMP to multiply a *small*-bit number by a *big*-bit one (``small <= big``).

    ``big * 1e-11 * min(sqrt(small), 20 log2 small)`` seconds: measured on
    this machine from 64 to 1.5e7 bits against a 1.5e7-bit operand (within
    a factor of two), the unbalanced product being ``big / small`` balanced
    ones (schoolbook, Toom, then FFT).
    """
    small = max(2.0, min(small, big))
    return big * 1e-11 * min(math.sqrt(small), 20 * math.log2(small))


def miller_cost(rel: int, terms: int, k: Fraction, norm: int, denominator: int) -> Cost:
    """The cost of Miller's recurrence for ``(c_0 (1 + ...))^k`` to ``rel`` terms.

    Parameters
    ----------
    rel : int
        Terms wanted.
    terms : int
        Terms of the base (``s + 1``).
    k : Fraction
        The exponent ``p/q``.
    norm : int
        ``||N||_1``, the sum of the absolute values of the base's numerators
        once divided by ``c_0`` and brought to the common *denominator*.
    denominator : int
        That common denominator ``D``.

    Returns
    -------
    Cost
        ``[x^j]`` holds at most about
        ``b_j = j (log2(e (1 + |a|/j)) + 2 log2 q + log2 D + log2 ||N||_1)``
        bits (a generalised binomial coefficient
        ``|C(a, j)| <= C(|a| + j, j) <= (e (1 + |a|/j))^j`` over ``q^(2j) D^j``
        times the norm to the ``j``; Knuth, *TAOCP* vol. 2, §4.7), taken at
        ``j = rel / 2``.  Per coefficient: one product of ``b_j`` bits by the
        exponent's ``log2 |p + q|`` bits, and ``min(s, j)`` products by
        small numbers, additions and an exact division, linear in ``b_j``;
        with ``q D > 1`` (GMP rationals, term by term) ``min(s, j)``
        products by the small ``(a + 1) i - j`` and ``min(s, j) - 1`` sums,
        each a gcd of ``b_j``-bit numbers.  Memory three copies of
        ``sum_j b_j`` bits.

    Examples
    --------
    >>> miller_cost(4, 2, Fraction(2**64), 2, 1).seconds < 1e-3
    True
    """
    p, q = abs(k.numerator), k.denominator
    rel = min(rel, 2**62)  # beyond every limit anyway; keeps the float arithmetic finite
    # log2 C(A + j, j) <= j log2(e (1 + A/j)), A = |a|, taken at j = rel/2; the
    # denominator q^(2j) D^j; the norm to the j
    growth = math.log2(2 * p + q * rel) - math.log2(q * rel)
    per = 1.5 + growth + 2 * q.bit_length() + denominator.bit_length() + max(1, norm.bit_length())
    total_bits = int(per * rel * (rel + 1) / 2)
    average = per * (rel + 1) / 2
    small = max(1, min(terms - 1, rel))
    ebits = (p + q).bit_length()
    if q == 1 and denominator == 1:
        # integers: products by the exponent (one per coefficient when miller_power
        # gathers the terms first), small products, sums and an exact division
        products = 1 if (small > 1 and ebits > series.SPLIT_EXPONENT_BITS) else small
        step = products * _product_seconds(ebits, average) + average * (3e-11 * small + 5e-11) + 2e-6 * small
    else:
        # GMP rationals, term by term: a product by the small (a + 1) j - k with gcds against
        # it, and a sum of two entries (a gcd of two large numbers, O(M(b) log b)) per term
        gcd = _product_seconds(average, average) * max(1.0, math.log2(average) / 4)
        step = (small * (3 * _product_seconds(ebits + denominator.bit_length(), average) + 2e-10 * average + 2e-6)
                + (small - 1) * gcd)
    return Cost(seconds=rel * step, memory=3 * (total_bits // 8) + rel * COEFFICIENT_BYTES)


def _truncated_power(poly: fmpq_poly, k: int, length: int) -> fmpq_poly:
    """``poly^k mod x^length``: the full power when it is short, else ``pow_trunc``.

    Integer polynomials go through :func:`enumerator.series.power` (which
    uses the window recurrence for ``1 + ... + x^s``); when the full power
    is several times longer than needed FLINT's truncated power is used.
    """
    if poly.denom() == 1:
        numer = poly.numer()
        result = series.power(numer, k, length - 1)
        if result.length() > length:
            result = result.truncate(length)
        return fmpq_poly(result)
    if poly.degree() * k <= series.FULL_POWER_RATIO * length:
        result = poly**k
    else:
        result = poly.pow_trunc(k, length)
    return result.truncate(length) if result.length() > length else result


def extract_coefficients(expr, upto, var="x") -> List[Union[int, Fraction]]:
    r"""Expand a one-variable expression exactly and return ``[c_0, ..., c_upto]``.

    *expr* is text (parsed by :func:`parse_expression`) or a SymPy
    expression built from the variable, rational numbers, sums, products,
    integer powers (negative ones included) and quotients.  The tree is
    evaluated in truncated power series by the project's kernel — FLINT
    polynomial products and powers, Newton's iteration for reciprocals
    (:func:`enumerator.series.inverse`) — never by SymPy's ``series()``.
    Each series carries its valuation, so dividing by a denominator with
    zero constant term is fine as long as the result is a power series
    (``x/(x - x^2)``); a genuine pole at 0 (a Laurent series such as
    ``1/x``) raises :class:`~enumerator.errors.InvalidParameters`.  The
    working precision grows and the walk repeats if cancellations ask for
    more terms.

    Returns Python ``int`` coefficients when every coefficient is an integer,
    else ``fractions.Fraction`` for all of them (a constant term other than
    ``±1`` in a denominator makes rational coefficients).

    >>> extract_coefficients("1/(1 - x - x^2)", 10)
    [1, 1, 2, 3, 5, 8, 13, 21, 34, 55, 89]
    >>> extract_coefficients("1/(2 - x)", 3)
    [Fraction(1, 2), Fraction(1, 4), Fraction(1, 8), Fraction(1, 16)]
    """
    x = symbol(var)
    top = as_count(upto, "upto")
    if isinstance(expr, str):
        tree = parse_expression(expr, x)
    elif isinstance(expr, sympy.Basic):
        tree = expr
    elif isinstance(expr, (int, Fraction)) and not isinstance(expr, bool):
        tree = sympy.Rational(expr.numerator, expr.denominator) if isinstance(expr, Fraction) else sympy.Integer(expr)
    else:
        raise InvalidParameters(
            f"expr must be text or a SymPy expression (got {type(expr).__name__})"
        )
    check(expansion_cost(top, _tree_size(tree)), f"expanding the expression to degree {top:,}",
          advice="lower upto=", parameters=["upto"])
    target = top + 1
    limit = target
    ceiling = 2 * target + 10_000
    while True:
        try:
            result = _Expander(x, limit).expand(tree)
        except _NeedPrecision as need:
            limit += need.extra
        else:
            if not result.is_zero() and result.val < 0:
                if decimal_digits(result.val) <= MESSAGE_DIGITS:
                    start, cure = f"{x.name}^{result.val}", f"multiply it by {x.name}^{-result.val}"
                else:
                    start = f"{x.name} to the power {number_text(result.val)}"
                    cure = f"multiply it by the opposite power of {x.name}"
                raise InvalidParameters(
                    f"the expression has a pole at {x.name} = 0: its expansion starts with "
                    f"{start}, a Laurent series rather than a power series; {cure}"
                )
            if result.absolute >= target:
                return _coefficients(result, top)
            limit += target - int(result.absolute)
        if limit > ceiling:
            raise TooLarge(
                f"expanding this expression to degree {top} needs more than {ceiling} working terms "
                "(large cancellations or high negative powers); simplify it or lower upto=",
                parameters=["upto"],
            )


def _coefficients(result: _Series, top: int) -> List[Union[int, Fraction]]:
    values: List[Union[int, Fraction]] = [0] * (top + 1)
    if result._poly is None:
        span = min(len(result.row), top + 1 - result.val)
        row = result.row[:span]
        if row and isinstance(row[0], gmpy2.mpq) and any(c.denominator != 1 for c in row):
            fractions: List[Union[int, Fraction]] = [Fraction(0)] * (top + 1)
            fractions[result.val : result.val + span] = [coprime_fraction(c.numerator, c.denominator) for c in row]
            return fractions
        values[result.val : result.val + span] = plain_ints(row)
        return values
    if result.poly.is_zero():
        return values
    poly = result.poly
    denominator = int(poly.denom())
    numer = poly.numer()
    span = min(poly.length(), top + 1 - result.val)
    if denominator == 1:
        for i in range(span):
            values[result.val + i] = int(numer[i])
        return values
    fractions = [Fraction(0)] * (top + 1)
    for i in range(span):
        fractions[result.val + i] = Fraction(int(numer[i]), denominator)
    return fractions
