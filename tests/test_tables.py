"""Tests of lookup tables (enumerator/store/tables.py).

Rows built in one generating-function pass are checked cell by cell against
the single counts of enumerator.algorithms.counting, against brute force, and against
outside references (SciPy's exact binomials, SymPy's Stirling numbers and
partitions, OEIS rows).  Building is checked for reuse and for resumption
after an interruption or a killed process (four concurrent builders: see
tests/test_cli_store.py).
"""

from __future__ import annotations

import itertools
import json
import math
import os
import signal
import sqlite3
import subprocess
import sys
import time

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.special import comb
from sympy.functions.combinatorial.numbers import stirling
from sympy.utilities.iterables import partitions

from enumerator import InvalidParameters, Occupancy, StoreError, TooLarge
from enumerator import store as results
from enumerator.algorithms.counting import count_configurations, count_microstates, count_profiles
from enumerator.store import tables

pytestmark = pytest.mark.usefixtures("no_configured_store")  # no store from the environment (conftest.py)


@pytest.fixture
def path(tmp_path):
    return str(tmp_path / "tables.sqlite")


def _rows_in_db(path) -> int:
    with sqlite3.connect(path) as conn:
        return conn.execute("SELECT count(*) FROM enumerator_results").fetchone()[0]


def _distinct_keys_in_db(path) -> int:
    with sqlite3.connect(path) as conn:
        return conn.execute(
            "SELECT count(*) FROM (SELECT DISTINCT quantity, rule, bounds, params, version, balls FROM enumerator_results)"
        ).fetchone()[0]


# -- one row in one pass ------------------------------------------------------

_PURE = {
    "configurations": count_configurations,
    "microstates": count_microstates,
    "profiles": count_profiles,
}


@settings(max_examples=60, deadline=None)
@given(
    rule=st.sampled_from(["MB", "BE", "FD"]),
    quantity=st.sampled_from(sorted(_PURE)),
    r=st.integers(1, 7),
    a=st.integers(0, 2),
    extra=st.one_of(st.none(), st.integers(0, 4)),
    top=st.integers(0, 30),
)
def test_a_row_equals_the_single_counts(rule, quantity, r, a, extra, top):
    if rule == "FD":
        a, capacity = min(a, 1), 1
    else:
        capacity = None if extra is None else a + extra
    values, method = tables.row_values(rule, quantity, r, a, capacity, top)
    assert len(values) == top + 1 and method.startswith("table row")
    for n in range(top + 1):
        model = Occupancy(balls=n, urns=r, rule=rule, capacity=capacity, minimum=a)
        assert values[n] == _PURE[quantity](model), (n, method)


