r"""The event language: read, plan and evaluate events about an occupancy vector.

An *event* is a statement about a random configuration ``k = (k_1, ..., k_r)``
built from comparisons of statistics with whole numbers:

=====================  ======================================================
``max``, ``min``       the largest / smallest occupancy
``empty``              the number of empty urns
``occupied``           the number of urns holding at least one ball
``k1``, ``k_1``, ...   the occupancy of urn 1, ... (1-based, as ``k_1 .. k_r``)
``count(OP J)``        the number of urns whose occupancy satisfies ``OP J``,
                       e.g. ``count(== 2)`` urns holding exactly two balls
=====================  ======================================================

compared with ``==  !=  <  <=  >  >=`` and combined with ``and``, ``or``,
``not`` and parentheses (``not`` binds tightest, then ``and``, then ``or``).
``2 <= max``, and the range form ``1 <= k1 <= 3``, are accepted too.
Examples: ``max <= 1`` (no two balls share an urn), ``empty == 3``,
``k1 >= 2 and not (count(== 1) > 2 or min > 0)``.

Grammar (EBNF, keywords in any case)::

    event       = disjunction
    disjunction = conjunction { "or" conjunction }
    conjunction = negation { "and" negation }
    negation    = "not" negation | primary
    primary     = "(" event ")" | comparison
    comparison  = term OP number | number OP term [ OP number ]
    term        = "max" | "min" | "empty" | "occupied" | "k" digits | "k_" digits
                | "count" "(" OP number ")"
    OP          = "==" | "!=" | "<" | "<=" | ">" | ">="
    number      = [ "+" | "-" ] digits

The text is read by a hand-written tokenizer and a recursive-descent parser
(never ``eval``); an error names the column where reading stopped.

Planning (:func:`event_count`): the event is put in negation normal form
over canonical atoms (``empty``, ``occupied`` and ``count(...)`` become
comparisons of "urns holding exactly ``J``" or "urns holding at least ``J``"),
then counted exactly:

* a conjunction of per-urn constraints (``k_i`` compared with a number,
  ``max <= m``, ``min >= m``, "every urn holds at least ``J``", ...) tightens
  the bounds: one bounded count (:func:`~enumerator.statistics.outcome_count`);
  a negated constraint ``C`` is removed by ``N(A and not C) = N(A) - N(A and C)``;
* whatever remains, if it is about one statistic only, is read off that
  statistic's exact distribution under the tightened bounds (``max`` and
  ``min`` by differences of bounded counts over the intervals where the
  condition holds);
* ``or`` is expanded by inclusion–exclusion while that stays small;
* anything else — several counting statistics at once, say — is decided by
  listing every admissible configuration (:mod:`enumerator.listing`), with a
  progress bar on stderr, and refused above *limit* configurations.

References: the negation normal form and inclusion–exclusion are textbook
(Feller, vol. 1, ch. IV, §1 for the occupancy case); the bounded-count
method is the one of :mod:`enumerator.statistics`.
"""

from __future__ import annotations

import itertools
import operator
import sys
from dataclasses import dataclass, field
from fractions import Fraction
from typing import Dict, List, Optional, Sequence, Tuple, Union

import gmpy2

from ..core.errors import InvalidParameters, TooLarge
from ..core.model import UrnModel, as_count
from ..core.rules import Rule
from .counting import count_configurations, multinomial
from .listing import iter_blocks
from .statistics import DEFAULT_LIMIT, Statistic, outcome_count, statistic_counts

__all__ = [
    "And",
    "Comparison",
    "DEFAULT_LIMIT",
    "Not",
    "Or",
    "Term",
    "evaluate_event",
    "event_count",
    "event_probability",
    "parse_event",
]

mpz = gmpy2.mpz

_OPS = {
    "==": operator.eq,
    "!=": operator.ne,
    "<": operator.lt,
    "<=": operator.le,
    ">": operator.gt,
    ">=": operator.ge,
}
#: ``not (x OP v)`` is ``x COMPLEMENT[OP] v``.
_COMPLEMENT = {"==": "!=", "!=": "==", "<": ">=", ">=": "<", ">": "<=", "<=": ">"}
#: ``v OP x`` is ``x MIRROR[OP] v``.
_MIRROR = {"==": "==", "!=": "!=", "<": ">", ">": "<", "<=": ">=", ">=": "<="}

