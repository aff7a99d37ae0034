"""The event language: parsing, planning and exact probabilities.

Events are generated here as small trees that render themselves as text and
decide their own truth on a vector directly (an evaluator independent of the
parser); the reference probability is the brute-force sum of the rule's
weights over every vector of the box (``tests/reference.py``).  Outside
references are named beside each check.
"""

from __future__ import annotations

import math
import operator
from dataclasses import dataclass
from fractions import Fraction
from typing import Tuple

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from reference import box, weight

import enumerator.algorithms.events as events
from enumerator import Occupancy
from enumerator.algorithms.counting import count_microstates
from enumerator.algorithms.events import (
    And,
    Comparison,
    Not,
    Or,
    Term,
    evaluate_event,
    event_count,
    event_probability,
    parse_event,
)
from enumerator.algorithms.statistics import distribution
from enumerator.core.errors import InvalidParameters, TooLarge

CMP = {"==": operator.eq, "!=": operator.ne, "<": operator.lt, "<=": operator.le, ">": operator.gt, ">=": operator.ge}
MIRROR = {"==": "==", "!=": "!=", "<": ">", ">": "<", "<=": ">=", ">=": "<="}


# ---------------------------------------------------------------- an independent event model

@dataclass(frozen=True)
class E:
    """A generated event: ``kind`` is "cmp", "not", "and" or "or"."""

    kind: str
    parts: Tuple = ()
    term: Tuple = ()
    op: str = "=="
    value: int = 0
    style: int = 0  # how to write it: mirrored, k_i, upper-case keywords

    def stat(self, k) -> int:
        name = self.term[0]
        if name == "max":
            return max(k)
        if name == "min":
            return min(k)
        if name == "empty":
            return sum(v == 0 for v in k)
        if name == "occupied":
            return sum(v > 0 for v in k)
        if name == "urn":
            return k[self.term[1] - 1]
        return sum(CMP[self.term[1]](v, self.term[2]) for v in k)

    def truth(self, k) -> bool:
        if self.kind == "cmp":
            return CMP[self.op](self.stat(k), self.value)
        if self.kind == "not":
            return not self.parts[0].truth(k)
        if self.kind == "and":
            return all(p.truth(k) for p in self.parts)
        return any(p.truth(k) for p in self.parts)

    def text(self) -> str:
        if self.kind == "cmp":
            name = self.term[0]
            if name == "urn":
                t = f"k_{self.term[1]}" if self.style % 2 else f"k{self.term[1]}"
            elif name == "count":
                t = f"count({self.term[1]}{' ' if self.style % 2 else ''}{self.term[2]})"
            else:
                t = name.upper() if self.style == 3 else name
            if self.style == 2:
                return f"{self.value} {MIRROR[self.op]} {t}"
            return f"{t} {self.op} {self.value}"
        if self.kind == "not":
            return f"{'NOT' if self.style == 3 else 'not'} ({self.parts[0].text()})"
        word = self.kind.upper() if self.style == 3 else self.kind
        return f" {word} ".join(f"({p.text()})" for p in self.parts)


def terms(r):
    return st.one_of(
        st.sampled_from([("max",), ("min",), ("empty",), ("occupied",)]),
        st.integers(1, r).map(lambda i: ("urn", i)),
        st.tuples(st.just("count"), st.sampled_from(sorted(CMP)), st.integers(-1, 3)),
    )


def event_trees(r):
    leaf = st.builds(lambda t, op, v, s: E("cmp", term=t, op=op, value=v, style=s),
                     terms(r), st.sampled_from(sorted(CMP)), st.integers(-1, 5), st.integers(0, 3))
    return st.recursive(
        leaf,
        lambda inner: st.one_of(
            st.builds(lambda p, s: E("not", (p,), style=s), inner, st.integers(0, 3)),
            st.builds(lambda ps, s: E("and", tuple(ps), style=s), st.lists(inner, min_size=2, max_size=3), st.integers(0, 3)),
            st.builds(lambda ps, s: E("or", tuple(ps), style=s), st.lists(inner, min_size=2, max_size=3), st.integers(0, 3)),
        ),
        max_leaves=6,
    )


