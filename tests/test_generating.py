"""Generating functions: symbolic forms, coefficient rows, user expressions.

Outside references: brute-force enumeration (tests/reference.py), SymPy's own
``series()`` and polynomial expansion (used here only as a reference, never by
the library), SymPy's partition and Stirling numbers, and OEIS sequences named
by A-number.  Closed forms of the generating functions: Flajolet & Sedgewick,
*Analytic Combinatorics*, 2009, ch. I–II.
"""

from __future__ import annotations

import math
from fractions import Fraction

import pytest
import reference
import sympy
from flint import fmpz_poly
from hypothesis import given, settings
from hypothesis import strategies as st
from strategies import small_models as shared_small_models
from sympy.functions.combinatorial.numbers import partition, stirling

from enumerator import InvalidParameters, Occupancy, TooLarge
from enumerator.algorithms.generating import (
    bivariate_generating_function,
    coefficient_row,
    extract_coefficients,
    generating_function,
    kind,
    parse_expression,
    parse_mark,
)

x, u = sympy.symbols("x u")


def sympy_row(expr, degree, exponential=False):
    """Coefficients of *expr* up to *degree* by SymPy's series (times m! if exponential)."""
    # doit(): an unevaluated factor such as 1**0 would otherwise survive into the row
    poly = sympy.expand(sympy.series(expr.doit(), x, 0, degree + 1).removeO())
    out = []
    for m in range(degree + 1):
        c = poly.coeff(x, m)
        out.append(c * math.factorial(m) if exponential else c)
    return out


def truncated(expr, n):
    """*expr* expanded in x up to x^n with SymPy arithmetic (other symbols kept).

    ``exp(t)`` becomes its Taylor polynomial and negative powers their SymPy
    series, so the generating functions of models (which may contain the
    marker u) expand quickly; a reference independent of the library.
    """
    def cut(p):
        p = sympy.expand(p)
        return sympy.Add(*[p.coeff(x, k) * x**k for k in range(n + 1)])

    if expr.is_Add:
        return cut(sympy.Add(*[truncated(a, n) for a in expr.args]))
    if expr.is_Mul:
        result = sympy.Integer(1)
        for a in expr.args:
            result = cut(result * truncated(a, n))
        return result
    if expr.is_Pow and expr.args[1].is_Integer:
        base, e = expr.args
        if e < 0:
            return cut(sympy.series(expr, x, 0, n + 1).removeO())
        b = truncated(base, n)
        result = sympy.Integer(1)
        for _ in range(int(e)):
            result = cut(result * b)
        return result
    if expr.func == sympy.exp:
        arg = truncated(expr.args[0], n)
        return cut(sympy.Add(*[arg**k / sympy.factorial(k) for k in range(n + 1)]))
    return expr


def small_models():
    """Small uniform or per-urn models of every rule (the shared strategy, at this module's sizes)."""
    return shared_small_models(max_urns=4, max_balls=7, shapes=("uniform", "per-urn"), lows=2, span=3)
@pytest.mark.parametrize(
    "model, expected",
    [
        # Closed forms (Flajolet & Sedgewick 2009, §I.3 and §II.2; common practice).
        (Occupancy(balls=2, urns=5, rule="BE"), (1 - x) ** -5),
        (Occupancy(balls=2, urns=5, rule="FD"), (1 + x) ** 5),
        (Occupancy(balls=2, urns=5, rule="BE", capacity=3), ((1 - x**4) / (1 - x)) ** 5),
        (Occupancy(balls=2, urns=5, rule="BE", minimum=2), x**10 / (1 - x) ** 5),
        (Occupancy(balls=2, urns=5, rule="MB"), sympy.exp(5 * x)),
        (Occupancy(balls=2, urns=5, rule="MB", minimum=1), (sympy.exp(x) - 1) ** 5),
        (Occupancy(balls=2, urns=3, rule="MB", capacity=2), (1 + x + x**2 / 2) ** 3),
        (
            Occupancy(balls=2, bounds=[(0, 1), (2, None), (0, 1)], rule="BE"),
            (1 + x) ** 2 * x**2 / (1 - x),
        ),
    ],
)
def test_generating_function_closed_forms(model, expected):
    got = generating_function(model)
    assert sympy.simplify(got - expected) == 0
    assert kind(model) == ("exponential" if model.rule.value == "MB" else "ordinary")


