"""The command line: exit codes, exact JSON values, one-line errors, big output.

Every expected value is computed here by a route outside the project:
``math.comb``/``math.factorial``/``pow`` for the closed forms (stars and bars,
``r^n``: common practice), SymPy's polynomial coefficients, Stirling numbers
and partition counts, SciPy's multinomial pmf, and brute-force enumeration with
``itertools.product`` on small cases.
"""

from __future__ import annotations

import csv
import doctest
import io
import itertools
import json
import math
import re
import shlex
import subprocess
import sys
from fractions import Fraction
from pathlib import Path

import pytest
import sympy
from cli_helpers import one_line_error, run, run_json, runner
from hypothesis import given, settings
from hypothesis import strategies as st

from enumerator.cli import app

DIGITS = re.compile(r"\d+")


@pytest.fixture(autouse=True, scope="module")
def _private_store(tmp_path_factory):
    """Keep this module's results out of the checkout's store/ (subprocesses inherit it)."""
    with pytest.MonkeyPatch.context() as patch:
        patch.setenv("ENUMERATOR_STORE", str(tmp_path_factory.mktemp("store") / "cli.sqlite"))
        patch.delenv("ENUMERATOR_NO_CACHE", raising=False)
        yield


def brute(n: int, bounds, rule: str):
    """All admissible occupancy vectors, sorted (a slow reference lister)."""
    ranges = [range(a, (n if b is None else min(b, n)) + 1) for a, b in bounds]
    found = [k for k in itertools.product(*ranges) if sum(k) == n]
    if rule == "FD":
        found = [k for k in found if max(k, default=0) <= 1]
    return sorted(found)


def mb_weight(k) -> int:
    """n!/(k1!...kr!) by factorials (common practice)."""
    out = math.factorial(sum(k))
    for v in k:
        out //= math.factorial(v)
    return out


# ---------------------------------------------------------------- count


@pytest.mark.parametrize("n, r", [(0, 1), (3, 2), (7, 4), (12, 9), (40, 17)])
def test_count_json_matches_closed_forms(n, r):
    # Stars and bars C(n+r-1, n), r^n and C(r, n): common practice, via math.comb / pow.
    mb = run_json("count", "-n", n, "-r", r, "--rule", "MB")
    assert mb == {
        "rule": "MB",
        "balls": str(n),
        "urns": str(r),
        "configurations": str(math.comb(n + r - 1, n)),
        "microstates": str(r**n),
    }
    be = run_json("count", "-n", n, "-r", r, "--rule", "be")
    assert be["rule"] == "BE"
    assert be["configurations"] == be["microstates"] == str(math.comb(n + r - 1, n))
    fd = run_json("count", "--balls", n, "--urns", r, "--rule", "Fd")
    assert fd["configurations"] == fd["microstates"] == str(math.comb(r, n))


def test_count_json_fields_are_decimal_strings():
    payload = run_json("count", "-n", 25, "-r", 6, "--capacity", 5)
    assert set(payload) == {"rule", "balls", "urns", "configurations", "microstates"}
    for key in ("balls", "urns", "configurations", "microstates"):
        assert isinstance(payload[key], str) and DIGITS.fullmatch(payload[key]), key


@pytest.mark.parametrize("n, r, c", [(10, 4, 3), (17, 5, 4), (30, 8, 6), (9, 3, 2)])
def test_count_with_capacity_matches_sympy_coefficients(n, r, c):
    # SymPy: [x^n] (1 + x + ... + x^c)^r for BE, n! [x^n] (sum_{k<=c} x^k/k!)^r for MB.
    x = sympy.symbols("x")
    be_poly = sympy.Poly(sum(x**j for j in range(c + 1)) ** r, x)
    mb_poly = sympy.Poly(sum(x**j / sympy.factorial(j) for j in range(c + 1)) ** r, x)
    be = run_json("count", "-n", n, "-r", r, "--capacity", c, "--rule", "BE")
    assert be["configurations"] == str(be_poly.coeff_monomial(x**n))
    mb = run_json("count", "-n", n, "-r", r, "--capacity", c)
    assert mb["configurations"] == be["configurations"]
    assert mb["microstates"] == str(sympy.factorial(n) * mb_poly.coeff_monomial(x**n))


