"""``compare`` streams, skips what is beyond the limits, and never aborts a sweep.

Exact sides are checked against closed forms and outside libraries, each
named beside the check: the mean number of empty urns ``r (1 - 1/r)^n``
(Feller, vol. 1, ch. IX; common practice), the birthday falling factorial
(``math.perm``), the BE occupancy of one urn as a ratio of binomials
(Feller, vol. 1, §II.5; ``math.comb``), the law of the number of empty urns
by Stirling numbers of the second kind from SymPy (Feller, vol. 1, §IV.2),
``P(no empty urn) = r!/r^r`` when ``n = r`` (a surjection of an ``r``-set
onto itself is a bijection: common practice), and mpmath for the errors.
Streaming is checked by recording what was written when each point's exact
side starts.
"""

from __future__ import annotations

import io
import json
import math
from fractions import Fraction

import mpmath
import pytest
from cli_helpers import run
from sympy.functions.combinatorial.numbers import stirling

from enumerator.algorithms.asymptotics import (
    CATALOGUE,
    Plan,
    Point,
    approximation,
    compare,
    compare_sweep,
    evaluate,
    float_or_text,
    formulas,
    plan_sweep,
)
from enumerator.algorithms.asymptotics.catalogue import EmptyMean
from enumerator.cli.render_compare import CSV_COLUMNS, comparisons_payload, stream_comparisons
from enumerator.core.errors import InvalidParameters, TooLarge
from enumerator.core.limits import limited

pytestmark = pytest.mark.usefixtures("no_cache")  # pure computations: no result store (conftest.py)


# ---------------------------------------------------------------------------
# Exact sides by the fast routes, against outside references
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("n,r", [(0, 1), (1, 1), (5, 1), (0, 7), (3, 2), (23, 365), (1000, 500), (4000, 3)])
def test_empty_mean_is_feller_closed_form(n, r):
    # E[empty] = r (1 - 1/r)^n (Feller vol. 1, ch. IX; common practice), in Python Fractions
    assert compare("empty-mean", [Point(balls=n, urns=r)]).rows[0].exact == r * (1 - Fraction(1, r)) ** n


def test_empty_mean_at_a_million_balls_matches_mpmath():
    n, r = 10**6, 5 * 10**5
    row = compare("empty-mean", [Point(balls=n, urns=r)]).rows[0]
    with mpmath.workdps(40):
        # r exp(n log1p(-1/r)) (Feller vol. 1, ch. IX) by mpmath, 40 digits
        reference = r * mpmath.exp(n * mpmath.log1p(-mpmath.mpf(1) / r))
        assert abs(mpmath.mpf(row.exact.numerator) / row.exact.denominator / reference - 1) < mpmath.mpf(10) ** -30
        # approx r e^{-n/r}: relative error ~ n/(2 r^2) = 2e-6 (Feller, the expansion of log(1 - 1/r))
        assert float(row.relative_error_approx) == pytest.approx(2.0e-6, rel=1e-3)


@pytest.mark.parametrize("n,r", [(0, 5), (1, 1), (23, 365), (40, 40), (41, 40), (300, 90000), (10, 2**64)])
def test_birthday_exact_side_is_the_falling_factorial(n, r):
    # r (r-1) ... (r-n+1) / r^n, math.perm (common practice); 0 past the pigeonhole
    assert compare("birthday", [Point(balls=n, urns=r)]).rows[0].exact == Fraction(math.perm(r, n), r**n)


@pytest.mark.parametrize("n,r,j", [(0, 1, 0), (5, 1, 5), (5, 2, 0), (5, 2, 5), (12, 7, 3), (100, 50, 2), (7, 3, 9)])
def test_boltzmann_exact_side_is_the_binomial_ratio(n, r, j):
    # mean fraction of urns holding j under BE: C(n-j+r-2, r-2) / C(n+r-1, r-1) (Feller vol. 1, §II.5)
    if r == 1:
        expected = Fraction(1 if j == n else 0)
    elif j > n:
        expected = Fraction(0)
    else:
        expected = Fraction(math.comb(n - j + r - 2, r - 2), math.comb(n + r - 1, r - 1))
    assert compare("boltzmann", [Point(balls=n, urns=r, at=j)]).rows[0].exact == expected


def _empty_law_sympy(n, r, j):
    # P(E <= j) = sum_{i <= j} C(r, i) (r-i)! S(n, r-i) / r^n, S from SymPy (Feller vol. 1, §IV.2)
    return Fraction(sum(math.comb(r, i) * math.factorial(r - i) * int(stirling(n, r - i))
                        for i in range(0, min(j, r) + 1)), r**n)


