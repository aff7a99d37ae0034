r"""The event language: read and evaluate events about an occupancy vector.

An *event* is a statement about a random configuration ``k = (k_1, ..., k_r)``
built from comparisons of statistics with whole numbers.  The statistics and
their spellings come from the registry (:mod:`enumerator.algorithms.vocabulary`):

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
(never ``eval``; the technique of N. Wirth, *Compilerbau*, 1976); an error
names the column where reading stopped.  Counting events is
:mod:`enumerator.algorithms.events`.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import List, Sequence, Tuple, Union

from ..core.errors import InvalidParameters
from ..core.groups import MAX_DIGITS
from .vocabulary import OPS, REGISTRY, Statistic, names_help

__all__ = [
    "COMPLEMENT",
    "MAX_DEPTH",
    "MIRROR",
    "And",
    "Comparison",
    "Event",
    "Not",
    "Or",
    "Term",
    "comparisons",
    "evaluate",
    "evaluate_event",
    "parse_event",
]

#: ``not (x OP v)`` is ``x COMPLEMENT[OP] v``.
COMPLEMENT = {"==": "!=", "!=": "==", "<": ">=", ">=": "<", ">": "<=", "<=": ">"}
#: ``v OP x`` is ``x MIRROR[OP] v``.
MIRROR = {"==": "==", "!=": "!=", "<": ">", ">": "<", "<=": ">=", ">=": "<="}

_KEYWORDS = ("and", "or", "not")

#: Deepest nesting of parentheses and ``not`` an event may use (the parser
#: and the planner recurse once per level).
MAX_DEPTH = 100
#: The registry entries the event language spells, in the order its messages list them.
_EVENT_ENTRIES = sorted((e for e in REGISTRY.values() if e.event is not None), key=lambda e: e.event_rank)
_TERMS_HELP = names_help(e.event_help for e in _EVENT_ENTRIES)

#: A term of an event is a statistic of the registry (``Statistic("urn", 1)`` is ``k1``).
Term = Statistic


# ---------------------------------------------------------------------------
# syntax tree
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class Comparison:
    """``term op value``; *column* is where the term stands in the text (1-based, 0 if built)."""

    term: Statistic
    op: str
    value: int
    column: int = field(default=0, compare=False)

    def __str__(self) -> str:
        return f"{self.term.event_text} {self.op} {self.value}"


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
    for comparison in comparisons(node):
        term = comparison.term
        if term.entry.indexes_urns and term.parameter > len(config):
            raise InvalidParameters(
                f"the event names urn {term.parameter} ({term.event_text}) but the configuration has "
                f"{len(config)} entries"
            )
    return evaluate(node, config)


def evaluate(node: Event, config: Sequence[int]) -> bool:
    """Return whether *node* holds for one occupancy vector (no checks).

    Parameters
    ----------
    node : Event
        A parsed event.
    config : sequence of int
        An occupancy vector with at least as many entries as the event's
        highest urn.

    Returns
    -------
    bool
        The truth value; each term is valued by its registry entry.

    Notes
    -----
    One walk of the tree: ``O(size of the event * r)``.
    """
    kind = type(node)
    if kind is Comparison:
        return OPS[node.op](node.term.value(config), node.value)
    if kind is Not:
        return not evaluate(node.operand, config)
    if kind is And:
        return all(evaluate(x, config) for x in node.operands)
    return any(evaluate(x, config) for x in node.operands)


def comparisons(node: Event):
    """Yield the comparisons of *node*, left to right.

    Parameters
    ----------
    node : Event
        A parsed event.

    Yields
    ------
    Comparison
        Each comparison once, in reading order (``O(size of the event)``).
    """
    kind = type(node)
    if kind is Comparison:
        yield node
    elif kind is Not:
        yield from comparisons(node.operand)
    else:
        for x in node.operands:
            yield from comparisons(x)



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
            digits = j - i - (1 if ch in "+-" else 0)
            if digits > MAX_DIGITS:
                raise _syntax_error(text, column, f"a number of {digits:,} digits is too long; "
                                                  f"numbers are limited to {MAX_DIGITS:,} digits")
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
        self.depth = 0

    def enter(self, token: _Token) -> None:
        """One more level of parentheses or ``not``; refused past :data:`MAX_DEPTH`."""
        self.depth += 1
        if self.depth > MAX_DEPTH:
            raise self.error(token, f"the event nests parentheses and 'not' more than {MAX_DEPTH} deep; "
                                    "write it with fewer levels (and/or chains need no parentheses)")

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
            self.enter(self.take())
            node = Not(self.negation())
            self.depth -= 1
            return node
        return self.primary()

    def primary(self) -> Event:
        token = self.peek()
        if token.kind == "(":
            self.enter(self.take())
            if self.peek().kind == ")":
                raise self.error(self.peek(), "empty parentheses; put a comparison inside")
            node = self.disjunction()
            close = self.peek()
            if close.kind != ")":
                raise self.error(close, f"expected ')' to close the '(' at column {token.column}, found {_found(close)}")
            self.take()
            self.depth -= 1
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
            column = self.peek().column
            term = self.term()
            first = Comparison(term, MIRROR[op], value, column)
            if self.peek().kind == "op":
                op2 = self.take().text
                value2 = self.number(op2)
                return And((first, Comparison(term, op2, value2, column)))
            return first
        column = token.column
        term = self.term()
        op = self.operator(term.event_text)
        value = self.number(op)
        if self.peek().kind == "op":
            raise self.error(self.peek(), "a comparison cannot continue here; write 'a <= x <= b' "
                                          "with the numbers outside, or join comparisons with 'and'")
        return Comparison(term, op, value, column)

    def term(self) -> Statistic:
        """A statistic as the registry's event spellings write it."""
        token = self.peek()
        if token.kind != "name":
            raise self.error(token, f"expected a statistic ({_TERMS_HELP}), found {_found(token)}")
        word = token.text.lower()
        if word in _KEYWORDS:
            raise self.error(token, f"expected a statistic ({_TERMS_HELP}) before {token.text!r}")
        self.take()
        for entry in _EVENT_ENTRIES:
            if entry.event_form == "word" and word == entry.event:
                return Statistic(entry.kind)
        for entry in _EVENT_ENTRIES:
            if entry.event_form == "condition" and word == entry.event:
                return Statistic(entry.kind, self.condition(entry.event))
        for entry in _EVENT_ENTRIES:
            prefix = entry.event
            if entry.event_form == "index" and word.startswith(prefix):
                digits = word[len(prefix) + 1:] if word.startswith(prefix + "_") else word[len(prefix):]
                if digits.isdigit():
                    if len(digits) > MAX_DIGITS:
                        raise self.error(token, f"the urn number in {token.text[:20]!r}... has {len(digits):,} "
                                                f"digits; numbers are limited to {MAX_DIGITS:,} digits")
                    index = int(digits)
                    if index < entry.least:
                        raise self.error(token, f"urns are numbered from 1 (got {token.text!r}); "
                                                f"write {prefix}1 for the first urn")
                    return Statistic(entry.kind, index)
        raise self.error(token, f"unknown statistic {token.text!r}; use {_TERMS_HELP}")

    def condition(self, name: str) -> Tuple[str, int]:
        """``( OP number )`` after a condition statistic such as ``count``."""
        open_ = self.peek()
        if open_.kind != "(":
            raise self.error(open_, f"{name} needs a condition in parentheses, e.g. {name}(== 2)")
        self.take()
        op = self.operator(f"{name}(")
        value = self.number(op)
        close = self.peek()
        if close.kind != ")":
            raise self.error(close, f"expected ')' after the condition of {name}, e.g. {name}(>= 1)")
        self.take()
        return op, value


def parse_event(text: Union[str, Event]) -> Event:
    """Read an event (see the module docstring for the language).

    Returns the syntax tree (:class:`Comparison`, :class:`Not`, :class:`And`,
    :class:`Or`); ``str()`` of it writes the event back in canonical form.
    Raises :class:`~enumerator.core.errors.InvalidParameters` pointing at the
    column where reading failed (attributes ``column`` and ``caret``).

    >>> str(parse_event("k_1>=2 AND not(max<3)"))
    'k1 >= 2 and not max < 3'
    >>> parse_event("max <= x")
    Traceback (most recent call last):
    ...
    enumerator.core.errors.InvalidParameters: cannot read the event 'max <= x' at column 8 (at 'x'): expected a whole number after '<=', found 'x'
    """
    if isinstance(text, (Comparison, Not, And, Or)):
        return text
    if not isinstance(text, str):
        raise InvalidParameters(f"an event is a text such as 'max <= 2' (got {text!r})")
    return _Parser(text).parse()