_KEYWORDS = ("and", "or", "not")
_TERMS = ("max", "min", "empty", "occupied", "count")
_TERMS_HELP = "max, min, empty, occupied, k1 ... kr (urn occupancies) or count(OP J)"


# ---------------------------------------------------------------------------
# syntax tree
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class Term:
    """A statistic of the configuration: ``max``, ``min``, ``empty``, ``occupied``,
    ``urn`` (``index``, 1-based) or ``count`` (urns whose occupancy satisfies
    ``op value``)."""

    kind: str
    index: Optional[int] = None
    op: Optional[str] = None
    value: Optional[int] = None
    column: int = field(default=0, compare=False)

    def __str__(self) -> str:
        if self.kind == "urn":
            return f"k{self.index}"
        if self.kind == "count":
            return f"count({self.op} {self.value})"
        return self.kind

    def evaluate(self, config: Sequence[int]) -> int:
        """The term's value on one occupancy vector."""
        kind = self.kind
        if kind == "max":
            return max(config)
        if kind == "min":
            return min(config)
        if kind == "empty":
            return sum(1 for v in config if v == 0)
        if kind == "occupied":
            return sum(1 for v in config if v > 0)
        if kind == "urn":
            return config[self.index - 1]
        test = _OPS[self.op]
        return sum(1 for v in config if test(v, self.value))


@dataclass(frozen=True)
class Comparison:
    """``term op value``."""

    term: Term
    op: str
    value: int

    def __str__(self) -> str:
        return f"{self.term} {self.op} {self.value}"


@dataclass(frozen=True)
class Not:
    """``not operand``."""

    operand: "Event"

    def __str__(self) -> str:
        return f"not {_wrap(self.operand, Not)}"


@dataclass(frozen=True)
class And:
    """``operands[0] and operands[1] and ...``."""

    operands: Tuple["Event", ...]

    def __str__(self) -> str:
        return " and ".join(_wrap(x, And) for x in self.operands)


@dataclass(frozen=True)
class Or:
    """``operands[0] or operands[1] or ...``."""

    operands: Tuple["Event", ...]

    def __str__(self) -> str:
        return " or ".join(_wrap(x, Or) for x in self.operands)


Event = Union[Comparison, Not, And, Or]
_RANK = {Or: 0, And: 1, Not: 2, Comparison: 3}


def _wrap(node, parent) -> str:
    text = str(node)
    return f"({text})" if _RANK[type(node)] < _RANK[parent] or (type(node) is parent and parent is not Not) else text


def evaluate_event(event: Union[str, Event], config: Sequence[int]) -> bool:
    """Is *event* true for the occupancy vector *config*?  (No bounds are checked.)

    >>> evaluate_event("max <= 1 and k2 == 0", (1, 0, 1))
    True
    """
    node = parse_event(event) if isinstance(event, str) else event
    config = tuple(config)
    for term in _terms(node):
        if term.kind == "urn" and term.index > len(config):
            raise InvalidParameters(
                f"the event names urn {term.index} (k{term.index}) but the configuration has {len(config)} entries"
            )
    return _evaluate(node, config)


def _evaluate(node, config) -> bool:
    kind = type(node)
    if kind is Comparison:
        return _OPS[node.op](node.term.evaluate(config), node.value)
    if kind is Not:
        return not _evaluate(node.operand, config)
    if kind is And:
        return all(_evaluate(x, config) for x in node.operands)
    return any(_evaluate(x, config) for x in node.operands)


def _terms(node):
    kind = type(node)
    if kind is Comparison:
        yield node.term
    elif kind is Not:
        yield from _terms(node.operand)
    else:
        for x in node.operands:
            yield from _terms(x)


# ---------------------------------------------------------------------------
# tokenizer and parser
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class _Token:
    kind: str  # "num", "name", "op", "(", ")", "end"
    text: str
    column: int  # 1-based


def _syntax_error(text: str, column: int, problem: str) -> InvalidParameters:
    """An InvalidParameters whose message points at *column* (1-based) of *text*."""
    shown = text if len(text) <= 120 else text[:117] + "..."
    rest = text[column - 1:].strip()
    where = f"at {rest[:20]!r}" if rest else "at the end"
    error = InvalidParameters(f"cannot read the event {shown!r} at column {column} ({where}): {problem}")
    error.column = column
    error.caret = f"{text}\n{' ' * (column - 1)}^"
    return error