@pytest.mark.parametrize("route", ["stirling", "exclusion"])
@pytest.mark.parametrize("n,r", [(0, 3), (1, 4), (9, 4), (30, 12), (60, 25)])
def test_both_routes_of_the_empty_urn_law_agree_with_sympy(monkeypatch, route, n, r):
    pick = (0.0, 1.0) if route == "stirling" else (1.0, 0.0)
    monkeypatch.setattr(formulas, "_empty_routes", lambda n, r, j: (64.0, *pick))
    for j in range(0, r + 2):
        assert formulas.empty_urns_at_most(n, r, j) == _empty_law_sympy(n, r, j), (n, r, j)


def test_empty_urn_law_is_refused_before_it_starts():
    with limited(seconds=0.01):
        with pytest.raises(TooLarge, match="the exact law of empty urns for 100000 balls in 50000 urns"):
            formulas.empty_urns_at_most(10**5, 5 * 10**4, 6766)


# ---------------------------------------------------------------------------
# Numbers beyond the float range are text, never null or inf
# ---------------------------------------------------------------------------
def test_float_or_text_edges():
    assert float_or_text(None) is None
    assert float_or_text(mpmath.mpf(0)) == 0.0
    assert float_or_text(mpmath.mpf("1e-300")) == pytest.approx(1e-300)
    assert float_or_text(1.5) == 1.5
    # below the smallest normal double (2.2250738585072014e-308, IEEE 754) and above the largest
    small, big = float_or_text(mpmath.mpf("1e-320")), float_or_text(mpmath.mpf("3e400"))
    assert isinstance(small, str) and isinstance(big, str)
    assert mpmath.almosteq(mpmath.mpf(small), mpmath.mpf("1e-320"), 1e-12)
    assert mpmath.almosteq(mpmath.mpf(big), mpmath.mpf("3e400"), 1e-12)


def test_poisson_error_beyond_float_range_is_mpmath_text():
    n = r = 1000
    payload = json.loads(run("compare", "poisson", "--balls", n, "--urns", r, "--json").stdout)
    row = payload["rows"][0]
    # every urn occupied with n = r: a bijection, P = r!/r^r (common practice)
    assert row["exact"] == str(Fraction(math.factorial(r), r**r))
    with mpmath.workdps(60):
        lam = r * mpmath.exp(-1)  # Poisson mean r e^{-n/r} (von Mises 1939)
        exact = mpmath.factorial(r) / mpmath.mpf(r) ** r
        relative = abs(mpmath.exp(-lam) - exact) / exact  # mpmath, about 4.24e+272
        assert isinstance(row["relative_error_approx"], float)  # 4e272 is still a double
        assert row["relative_error_approx"] == pytest.approx(float(relative), rel=1e-12)
    big = json.loads(run("compare", "poisson", "--balls", 3000, "--urns", 3000, "--json").stdout)["rows"][0]
    with mpmath.workdps(60):
        exact = mpmath.factorial(3000) / mpmath.mpf(3000) ** 3000
        relative = abs(mpmath.exp(-3000 * mpmath.exp(-1)) - exact) / exact  # far above 1e308
        text = big["relative_error_approx"]
        assert isinstance(text, str) and mpmath.almosteq(mpmath.mpf(text), relative, 1e-14)


def test_plot_of_errors_beyond_float_range_is_drawn(tmp_path):
    # used to be an internal OverflowError while the table wrote null
    path = tmp_path / "p.png"
    result = run("compare", "poisson", "--vary", "balls=10..3000", "--geometric", 4, "--urns", "balls",
                 "--plot", path)
    assert result.exit_code == 0, result.output
    assert path.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature (PNG spec)
    assert "e+" in result.stdout and "None" not in result.stdout


def _nulls_have_reasons(comparison):
    assert comparison.get("error") or "rows" in comparison
    for row in comparison.get("rows", []):
        for key, value in row.items():
            if value is None:
                assert row.get("note") or row.get("skipped"), (key, row)
        assert not (set(row) >= {"skipped", "exact"})


def test_no_null_without_a_reason_across_the_catalogue():
    result = run("compare", "all", "--vary", "balls=2..400", "--geometric", 4, "--urns", "balls//2",
                 "--capacity", 3, "--max-seconds", 5, "--json")
    assert result.exit_code == 0, result.output
    payload = json.loads(result.stdout)
    assert [c["approximation"] for c in payload["comparisons"]] == list(CATALOGUE)
    for comparison in payload["comparisons"]:
        _nulls_have_reasons(comparison)
    birthday = next(c for c in payload["comparisons"] if c["approximation"] == "birthday")
    # 400 balls in 200 urns: a shared urn is certain (pigeonhole), relative error undefined
    last = birthday["rows"][-1]
    assert last["exact"] == "0" and last["relative_error_approx"] is None and "exact value is 0" in last["note"]


