"""``enumerator compare``: the JSON contract, CSV, plots, tables and errors.

Expected values come from outside the project: ``math.perm``/``math.comb``
(falling factorials and binomials: common practice), mpmath's ``exp`` and
``loggamma``, and the well-known birthday decimal (from memory).
"""

from __future__ import annotations

import csv
import io
import json
import math
from fractions import Fraction

import cli_helpers
import mpmath
import pytest
from cli_helpers import runner

from enumerator.cli import app


def run(*args):
    return cli_helpers.run("compare", *args)


def run_json(*args) -> dict:
    return cli_helpers.run_json("compare", *args)


def test_birthday_single_point_json_contract():
    payload = run_json("birthday", "--balls", 23, "--urns", 365)
    assert payload == {
        "approximation": "birthday",
        "rows": [
            {
                "balls": 23,
                "urns": 365,
                # 365!/(342! 365^23) in lowest terms (math.perm, Fraction)
                "exact": str(Fraction(math.perm(365, 23), 365**23)),
                "approx": payload["rows"][0]["approx"],
                "relative_error_approx": payload["rows"][0]["relative_error_approx"],
            }
        ],
        "order_approx": None,  # a single point has no order
    }
    row = payload["rows"][0]
    assert float(Fraction(row["exact"])) == pytest.approx(0.4927027656, abs=1e-10)  # from memory
    with mpmath.workdps(40):
        approx = mpmath.exp(mpmath.mpf(-253) / 365)  # mpmath (outside reference)
        assert abs(mpmath.mpf(row["approx"]) - approx) < mpmath.mpf(10) ** -19
        exact = mpmath.mpf(math.perm(365, 23)) / mpmath.mpf(365) ** 23
        assert row["relative_error_approx"] == pytest.approx(float(abs(approx - exact) / exact), rel=1e-14)


def test_sweep_json_rows_and_order():
    payload = run_json("stirling2", "--vary", "balls=10..1000", "--geometric", 5, "--urns", "balls")
    assert payload["approximation"] == "stirling2"
    assert [row["balls"] for row in payload["rows"]] == [10, 32, 100, 316, 1000]
    for row in payload["rows"]:
        n, r = row["balls"], row["urns"]
        assert r == n
        assert row["exact"] == str(math.comb(n + r - 1, n))  # BE count, stars and bars (common practice)
        assert set(row) == {"balls", "urns", "exact", "approx", "relative_error_approx"}
    # Stirling with two terms: error ~ n^-3 (A&S 6.1.41)
    assert payload["order_approx"] == pytest.approx(3, abs=0.1)


def test_several_names_give_one_object_with_comparisons():
    payload = run_json("stirling1,stirling2,stirling3", "--vary", "balls=100..1000", "--step", 300, "--urns", "balls//2")
    assert [c["approximation"] for c in payload["comparisons"]] == ["stirling1", "stirling2", "stirling3"]
    orders = [c["order_approx"] for c in payload["comparisons"]]
    assert orders == pytest.approx([1, 3, 5], abs=0.1)  # 2k-1 (A&S 6.1.41)


def test_tie_by_expression_and_whole_values():
    payload = run_json("birthday", "--vary", "balls=10..30", "--step", 10, "--urns", "balls*balls+1")
    assert [(row["balls"], row["urns"]) for row in payload["rows"]] == [(10, 101), (20, 401), (30, 901)]
    result = run("birthday", "--vary", "balls=10..11", "--step", 1, "--urns", "balls/2")
    assert result.exit_code == 2
    assert result.stderr.strip() == (
        "Error: 'balls/2' is 11/2 at balls=11, not a whole number; use // to round down "
        "(e.g. balls//2) or a --step that keeps it whole"
    )


def test_vary_urns():
    payload = run_json("saddle", "--vary", "urns=10..40", "--step", 10, "--balls", "urns*3/2", "--capacity", 2)
    assert [(row["balls"], row["urns"]) for row in payload["rows"]] == [(15, 10), (30, 20), (45, 30), (60, 40)]


def _bounded_count(n, r, c):
    """[x^n] (1 + x + ... + x^c)^r by repeated convolution (plain Python, a slow reference)."""
    poly = [1]
    for _ in range(r):
        nxt = [0] * min(len(poly) + c, n + 1)
        for i, a in enumerate(poly):
            for k in range(c + 1):
                if i + k <= n:
                    nxt[i + k] += a
        poly = nxt
    return poly[n] if n < len(poly) else 0


def test_csv_output():
    result = run("saddle", "--vary", "balls=40..120", "--step", 40, "--urns", "balls//2", "--capacity", 3, "--csv")
    assert result.exit_code == 0, result.output
    rows = list(csv.DictReader(io.StringIO(result.stdout)))
    assert [row["balls"] for row in rows] == ["40", "80", "120"]
    for row in rows:
        n, r = int(row["balls"]), int(row["urns"])
        assert row["capacity"] == "3" and row["minimum"] == "0" and row["at"] == ""
        assert row["exact"] == str(_bounded_count(n, r, 3))
        with mpmath.workdps(40):
            rel = abs(mpmath.mpf(row["approx"]) / int(row["exact"]) - 1)
            assert float(row["relative_error_approx"]) == pytest.approx(float(rel), rel=1e-6)
    assert rows[0]["local_order_approx"] == ""
    # Flajolet & Sedgewick 2009, Thm VIII.8: relative error O(1/r)
    assert float(rows[-1]["local_order_approx"]) == pytest.approx(1, abs=0.1)