def _found(token: "_Token") -> str:
    return "the end of the event" if token.kind == "end" else repr(token.text)


def _tokenize(text: str) -> List[_Token]:
    tokens = []
    i = 0
    n = len(text)
    while i < n:
        ch = text[i]
        column = i + 1
        if ch.isspace():
            i += 1
            continue
        if ch.isdigit() or (ch in "+-" and i + 1 < n and text[i + 1].isdigit()):
            j = i + 1
            while j < n and text[j].isdigit():
                j += 1
            if j < n and (text[j].isalnum() or text[j] in "_."):
                k = j
                while k < n and (text[k].isalnum() or text[k] in "_."):
                    k += 1
                raise _syntax_error(text, column, f"numbers must be whole numbers, found {text[i:k]!r}")
            tokens.append(_Token("num", text[i:j], column))
            i = j
            continue
        if ch.isalpha() or ch == "_":
            j = i + 1
            while j < n and (text[j].isalnum() or text[j] == "_"):
                j += 1
            tokens.append(_Token("name", text[i:j], column))
            i = j
            continue
        two = text[i:i + 2]
        if two in ("==", "!=", "<=", ">="):
            tokens.append(_Token("op", two, column))
            i += 2
            continue
        if two in ("=<", "=>"):
            raise _syntax_error(text, column, f"unknown operator {two!r}; write {two[::-1]!r}")
        if two in ("&&", "||"):
            raise _syntax_error(text, column, f"unknown operator {two!r}; write {'and' if two == '&&' else 'or'!r}")
        if ch in "<>":
            tokens.append(_Token("op", ch, column))
            i += 1
            continue
        if ch == "=":
            raise _syntax_error(text, column, "a single '=' is not a comparison; write '==' to test equality")
        if ch == "!":
            raise _syntax_error(text, column, "'!' alone is not an operator; write 'not' to negate, '!=' to compare")
        if ch in "&|":
            raise _syntax_error(text, column, f"unknown operator {ch!r}; write {'and' if ch == '&' else 'or'!r}")
        if ch in "()":
            tokens.append(_Token(ch, ch, column))
            i += 1
            continue
        raise _syntax_error(text, column, f"unexpected character {ch!r}")
    tokens.append(_Token("end", "", n + 1))
    return tokens