@st.composite
def model_and_event(draw):
    rule = draw(st.sampled_from(["MB", "BE", "FD"]))
    r = draw(st.integers(1, 4))
    n = draw(st.integers(0, 6))
    if draw(st.booleans()):
        model = Occupancy(balls=n, urns=r, rule=rule)
    else:
        bounds = []
        for _ in range(r):
            a = draw(st.integers(0, 1 if rule == "FD" else 2))
            b = draw(st.sampled_from([None, a, a + 2]))
            if rule == "FD":
                b = max(a, 1 if b is None else min(b, 1))
            bounds.append((a, b))
        model = Occupancy(balls=n, bounds=bounds, rule=rule)
    if not any(True for _ in box(model)):
        model = Occupancy(balls=n, urns=r, rule=rule if rule != "FD" else "BE")
    return model, draw(event_trees(model.urns))


def brute(model, holds) -> Fraction:
    """P(event) = sum of the rule's weights where it holds over the total (slow reference)."""
    total = hit = 0
    for k in box(model):
        w = weight(model, k)
        total += w
        if holds(k):
            hit += w
    return Fraction(hit, total)


# ---------------------------------------------------------------- brute force

@settings(max_examples=200, deadline=None)
@given(model_and_event())
def test_event_probability_matches_brute_force(pair):
    model, tree = pair
    text = tree.text()
    assert event_probability(model, text) == brute(model, tree.truth)
    node = parse_event(text)
    for k in box(model):
        assert evaluate_event(node, k) == tree.truth(k)


@settings(max_examples=60, deadline=None)
@given(model_and_event())
def test_listing_agrees_with_the_planner(pair):
    # the enumeration fallback on its own (numpy blocks) gives the same exact count
    model, tree = pair
    node = parse_event(tree.text())
    count, total = event_count(model, node)
    assert events._enumerate(model, node, tree.text(), 10 ** 6, False) == count


@settings(max_examples=150, deadline=None)
@given(event_trees(5))
def test_written_form_reads_back_to_the_same_tree(tree):
    node = parse_event(tree.text())
    assert parse_event(str(node)) == node


# ---------------------------------------------------------------- outside references

def test_birthday_problem():
    # P(23 people have distinct birthdays among 365 days) = 365!/(342! 365^23)
    # = 0.4927027656..., and 1 - p = 0.5072972343... (well known; from memory)
    model = Occupancy(balls=23, urns=365, rule="MB")
    p = event_probability(model, "max <= 1")
    assert p == Fraction(math.perm(365, 23), 365 ** 23)
    assert float(p) == pytest.approx(0.4927027656, abs=1e-10)
    assert float(event_probability(model, "max >= 2")) == pytest.approx(0.5072972343, abs=1e-10)
    assert event_probability(model, "count(>= 2) == 0") == p


def test_exactly_m_empty_cells_through_an_event():
    # Feller vol. 1, ch. IV, eq. (2.4) (from memory): C(r,m) sum_k (-1)^k C(r-m,k) (1-(m+k)/r)^n
    n, r, m = 30, 10, 3
    expected = math.comb(r, m) * sum((-1) ** k * math.comb(r - m, k) * Fraction(r - m - k, r) ** n
                                     for k in range(r - m + 1))
    model = Occupancy(balls=n, urns=r, rule="MB")
    assert event_probability(model, "empty == 3") == expected
    assert event_probability(model, "occupied == 7") == expected
    assert event_probability(model, "count(== 0) == 3") == expected
    assert event_probability(model, "count(>= 1) != 7") == 1 - expected


def test_two_given_urns_under_mb():
    # P(k1 <= 1 and k2 <= 1) = sum_{a,b<=1} n!/(a! b! (n-a-b)!) r^-(a+b) ((r-2)/r)^(n-a-b)
    # (the multinomial law of the first two urns; common practice)
    n, r = 50, 20
    inside = sum(Fraction(math.factorial(n), math.factorial(a) * math.factorial(b) * math.factorial(n - a - b))
                 * Fraction(1, r) ** (a + b) * Fraction(r - 2, r) ** (n - a - b)
                 for a in (0, 1) for b in (0, 1))
    model = Occupancy(balls=n, urns=r, rule="MB")
    assert event_probability(model, "k1 >= 2 or k2 >= 2") == 1 - inside
    assert event_probability(model, "k1 <= 1 and k_2 < 2") == inside