def test_count_with_minimum_and_per_urn_bounds_match_brute_force():
    # Brute force over itertools.product; MB weights by factorials.
    bounds = [(0, 2), (1, None), (0, 3), (2, 2)]
    text = "0:2,1:,0:3,2:2"
    for n in range(0, 11):
        found = brute(n, bounds, "BE")
        mb = run_json("count", "-n", n, "--bounds", text)
        assert mb["urns"] == "4"
        assert mb["configurations"] == str(len(found))
        assert mb["microstates"] == str(sum(mb_weight(k) for k in found))
    found = brute(9, [(2, None)] * 3, "BE")
    payload = run_json("count", "-n", 9, "-r", 3, "--minimum", 2, "--rule", "BE")
    assert payload["configurations"] == str(len(found))


def test_impossible_model_answers_zero_not_error():
    # Well formed but no vector fits: an answer of 0 (DESIGN.md), exit 0.
    payload = run_json("count", "-n", 5, "-r", 3, "--rule", "FD")
    assert payload["configurations"] == payload["microstates"] == "0"
    payload = run_json("count", "-n", 2, "-r", 3, "--minimum", 1)
    assert payload["configurations"] == "0"


def test_count_human_output_is_a_table_with_the_values():
    result = run("count", "-n", 10, "-r", 3, "--rule", "MB")
    assert result.exit_code == 0
    assert "configurations" in result.stdout and "microstates" in result.stdout
    assert str(math.comb(12, 10)) in result.stdout  # stars and bars: common practice
    assert str(3**10) in result.stdout


# ---------------------------------------------------------------- big counts


def test_count_over_100000_digits_prints_in_full():
    # MB r^n against Python's pow, BE against math.comb: independent routes.
    sys.set_int_max_str_digits(0)
    n, r = 118_400, 7
    mb = run_json("count", "-n", n, "-r", r)
    expected = str(pow(r, n))
    assert len(expected) > 100_000
    assert mb["microstates"] == expected
    n = 166_200
    be = run_json("count", "-n", n, "-r", n + 1, "--rule", "BE")
    expected = str(math.comb(2 * n, n))
    assert len(expected) > 100_000
    assert be["configurations"] == expected
    assert be["configurations"][:12] == expected[:12] and be["configurations"][-12:] == expected[-12:]


def test_big_count_human_output_keeps_every_digit_on_one_line():
    sys.set_int_max_str_digits(0)
    n, r = 2_001, 10
    result = run("count", "-n", n, "-r", r)
    assert result.exit_code == 0
    expected = str(pow(r, n))  # 10^2001: 2,002 digits, r^n (common practice)
    lines = [line for line in result.stdout.splitlines() if line.startswith("microstates")]
    assert lines == [f"microstates = {expected}"]


def test_a_count_too_long_to_read_keeps_its_rounded_form_and_digit_count_in_tables():
    from enumerator.cli.render import SPILL_DIGITS

    n = SPILL_DIGITS  # 10^n has n + 1 digits, one more than a table writes out
    result = run("count", "-n", n, "-r", 10, "--no-cache")
    assert result.exit_code == 0
    lines = [line for line in result.stdout.splitlines() if line.startswith("microstates")]
    assert lines == [f"microstates: {n + 1:,} digits in all, too many to write here; --json prints the value exactly"]
    assert f"1.0000e+{n} ({n + 1:,} digits)" in result.stdout


# ---------------------------------------------------------------- prob