@settings(max_examples=40, deadline=None)
@given(model=small_models())
def test_generating_function_coefficients_match_brute_force(model):
    # Reference: SymPy's series of our symbolic function vs brute-force counts.
    mb = model.rule.value == "MB"
    expansion = truncated(generating_function(model), model.balls)
    for m in range(model.balls + 1):
        conf, micro, _ = reference.counts(model.with_balls(m))
        c = expansion.coeff(x, m)
        assert (c * math.factorial(m) if mb else c) == (micro if mb else conf)


def test_generating_function_in_another_variable():
    z = sympy.Symbol("z")
    assert generating_function(Occupancy(balls=1, urns=3, rule="FD"), "z") == (1 + z) ** 3
    with pytest.raises(InvalidParameters, match="plain variable name"):
        generating_function(Occupancy(balls=1, urns=3, rule="FD"), "1x")


# ---------------------------------------------------------------------------
# coefficient rows
# ---------------------------------------------------------------------------

@settings(max_examples=60, deadline=None)
@given(model=small_models(), extra=st.integers(0, 4))
def test_coefficient_row_matches_brute_force(model, extra):
    # Reference: brute-force enumeration for every m = 0..n+extra.
    top = model.balls + extra
    micro_row = coefficient_row(model, top, count="microstates")
    conf_row = coefficient_row(model, top, count="configurations")
    for m in range(top + 1):
        conf, micro, _ = reference.counts(model.with_balls(m))
        assert conf_row[m] == conf
        assert micro_row[m] == micro
    assert coefficient_row(model) == (micro_row if model.rule.value == "MB" else conf_row)[: model.balls + 1]


@pytest.mark.parametrize(
    "model",
    [
        Occupancy(balls=60, urns=7, rule="BE", capacity=12),
        Occupancy(balls=60, urns=7, rule="MB", capacity=12),
        Occupancy(balls=40, urns=6, rule="MB", minimum=2),
        Occupancy(balls=50, bounds=[(0, 3), (1, 9), (0, None), (2, 9), (0, 3), (5, 5)], rule="BE"),
        Occupancy(balls=50, bounds=[(0, 3), (1, 9), (0, None), (2, 9), (0, 3), (5, 5)], rule="MB"),
        Occupancy(balls=30, urns=40, rule="FD"),
    ],
)
def test_coefficient_row_matches_counting(model):
    # Cross-check with counting.py, which uses different methods (inclusion-exclusion,
    # one coefficient of a product) for one n at a time.
    row = coefficient_row(model)
    for m in range(model.balls + 1):
        assert row[m] == model.with_balls(m).microstates()


def test_coefficient_row_surjections_and_powers():
    # m! [x^m] (e^x - 1)^r = r! S(m, r) (Stirling numbers, SymPy); r^m unbounded.
    row = coefficient_row(Occupancy(balls=40, urns=6, rule="MB", minimum=1))
    assert row == [math.factorial(6) * stirling(m, 6) for m in range(41)]
    assert coefficient_row(Occupancy(balls=9, urns=3, rule="MB")) == [3**m for m in range(10)]


def test_coefficient_row_of_a_window_power():
    # Reference: SymPy's exact expansion of (1 + x + ... + x^7)^8, and FLINT's full
    # power for (1 + ... + x^7)^300; the row is palindromic (common practice).
    row = coefficient_row(Occupancy(balls=56, urns=8, rule="BE", capacity=7))
    poly = sympy.Poly(sympy.expand(sum(x**k for k in range(8)) ** 8), x)
    assert row == [poly.coeff_monomial(x**m) for m in range(57)]
    assert row == row[::-1]
    big = coefficient_row(Occupancy(balls=1500, urns=300, rule="BE", capacity=7))
    flint_power = fmpz_poly([1] * 8) ** 300
    assert big == [int(flint_power[m]) for m in range(1501)]