# ---------------------------------------------------------------- the planner avoids listing

@pytest.fixture
def no_listing(monkeypatch):
    def refuse(*args, **kwargs):
        raise AssertionError("the planner fell back to listing")

    monkeypatch.setattr(events, "_enumerate", refuse)


@pytest.mark.parametrize("text", [
    "max <= 3", "max < 4 and min >= 1", "not (max > 3)", "max == 5", "max != 5", "min <= 1",
    "k1 >= 2", "1 <= k1 <= 3 and k7 == 0", "k3 != 4", "k1 >= 2 or k2 >= 2 or k3 >= 2",
    "empty == 3", "count(== 2) >= 3", "occupied >= 40 and max <= 4", "count(> 1) == 0",
    "count(>= 1) == 60", "(empty >= 2 or k1 == 0) and max <= 6",
])
def test_events_with_an_exact_plan_never_list(no_listing, text):
    model = Occupancy(balls=120, urns=60, rule="MB")
    p = event_probability(model, text)
    assert 0 <= p <= 1


def test_planned_values_on_a_large_model(no_listing):
    model = Occupancy(balls=120, urns=60, rule="MB")
    total = count_microstates(model)
    # bounded counts: the same model with bounds (counting's EGF)
    assert event_probability(model, "not (max > 3) and min >= 1") == Fraction(
        count_microstates(Occupancy(balls=120, urns=60, rule="MB", capacity=3, minimum=1)), total)
    law = distribution(model, "exactly:2")
    assert event_probability(model, "count(== 2) >= 3") == sum(p for v, p in law.pmf.items() if v >= 3)
    top = distribution(model, "max")
    assert event_probability(model, "max == 5 or max > 9") == sum(p for v, p in top.pmf.items() if v == 5 or v > 9)


def test_events_needing_a_listing_respect_the_limit():
    model = Occupancy(balls=40, urns=12, rule="MB")
    text = "empty == 1 and count(== 2) == 3"
    with pytest.raises(TooLarge, match=r"raise limit=$") as caught:
        event_probability(model, text, limit=1000)
    assert caught.value.parameters == ("limit",)
    small = Occupancy(balls=7, urns=4, rule="MB")
    expected = brute(small, lambda k: sum(v == 0 for v in k) == 1 and sum(v == 2 for v in k) == 1)
    assert event_probability(small, "empty == 1 and count(== 2) == 1", limit=200, progress=True) == expected


# ---------------------------------------------------------------- the parser

def test_precedence_not_and_or():
    node = parse_event("not max > 2 and min == 0 or k1 == 1")
    assert isinstance(node, Or)
    first = node.operands[0]
    assert isinstance(first, And) and isinstance(first.operands[0], Not)
    assert node.operands[1] == Comparison(Term("urn", 1), "==", 1)


def test_forms_that_read_the_same():
    same = ["k1 >= 2", "k_1>=2", "2 <= k1", "K1 >= 2", "(k1 >= 2)", "((k_1 >= +2))"]
    assert len({parse_event(t) for t in same}) == 1
    assert parse_event("1 <= k2 <= 3") == And((Comparison(Term("urn", 2), ">=", 1),
                                               Comparison(Term("urn", 2), "<=", 3)))
    assert str(parse_event("count(>=1)>=4 AND NOT (empty==0 OR max<-1)")) == \
        "count(>= 1) >= 4 and not (empty == 0 or max < -1)"