@pytest.mark.parametrize("config", ["2,0,1", "0,0,3", "1,1,1"])
def test_prob_mb_matches_scipy_multinomial(config):
    from scipy.stats import multinomial

    k = [int(v) for v in config.split(",")]
    payload = run_json("prob", "-n", 3, "-r", 3, "--config", config)
    # Exact: n!/(k1!...kr!) / r^n (common practice); float: scipy.stats.multinomial.pmf.
    assert payload["probability"] == str(Fraction(mb_weight(k), 3**3))
    assert payload["approx"] == pytest.approx(multinomial.pmf(k, n=3, p=[1 / 3] * 3), rel=1e-12)
    assert isinstance(payload["approx"], float)


def test_prob_be_fd_are_uniform_over_vectors():
    # BE: 1/C(n+r-1, n); FD: 1/C(r, n) (common practice).
    be = run_json("prob", "-n", 4, "-r", 5, "--config", "2,0,1,1,0", "--rule", "BE")
    assert be["probability"] == str(Fraction(1, math.comb(8, 4)))
    fd = run_json("prob", "-n", 3, "-r", 6, "--config", "1,0,1,0,0,1", "--rule", "FD")
    assert fd["probability"] == str(Fraction(1, math.comb(6, 3)))
    assert fd["approx"] == pytest.approx(1 / math.comb(6, 3))


def test_prob_of_certain_vector_is_written_without_denominator():
    # One admissible vector only: probability 1, which str(Fraction) writes "1".
    payload = run_json("prob", "-n", 4, "-r", 1, "--config", "4")
    assert payload["probability"] == "1"
    assert payload["approx"] == 1.0


def test_prob_breaking_a_bound_is_zero():
    payload = run_json("prob", "-n", 3, "-r", 3, "--capacity", 2, "--config", "3,0,0")
    assert payload["probability"] == "0"
    assert payload["approx"] == 0.0
    payload = run_json("prob", "-n", 2, "-r", 3, "--rule", "FD", "--config", "2,0,0")
    assert payload["probability"] == "0"


@settings(max_examples=25, deadline=None)
@given(
    n=st.integers(0, 6),
    r=st.integers(1, 4),
    rule=st.sampled_from(["MB", "BE"]),
    data=st.data(),
)
def test_prob_matches_brute_force_law(n, r, rule, data):
    # Brute force: MB weight over r^n, BE one over the number of vectors.
    vectors = brute(n, [(0, None)] * r, rule)
    k = data.draw(st.sampled_from(vectors))
    payload = run_json("prob", "-n", n, "-r", r, "--rule", rule, "--config", ",".join(map(str, k)))
    if rule == "MB":
        expected = Fraction(mb_weight(k), r**n)
    else:
        expected = Fraction(1, len(vectors))
    assert payload["probability"] == str(expected)


# ---------------------------------------------------------------- list


def test_list_csv_is_the_sorted_brute_force_listing():
    result = run("list", "-n", 4, "-r", 3, "--rule", "BE")
    assert result.exit_code == 0
    rows = list(csv.reader(io.StringIO(result.stdout)))
    assert rows[0] == ["k1", "k2", "k3"]
    assert [tuple(map(int, row)) for row in rows[1:]] == brute(4, [(0, None)] * 3, "BE")


def test_list_jsonl_with_bounds_and_fd():
    result = run("list", "-n", 2, "-r", 4, "--rule", "FD", "--format", "jsonl")
    assert result.exit_code == 0
    got = [tuple(json.loads(line)) for line in result.stdout.splitlines()]
    assert got == brute(2, [(0, 1)] * 4, "FD")
    result = run("list", "-n", 5, "--bounds", "0:2,1:,0:3", "--format", "JSONL")
    got = [tuple(json.loads(line)) for line in result.stdout.splitlines()]
    assert got == brute(5, [(0, 2), (1, None), (0, 3)], "BE")