def test_coefficient_row_errors():
    model = Occupancy(balls=3, urns=2, rule="BE")
    with pytest.raises(InvalidParameters, match="count must be"):
        coefficient_row(model, count="profiles")
    with pytest.raises(InvalidParameters, match="upto must be at least 0"):
        coefficient_row(model, -1)


# ---------------------------------------------------------------------------
# bivariate generating functions
# ---------------------------------------------------------------------------

def _marked(k, how, j):
    return sum(1 for v in k if (v == j if how == "exactly" else v >= j))


@settings(max_examples=30, deadline=None)
@given(model=small_models(), mark=st.sampled_from(["empty", "occupied", "exactly:1", "atleast:2", "exactly:3"]))
def test_bivariate_counts_marked_urns(model, mark):
    # Reference: brute force, counting outcomes by the number of marked urns.
    how, j = parse_mark(mark)
    mb = model.rule.value == "MB"
    expr = bivariate_generating_function(model, mark)
    assert sympy.simplify(expr.subs(u, 1) - generating_function(model)) == 0
    n = model.balls
    coeff_n = truncated(expr, n).coeff(x, n)
    if mb:
        coeff_n *= math.factorial(n)
    by_marks = {}
    for k in reference.box(model):
        key = _marked(k, how, j)
        by_marks[key] = by_marks.get(key, 0) + reference.weight(model, k)
    poly = sympy.Poly(sympy.expand(coeff_n), u)
    for marks in range(model.urns + 1):
        assert poly.coeff_monomial(u**marks) == by_marks.get(marks, 0)


def test_bivariate_empty_urns_closed_form():
    # (u - 1 + 1/(1 - x))^r for BE, (u - 1 + e^x)^r for MB (Flajolet & Sedgewick, §III.2).
    be = bivariate_generating_function(Occupancy(balls=1, urns=4, rule="BE"), "empty")
    assert sympy.simplify(be - (u - 1 + 1 / (1 - x)) ** 4) == 0
    mb = bivariate_generating_function(Occupancy(balls=1, urns=4, rule="MB"), "empty")
    assert sympy.simplify(mb - (u - 1 + sympy.exp(x)) ** 4) == 0


def test_parse_mark_errors():
    assert parse_mark("Empty") == ("exactly", 0)
    assert parse_mark("atleast:3") == ("atleast", 3)
    with pytest.raises(InvalidParameters, match="mark must be one of"):
        parse_mark("exactly:-1")
    with pytest.raises(InvalidParameters, match="different names"):
        bivariate_generating_function(Occupancy(balls=1, urns=2), "empty", "x", "x")


# ---------------------------------------------------------------------------
# extraction of user-written expressions
# ---------------------------------------------------------------------------

def test_fibonacci():
    # OEIS A000045, from memory; cross-checked with SymPy's series.
    got = extract_coefficients("1/(1 - x - x^2)", 30)
    assert got[:15] == [1, 1, 2, 3, 5, 8, 13, 21, 34, 55, 89, 144, 233, 377, 610]
    assert got == sympy_row(1 / (1 - x - x**2), 30)
    assert got[30] == sympy.fibonacci(31)