# ---------------------------------------------------------------------------
# Streaming
# ---------------------------------------------------------------------------
class _Spy(EmptyMean):
    """empty-mean that records how many rows were already written when each exact side starts."""

    def __init__(self, out, marker):
        self.out, self.marker, self.seen = out, marker, []

    def exact(self, point):
        self.seen.append(self.out.getvalue().count(self.marker))
        return super().exact(point)


@pytest.mark.parametrize("form,marker", [("json", '"balls"'), ("csv", "empty-mean,"), ("table", "\n")])
def test_each_row_is_written_before_the_next_point_is_computed(form, marker):
    out = io.StringIO()
    spy = _Spy(out, marker)
    points = tuple(spy.check(Point(balls=n, urns=10)) for n in (10, 20, 40, 80))
    stream_comparisons([Plan(spy, points, "balls")], form, out=out)
    if form == "table":  # title, header and rule come first, then one line per row
        assert [b - a for a, b in zip(spy.seen, spy.seen[1:])] == [1, 1, 1]
    else:
        assert spy.seen == [0, 1, 2, 3]


@pytest.mark.parametrize("names,several", [("birthday", False), ("birthday,empty-mean", True)])
def test_streamed_json_is_exactly_the_payload(names, several):
    plans = plan_sweep(names, "balls=10..40", step=10, urns=365)
    out = io.StringIO()
    comparisons = stream_comparisons(plans, "json", out=out)
    text = out.getvalue()
    assert text.endswith("\n") and text.count("\n") == 1
    assert text == json.dumps(comparisons_payload(comparisons, several=several), ensure_ascii=False) + "\n"
    assert json.loads(text) == comparisons_payload(comparisons, several=several)