class _Parser:
    """Recursive descent over the grammar in the module docstring."""

    def __init__(self, text: str):
        self.text = text
        self.tokens = _tokenize(text)
        self.pos = 0

    def peek(self) -> _Token:
        return self.tokens[self.pos]

    def take(self) -> _Token:
        token = self.tokens[self.pos]
        self.pos += 1
        return token

    def error(self, token: _Token, problem: str) -> InvalidParameters:
        return _syntax_error(self.text, token.column, problem)

    def is_word(self, token: _Token, word: str) -> bool:
        return token.kind == "name" and token.text.lower() == word

    def parse(self) -> Event:
        if self.peek().kind == "end":
            raise self.error(self.peek(), "the event is empty; write a comparison such as 'max <= 2'")
        node = self.disjunction()
        token = self.peek()
        if token.kind != "end":
            if token.kind == ")":
                raise self.error(token, "this ')' has no matching '('")
            raise self.error(token, f"expected 'and', 'or' or the end of the event, found {_found(token)}")
        return node

    def disjunction(self) -> Event:
        items = [self.conjunction()]
        while self.is_word(self.peek(), "or"):
            self.take()
            items.append(self.conjunction())
        return items[0] if len(items) == 1 else Or(tuple(items))

    def conjunction(self) -> Event:
        items = [self.negation()]
        while self.is_word(self.peek(), "and"):
            self.take()
            items.append(self.negation())
        return items[0] if len(items) == 1 else And(tuple(items))

    def negation(self) -> Event:
        if self.is_word(self.peek(), "not"):
            self.take()
            return Not(self.negation())
        return self.primary()

    def primary(self) -> Event:
        token = self.peek()
        if token.kind == "(":
            self.take()
            if self.peek().kind == ")":
                raise self.error(self.peek(), "empty parentheses; put a comparison inside")
            node = self.disjunction()
            close = self.peek()
            if close.kind != ")":
                raise self.error(close, f"expected ')' to close the '(' at column {token.column}, found {_found(close)}")
            self.take()
            return node
        return self.comparison()

    def number(self, after: str) -> int:
        token = self.peek()
        if token.kind != "num":
            raise self.error(token, f"expected a whole number after {after!r}, found {_found(token)}")
        self.take()
        return int(token.text)

    def operator(self, after: str) -> str:
        token = self.peek()
        if token.kind != "op":
            raise self.error(token, f"expected a comparison operator (== != < <= > >=) after {after!r}, "
                                    f"found {_found(token)}")
        self.take()
        return token.text

    def comparison(self) -> Event:
        token = self.peek()
        if token.kind == "num":
            value = int(self.take().text)
            op = self.operator(token.text)
            term = self.term()
            first = Comparison(term, _MIRROR[op], value)
            if self.peek().kind == "op":
                op2 = self.take().text
                value2 = self.number(op2)
                return And((first, Comparison(term, op2, value2)))
            return first
        term = self.term()
        op = self.operator(str(term))
        value = self.number(op)
        if self.peek().kind == "op":
            raise self.error(self.peek(), "a comparison cannot continue here; write 'a <= x <= b' "
                                          "with the numbers outside, or join comparisons with 'and'")
        return Comparison(term, op, value)

    def term(self) -> Term:
        token = self.peek()
        if token.kind != "name":
            raise self.error(token, f"expected a statistic ({_TERMS_HELP}), found {_found(token)}")
        word = token.text.lower()
        if word in _KEYWORDS:
            raise self.error(token, f"expected a statistic ({_TERMS_HELP}) before {token.text!r}")
        self.take()
        if word in ("max", "min", "empty", "occupied"):
            return Term(word, column=token.column)
        if word == "count":
            open_ = self.peek()
            if open_.kind != "(":
                raise self.error(open_, "count needs a condition in parentheses, e.g. count(== 2)")
            self.take()
            op = self.operator("count(")
            value = self.number(op)
            close = self.peek()
            if close.kind != ")":
                raise self.error(close, "expected ')' after the condition of count, e.g. count(>= 1)")
            self.take()
            return Term("count", op=op, value=value, column=token.column)
        if word[0] == "k":
            digits = word[2:] if word.startswith("k_") else word[1:]
            if digits.isdigit():
                index = int(digits)
                if index < 1:
                    raise self.error(token, f"urns are numbered from 1 (got {token.text!r}); write k1 for the first urn")
                return Term("urn", index=index, column=token.column)
        raise self.error(token, f"unknown statistic {token.text!r}; use {_TERMS_HELP}")


def parse_event(text: Union[str, Event]) -> Event:
    """Read an event (see the module docstring for the language).

    Returns the syntax tree (:class:`Comparison`, :class:`Not`, :class:`And`,
    :class:`Or`); ``str()`` of it writes the event back in canonical form.
    Raises :class:`~enumerator.errors.InvalidParameters` pointing at the
    column where reading failed (attributes ``column`` and ``caret``).

    >>> str(parse_event("k_1>=2 AND not(max<3)"))
    'k1 >= 2 and not max < 3'
    >>> parse_event("max <= x")
    Traceback (most recent call last):
    ...
    enumerator.errors.InvalidParameters: cannot read the event 'max <= x' at column 8 (at 'x'): expected a whole number after '<=', found 'x'
    """
    if isinstance(text, (Comparison, Not, And, Or)):
        return text
    if not isinstance(text, str):
        raise InvalidParameters(f"an event is a text such as 'max <= 2' (got {text!r})")
    return _Parser(text).parse()


# ---------------------------------------------------------------------------
# canonical atoms in negation normal form
# ---------------------------------------------------------------------------
# An atom is (key, op, value) with key ("max",), ("min",), ("urn", i) (0-based),
# ("exactly", J) or ("atleast", J); True/False are constants.

@dataclass(frozen=True)
class _Atom:
    key: Tuple
    op: str
    value: int


@dataclass(frozen=True)
class _All:
    items: Tuple


@dataclass(frozen=True)
class _Any:
    items: Tuple