def test_list_rank_range_and_limit():
    full = brute(6, [(0, None)] * 4, "BE")
    assert len(full) == math.comb(9, 3)  # stars and bars: common practice

    def listed(*extra):
        result = run("list", "-n", 6, "-r", 4, "--format", "jsonl", *extra)
        assert result.exit_code == 0, result.output
        return [tuple(json.loads(line)) for line in result.stdout.splitlines()]

    assert listed("--start", 10, "--stop", 20) == full[10:20]
    assert listed("--start", 80) == full[80:]
    assert listed("--limit", 7) == full[:7]
    assert listed("--start", 5, "--limit", 3) == full[5:8]
    assert listed("--start", 5, "--stop", 7, "--limit", 10) == full[5:7]
    assert listed("--limit", 0) == []
    shards = listed("--stop", 40) + listed("--start", 40, "--stop", 63) + listed("--start", 63)
    assert shards == full


def test_list_json_is_one_object_holding_the_vectors():
    payload = run_json("list", "-n", 3, "-r", 3, "--start", 2, "--limit", 4)
    full = brute(3, [(0, None)] * 3, "BE")
    assert payload["rule"] == "MB" and payload["balls"] == "3" and payload["urns"] == "3"
    assert payload["start"] == "2"
    assert [tuple(k) for k in payload["configurations"]] == full[2:6]
    assert payload["listed"] == "4"


def test_list_of_impossible_model_is_header_only():
    result = run("list", "-n", 4, "-r", 2, "--rule", "FD")
    assert result.exit_code == 0
    assert result.stdout.splitlines() == ["k1,k2"]


def test_list_many_rows_in_blocks():
    # More rows than one output block; count by stars and bars (common practice).
    result = run("list", "-n", 12, "-r", 7)
    assert result.exit_code == 0
    lines = result.stdout.splitlines()
    assert len(lines) == 1 + math.comb(18, 6)
    assert lines[1] == "0,0,0,0,0,0,12" and lines[-1] == "12,0,0,0,0,0,0"


@settings(max_examples=40, deadline=None)
@given(
    rows=st.lists(st.lists(st.integers(0, 10**6), min_size=3, max_size=3), min_size=1, max_size=30),
    dtype=st.sampled_from(["uint8", "uint16", "int32", "int64"]),
)
def test_format_rows_equals_plain_str_join(rows, dtype):
    # The vectorised writer against the obvious str/join formatting.
    import numpy as np

    from enumerator.cli import format_rows

    limit = np.iinfo(dtype).max
    rows = [[min(v, limit) for v in row] for row in rows]
    block = np.array(rows, dtype=dtype)
    assert format_rows(block) == "".join(",".join(map(str, row)) + "\n" for row in rows)
    assert format_rows(block, "[", "]\n") == "".join(json.dumps(row, separators=(",", ":")) + "\n" for row in rows)


def test_list_stops_quietly_when_the_reader_goes_away():
    # ``enumerator list ... | head -n 2``: exit 0, nothing on stderr.  C(23, 11)
    # = 1,352,078 rows (stars and bars): far more than a pipe buffer holds, and
    # within the time limit (a listing planned beyond it is refused up front).
    proc = subprocess.Popen(
        [sys.executable, "-m", "enumerator", "list", "-n", "12", "-r", "12"],
        stdout=subprocess.PIPE, stderr=subprocess.PIPE,
    )
    assert proc.stdout.readline().strip() == b",".join(b"k%d" % i for i in range(1, 13))
    proc.stdout.readline()
    proc.stdout.close()
    assert proc.wait(timeout=120) == 0
    assert proc.stderr.read() == b""


# ---------------------------------------------------------------- ways