@pytest.mark.parametrize("text, column, problem", [
    ("", 1, "the event is empty; write a comparison such as 'max <= 2'"),
    ("max <= x", 8, "expected a whole number after '<=', found 'x'"),
    ("max = 2", 5, "a single '=' is not a comparison; write '==' to test equality"),
    ("max <= 2 and", 13, "expected a statistic (max, min, empty, occupied, k1 ... kr (urn occupancies) "
                         "or count(OP J)), found the end of the event"),
    ("(max <= 2", 10, "expected ')' to close the '(' at column 1, found the end of the event"),
    ("max <= 2)", 9, "this ')' has no matching '('"),
    ("k0 > 1", 1, "urns are numbered from 1 (got 'k0'); write k1 for the first urn"),
    ("size > 1", 1, "unknown statistic 'size'; use max, min, empty, occupied, k1 ... kr (urn occupancies) "
                    "or count(OP J)"),
    ("count(2) > 1", 7, "expected a comparison operator (== != < <= > >=) after 'count(', found '2'"),
    ("max && min", 5, "unknown operator '&&'; write 'and'"),
    ("k1 => 2", 4, "unknown operator '=>'; write '>='"),
    ("max <= 2.5", 8, "numbers must be whole numbers, found '2.5'"),
    ("max < 1 <= 2", 9, "a comparison cannot continue here; write 'a <= x <= b' with the numbers outside, "
                        "or join comparisons with 'and'"),
    ("max <= 2 min >= 1", 10, "expected 'and', 'or' or the end of the event, found 'min'"),
    ("!(max > 1)", 1, "'!' alone is not an operator; write 'not' to negate, '!=' to compare"),
    ("max <= 1 ; min > 0", 10, "unexpected character ';'"),
])
def test_malformed_events_point_at_the_column(text, column, problem):
    with pytest.raises(InvalidParameters) as info:
        event_probability(Occupancy(balls=3, urns=3), text)
    error = info.value
    assert error.column == column
    rest = text[column - 1:].strip()
    where = f"at {rest[:20]!r}" if rest else "at the end"
    assert str(error) == f"cannot read the event {text!r} at column {column} ({where}): {problem}"
    assert error.caret.splitlines()[-1] == " " * (column - 1) + "^"


def test_urn_beyond_the_model_is_an_error():
    with pytest.raises(InvalidParameters, match=r"names k5 \(column 12\) but the model has 4 urns; use k1 to k4"):
        event_probability(Occupancy(balls=3, urns=4), "max > 1 or k5 == 0")


def test_evaluate_event_on_vectors():
    assert evaluate_event("max <= 1 and k2 == 0", (1, 0, 1))
    assert not evaluate_event("count(== 1) >= 3", (1, 0, 1))
    assert evaluate_event("empty == 1 and occupied == 2 and min == 0", [2, 0, 5])
    with pytest.raises(InvalidParameters, match="names urn 4"):
        evaluate_event("k4 > 0", (1, 2, 3))


def test_model_without_configurations_has_no_event_probability():
    with pytest.raises(InvalidParameters, match="admits no configuration"):
        event_probability(Occupancy(balls=5, urns=2, rule="FD"), "max <= 1")


# ---------------------------------------------------------------- weights and groups, any number of urns

def brute_weighted(model, holds) -> Fraction:
    """P(event) with every vector weighed by the rule and by prod w_i^k_i (slow reference)."""
    total = hit = Fraction(0)
    for k in box(model):
        w = Fraction(weight(model, k))
        for wi, v in zip(model.weights, k):
            w *= wi ** v
        total += w
        if holds(k):
            hit += w
    return hit / total


@st.composite
def weighted_model_and_event(draw):
    model, tree = draw(model_and_event())
    weights = [draw(st.sampled_from([1, 2, 3, Fraction(1, 2)])) for _ in range(model.urns)]
    return model.with_groups([(1, a, b, w) for (a, b), w in zip(model.bounds, weights)]), tree


@settings(max_examples=150, deadline=None)
@given(weighted_model_and_event())
def test_weighted_event_probability_matches_brute_force(pair):
    model, tree = pair
    assert event_probability(model, tree.text()) == brute_weighted(model, tree.truth)


@settings(max_examples=40, deadline=None)
@given(weighted_model_and_event())
def test_weighted_listing_agrees_with_the_planner(pair):
    model, tree = pair
    node = parse_event(tree.text())
    count, _ = event_count(model, node)
    assert events._enumerate(model, node, tree.text(), 10 ** 6, False) == count


@pytest.mark.parametrize("text", ["max <= 1", "k2 >= 1", "k4 == 0 and max <= 2", "min >= 1", "empty == 2",
                                  "count(>= 2) <= 1", "not k1 == 1 or k5 >= 2"])