def test_rows_match_brute_force_on_small_cases():
    for r, a, capacity in itertools.product(range(1, 5), range(0, 2), (None, 1, 2, 3)):
        if capacity is not None and capacity < a:
            continue
        top = 8
        conf, _ = tables.row_values("BE", "configurations", r, a, capacity, top)
        micro, _ = tables.row_values("MB", "microstates", r, a, capacity, top)
        for n in range(top + 1):
            hi = n if capacity is None else capacity
            vectors = [k for k in itertools.product(range(a, hi + 1), repeat=r) if sum(k) == n]
            assert conf[n] == len(vectors)
            assert micro[n] == sum(math.factorial(n) // math.prod(map(math.factorial, k)) for k in vectors)


def test_rows_against_outside_references():
    top = 60
    for r in (1, 2, 5, 13):
        # BE unbounded: C(n + r - 1, r - 1), scipy.special.comb(exact=True)
        be, _ = tables.row_values("BE", "configurations", r, 0, None, top)
        assert be == [comb(n + r - 1, r - 1, exact=True) for n in range(top + 1)]
        # FD: C(r, n), scipy.special.comb(exact=True)
        fd, _ = tables.row_values("FD", "configurations", r, 0, 1, top)
        assert fd == [comb(r, n, exact=True) for n in range(top + 1)]
        # MB onto every urn: r! S(n, r), SymPy's Stirling numbers of the second kind
        onto, _ = tables.row_values("MB", "microstates", r, 1, None, top)
        assert onto == [math.factorial(r) * int(stirling(n, r)) for n in range(top + 1)]
        # MB at most one per urn: falling factorial r!/(r-n)! (the twelvefold way,
        # Stanley, Enumerative Combinatorics vol. 1, §1.9)
        injective, _ = tables.row_values("MB", "microstates", r, 0, 1, top)
        assert injective == [math.perm(r, n) for n in range(top + 1)]
        # unlabelled urns: partitions of n into at most r parts (SymPy partitions)
        prof, _ = tables.row_values("BE", "profiles", r, 0, None, 30)
        assert prof == [sum(1 for _ in partitions(n, m=r)) if n else 1 for n in range(31)]
    # trinomial coefficients, row 3: 1, 3, 6, 7, 6, 3, 1 (OEIS A027907, from memory)
    tri, _ = tables.row_values("BE", "configurations", 3, 0, 2, 8)
    assert tri == [1, 3, 6, 7, 6, 3, 1, 0, 0]
    # partitions of n into at most 3 parts: 1, 1, 2, 3, 4, 5, 7, 8, 10, 12 (OEIS A001399)
    p3, _ = tables.row_values("MB", "profiles", 3, 0, None, 9)
    assert p3 == [1, 1, 2, 3, 4, 5, 7, 8, 10, 12]


def _mb_urn_by_urn(r, capacity, top):
    """MB microstates for n <= top, urn by urn: a new urn takes k of the m balls in C(m, k) ways (recursion)."""
    row = [1] + [0] * top
    for _ in range(r):
        row = [sum(math.comb(m, k) * row[m - k] for k in range(min(m, capacity) + 1)) for m in range(top + 1)]
    return row


def test_mb_rows_with_many_urns_sum_over_the_occupied_urns():
    top = 8
    for r, capacity in itertools.product((19, 25, 40), (1, 2, 3, 8)):
        values, method = tables.row_values("MB", "microstates", r, 0, capacity, top)
        assert "occupied urns" in method
        assert values == _mb_urn_by_urn(r, capacity, top), (r, capacity)
    # 2**64 urns: at most one ball per urn is the falling factorial r!/(r-n)! (Stanley, EC1, §1.9);
    # at most two: d urns with two balls and n - 2d with one, n!/2^d assignments each (from memory)
    r = 2**64
    injective, _ = tables.row_values("MB", "microstates", r, 0, 1, top)
    assert injective == [math.perm(r, n) for n in range(top + 1)]
    pairs, _ = tables.row_values("MB", "microstates", r, 0, 2, top)
    assert pairs == [
        sum(math.comb(r, d) * math.comb(r - d, n - 2 * d) * math.factorial(n) // 2**d for d in range(n // 2 + 1))
        for n in range(top + 1)
    ]


def test_a_table_over_2_to_the_64_urns_builds_loads_and_keeps_its_definition(path):
    r = 2**64
    spec = tables.TableSpec.make("BE", "0..3", f"{r}..{r + 1}", capacity=2)
    report = tables.build_table(spec, name="huge", store=path)
    assert report.computed == 8
    data = tables.load_table("huge", store=path)
    assert data.spec == spec and data.missing == 0
    for n, urns in itertools.product(range(4), (r, r + 1)):
        # BE at most two per urn: choose the d doubled urns and the n - 2d single ones (from memory)
        expected = sum(math.comb(urns, d) * math.comb(urns - d, n - 2 * d) for d in range(n // 2 + 1))
        assert data.value(n, urns) == expected
    assert [(name, cells) for name, _, cells in tables.list_tables(store=path)] == [("huge", 8)]
    with sqlite3.connect(path) as conn:
        assert conn.execute("SELECT urns_first, typeof(urns_first), urns_last FROM enumerator_tables").fetchone() == (
            str(r), "text", str(r + 1))
    # a single lookup finds the table's cell (the same key)
    with results.using(path):
        assert Occupancy(balls=3, urns=r, rule="BE", capacity=2).configurations() == data.value(3, r)


# -- specs ----------------------------------------------------------------------

def test_ranges_parse_with_both_ends_included():
    assert tables.parse_range("0..200", "balls") == range(0, 201)
    assert tables.parse_range(" 7 ", "urns") == range(7, 8)
    for bad in ("5..2", "a..b", "-1..3", "1..", "1,2"):
        with pytest.raises(InvalidParameters, match="balls"):
            tables.parse_range(bad, "balls")


def test_spec_validation_and_normalisation():
    spec = tables.TableSpec.make("FD", "0..10", "1..4")
    assert (spec.capacity, spec.quantity) == (1, "configurations")
    assert spec.default_name() == "FD-configurations-n0..10-r1..4"
    assert tables.TableSpec.make("BE", "0..5", "2..3", capacity=4, minimum=1).default_name() == \
        "BE-configurations-n0..5-r2..3-min1-cap4"
    assert tables.TableSpec.make("MB", "0..5", "1..2").quantity == "microstates"
    with pytest.raises(InvalidParameters, match="FD allows at most one"):
        tables.TableSpec.make("FD", "0..5", "1..3", capacity=2)
    with pytest.raises(InvalidParameters, match="urns must start at 1"):
        tables.TableSpec.make("BE", "0..5", "0..3")
    with pytest.raises(InvalidParameters, match="quantity must be one of"):
        tables.TableSpec.make("BE", "0..5", "1..3", quantity="entropy")
    with pytest.raises(TooLarge, match="narrow balls= or urns=") as capped:
        tables.TableSpec.make("BE", "0..100000", "1..1000")
    # the cap is stated, with the way round it
    assert f"limit of {tables.MAX_CELLS} cells" in str(capped.value) and "several tables" in str(capped.value)


# -- building -------------------------------------------------------------------

def test_build_stores_every_cell_once_and_reuses_it(path):
    spec = tables.TableSpec.make("MB", "0..40", "1..6", capacity=5)
    first = tables.build_table(spec, store=path)
    assert (first.computed, first.reused, first.stored) == (spec.cells, 0, spec.cells)
    again = tables.build_table(spec, store=path)
    assert (again.computed, again.reused, again.stored) == (0, spec.cells, 0)
    assert _rows_in_db(path) == spec.cells
    # the cells are the store entries of single lookups (same keys)
    with results.using(path):
        for n, r in [(0, 1), (17, 4), (40, 6), (30, 6)]:
            model = Occupancy(balls=n, urns=r, rule="MB", capacity=5)
            assert model.microstates() == count_microstates(model)
    assert _rows_in_db(path) == spec.cells


def test_single_lookups_fill_table_cells(path):
    with results.using(path):
        for n in range(0, 11):
            Occupancy(balls=n, urns=3, rule="BE").configurations()
    report = tables.build_table(tables.TableSpec.make("BE", "0..20", "3"), store=path)
    assert (report.reused, report.computed) == (11, 10)


def test_an_interrupted_build_resumes_with_nothing_lost_or_duplicated(path):
    spec = tables.TableSpec.make("BE", "0..60", "1..12", capacity=7)
    done = []

    def stop_after_three(r, computed, reused):
        done.append(r)
        if len(done) == 3:
            raise KeyboardInterrupt

    with pytest.raises(KeyboardInterrupt):
        tables.build_table(spec, store=path, progress=stop_after_three)
    assert _rows_in_db(path) == 3 * len(spec.balls)
    resumed = tables.build_table(spec, store=path)
    assert resumed.reused == 3 * len(spec.balls)
    assert resumed.computed == spec.cells - resumed.reused
    assert _rows_in_db(path) == _distinct_keys_in_db(path) == spec.cells
    data = tables.load_table(spec.default_name(), store=path)
    for (n, r) in data.cells:
        assert data.value(n, r) == count_configurations(Occupancy(balls=n, urns=r, rule="BE", capacity=7))


def test_a_killed_build_process_resumes(path, tmp_path):
    # a build in another process, killed (SIGKILL: no clean-up at all) once rows appear
    spec_args = dict(rule="MB", balls="0..150", urns="1..120", capacity=6)
    code = (
        "import sys; from enumerator.store import tables;"
        f"tables.build_table(tables.TableSpec.make(**{spec_args!r}), store={path!r})"
    )
    proc = subprocess.Popen([sys.executable, "-c", code])
    try:
        deadline = time.monotonic() + 60
        while time.monotonic() < deadline and proc.poll() is None:
            if os.path.exists(path):
                try:
                    if _rows_in_db(path) > 0:
                        break
                except sqlite3.Error:
                    pass
            time.sleep(0.02)
    finally:
        if proc.poll() is None:
            proc.send_signal(signal.SIGKILL)
        proc.wait()
    spec = tables.TableSpec.make(**spec_args)
    before = _rows_in_db(path)
    assert before % len(spec.balls) == 0  # whole rows only: each row is one transaction
    report = tables.build_table(spec, store=path)
    assert report.reused == before and report.computed == spec.cells - before
    assert _rows_in_db(path) == _distinct_keys_in_db(path) == spec.cells


def test_a_name_with_another_definition_is_refused(path):
    tables.build_table(tables.TableSpec.make("BE", "0..5", "1..2"), name="shelves", store=path)
    with pytest.raises(InvalidParameters, match="already exists with another definition"):
        tables.build_table(tables.TableSpec.make("BE", "0..6", "1..2"), name="shelves", store=path)


def test_tables_need_the_store(monkeypatch):
    monkeypatch.setenv(results.ENV_NO_CACHE, "1")
    with pytest.raises(StoreError, match="no_cache="):
        tables.build_table(tables.TableSpec.make("BE", "0..5", "1..2"))


def test_list_and_load(path):
    spec = tables.TableSpec.make("BE", "0..10", "1..3", capacity=2)
    tables.build_table(spec, store=path, name="parcels")
    [(name, listed, stored)] = tables.list_tables(store=path)
    assert (name, listed, stored) == ("parcels", spec, spec.cells)
    data = tables.load_table("parcels", store=path)
    assert data.missing == 0 and len(data.cells) == spec.cells
    with pytest.raises(InvalidParameters, match="no table named 'pallets'.*known: parcels"):
        tables.load_table("pallets", store=path)


# -- export ---------------------------------------------------------------------

def test_exports_carry_exact_values_and_digit_counts(path):
    spec = tables.TableSpec.make("MB", "0..60", "1..4")
    tables.build_table(spec, store=path, name="cavity")
    data = tables.load_table("cavity", store=path)

    csv_lines = tables.export_table(data, "csv").splitlines()
    assert csv_lines[0] == "balls,urns,value,digits"
    parsed = {(int(n), int(r)): (int(v), int(d)) for n, r, v, d in (line.split(",") for line in csv_lines[1:])}
    assert len(parsed) == spec.cells
    for (n, r), (v, d) in parsed.items():
        assert v == r**n and d == len(str(r**n))  # MB unbounded: r^n

    payload = json.loads(tables.export_table(data, "json"))
    assert payload["rule"] == "MB" and payload["missing"] == "0"
    cell = next(c for c in payload["cells"] if c["balls"] == "60" and c["urns"] == "4")
    assert cell == {"balls": "60", "urns": "4", "value": str(4**60), "digits": "37"}

    markdown = tables.export_table(data, "markdown").splitlines()
    assert markdown[2] == "| n | r | value | digits |"
    assert f"| 60 | 4 | {4**60} | 37 |" in markdown
    latex = tables.export_table(data, "latex")
    assert "\\begin{longtable}" in latex and f"\\seqsplit{{{4**60}}}" in latex
    assert "60 & 3 & " + str(3**60) + " & 29 \\\\" in latex

    with pytest.raises(InvalidParameters, match="format must be one of"):
        tables.export_table(data, "xlsx")


def test_bench_workloads_answer_consistently(tmp_path, monkeypatch):
    # the harness sets ENUMERATOR_NO_CACHE=1 for cold counts; the store workloads still use the store
    monkeypatch.setenv(results.ENV_NO_CACHE, "1")
    workloads = tables.bench_workloads(str(tmp_path))
    lookup = results.open_store(str(tmp_path / "lookup.sqlite"))
    assert lookup.stats()["entries"] == 1
    lookup.clear()
    workloads["warm_lookup"]()
    assert lookup.stats()["entries"] == 1
    assert set(workloads) == {"warm_lookup", "table_cold", "table_warm", "cold_count_stored", "cold_count_pure"}
    model = Occupancy(balls=300, urns=40, rule="MB", capacity=12)
    assert workloads["warm_lookup"]() == count_microstates(model)
    assert workloads["table_warm"]().reused == 201 * 50