def test_table_output():
    result = run("boltzmann", "--vary", "balls=100..400", "--step", 100, "--urns", "balls//2")
    assert result.exit_code == 0, result.output
    out = result.stdout
    assert "boltzmann: the mean fraction of urns holding exactly j balls" in out
    # (r-1)/(n+r-1) at n=100, r=50 is 49/149 (Feller vol. 1, §II.5, from memory)
    assert "49/149" in out
    assert "observed order" in out and "theory: 1 when" in out
    assert "source: Boltzmann 1877" in out


def test_list_catalogue():
    result = run("--list")
    assert result.exit_code == 0
    for name in ("stirling1", "stirling2", "stirling3", "entropy", "birthday", "empty-mean",
                 "poisson", "normal", "saddle", "boltzmann"):
        assert f"\n{name}: " in "\n" + result.stdout
    payload = json.loads(run("--list", "--json").stdout)
    assert payload["approximations"][0]["name"] == "stirling1"
    assert payload["approximations"][0]["order"] == "1"


def test_plot(tmp_path):
    path = tmp_path / "stirling.png"
    result = run("stirling1,stirling2,stirling3", "--vary", "balls=10..1000", "--geometric", 4,
                 "--urns", "balls", "--plot", path)
    assert result.exit_code == 0, result.output
    assert path.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature (PNG spec)
    assert f"plot: {path}" in result.stdout


@pytest.mark.parametrize("args,message", [
    (["nosuch", "--balls", 3, "--urns", 3], "Error: unknown approximation 'nosuch'; choose one of stirling1"),
    (["birthday", "--urns", 3], "Error: give --balls N, or --vary balls=START..STOP"),
    (["birthday", "--balls", 3], "Error: birthday needs urns"),
    (["birthday", "--balls", 3, "--urns", 3, "--capacity", 2],
     "Error: birthday does not use --capacity; leave it out (it uses balls, urns)"),
    (["birthday", "--vary", "balls=3-9", "--urns", 3], "Error: --vary must look like balls=10..1000"),
    (["birthday", "--vary", "balls=3..9", "--urns", "urns+1"], "Error: 'urns+1' mentions 'urns' at column 1"),
    (["birthday", "--vary", "balls=3..9", "--urns", "balls**2"], "Error: cannot read 'balls**2' at column 7"),
    (["birthday", "--balls", 3, "--urns", 3, "--csv", "--json"], "Error: give --csv or --json, not both"),
    (["saddle", "--balls", 6, "--urns", 3, "--capacity", 2], "Error: saddle needs minimum*urns < balls < capacity*urns"),
    (["entropy", "--balls", 6, "--pattern", "3,x"], "Error: pattern entry 2 ('x') is not a whole number"),
    ([], "Error: name an approximation"),
])
def test_bad_input_is_one_line_and_exit_2(args, message):
    result = run(*args)
    assert result.exit_code == 2
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1
    assert lines[0].startswith(message)


def test_help_has_examples():
    result = runner.invoke(app, ["compare", "--help"])
    assert result.exit_code == 0
    assert "enumerator compare birthday --balls 23 --urns 365 --json" in result.stdout


def test_titles_print_brackets_literally():
    # "[x^n]" must not be taken for rich markup and dropped
    result = run("saddle", "--balls", 100, "--urns", 50, "--capacity", 3)
    assert result.exit_code == 0, result.output
    assert "[x^n] B(x)^r" in result.stdout


def test_grand_canonical_with_factor():
    payload = run_json("grand-canonical", "--vary", "balls=10..40", "--step", 10, "--urns", "balls", "--factor", "1/2")
    assert [row["balls"] for row in payload["rows"]] == [10, 20, 30, 40]
    # canonical <n_0> for 10 bosons on 10 levels at t = 1/2, by brute force over
    # all C(19, 9) occupancy vectors, listed as stars and bars (itertools)
    import itertools

    top = bottom = Fraction(0)
    for bars in itertools.combinations(range(19), 9):
        edges = (-1, *bars, 19)
        k = [edges[i + 1] - edges[i] - 1 for i in range(10)]
        w = Fraction(1, 2) ** sum(i * v for i, v in enumerate(k))
        top += k[0] * w
        bottom += w
    assert payload["rows"][0]["exact"] == str(top / bottom)
    assert payload["order_approx"] == pytest.approx(2, abs=0.15)  # ground level of bosons
    result = run("grand-canonical", "--balls", 5, "--urns", 5, "--factor", "2")
    assert result.exit_code == 2
    assert "strictly between 0 and 1" in result.stderr