def test_coin_change():
    # OEIS A000008 (ways to make n cents from coins of 1, 2, 5, 10), from memory,
    # and a direct count of the solutions of a + 2b + 5c + 10d = n.
    got = extract_coefficients("1/((1-x)(1-x^2)(1-x^5)(1-x^10))", 40)
    assert got[:21] == [1, 1, 2, 2, 3, 4, 5, 6, 7, 8, 11, 12, 15, 16, 19, 22, 25, 28, 31, 34, 40]
    direct = [
        sum(1 for d in range(n // 10 + 1) for c in range((n - 10 * d) // 5 + 1)
            for b in range((n - 10 * d - 5 * c) // 2 + 1))
        for n in range(41)
    ]
    assert got == direct


def test_partition_numbers():
    # OEIS A000041 via prod_k 1/(1 - x^k); p(100) = 190569292 (from memory);
    # reference: SymPy's partition numbers.
    n = 100
    text = "*".join(f"(1 - x^{k})^-1" for k in range(1, n + 1))
    got = extract_coefficients(text, n)
    assert got[:11] == [1, 1, 2, 3, 5, 7, 11, 15, 22, 30, 42]
    assert got[100] == 190569292
    assert got == [partition(m) for m in range(n + 1)]


def test_rational_coefficients_are_fractions():
    # Reference: SymPy series; 1/(2 - x) = sum x^k / 2^(k+1).
    got = extract_coefficients("1/(2 - x)", 6)
    assert got == [Fraction(1, 2 ** (k + 1)) for k in range(7)]
    assert all(type(c) is Fraction for c in got)
    expr = (1 + x / 3) ** 5 / (1 - x / 2) ** 2
    assert extract_coefficients(expr, 12) == sympy_row(expr, 12)


@st.composite
def rational_functions(draw):
    def poly(constant_nonzero):
        coeffs = draw(st.lists(st.fractions(min_value=-4, max_value=4, max_denominator=3), min_size=1, max_size=4))
        if constant_nonzero and coeffs[0] == 0:
            coeffs[0] = Fraction(1)
        return sum(sympy.Rational(c.numerator, c.denominator) * x**k for k, c in enumerate(coeffs))

    num = poly(False)
    den = poly(True)
    power = draw(st.integers(-3, 3))
    shift = draw(st.integers(0, 2))
    return sympy.Mul(num, sympy.Pow(den, power, evaluate=False), x**shift, evaluate=False)


@settings(max_examples=40, deadline=None)
@given(expr=rational_functions(), degree=st.integers(0, 15))
def test_extraction_matches_sympy_series(expr, degree):
    # Reference: SymPy's series() of the same expression.
    assert extract_coefficients(expr, degree) == sympy_row(expr, degree)


def test_valuations_and_cancellations():
    # x/(x - x^2) = 1/(1 - x); cancellations below the working precision (definition).
    assert extract_coefficients("x/(x - x^2)", 5) == [1] * 6
    assert extract_coefficients("(1/(1-x) - 1/(1-x)) * x^-3 + 1", 4) == [1, 0, 0, 0, 0]
    assert extract_coefficients("((1+x)^3 - 1 - 3x - 3x^2)/x^3", 3) == [1, 0, 0, 0]
    assert extract_coefficients("(1/(1-x) - 1 - x - x^2)/x^3", 4) == [1, 1, 1, 1, 1]
    assert extract_coefficients("2x(1+x)", 3) == [0, 2, 2, 0]
    assert extract_coefficients("(1+x)^(10^12)", 2) == [1, 10**12, 10**12 * (10**12 - 1) // 2]
    assert extract_coefficients("0", 2) == [0, 0, 0]
    assert extract_coefficients("z/(1-z)", 3, var="z") == [0, 1, 1, 1]


def test_big_window_power_matches_coefficient_row():
    # The benchmark shape, small: (1 + ... + x^7)^300 against the model's row.
    text = "(" + "+".join(f"x^{k}" for k in range(8)) + ")^300"
    row = coefficient_row(Occupancy(balls=1000, urns=300, rule="BE", capacity=7))
    assert extract_coefficients(text, 1000) == row


@pytest.mark.parametrize(
    "text, message",
    [
        ("1/x", "has a pole at x = 0: its expansion starts with x^-1"),
        ("1/(x - x^2)", "Laurent series"),
        ("exp(x)", "column 1: the function 'exp' is not allowed"),
        ("sin(x)/(1-x)", "column 1: the function 'sin' is not allowed"),
        ("x + y", "column 5: the name 'y' is not allowed"),
        ("0.5*x", "column 1: '0.5' is not a whole number (decimals are not exact"),
        ("1/0", "division by zero"),
        ("1/(x - x)", "division by zero"),
        ("x^x", "the exponent x contains x"),
        ("x^(1/2)", "the exponent 1/2 is not a whole number"),
        ("(1 + x", "column 1: '(' is never closed"),
        ("1 + x)", "column 6: ')' has no matching '('"),
        ("x +", "is not well formed"),
        ("", "the expression is empty"),
        ("1 2", "two numbers in a row"),
        ("x // 2", "column 3: '//' is not allowed"),
        ("__import__('os').system('true')", "column 1: the function '__import__' is not allowed"),
        ("x.real", "column 2: '.' is not allowed"),
        ("lambda: 1", "column 1: the name 'lambda' is not allowed"),
        ("0x10", "'0x10' is not a whole number"),
    ],
)
def test_malformed_expressions_have_clear_errors(text, message):
    with pytest.raises(InvalidParameters) as info:
        extract_coefficients(text, 4)
    assert message in str(info.value)


def test_sympy_input_is_checked_too():
    with pytest.raises(InvalidParameters, match="the function exp"):
        extract_coefficients(sympy.exp(x), 3)
    with pytest.raises(InvalidParameters, match="not exact"):
        extract_coefficients(sympy.Float(0.5) * x, 3)
    with pytest.raises(InvalidParameters, match="unknown symbol 'y'"):
        extract_coefficients(x + sympy.Symbol("y"), 3)
    with pytest.raises(InvalidParameters, match="text or a SymPy expression"):
        extract_coefficients([1, 2], 3)
    assert extract_coefficients(3, 2) == [3, 0, 0]


def test_hopeless_sizes_are_refused():
    with pytest.raises(TooLarge):
        extract_coefficients("3^(10^9)", 2)
    with pytest.raises(TooLarge):
        extract_coefficients("(2 + x)^(10^9)", 2)
    with pytest.raises(TooLarge):
        extract_coefficients("(1+x)^(2^(10^6))", 2000)
    # a monomial beyond the requested degree is known to vanish without expanding it
    assert extract_coefficients("x^(10^13)", 2) == [0, 0, 0]


def test_parse_expression_is_unevaluated_and_exact():
    tree = parse_expression("x - x")
    assert tree != 0  # kept as written: evaluate=False
    assert sympy.simplify(tree) == 0
    assert sympy.simplify(parse_expression("2(1+x)^2") - 2 * (1 + x) ** 2) == 0


# ---------------------------------------------------------------------------
# the command line: enumerator gf / enumerator coeff
# ---------------------------------------------------------------------------

import json  # noqa: E402

from typer.testing import CliRunner  # noqa: E402

from enumerator.cli import app  # noqa: E402

runner = CliRunner()


def cli_json(*args):
    extra = ["--json", "--no-cache"] if args[0] == "gf" else ["--json"]  # gf reads the result store
    result = runner.invoke(app, [str(a) for a in args] + extra)
    assert result.exit_code == 0, result.output
    lines = result.stdout.splitlines()
    assert len(lines) == 1
    return json.loads(lines[0])


def test_cli_gf_json():
    # m! [x^m] (e^x - 1)^4 = 4! S(m, 4) (Stirling numbers, SymPy).
    payload = cli_json("gf", "-n", 8, "-r", 4, "--rule", "MB", "--minimum", 1)
    assert payload["kind"] == "exponential"
    assert sympy.simplify(sympy.sympify(payload["generating_function"]) - (sympy.exp(x) - 1) ** 4) == 0
    assert payload["coefficients"] == [str(24 * stirling(m, 4)) for m in range(9)]
    # BE with capacity 2: the coefficients of (1 + x + x^2)^3 (SymPy expansion).
    payload = cli_json("gf", "-n", 3, "-r", 3, "--rule", "BE", "--capacity", 2, "--upto", 6, "--mark", "empty")
    poly = sympy.Poly(sympy.expand((1 + x + x**2) ** 3), x)
    assert payload["coefficients"] == [str(poly.coeff_monomial(x**m)) for m in range(7)]
    assert payload["kind"] == "ordinary" and payload["mark"] == "empty"
    assert sympy.simplify(sympy.sympify(payload["bivariate"]).subs(u, 1) - (1 + x + x**2) ** 3) == 0


def test_cli_gf_text():
    result = runner.invoke(app, ["gf", "-n", "3", "-r", "2", "--rule", "FD", "--no-cache"])
    assert result.exit_code == 0, result.output
    assert "ordinary generating function ([x^m] = configurations of m balls):" in result.stdout
    assert "(x + 1)**2" in result.stdout


def test_cli_coeff_json_and_errors():
    # OEIS A000045 (Fibonacci), from memory.
    assert cli_json("coeff", "1/(1 - x - x^2)", "--upto", 10)["coefficients"] == [
        "1", "1", "2", "3", "5", "8", "13", "21", "34", "55", "89"
    ]
    # rationals as "p/q": 1/(2 - z) = sum z^k / 2^(k+1)
    assert cli_json("coeff", "1/(2 - z)", "--var", "z", "--upto", 3)["coefficients"] == ["1/2", "1/4", "1/8", "1/16"]
    result = runner.invoke(app, ["coeff", "exp(x)", "--upto", "3"])
    assert result.exit_code == 2
    assert result.stderr.strip() == (
        "Error: column 1: the function 'exp' is not allowed; only the variable x, "
        "whole numbers, + - * / ^ and parentheses are allowed"
    )
    result = runner.invoke(app, ["coeff", "1/x"])
    assert result.exit_code == 2 and "Laurent series" in result.stderr


# ---------------------------------------------------------------------------
# groups and weights
# ---------------------------------------------------------------------------

from enumerator.algorithms.expressions import MAX_NESTING  # noqa: E402
from enumerator.algorithms.group_rows import exponential_group_row, ordinary_group_row  # noqa: E402
from enumerator.core.model import UrnModel  # noqa: E402


def weighted_totals(model, top):
    """[total weight of m balls for m = 0..top] by brute force (slow reference).

    MB: sum of n!/prod k_i! prod w_i^{k_i}; BE/FD: sum of prod w_i^{k_i}.
    """
    out = []
    for m in range(top + 1):
        here = model.with_balls(m)
        total = Fraction(0)
        for k in reference.box(here):
            w = Fraction(reference.multinomial(k) if model.rule.value == "MB" else 1)
            for v, wi in zip(k, here.weights):
                w *= wi**v
            total += w
        out.append(total)
    return out


WEIGHTED_MODELS = [
    UrnModel(balls=5, weights=[1, 2, Fraction(1, 3)], rule="BE"),
    UrnModel(balls=5, groups=[(2, 0, 2, Fraction(3, 2)), (1, 1, None, 2)], rule="BE"),
    UrnModel(balls=3, groups=[(2, 0, 1, Fraction(1, 2)), (2, 0, 1, 5)], rule="FD"),
    UrnModel(balls=5, weights=[1, 2, Fraction(1, 3)], rule="MB"),
    UrnModel(balls=6, groups=[(2, 0, 2, Fraction(3, 2)), (2, 1, 3, 2)], rule="MB"),
]


@pytest.mark.parametrize("model", WEIGHTED_MODELS, ids=repr)
def test_weighted_generating_functions_and_rows_match_brute_force_and_sympy(model):
    top = 6
    expected = weighted_totals(model, top)
    row = coefficient_row(model, top)
    assert row == expected
    exponential = model.rule.value == "MB"
    assert sympy_row(generating_function(model), top, exponential) == [sympy.Rational(v.numerator, v.denominator)
                                                                      for v in expected]
    # configurations do not depend on weights
    unweighted = model.with_groups([(g.count, g.lower, g.upper) for g in model.groups])
    assert coefficient_row(model, top, count="configurations") == coefficient_row(unweighted, top, "configurations")
    # the bivariate function at u = 1 is the generating function
    assert sympy.simplify(bivariate_generating_function(model, "empty").subs(u, 1) - generating_function(model)) == 0


def test_weighted_bivariate_counts_empty_urns_by_brute_force():
    model = UrnModel(balls=3, weights=[1, 2, 3], rule="BE")
    bgf = bivariate_generating_function(model, "empty")
    poly = sympy.Poly(sympy.expand(sympy.series(bgf, x, 0, 4).removeO()).coeff(x, 3), u)
    by_empty = {}
    for k in reference.box(model):
        w = Fraction(1)
        for v, wi in zip(k, model.weights):
            w *= wi**v
        e = sum(1 for v in k if v == 0)
        by_empty[e] = by_empty.get(e, 0) + w
    for e, total in by_empty.items():
        assert poly.coeff_monomial(u**e) == sympy.Rational(total.numerator, total.denominator)


def test_a_model_given_per_urn_and_in_groups_has_one_generating_function():
    per_urn = UrnModel(balls=4, weights=[2, 2, 1, 2], bounds=[(0, 1), (0, 1), (0, None), (0, 1)], rule="BE")
    grouped = UrnModel(balls=4, groups=[(2, 0, 1, 2), (1, 0, None, 1), (1, 0, 1, 2)], rule="BE")
    assert generating_function(per_urn) == generating_function(grouped)
    assert coefficient_row(per_urn, 7) == coefficient_row(grouped, 7)
    # merged into one power: ((1 + 2x)^3 / (1 - x))
    assert sympy.simplify(generating_function(grouped) - (1 + 2 * x) ** 3 / (1 - x)) == 0


def test_generating_functions_and_rows_at_2_to_the_64_urns():
    r = 2**64
    assert generating_function(UrnModel(balls=2, urns=r, rule="BE")) == (1 - x) ** (-r)
    assert generating_function(UrnModel(balls=2, urns=r, rule="FD")) == (1 + x) ** r
    # BE: C(m + r - 1, m); FD: C(r, m); MB: r^m; MB at most one per urn: r (r-1) ... (falling powers)
    assert coefficient_row(UrnModel(balls=3, urns=r, rule="BE")) == [math.comb(m + r - 1, m) for m in range(4)]
    assert coefficient_row(UrnModel(balls=3, urns=r, rule="FD")) == [math.comb(r, m) for m in range(4)]
    assert coefficient_row(UrnModel(balls=3, urns=r, rule="MB")) == [r**m for m in range(4)]
    assert coefficient_row(UrnModel(balls=3, urns=r, rule="MB", capacity=1)) == [math.perm(r, m) for m in range(4)]
    # weighted: one urn of weight 1/2 beside 2^64 of weight 1, BE: sum_j (1/2)^j C(m - j + r - 1, m - j)
    model = UrnModel(balls=3, groups=[(1, 0, None, Fraction(1, 2)), (r, 0, None, 1)], rule="BE")
    expected = [sum(Fraction(1, 2**j) * math.comb(m - j + r - 1, m - j) for j in range(m + 1)) for m in range(4)]
    assert coefficient_row(model) == expected


@pytest.mark.parametrize("count,lower,upper", [(1, 0, 3), (5, 0, 2), (4, 0, 17), (3, 1, 4), (2, 2, None), (6, 0, None)])
def test_group_rows_match_brute_force(count, lower, upper):
    top = 9
    model = UrnModel(balls=0, groups=[(count, lower, upper)], rule="MB")
    brute_mb = [sum(reference.multinomial(k) for k in reference.box(model.with_balls(m))) for m in range(top + 1)]
    brute_be = [sum(1 for _ in reference.box(model.with_balls(m))) for m in range(top + 1)]
    assert [int(v) for v in exponential_group_row(count, lower, upper, top)] == brute_mb
    assert [int(v) for v in ordinary_group_row(count, lower, upper, top)] == brute_be
    assert [int(v) for v in exponential_group_row(count, lower, upper, top, 3)] == [3**m * v for m, v in enumerate(brute_mb)]


def test_miller_rows_for_huge_groups_agree_with_flint_powers():
    # The recurrence (used from 2^32 urns, or spans up to 16) against FLINT's
    # binary power of the scaled window (used below 2^32 urns): same numbers.
    for count in (3, 7, 2**33):
        for span in (2, 5, 16):
            miller = exponential_group_row(count, 0, span, 20)
            fac = math.factorial
            window = fmpz_poly([fac(20) // fac(k) for k in range(span + 1)])
            power = window ** 1
            for _ in range(count - 1) if count < 100 else ():
                power = power.mul_low(window, 21) // fac(20)
            if count < 100:
                assert [int(v) for v in miller] == [int(power[m]) * fac(m) // fac(20) if m <= power.degree() else 0
                                                    for m in range(21)]
            else:  # m balls in 2^33 urns, each at most span: exact for m <= span (no bound bites)
                assert [int(v) for v in miller[: span + 1]] == [count**m for m in range(span + 1)]


def test_rows_and_expansions_too_large_are_refused_before_allocating():
    with pytest.raises(TooLarge, match="upto=") as caught:
        coefficient_row(UrnModel(balls=3, urns=2, rule="MB"), 10**9)
    assert "upto" in caught.value.parameters
    with pytest.raises(TooLarge, match="upto="):
        coefficient_row(UrnModel(balls=3, urns=2, rule="BE"), 10**9)
    with pytest.raises(TooLarge, match="upto="):
        extract_coefficients("1/(1-x)", 10**8)
    with pytest.raises(TooLarge):
        extract_coefficients("1/(1 - x - x^2)", 10**6)


def test_expressions_bound_their_nesting_and_numbers():
    deep = "(" * (MAX_NESTING + 1) + "x" + ")" * (MAX_NESTING + 1)
    for text in (deep, "-" * 500 + "x", "x^" * 300 + "2"):
        with pytest.raises(InvalidParameters, match="levels deep"):
            extract_coefficients(text, 2)
    assert extract_coefficients("(" * 50 + "1 + x" + ")" * 50, 2) == [1, 1, 0]
    with pytest.raises(InvalidParameters, match="limited to 4,000 digits"):
        extract_coefficients("9" * 4001 + " * x", 2)
    assert extract_coefficients("9" * 4000 + " * x", 1) == [0, int("9" * 4000)]
    with pytest.raises(InvalidParameters, match="not a whole number"):
        extract_coefficients("1e999999999", 2)
    # a flat sum of 3000 terms k x^k is one Add node: its row is 0, 1, ..., 2999 as written
    text = " + ".join(f"{k}*x^{k}" for k in range(3000))
    values = extract_coefficients(text, 2999)
    assert values == list(range(3000))
    # a deep SymPy tree handed in directly is refused, not a RecursionError
    tree = x
    for _ in range(400):
        tree = sympy.Pow(tree + 1, 1, evaluate=False)
    with pytest.raises(InvalidParameters, match="levels deep"):
        extract_coefficients(tree, 2)


def test_expression_parser_keeps_precedence():
    # Python's precedence: ** binds tighter than a sign on its left, and is right-associative
    assert extract_coefficients("-x^2 + 3", 2) == [3, 0, -1]
    assert extract_coefficients("2^3^2", 0) == [512]
    assert extract_coefficients("2^-1 * x", 1) == [0, Fraction(1, 2)]
    assert extract_coefficients("(1 - x)(1 + x)", 2) == [1, 0, -1]
    assert extract_coefficients("1 - x - x", 1) == [1, -2]
    assert extract_coefficients("12/4/3", 0) == [1]
    # SymPy's own parse (a reference) agrees on a mixed text
    text = "3*(1 + x)^2/(1 - 2*x) - x^3 + 4/7"
    assert extract_coefficients(text, 6) == [sympy.Rational(c) if sympy.Rational(c).q != 1 else int(c)
                                             for c in sympy_row(sympy.sympify(text), 6)]


@settings(max_examples=30, deadline=None)
@given(
    st.lists(st.tuples(st.integers(1, 2), st.integers(0, 1), st.one_of(st.none(), st.integers(0, 2)),
                       st.sampled_from([Fraction(1), Fraction(2), Fraction(1, 3), Fraction(5, 2)])),
             min_size=1, max_size=3),
    st.sampled_from(["MB", "BE"]),
)
def test_weighted_rows_are_brute_force_totals(raw, rule):
    groups = [(c, a, None if b is None else a + b, w) for c, a, b, w in raw]
    model = UrnModel(balls=0, groups=groups, rule=rule)
    assert coefficient_row(model, 5) == weighted_totals(model, 5)