# ---------------------------------------------------------------------------
# Points beyond the limits are skipped rows; the sweep goes on
# ---------------------------------------------------------------------------
def test_a_point_beyond_the_limit_is_a_skipped_row_and_the_sweep_goes_on():
    entry = approximation("empty-mean")
    points = [entry.check(Point(balls=n, urns=n // 2)) for n in (100, 10**5, 200)]
    # the 10^5 point holds numbers of about 1.5 Mbit (n log2 r): refused under 100 kB
    with limited(memory=100_000):
        rows = [evaluate(entry, p) for p in points]
    assert [row.error is None for row in rows] == [True, False, True]
    assert isinstance(rows[1].error, TooLarge) and rows[1].exact is None
    assert "would need about" in rows[1].skipped and "raise max_memory=" in rows[1].skipped
    # Feller's closed form on both sides of the skipped point (common practice)
    assert rows[2].exact == 100 * (1 - Fraction(1, 100)) ** 200
    with limited(memory=100_000):
        result = compare(entry, points)
    assert result.order_approx == pytest.approx(1, abs=0.1)  # fitted on the computed rows only
    assert result.local_orders()[1] is None


def test_skipped_rows_in_json_csv_and_table_and_exit_status():
    args = ["compare", "empty-mean", "--vary", "balls=100..100000", "--geometric", 3, "--urns", "balls//2",
            "--max-memory", "100K"]
    result = run(*args, "--json")
    assert result.exit_code == 0, result.output  # other points were computed
    rows = json.loads(result.stdout)["rows"]
    assert [row["balls"] for row in rows] == [100, 3162, 100000]
    assert set(rows[-1]) == {"balls", "urns", "skipped"}
    assert "above the limit of" in rows[-1]["skipped"] and "--max-memory" in rows[-1]["skipped"]
    assert rows[0]["exact"] == str(50 * (1 - Fraction(1, 50)) ** 100)  # Feller's closed form
    csv_rows = run(*args, "--csv").stdout.splitlines()
    assert csv_rows[0] == ",".join(CSV_COLUMNS) and CSV_COLUMNS[-1] == "note"
    assert csv_rows[-1].startswith("empty-mean,100000,50000,") and "--max-memory" in csv_rows[-1]
    table = run(*args).stdout
    assert "skipped: the exact side of empty-mean at balls=100000, urns=50000 would need about" in table
    # a call whose every point is skipped computes nothing: exit 2, valid JSON still printed
    alone = run("compare", "empty-mean", "--balls", 100000, "--urns", 50000, "--max-memory", "100K", "--json")
    assert alone.exit_code == 2
    assert json.loads(alone.stdout)["rows"][0]["skipped"]
    lines = alone.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("Error: empty-mean: every point was skipped")


# ---------------------------------------------------------------------------
# Entries fail on their own
# ---------------------------------------------------------------------------
def test_a_failing_entry_does_not_stop_the_others():
    result = run("compare", "saddle,empty-mean", "--vary", "balls=10..40", "--step", 10, "--urns", "balls//2",
                 "--json")
    assert result.exit_code == 2
    payload = json.loads(result.stdout)
    saddle, mean = payload["comparisons"]
    assert saddle == {"approximation": "saddle",
                      "error": "saddle approximates a bounded count: give --capacity (at most that many "
                               "balls per urn)"}
    # r (1 - 1/r)^n (Feller vol. 1, ch. IX)
    assert [row["exact"] for row in mean["rows"]] == [
        str(r * (1 - Fraction(1, r)) ** n) for n, r in ((10, 5), (20, 10), (30, 15), (40, 20))]
    assert result.stderr.strip().splitlines() == [
        "Error: saddle: saddle approximates a bounded count: give --capacity (at most that many balls per urn)"]
    table = run("compare", "saddle,empty-mean", "--balls", 10, "--urns", 5)
    assert table.exit_code == 2
    assert "not compared: saddle approximates a bounded count" in table.stdout
    assert "empty-mean: the mean number of empty urns" in table.stdout


def test_compare_all_runs_every_entry_in_catalogue_order():
    result = run("compare", "all", "--balls", 12, "--urns", 6, "--csv")
    assert result.exit_code == 0, result.output  # all: exit 0 when any entry ran
    names = [line.split(",")[0] for line in result.stdout.splitlines()[1:]]
    assert names == list(CATALOGUE)
    saddle = result.stdout.splitlines()[1 + list(CATALOGUE).index("saddle")]
    assert "not compared: saddle approximates a bounded count" in saddle


def test_library_sweep_fails_per_entry_and_raises_only_when_none_runs():
    results = compare_sweep("saddle,boltzmann", "balls=10..20", step=10, urns="balls//2")
    assert isinstance(results[0].error, InvalidParameters) and results[0].rows == ()
    assert results[1].error is None and len(results[1].rows) == 2
    with pytest.raises(InvalidParameters, match="give capacity="):
        compare_sweep("saddle", "balls=10..20", step=10, urns="balls//2")
    with pytest.raises(InvalidParameters, match="all already names every approximation"):
        plan_sweep("all,birthday", balls=3, urns=3)
    # with all, an entry that does not use the varied parameter fails on its own
    plans = plan_sweep("all", "capacity=2..3", step=1, balls=6, urns=3)
    assert [p.approximation.name for p in plans if p.error is None] == ["saddle"]


def test_points_outside_the_domain_are_skipped_rows_when_others_are_valid():
    # saddle needs 0 < balls < capacity*urns = 30: the points 30 and 40 are outside
    result = run("compare", "saddle", "--vary", "balls=10..40", "--step", 10, "--urns", 10, "--capacity", 3,
                 "--json")
    assert result.exit_code == 0, result.output
    rows = json.loads(result.stdout)["rows"]
    assert [("skipped" in row) for row in rows] == [False, False, True, True]
    assert rows[2]["skipped"].startswith("saddle needs minimum*urns < balls < capacity*urns")
    # [x^10] (1 + x + x^2 + x^3)^10 by expanding with SymPy (outside reference)
    from sympy import Poly, symbols

    x = symbols("x")
    assert rows[0]["exact"] == str(Poly((1 + x + x**2 + x**3) ** 10, x).coeff_monomial(x**10))


def test_several_failures_are_one_error_line_after_the_output():
    result = run("compare", "empty-mean,saddle,boltzmann", "--balls", 100000, "--urns", 50000,
                 "--max-memory", "100K", "--json")
    assert result.exit_code == 2
    mean, saddle, boltzmann = json.loads(result.stdout)["comparisons"]
    assert "skipped" in mean["rows"][0] and "error" in saddle
    # (r-1)/(n+r-1): the BE fraction of empty urns (Feller vol. 1, §II.5)
    assert boltzmann["rows"][0]["exact"] == str(Fraction(49999, 149999))
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1
    assert lines[0].startswith("Error: empty-mean: every point was skipped (the exact side of empty-mean")
    assert "; saddle: saddle approximates a bounded count: give --capacity" in lines[0]


def test_a_point_whose_exact_text_is_beyond_the_time_limit_is_skipped():
    # the mean of 10^7 keys in 5*10^6 buckets is (r-1)^n / r^(n-1) (Feller vol. 1, ch. IX), two numbers of
    # about 67 million digits: computing them is quick, writing them is not, and the point is skipped at once
    result = run("compare", "empty-mean", "--balls", 10**7, "--urns", 5 * 10**6, "--max-seconds", "5", "--json")
    row = json.loads(result.stdout)["rows"][0]
    assert "skipped" in row and "above the limit of 5 s" in row["skipped"]