def twelvefold_reference(n: int, r: int) -> dict:
    """The twelvefold way from SymPy's numbers (Stanley, EC1, Table 1.1, layout from memory)."""
    from sympy.functions.combinatorial.numbers import nT, stirling

    def s2(a, b):
        return int(stirling(a, b, kind=2))

    def parts(total, most):  # partitions of total into at most `most` parts
        if total == 0:
            return 1
        return sum(int(nT(total, j)) for j in range(1, min(most, total) + 1))

    fits = int(n <= r)
    return {
        ("labelled", "labelled", "any"): r**n,
        ("labelled", "labelled", "at_most_one"): math.perm(r, n),
        ("labelled", "labelled", "at_least_one"): math.factorial(r) * s2(n, r),
        ("unlabelled", "labelled", "any"): math.comb(n + r - 1, n),
        ("unlabelled", "labelled", "at_most_one"): math.comb(r, n),
        ("unlabelled", "labelled", "at_least_one"): math.comb(n - 1, r - 1) if n else int(r == 0),
        ("labelled", "unlabelled", "any"): sum(s2(n, j) for j in range(0, r + 1)),
        ("labelled", "unlabelled", "at_most_one"): fits,
        ("labelled", "unlabelled", "at_least_one"): s2(n, r),
        ("unlabelled", "unlabelled", "any"): parts(n, r),
        ("unlabelled", "unlabelled", "at_most_one"): fits,
        ("unlabelled", "unlabelled", "at_least_one"): parts(n - r, r) if n >= r else 0,
    }


@pytest.mark.parametrize("n, r", [(0, 1), (1, 1), (5, 3), (3, 5), (8, 4), (13, 6)])
def test_ways_json_matches_sympy(n, r):
    payload = run_json("ways", "-n", n, "-r", r)
    assert payload["balls"] == str(n) and payload["urns"] == str(r)
    ways = payload["ways"]
    assert len(ways) == 12
    keys = {(w["balls"], w["urns"], w["per_urn"]) for w in ways}
    assert len(keys) == 12
    reference = twelvefold_reference(n, r)
    for way in ways:
        assert set(way) == {"balls", "urns", "per_urn", "count"}
        assert DIGITS.fullmatch(way["count"])
        assert int(way["count"]) == reference[(way["balls"], way["urns"], way["per_urn"])], way


def test_ways_human_table():
    result = run("ways", "-n", 6, "-r", 3)
    assert result.exit_code == 0
    assert "unlabelled balls, unlabelled urns" in result.stdout
    assert str(3**6) in result.stdout and "at least one" in result.stdout


# ---------------------------------------------------------------- malformed input

MALFORMED = [
    # (arguments, a fragment the message must contain)
    (["count", "-n", "-3", "-r", "2"], "balls"),
    (["count", "-n", "2.5", "-r", "2"], "--balls"),
    (["count", "-n", "three", "-r", "2"], "--balls"),
    (["count", "-n", "3", "-r", "-1"], "urns"),
    (["count", "-n", "3", "-r", "0"], "urns"),
    (["count", "-n", "3", "-r", "1.5"], "--urns"),
    (["count", "-n", "3", "-r", "2", "--capacity", "-1"], "capacity"),
    (["count", "-n", "3", "-r", "2", "--capacity", "1.5"], "--capacity"),
    (["count", "-n", "3", "-r", "2", "--minimum", "-2"], "minimum"),
    (["count", "-n", "3", "-r", "2", "--minimum", "one"], "--minimum"),
    (["count", "-n", "3", "-r", "2", "--minimum", "3", "--capacity", "2"], "minimum"),
    (["count", "-n", "3", "--bounds", "3:1,0:"], "lower"),
    (["count", "-n", "3", "--bounds", "0:2,x:"], "bounds"),
    (["count", "-n", "3", "--bounds", "0:1.5,0:"], "bounds"),
    (["count", "-n", "3", "--bounds", "-1:2,0:"], "lower bound"),
    (["count", "-n", "3", "-r", "3", "--bounds", "0:2,0:"], "urns"),
    (["count", "-n", "3", "-r", "2", "--bounds", "0:2,0:", "--capacity", "2"], "bounds"),
    (["count", "-n", "2", "-r", "4", "--rule", "FD", "--capacity", "2"], "FD"),
    (["count", "-n", "2", "--rule", "FD", "--bounds", "0:1,0:3"], "FD"),
    (["count", "-n", "3", "-r", "2", "--rule", "XY"], "rule"),
    (["count", "-r", "2"], "--balls"),
    (["count", "-n", "3"], "urns"),
    (["prob", "-n", "3", "-r", "3", "--config", "2,1"], "entries"),
    (["prob", "-n", "3", "-r", "3", "--config", "2,1,1,0"], "entries"),
    (["prob", "-n", "3", "-r", "3", "--config", "2,0,0"], "sums"),
    (["prob", "-n", "3", "-r", "3", "--config", "4,-1,0"], "negative"),
    (["prob", "-n", "3", "-r", "3", "--config", "2,x,1"], "whole number"),
    (["prob", "-n", "3", "-r", "3", "--config", "1.0,1,1"], "whole number"),
    (["prob", "-n", "3", "-r", "3", "--config", ""], "whole number"),
    (["prob", "-n", "3", "-r", "3"], "--config"),
    (["list", "-n", "3", "-r", "3", "--start", "-1"], "--start"),
    (["list", "-n", "3", "-r", "3", "--limit", "-5"], "--limit"),
    (["list", "-n", "3", "-r", "3", "--format", "xml"], "--format"),
    (["ways", "-n", "-1", "-r", "3"], "balls"),
    (["ways", "-n", "3", "-r", "0"], "urns"),
    (["count", "-n", "3", "-r", "2", "--no-such-option"], "no-such-option"),
    (["no-such-command"], "no-such-command"),
]