# ---------------------------------------------------------------------------
# The render module on its own (enumerator.cli.render_compare)
# ---------------------------------------------------------------------------
def _comparison(name, vary, **fixed):
    from enumerator.algorithms.asymptotics import compare, sweep

    variable, points = sweep(vary, **fixed)
    return compare(name, points, variable)


def test_payload_keys_exactly_and_undefined_errors_are_null():
    from enumerator.algorithms.asymptotics import Point, compare
    from enumerator.cli.render_compare import comparison_payload

    payload = comparison_payload(_comparison("birthday", "balls=10..30", step=10, urns=365))
    assert list(payload) == ["approximation", "rows", "order_approx"]
    assert payload["approximation"] == "birthday"
    for row in payload["rows"]:
        assert list(row) == ["balls", "urns", "exact", "approx", "relative_error_approx"]
        assert isinstance(row["balls"], int) and isinstance(row["urns"], int)
        # exact is str(Fraction): p/q in lowest terms
        assert row["exact"] == str(Fraction(math.perm(365, row["balls"]), 365 ** row["balls"]))
        assert isinstance(row["approx"], str) and isinstance(row["relative_error_approx"], float)
    assert isinstance(payload["order_approx"], float)
    # A shared urn is certain (pigeonhole): exact 0, relative error undefined.
    pigeonhole = comparison_payload(compare("birthday", [Point(balls=4, urns=3)]))
    assert pigeonhole["rows"][0]["relative_error_approx"] is None


def test_csv_text_and_plot_file(tmp_path):
    from enumerator.cli.render_compare import CSV_COLUMNS, comparisons_csv, plot_comparisons

    results = [_comparison(f"stirling{k}", "balls=10..1000", geometric=4, urns="balls") for k in (1, 2, 3)]
    lines = comparisons_csv(results).splitlines()
    assert tuple(lines[0].split(",")) == CSV_COLUMNS
    assert len(lines) == 1 + 12
    first = lines[1].split(",")
    assert first[0] == "stirling1" and first[1] == "10" and first[2] == "10"
    assert first[CSV_COLUMNS.index("exact")] == str(math.comb(19, 10))  # exact C(n+r-1, n) (common practice)
    path = tmp_path / "errors.png"
    plot_comparisons(results, str(path))
    assert path.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature (PNG spec)


def test_several_names_each_read_their_own_options():
    # saddle reads --capacity, empty-mean does not: both run, one note on stderr names what is ignored
    result = run("empty-mean,saddle", "--vary", "balls=20..60", "--step", 20, "--urns", "balls//2",
                 "--capacity", 3, "--csv")
    assert result.exit_code == 0, result.output
    assert result.stderr.strip().splitlines() == ["note: empty-mean ignores --capacity"]
    rows = list(csv.DictReader(io.StringIO(result.stdout)))
    assert [(row["approximation"], row["balls"]) for row in rows] == [
        ("empty-mean", "20"), ("empty-mean", "40"), ("empty-mean", "60"),
        ("saddle", "20"), ("saddle", "40"), ("saddle", "60")]
    for row in rows[:3]:
        n, r = int(row["balls"]), int(row["urns"])
        assert row["capacity"] == ""  # empty-mean did not read it
        # MB mean number of empty urns r (1 - 1/r)^n (Feller vol. 1, §IV.2; common practice)
        assert Fraction(row["exact"]) == r * Fraction(r - 1, r) ** n
    for row in rows[3:]:
        n, r = int(row["balls"]), int(row["urns"])
        # BE count with capacity 3: [x^n] (1 + x + x^2 + x^3)^r by inclusion-exclusion (common practice)
        count = sum((-1) ** j * math.comb(r, j) * math.comb(n - 4 * j + r - 1, r - 1) for j in range(n // 4 + 1))
        assert int(row["exact"]) == count


def test_several_names_one_lacking_a_needed_option_fails_alone():
    result = run("empty-mean,saddle", "--vary", "balls=20..40", "--step", 20, "--urns", "balls//2", "--json")
    assert result.exit_code == 2  # a named entry computed nothing
    mean, saddle = json.loads(result.stdout)["comparisons"]
    assert len(mean["rows"]) == 2 and "error" in saddle
    lines = result.stderr.strip().splitlines()
    assert lines == ["Error: saddle: saddle approximates a bounded count: give --capacity (at most that many "
                     "balls per urn)"]


def test_several_names_an_option_none_uses_is_an_error_and_the_varied_one_fails_alone():
    result = run("empty-mean,birthday", "--balls", 20, "--urns", 30, "--capacity", 3)
    assert result.exit_code == 2
    assert result.stderr.strip().splitlines() == ["Error: none of empty-mean, birthday uses --capacity; leave it out"]
    varied = run("empty-mean,saddle", "--vary", "capacity=3..4", "--step", 1, "--balls", 20, "--urns", 10, "--csv")
    assert varied.exit_code == 2  # empty-mean cannot vary the capacity; saddle still runs
    names = [line.split(",")[0] for line in varied.stdout.splitlines()[1:]]
    assert names == ["empty-mean", "saddle", "saddle"]
    assert varied.stderr.strip().splitlines()[-1].startswith("Error: empty-mean: empty-mean does not use --capacity")