def _canonical_term(term: Term, r: int):
    """``(key, sign)`` with the term ``= base`` (sign +1) or ``= r - base`` (sign -1),
    or ``("const", value)``."""
    kind = term.kind
    if kind in ("max", "min"):
        return (kind,), 1
    if kind == "urn":
        return ("urn", term.index - 1), 1
    if kind == "empty":
        return ("atleast", 1), -1
    if kind == "occupied":
        return ("atleast", 1), 1
    op, j = term.op, term.value
    if op == "==":
        if j < 0:
            return ("const", 0), 0
        return (("atleast", 1), -1) if j == 0 else (("exactly", j), 1)
    if op == "!=":
        if j < 0:
            return ("const", r), 0
        return (("atleast", 1), 1) if j == 0 else (("exactly", j), -1)
    if op in (">=", ">"):
        j = j if op == ">=" else j + 1
        return (("const", r), 0) if j <= 0 else (("atleast", j), 1)
    j = j if op == "<" else j + 1  # count(< j) = r - count(>= j)
    return (("const", 0), 0) if j <= 0 else (("atleast", j), -1)


def _normal_form(node, r: int, negate: bool = False):
    """Negation normal form over canonical atoms (``not`` pushed into the operators)."""
    kind = type(node)
    if kind is Not:
        return _normal_form(node.operand, r, not negate)
    if kind in (And, Or):
        parts = tuple(_normal_form(x, r, negate) for x in node.operands)
        conj = (kind is And) != negate
        return _All(parts) if conj else _Any(parts)
    op = _COMPLEMENT[node.op] if negate else node.op
    key, sign = _canonical_term(node.term, r)
    value = node.value
    if key[0] == "const":
        return _OPS[op](key[1], value)
    if sign < 0:
        op, value = _MIRROR[op], r - value
    return _Atom(key, op, value)


def _keys(node, into: set) -> set:
    if isinstance(node, _Atom):
        into.add(node.key)
    elif isinstance(node, (_All, _Any)):
        for x in node.items:
            _keys(x, into)
    return into


def _truth(node, key, value) -> bool:
    """The single-key expression *node* evaluated at ``key = value``."""
    if isinstance(node, bool):
        return node
    if isinstance(node, _Atom):
        return _OPS[node.op](value, node.value)
    if isinstance(node, _All):
        return all(_truth(x, key, value) for x in node.items)
    return any(_truth(x, key, value) for x in node.items)


def _constants(node, into: set) -> set:
    if isinstance(node, _Atom):
        into.update((node.value - 1, node.value, node.value + 1))
    elif isinstance(node, (_All, _Any)):
        for x in node.items:
            _constants(x, into)
    return into


# ---------------------------------------------------------------------------
# bounds from atoms
# ---------------------------------------------------------------------------
# A "box" is {urn index or "all": (low, high)} (high None: no bound).

def _interval(op: str, value: int):
    """The values ``x`` with ``x op value`` as ``(low, high)``, or None if not an interval."""
    if op == "<=":
        return (None, value)
    if op == "<":
        return (None, value - 1)
    if op == ">=":
        return (value, None)
    if op == ">":
        return (value + 1, None)
    if op == "==":
        return (value, value)
    return None


def _classify(atom: _Atom, r: int):
    """``(positive boxes, negated boxes)`` equivalent to *atom*, or None.

    ``max <= m`` bounds every urn above, ``min >= m`` below, ``k_i op v`` urn
    ``i``; "at least ``J`` in every urn" (``atleast:J == r``) and "no urn
    with ``J`` or more" (``atleast:J == 0``) are bounds too.  A negated box
    ``C`` stands for ``not C``.
    """
    key, op, v = atom.key, atom.op, atom.value
    head = key[0]
    if head == "urn":
        if op == "!=":
            return [], [{key[1]: (v, v)}]
        return [{key[1]: _interval(op, v)}], []
    if head == "max":
        if op == "!=":
            return None
        low, high = _interval(op, v)
        pos = [{"all": (None, high)}] if high is not None else []
        neg = [{"all": (None, low - 1)}] if low is not None else []
        return pos, neg
    if head == "min":
        if op == "!=":
            return None
        low, high = _interval(op, v)
        pos = [{"all": (low, None)}] if low is not None else []
        neg = [{"all": (high + 1, None)}] if high is not None else []
        return pos, neg
    J = key[1]
    if head == "atleast":
        if (op, v) in (("==", r), (">=", r), (">", r - 1)):
            return [{"all": (J, None)}], []
        if (op, v) in (("!=", r), ("<", r), ("<=", r - 1)):
            return [], [{"all": (J, None)}]
        if (op, v) in (("==", 0), ("<=", 0), ("<", 1)):
            return [{"all": (None, J - 1)}], []
        if (op, v) in (("!=", 0), (">=", 1), (">", 0)):
            return [], [{"all": (None, J - 1)}]
        return None
    if (op, v) in (("==", r), (">=", r), (">", r - 1)):
        return [{"all": (J, J)}], []
    if (op, v) in (("!=", r), ("<", r), ("<=", r - 1)):
        return [], [{"all": (J, J)}]
    return None