@pytest.mark.parametrize("args, fragment", MALFORMED, ids=[" ".join(a) for a, _ in MALFORMED])
def test_malformed_input_exits_2_with_one_line(args, fragment):
    result = runner.invoke(app, args)
    assert result.exit_code == 2, result.output
    assert result.stdout == ""
    lines = result.stderr.splitlines()
    assert len(lines) == 1, result.stderr
    assert lines[0].startswith("Error: ")
    assert fragment in lines[0]
    assert "Traceback" not in result.stderr
    assert not isinstance(result.exception, Exception) or isinstance(result.exception, SystemExit)


def test_malformed_input_through_python_m_has_no_traceback():
    proc = subprocess.run(
        [sys.executable, "-m", "enumerator", "prob", "-n", "3", "-r", "3", "--config", "1,1"],
        capture_output=True, text=True, timeout=120,
    )
    assert proc.returncode == 2
    assert proc.stdout == ""
    assert len(proc.stderr.splitlines()) == 1 and "Traceback" not in proc.stderr


def test_internal_failure_exits_1_with_one_line(monkeypatch):
    import enumerator.facade

    def broken(self, **kwargs):
        raise RuntimeError("simulated fault")

    monkeypatch.setattr(enumerator.facade.Occupancy, "configurations", broken)
    result = runner.invoke(app, ["count", "-n", "3", "-r", "2"], env={"ENUMERATOR_DEBUG": None})
    assert result.exit_code == 1
    lines = result.stderr.splitlines()
    assert len(lines) == 1 and "simulated fault" in lines[0] and "Traceback" not in result.stderr
    debug = runner.invoke(app, ["count", "-n", "3", "-r", "2"], env={"ENUMERATOR_DEBUG": "1"})
    assert debug.exit_code == 1
    assert "Traceback" in debug.stderr and "simulated fault" in debug.stderr.splitlines()[-1]


# ---------------------------------------------------------------- help, store options, demo


@pytest.mark.parametrize("command", ["count", "prob", "list", "ways", "demo"])
def test_every_command_has_teaching_help(command):
    result = run(command, "--help")
    assert result.exit_code == 0
    assert "Example" in result.stdout
    assert f"enumerator {command}" in result.stdout
    if command in ("count", "prob", "list"):
        for option in ("--balls", "--urns", "--rule", "--capacity", "--minimum", "--bounds", "--json"):
            assert option in result.stdout
        assert "distinguishable" in result.stdout and "at most one" in result.stdout