def test_an_event_on_groups_equals_the_event_per_urn(text):
    grouped = Occupancy(balls=5, bounds="3x0:2,2x0:", weights="3x2,2x1/3", rule="MB")
    per_urn = Occupancy(balls=5, bounds=[(0, 2)] * 3 + [(0, None)] * 2,
                        weights=[2, 2, 2, Fraction(1, 3), Fraction(1, 3)], rule="MB")
    node = parse_event(text)
    expected = brute_weighted(per_urn, lambda k: evaluate_event(node, k))
    assert event_probability(grouped, text) == event_probability(per_urn, text) == expected


def test_no_collision_among_a_quarter_billion_buckets():
    # P(no collision) = r^(n) / r^n, the birthday product (Feller, vol. 1, II.3)
    n, r = 10, 268435456
    expected = Fraction(1)
    for i in range(n):
        expected *= Fraction(r - i, r)
    assert event_probability(Occupancy(balls=n, urns=r, rule="MB"), "max <= 1") == expected


def test_one_urn_of_many_balls_by_its_law():
    # k1 ~ Binomial(n, 1/3): P(k1 >= 1) = 1 - (2/3)^n, P(k1 == j) = C(n, j) 2^(n-j) / 3^n
    n = 100000
    model = Occupancy(balls=n, urns=3, rule="MB")
    assert event_probability(model, "k1 >= 1") == 1 - Fraction(2, 3) ** n
    assert event_probability(model, "k1 == 33333") == Fraction(math.comb(n, 33333) * 2 ** (n - 33333), 3 ** n)


def test_huge_urn_numbers_are_addressed_without_lists():
    # 2^64 urns of weight 1 and one of weight 2^64: the heavy urn gets half the balls on average
    r = 2 ** 64
    model = Occupancy(balls=6, weights=f"{r}x1,{r}", rule="MB")
    p = Fraction(1, 2)
    assert event_probability(model, f"k{r + 1} == 3") == math.comb(6, 3) * p ** 6
    assert event_probability(model, "k1 >= 1") == 1 - Fraction(2 * r - 1, 2 * r) ** 6


def test_a_listing_beyond_the_limits_is_refused_before_it_starts():
    from enumerator.core.limits import limited

    model = Occupancy(balls=7, urns=4, rule="MB")
    with limited(seconds=1e-6), pytest.raises(TooLarge, match="listing the 120 configurations of 4 urns"):
        event_probability(model, "empty == 1 and count(== 2) == 1")


def test_nesting_is_bounded():
    assert event_probability(Occupancy(balls=2, urns=2), "(" * 100 + "max <= 1" + ")" * 100) == Fraction(1, 2)
    for text in ("(" * 400 + "max <= 1" + ")" * 400, "not " * 1000 + "max <= 1"):
        with pytest.raises(InvalidParameters, match="more than 100 deep"):
            parse_event(text)


def test_long_numbers_are_refused_before_conversion():
    for text in ("max <= " + "9" * 5000, "k" + "1" * 5000 + " >= 1"):
        with pytest.raises(InvalidParameters, match="limited to 4,000 digits"):
            parse_event(text)
    with pytest.raises(InvalidParameters, match="whole numbers, found '1e5'"):
        parse_event("max <= 1e5")


def test_at_most_two_per_bucket_among_2_64_buckets():
    # j pairs and n - 2j singles: n! / (2^j j! (n-2j)!) ways to form them, r^(n-j) ways to place them
    # (a direct count, the j-pair generalisation of the birthday product)
    n, r = 9, 2 ** 64
    expected = sum(Fraction(math.factorial(n) // (2 ** j * math.factorial(j) * math.factorial(n - 2 * j))
                            * math.perm(r, n - j), r ** n) for j in range(n // 2 + 1))
    assert event_probability(Occupancy(balls=n, urns=r, rule="MB"), "max <= 2") == expected
    weighted = Occupancy(balls=n, weights=f"{r}x5", rule="MB")  # equal weights: the same law
    assert event_probability(weighted, "max <= 2") == expected