def _apply(bounds: Tuple, box: Dict):
    """*bounds* tightened by *box*, or None when no vector can satisfy both."""
    out = list(bounds)
    for where, (low, high) in box.items():
        targets = range(len(out)) if where == "all" else [where]
        for i in targets:
            a, b = out[i]
            if low is not None and low > a:
                a = low
            if high is not None and (b is None or high < b):
                b = high
            if b is not None and a > b:
                return None
            out[i] = (a, b)
    return tuple(out)


# ---------------------------------------------------------------------------
# the planner
# ---------------------------------------------------------------------------

class _Enumerate(Exception):
    """No exact method fits; fall back to listing the configurations."""


#: Most sub-counts one planned event may spend (inclusion–exclusion terms,
#: negated bounds) before listing the configurations is preferred.
PLAN_STEP_LIMIT = 4096


class _Planner:
    def __init__(self, model: UrnModel, limit: int):
        self.rule = model.rule
        self.n = model.balls
        self.r = model.urns
        self.limit = limit
        self.steps = 0
        self.memo: Dict = {}

    def tick(self, amount: int = 1) -> None:
        self.steps += amount
        if self.steps > PLAN_STEP_LIMIT:
            raise _Enumerate()

    def outcomes(self, bounds) -> int:
        key = ("outcomes", bounds)
        if key not in self.memo:
            self.memo[key] = outcome_count(bounds, self.rule, self.n)
        return self.memo[key]

    def count(self, bounds, node) -> int:
        """Outcomes of the model with *bounds* for which *node* holds."""
        self.tick()
        if isinstance(node, bool):
            return self.outcomes(bounds) if node else 0
        if isinstance(node, _Atom):
            return self.conjunction(bounds, [node])
        if isinstance(node, _All):
            return self.conjunction(bounds, list(node.items))
        if len(_keys(node, set())) == 1:
            return self.single(bounds, node)
        items = list(node.items)
        return self.inclusion_exclusion(bounds, items, [])

    def inclusion_exclusion(self, bounds, alternatives, rest) -> int:
        """``N(bounds, (A_1 or ... or A_k) and rest)`` by inclusion–exclusion."""
        k = len(alternatives)
        if (1 << k) - 1 > PLAN_STEP_LIMIT:
            raise _Enumerate()
        total = 0
        for size in range(1, k + 1):
            for chosen in itertools.combinations(alternatives, size):
                term = self.conjunction(bounds, list(chosen) + list(rest))
                total += term if size & 1 else -term
        return total

    def conjunction(self, bounds, items) -> int:
        flat: List = []
        stack = list(items)
        while stack:
            x = stack.pop()
            if isinstance(x, _All):
                stack.extend(x.items)
            elif x is True:
                continue
            elif x is False:
                return 0
            else:
                flat.append(x)
        negs: List[Dict] = []
        others: List = []
        for x in flat:
            parts = _classify(x, self.r) if isinstance(x, _Atom) else None
            if parts is None:
                others.append(x)
                continue
            pos, neg = parts
            for box in pos:
                bounds = _apply(bounds, box)
                if bounds is None:
                    return 0
            negs.extend(neg)
        return self.reduced(bounds, negs, others)

    def reduced(self, bounds, negs, others) -> int:
        """``N(bounds, not negs[0] and ... and others)``."""
        if negs:
            self.tick()
            box, rest = negs[0], negs[1:]
            whole = self.reduced(bounds, rest, others)
            inner = _apply(bounds, box)
            if inner is None:
                return whole
            return whole - self.reduced(inner, rest, others)
        if self.outcomes(bounds) == 0:
            return 0
        if not others:
            return self.outcomes(bounds)
        if len(_keys(_All(tuple(others)), set())) == 1:
            return self.single(bounds, _All(tuple(others)))
        for i, x in enumerate(others):
            if isinstance(x, _Any):
                return self.inclusion_exclusion(bounds, list(x.items), others[:i] + others[i + 1:])
        raise _Enumerate()

    def single(self, bounds, node) -> int:
        """*node* mentions one statistic only: read it off that statistic's law."""
        (key,) = _keys(node, set())
        head = key[0]
        if head in ("max", "min"):
            return self.extreme(bounds, node, head)
        stat = Statistic("urn", key[1] + 1) if head == "urn" else Statistic(head, key[1])
        memo_key = ("law", bounds, stat)
        if memo_key not in self.memo:
            model = UrnModel(balls=self.n, bounds=bounds, rule=self.rule)
            self.memo[memo_key] = statistic_counts(model, stat, self.limit)[0]
        counts = self.memo[memo_key]
        return sum(c for v, c in counts.items() if _truth(node, key, v))

    def extreme(self, bounds, node, head: str) -> int:
        """Sum of bounded counts over the intervals of values where *node* holds."""
        n, r = self.n, self.r
        eff = UrnModel(balls=n, bounds=bounds, rule=self.rule).effective_bounds()
        if head == "max":
            low = max(max(a for a, _ in eff), -(-n // r))
            high = min(n, max(b for _, b in eff))
        else:
            low = min(a for a, _ in eff)
            high = min(min(b for _, b in eff), n // r)
        if low > high:
            return 0
        cuts = sorted(c for c in _constants(node, set()) if low < c <= high)
        starts = [low] + cuts
        ends = [c - 1 for c in cuts] + [high]
        total = 0
        for start, end in zip(starts, ends):
            if start > end or not _truth(node, None, start):
                continue
            self.tick(2)
            if head == "max":
                inside, outside = _apply(bounds, {"all": (None, end)}), _apply(bounds, {"all": (None, start - 1)})
            else:
                inside, outside = _apply(bounds, {"all": (start, None)}), _apply(bounds, {"all": (end + 1, None)})
            total += (self.outcomes(inside) if inside is not None else 0) - (
                self.outcomes(outside) if outside is not None else 0)
        return total


# ---------------------------------------------------------------------------
# listing: the last resort
# ---------------------------------------------------------------------------

#: Rows per block when listing configurations.
_BLOCK = 1 << 16


def _evaluate_block(node, block):
    """*node* on every row of an integer numpy array of configurations."""
    import numpy as np

    kind = type(node)
    if kind is Not:
        return ~_evaluate_block(node.operand, block)
    if kind is And:
        out = _evaluate_block(node.operands[0], block)
        for x in node.operands[1:]:
            out = out & _evaluate_block(x, block)
        return out
    if kind is Or:
        out = _evaluate_block(node.operands[0], block)
        for x in node.operands[1:]:
            out = out | _evaluate_block(x, block)
        return out
    term = node.term
    if term.kind == "max":
        values = block.max(axis=1)
    elif term.kind == "min":
        values = block.min(axis=1)
    elif term.kind == "empty":
        values = (block == 0).sum(axis=1)
    elif term.kind == "occupied":
        values = (block > 0).sum(axis=1)
    elif term.kind == "urn":
        values = block[:, term.index - 1]
    else:
        values = _OPS[term.op](block, term.value).sum(axis=1)
    return np.asarray(_OPS[node.op](values, node.value))


def _progress(total: int, show: Optional[bool]):
    """A rich progress bar on stderr, or None (shown by default only on a terminal)."""
    if show is None:
        show = total >= 200_000 and sys.stderr.isatty()
    if not show:
        return None
    from rich.console import Console
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeRemainingColumn

    return Progress(
        TextColumn("listing configurations"),
        BarColumn(),
        MofNCompleteColumn(),
        TimeRemainingColumn(),
        console=Console(stderr=True),
        transient=True,
    )


def _enumerate(model: UrnModel, node, text: str, limit: int, show: Optional[bool]) -> int:
    """Outcomes satisfying *node*, by listing every admissible configuration."""
    import numpy as np

    total = count_configurations(model)
    if total > limit:
        raise TooLarge(
            f"the event {text!r} has no exact shortcut here (it mixes counting statistics), so it needs all "
            f"{total} configurations listed, above the limit {limit}; raise limit=",
            parameters=["limit"],
        )
    mb = model.rule is Rule.MB
    fac = gmpy2.fac
    fac_n = fac(model.balls)
    found = mpz(0)
    bar = _progress(total, show)
    task = bar.add_task("listing", total=total) if bar is not None else None
    if bar is not None:
        bar.start()
    try:
        for block in iter_blocks(model, _BLOCK):
            if block.dtype == object:
                rows = [tuple(int(v) for v in row) for row in block]
                hits = [k for k in rows if _evaluate(node, k)]
                if mb:
                    for k in hits:
                        found += multinomial(k, fac_n)
                else:
                    found += len(hits)
            else:
                arr = block.astype(np.int64)
                mask = _evaluate_block(node, arr)
                if mb:
                    chosen = -np.sort(-arr[mask], axis=1)
                    if len(chosen):
                        profiles, times = np.unique(chosen, axis=0, return_counts=True)
                        for profile, count in zip(profiles.tolist(), times.tolist()):
                            found += multinomial(profile, fac_n) * count
                else:
                    found += int(mask.sum())
            if bar is not None:
                bar.advance(task, len(block))
    finally:
        if bar is not None:
            bar.stop()
    return int(found)


# ---------------------------------------------------------------------------
# public entry points
# ---------------------------------------------------------------------------

def event_count(model: UrnModel, event: Union[str, Event], limit: int = DEFAULT_LIMIT,
                progress: Optional[bool] = None) -> Tuple[int, int]:
    """Return ``(count, total)``: the equally likely outcomes where *event* holds, and all of them.

    ``P(event) = count / total``; see the module docstring for the plan.
    *limit* caps the configurations listed when no exact shortcut applies
    (:class:`~enumerator.errors.TooLarge` above it); *progress* shows a
    progress bar on stderr while listing (default: only on a terminal).
    """
    text = event if isinstance(event, str) else str(event)
    node = parse_event(event)
    limit = as_count(limit, "limit", 1)
    r = model.urns
    for term in _terms(node):
        if term.kind == "urn" and term.index > r:
            raise InvalidParameters(
                f"the event names k{term.index} (column {term.column}) but the model has {r} urns; "
                f"use k1 to k{r}"
            )
    total = outcome_count(model.bounds, model.rule, model.balls)
    if total == 0:
        raise InvalidParameters(
            f"the model ({model!r}) admits no configuration, so the event has no probability; "
            "loosen the bounds or change the number of balls"
        )
    planner = _Planner(model, limit)
    try:
        count = planner.count(model.bounds, _normal_form(node, r))
    except _Enumerate:
        count = _enumerate(model, node, text, limit, progress)
    return int(count), int(total)


def event_probability(model: UrnModel, event: Union[str, Event], limit: int = DEFAULT_LIMIT,
                      progress: Optional[bool] = None) -> Fraction:
    """Return the exact probability of *event* under *model*'s rule.

    Parameters
    ----------
    model : UrnModel
    event : str
        An event in the language of this module, e.g. ``"max <= 1"``.
    limit : int
        Most configurations listed when no exact shortcut applies
        (default :data:`~enumerator.statistics.DEFAULT_LIMIT`).
    progress : bool, optional
        Show a progress bar on stderr while listing (default: on a terminal).

    Raises
    ------
    InvalidParameters
        for a malformed event (the message gives the column) or an urn
        beyond ``r``.
    TooLarge
        when listing would exceed *limit* configurations.

    Examples
    --------
    Three tagged molecules on five catalyst sites, no two on one site:

    >>> event_probability(UrnModel(balls=3, urns=5, rule="MB"), "max <= 1")
    Fraction(12, 25)
    >>> event_probability(UrnModel(balls=3, urns=5, rule="BE"), "empty == 3 or k1 >= 2")
    Fraction(3, 5)
    """
    count, total = event_count(model, event, limit, progress)
    q = gmpy2.mpq(count, total)
    f = object.__new__(Fraction)
    f._numerator = int(q.numerator)
    f._denominator = int(q.denominator)
    return f