def test_python_m_enumerator_help():
    proc = subprocess.run(
        [sys.executable, "-m", "enumerator", "--help"], capture_output=True, text=True, timeout=120
    )
    assert proc.returncode == 0
    for command in ("count", "prob", "list", "ways", "demo"):
        assert command in proc.stdout


_HEAVY = ("numpy", "rich", "sqlalchemy", "sympy", "flint", "mpmath", "matplotlib", "pydantic")
_LOADED = r"""
import sys
from enumerator.cli import main
try:
    main(sys.argv[1:])
except SystemExit:
    pass
print(" ".join(sorted({m.split(".")[0] for m in sys.modules})), file=sys.stderr)
"""


@pytest.mark.parametrize(
    ("args", "allowed"),
    [
        ([], ()),  # importing the package only
        (["--help"], ("rich",)),  # typer renders help with rich
        (["ways", "-n", 4, "-r", 2, "--json"], ("flint", "pydantic")),  # counting; typer parses with pydantic
    ],
    ids=["import", "help", "ways"],
)
def test_commands_import_only_what_they_need(args, allowed):
    # Start-up time is measured in scripts/bench.py; here only what is loaded is checked.
    argv = [sys.executable, "-c", _LOADED if args else "import sys, enumerator.cli; "
            "print(' '.join(sorted({m.split('.')[0] for m in sys.modules})), file=sys.stderr)", *map(str, args)]
    proc = subprocess.run(argv, capture_output=True, text=True, timeout=120)
    loaded = set(proc.stderr.split()) & set(_HEAVY)
    assert loaded <= set(allowed), f"{' '.join(map(str, args)) or 'import'} loaded {sorted(loaded - set(allowed))}"


def test_store_option_remembers_and_no_cache_writes_nothing(tmp_path):
    target = tmp_path / "results.sqlite"
    fresh = run_json("count", "-n", 9, "-r", 4, "--no-cache")
    # r^n and stars and bars (common practice).
    assert fresh["microstates"] == str(4**9) and fresh["configurations"] == str(math.comb(12, 3))
    assert run_json("count", "-n", 9, "-r", 4, "--store", str(target)) == fresh
    assert target.is_file()
    assert run_json("count", "-n", 9, "-r", 4, "--store", str(target)) == fresh  # now from the store
    untouched = tmp_path / "untouched.sqlite"
    assert run_json("count", "-n", 9, "-r", 4, "--store", str(untouched), "--no-cache") == fresh
    assert not untouched.exists()


@pytest.mark.parametrize("command", ["count", "dist", "gf", "compare"])
def test_commands_that_remember_results_offer_the_store_options(command):
    result = run(command, "--help")
    assert result.exit_code == 0
    assert "--store" in result.stdout and "--no-cache" in result.stdout


@pytest.mark.parametrize(
    "args",
    [
        ["list", "-n", 3, "-r", 2],
        ["sample", "-n", 3, "-r", 2, "--size", 2, "--seed", 1],
        ["ways", "-n", 3, "-r", 2],
        ["threshold", "--vary", "balls", "-r", 5, "--event", "max >= 2", "--target", "1/2"],
        ["levels", "--particles", 2, "--energies", "0,1", "--max-energy", 2],
        ["contact", "--oscillators-a", 2, "--oscillators-b", 2, "--quanta", 3],
    ],
    ids=lambda args: args[0],
)
def test_commands_that_remember_nothing_offer_no_store_options(args, tmp_path):
    # They never read or write the store, so --store would only create an empty file.
    target = tmp_path / "never.sqlite"
    for extra in (["--store", str(target)], ["--no-cache"]):
        assert "No such option" in one_line_error(run(*args, *extra))
    assert run(*args).exit_code == 0
    assert not target.exists()


def test_sample_never_writes_the_store(tmp_path):
    target = tmp_path / "default.sqlite"
    for method in (None, "sequential"):
        args = ["sample", "-n", 12, "-r", 5, "--capacity", 4, "--size", 20, "--seed", 3, "--json"]
        result = run(*args, *(["--method", method] if method else []), env={"ENUMERATOR_STORE": str(target)})
        assert result.exit_code == 0, result.output
    assert not target.exists()


@pytest.mark.parametrize(
    ("args", "flag", "library"),
    [
        (["coeff", "1/(1 - y)", "--upto", 3], "--var", "var="),
        (["coeff", "1/(3 - x)", "--upto", 100000], "--upto", "upto="),
        (["dist", "-n", 12, "-r", 4, "--rule", "BE", "--stat", "profile", "--limit", 10], "--limit", "limit="),
    ],
    ids=["var", "upto", "limit"],
)
def test_errors_name_the_flag_not_the_library_parameter(args, flag, library):
    # The library says "limit="; the CLI spells the parameters it maps as its flags.
    line = one_line_error(run(*args))
    assert flag in line and library not in line


def test_unusable_store_url_is_bad_input():
    result = runner.invoke(app, ["count", "-n", "3", "-r", "2", "--store", "nosuchdialect://x"])
    assert result.exit_code == 2
    assert len(result.stderr.splitlines()) == 1 and result.stderr.startswith("Error: ")


def test_demo_leaves_the_store_untouched(tmp_path):
    target = tmp_path / "default.sqlite"
    assert run("demo", "--json", env={"ENUMERATOR_STORE": str(target)}).exit_code == 0
    assert not target.exists()


def test_demo_runs_all_three_rules():
    result = run("demo")
    assert result.exit_code == 0
    for name in ("Maxwell–Boltzmann", "Bose–Einstein", "Fermi–Dirac"):
        assert name in result.stdout
    payload = run_json("demo")
    n, r = int(payload["balls"]), int(payload["urns"])
    rules = {entry["rule"]: entry for entry in payload["rules"]}
    assert set(rules) == {"MB", "BE", "FD"}
    # r^n, C(n+r-1, n), C(r, n): common practice.
    assert rules["MB"]["microstates"] == str(r**n)
    assert rules["BE"]["configurations"] == str(math.comb(n + r - 1, n))
    assert rules["FD"]["configurations"] == str(math.comb(r, n))
    for entry in payload["rules"]:
        total = Fraction(0)
        for item in entry["probabilities"]:
            assert item["approx"] == pytest.approx(float(Fraction(item["probability"])))
            total += Fraction(item["probability"])
        assert total <= 1


# ---------------------------------------------------------------- README examples are real

README = Path(__file__).resolve().parent.parent / "README.md"


def _readme_blocks(kind: str):
    return re.findall(rf"```{kind}\n(.*?)```", README.read_text(encoding="utf-8"), re.S)


def _console_examples():
    examples = []
    for block in _readme_blocks("console"):
        for line in block.splitlines():
            if line.startswith("$ "):
                examples.append((line[2:], []))
            else:
                examples[-1][1].append(line)
    return examples


@pytest.mark.parametrize("command, expected", _console_examples(), ids=lambda v: v if isinstance(v, str) else "")
def test_readme_console_examples_are_real_output(command, expected):
    args = shlex.split(command)
    assert args[0] == "enumerator"
    result = runner.invoke(app, args[1:], env={"COLUMNS": "80"})
    shown = (result.stdout + result.stderr).splitlines()
    assert [line.rstrip() for line in shown] == [line.rstrip() for line in expected]


def test_readme_python_examples_run():
    blocks = _readme_blocks("pycon")
    assert blocks
    parser, doctest_runner = doctest.DocTestParser(), doctest.DocTestRunner()
    for number, block in enumerate(blocks):
        test = parser.get_doctest(block, {}, f"README.md pycon block {number}", str(README), 0)
        doctest_runner.run(test)
    assert doctest_runner.summarize(verbose=False).failed == 0
