"""Lookup tables read back in bounded batches: export (long, wide, Parquet), show's window, list, labels.

Values are checked against closed forms computed here with the standard
library: stars and bars ``math.comb(n + r - 1, r - 1)`` for BE
configurations, ``math.comb(r, n)`` for FD and ``r**n`` for MB microstates
(common practice).  Batching is checked by shrinking the batch sizes to 2
and watching every query the store answers.
"""

from __future__ import annotations

import csv
import io
import json
import math
import sqlite3
import sys

import pytest
from cli_helpers import one_line_error, run, run_json
from sqlalchemy import event

from enumerator import InvalidParameters, StoreError, Unsupported
from enumerator import store as results
from enumerator.store import tables
from enumerator.store.database import Store

pytestmark = pytest.mark.usefixtures("private_store")  # a fresh default store per test (conftest.py)


@pytest.fixture
def where(tmp_path):
    return str(tmp_path / "streaming.sqlite")


def _stars_and_bars(n: int, r: int) -> int:
    # BE configurations: C(n + r - 1, r - 1) (common practice)
    return math.comb(n + r - 1, r - 1)


@pytest.fixture
def small_batches(monkeypatch):
    """Batches of two keys and two values; every key page and value batch the store returns is recorded."""
    monkeypatch.setattr(tables, "KEY_BATCH", 2)
    monkeypatch.setattr(tables, "VALUE_BATCH", 2)
    seen = {"keys": [], "values": []}
    real_keys, real_values = Store.cell_keys, Store.cell_values

    def cell_keys(self, *args, **kwargs):
        out = real_keys(self, *args, **kwargs)
        seen["keys"].append(out)
        return out

    def cell_values(self, ids):
        out = real_values(self, ids)
        seen["values"].append(out)
        return out

    monkeypatch.setattr(Store, "cell_keys", cell_keys)
    monkeypatch.setattr(Store, "cell_values", cell_values)
    return seen


# -- long export -------------------------------------------------------------------

def test_a_streamed_export_reads_in_batches_of_two_and_is_complete_and_ordered(where, small_batches):
    # n and r cross 1-, 2- and 3-digit numbers: their order and ranges are taken on decimal text
    spec = tables.TableSpec.make("BE", "7..103", "8..12")
    tables.build_table(spec, store=where, name="crossing")
    small_batches["keys"].clear()
    lines = list(tables.export_lines(tables.open_table("crossing", store=where), "csv"))
    assert lines[0] == "balls,urns,value,digits\n"
    cells = [tuple(int(x) for x in line.split(",")) for line in lines[1:]]
    assert [(n, r) for n, r, _, _ in cells] == [(n, r) for r in range(8, 13) for n in range(7, 104)]
    for n, r, value, digits in cells:
        assert value == _stars_and_bars(n, r) and digits == len(str(value))
    assert all(len(page) <= 2 for page in small_batches["keys"])
    assert all(len(batch) <= 2 for batch in small_batches["values"])
    assert sum(len(batch) for batch in small_batches["values"]) == spec.cells


def test_the_default_batches_bound_every_query(where, monkeypatch):
    spec = tables.TableSpec.make("MB", "0..60", "1..30")
    tables.build_table(spec, store=where, name="cavity")
    monkeypatch.setattr(tables, "KEY_BATCH", 100)
    monkeypatch.setattr(tables, "VALUE_DIGITS", 500)  # a few dozen values of up to 89 digits
    sizes = []
    real = Store.cell_values

    def cell_values(self, ids):
        out = real(self, ids)
        sizes.append(sum(len(row[1]) for row in out.values()))
        return out

    monkeypatch.setattr(Store, "cell_values", cell_values)
    got = {(n, r): int(text) for n, r, text, _ in tables.open_table("cavity", store=where).cells()}
    # MB with any number per urn: r^n (common practice)
    assert got == {(n, r): r**n for n in range(61) for r in range(1, 31)}
    assert max(sizes) <= 500 + 89 and len(sizes) > 10


def test_json_export_streams_the_same_document(where):
    spec = tables.TableSpec.make("FD", "0..6", "1..6")
    tables.build_table(spec, store=where, name="sites")
    streamed = "".join(tables.export_lines(tables.open_table("sites", store=where), "json"))
    payload = json.loads(streamed)
    assert streamed.endswith("}\n") and streamed.count("\n") == 1
    assert payload["missing"] == "0" and payload["capacity"] == "1"
    # FD: C(r, n) (common practice)
    assert {(c["balls"], c["urns"]): c["value"] for c in payload["cells"]} == {
        (str(n), str(r)): str(math.comb(r, n)) for n in range(7) for r in range(1, 7)
    }
    # the same text as the cells read into memory first
    assert streamed == tables.export_table(tables.load_table("sites", store=where), "json")


def test_json_keeps_a_table_name_as_written(where):
    tables.build_table(tables.TableSpec.make("BE", "0..2", "1..2"), store=where, name="étagères")
    table = tables.open_table("étagères", store=where)
    for layout in ("long", "wide"):
        text = tables.export_table(table, "json", layout)
        assert text.startswith('{"name": "étagères", ') and json.loads(text)["name"] == "étagères"


def test_a_damaged_cell_stops_the_stream(where):
    tables.build_table(tables.TableSpec.make("BE", "0..20", "1..3"), store=where, name="shelves")
    with sqlite3.connect(where) as conn:
        conn.execute("UPDATE enumerator_results SET value = '999' WHERE balls = '15' AND urns = '2'")
    with pytest.raises(StoreError, match=r"damaged cell \(n=15, r=2\).*cache verify --fix"):
        list(tables.open_table("shelves", store=where).cells())


def test_cache_export_streams_every_entry_in_small_batches(where, monkeypatch):
    from enumerator.store import database

    monkeypatch.setattr(database, "ENTRY_BATCH", 2)
    tables.build_table(tables.TableSpec.make("BE", "0..9", "1..3"), store=where, name="shelves")
    target = results.open_store(where)
    rows = list(csv.DictReader(io.StringIO("".join(target.export_lines("csv")))))
    assert len(rows) == 30
    for row in rows:
        n, r = int(row["balls"]), int(row["urns"])
        assert row["value"] == str(_stars_and_bars(n, r)) and row["bounds"] == f"{r}*0:"


# -- show: only the window ------------------------------------------------------------

def test_show_reads_only_its_window(where, small_batches):
    tables.build_table(tables.TableSpec.make("BE", "0..120", "1..15"), store=where, name="grid")
    small_batches["keys"].clear()
    payload = run_json("table", "show", "grid", "--balls", "98..101", "--urns", "9..11", "--store", where)
    cells = {(int(c["balls"]), int(c["urns"])): c["value"] for c in payload["cells"]}
    assert cells == {(n, r): str(_stars_and_bars(n, r)) for n in range(98, 102) for r in range(9, 12)}
    assert payload["missing"] == "0"
    read = [(r, n) for page in small_batches["keys"] for r, n, _, _ in page]
    assert sorted(read) == sorted((r, n) for n in range(98, 102) for r in range(9, 12))


def test_show_of_a_window_past_the_table_is_clipped_and_says_so(where):
    # The window is clipped to the table (a window of 2^64 rows hung when every row was drawn), with a line
    # naming the part shown.
    tables.build_table(tables.TableSpec.make("BE", "0..10", "1..3"), store=where, name="small")
    result = run("table", "show", "small", "--balls", "9..12", "--urns", "2..3", "--store", where)
    assert result.exit_code == 0, result.output
    row = next(line for line in result.stdout.splitlines() if line.startswith("│ 10"))
    assert str(_stars_and_bars(10, 2)) in row and str(_stars_and_bars(10, 3)) in row
    assert not any(line.startswith("│ 12") for line in result.stdout.splitlines())
    assert "--balls 9..12 reaches past the table; shown: 9..10." in result.stdout


# -- wide layout ------------------------------------------------------------------------

def test_wide_csv_is_the_n_by_r_matrix_with_missing_cells_empty(where):
    # table "wide" spans r 1..4, but only r 1..3 are built (through another table sharing the cells)
    tables.build_table(tables.TableSpec.make("BE", "0..12", "1..3"), store=where, name="part")
    tables.claim_table(tables.TableSpec.make("BE", "0..12", "1..4"), "wide", results.open_store(where))
    result = run("table", "export", "wide", "--layout", "wide", "--format", "csv", "--store", where)
    assert result.exit_code == 0, result.output
    rows = list(csv.reader(io.StringIO(result.stdout)))
    assert rows[0] == ["balls", "urns=1", "urns=2", "urns=3", "urns=4"]
    assert [row[0] for row in rows[1:]] == [str(n) for n in range(13)]
    for row in rows[1:]:
        n = int(row[0])
        assert row[1:4] == [str(_stars_and_bars(n, r)) for r in (1, 2, 3)] and row[4] == ""
    assert "13 of 52 cells of wide are not built yet and are left empty" in result.stderr


def test_wide_json_markdown_and_latex(where):
    tables.build_table(tables.TableSpec.make("MB", "0..5", "1..3"), store=where, name="cavity")
    table = tables.open_table("cavity", store=where)
    payload = json.loads(tables.export_table(table, "json", "wide"))
    assert payload["layout"] == "wide" and payload["columns"] == ["1", "2", "3"]
    # MB any number per urn: r^n (common practice)
    assert payload["rows"] == [{"balls": str(n), "values": [str(r**n) for r in (1, 2, 3)]} for n in range(6)]
    markdown = tables.export_table(table, "markdown", "wide").splitlines()
    assert "| n \\ r | 1 | 2 | 3 |" in markdown and "| 5 | 1 | 32 | 243 |" in markdown
    latex = tables.export_table(table, "latex", "wide")
    assert "\\begin{longtable}{rrrr}" in latex and "5 & 1 & 32 & 243 \\\\" in latex
    with pytest.raises(InvalidParameters, match="layout must be one of long, wide"):
        tables.export_table(table, "csv", "diagonal")


def test_wide_rows_take_cells_in_any_order():
    spec = tables.TableSpec.make("BE", "3..5", "2..3")
    cells = [(n, r, str(_stars_and_bars(n, r)), 1) for r in (3, 2) for n in (5, 3)]
    assert list(tables.wide_rows(spec, cells)) == [
        (3, [str(_stars_and_bars(3, 2)), str(_stars_and_bars(3, 3))]),
        (4, [None, None]),
        (5, [str(_stars_and_bars(5, 2)), str(_stars_and_bars(5, 3))]),
    ]


# -- Parquet ------------------------------------------------------------------------------

def test_parquet_round_trip_long_and_wide(where, tmp_path):
    pq = pytest.importorskip("pyarrow.parquet")
    tables.build_table(tables.TableSpec.make("BE", "0..400", "1..3"), store=where, name="shelves")
    long_path, wide_path = tmp_path / "long.parquet", tmp_path / "wide.parquet"
    result = run("table", "export", "shelves", "--format", "parquet", "--output", long_path, "--store", where)
    assert result.exit_code == 0, result.output
    long = pq.read_table(long_path).to_pydict()
    assert list(long) == ["balls", "urns", "value", "digits", "value_approx", "log10_approx"]
    assert len(long["value"]) == 401 * 3
    for n, r, text, digits, approx, log10 in zip(*long.values()):
        value = _stars_and_bars(n, r)
        assert text == str(value) and digits == len(text)
        # the nearest double, and log10 to double precision (Python's float and math.log10 of an int)
        assert approx == float(value) and log10 == pytest.approx(math.log10(value), abs=1e-12)
    # the exact value survives past the double range: C(402, 2) is small, so check a row of r^n instead
    tables.build_table(tables.TableSpec.make("MB", "700..701", "3"), store=where, name="huge")
    assert tables.export_parquet(tables.open_table("huge", store=where), tmp_path / "huge.parquet") == 2
    huge = pq.read_table(tmp_path / "huge.parquet").to_pydict()
    assert huge["value"] == [str(3**700), str(3**701)] and huge["value_approx"] == [math.inf, math.inf]
    assert huge["log10_approx"][1] == pytest.approx(701 * math.log10(3), rel=1e-14)

    assert run("table", "export", "shelves", "--format", "parquet", "--layout", "wide", "--output", wide_path,
               "--store", where).exit_code == 0
    wide = pq.read_table(wide_path).to_pydict()
    assert list(wide) == ["balls", "urns=1", "urns=1_approx", "urns=2", "urns=2_approx", "urns=3", "urns=3_approx"]
    assert wide["balls"] == list(range(401))
    assert wide["urns=3"] == [str(_stars_and_bars(n, 3)) for n in range(401)]
    assert wide["urns=2_approx"] == [float(_stars_and_bars(n, 2)) for n in range(401)]


def test_wide_parquet_leaves_cells_not_built_null(where, tmp_path):
    pq = pytest.importorskip("pyarrow.parquet")
    # r 1..3 built through another table sharing the cells; r = 4 and n = 13 are not
    tables.build_table(tables.TableSpec.make("BE", "0..12", "1..3"), store=where, name="part")
    tables.claim_table(tables.TableSpec.make("BE", "0..13", "1..4"), "wide", results.open_store(where))
    assert tables.export_parquet(tables.open_table("wide", store=where), tmp_path / "w.parquet", "wide") == 14
    wide = pq.read_table(tmp_path / "w.parquet").to_pydict()
    for r in (1, 2, 3):
        assert wide[f"urns={r}"] == [str(_stars_and_bars(n, r)) for n in range(13)] + [None]
        assert wide[f"urns={r}_approx"] == [float(_stars_and_bars(n, r)) for n in range(13)] + [None]
    assert wide["urns=4"] == [None] * 14 and wide["urns=4_approx"] == [None] * 14


def test_parquet_needs_pyarrow_and_an_output_file(where, monkeypatch):
    tables.build_table(tables.TableSpec.make("BE", "0..3", "1..2"), store=where, name="t")
    assert "--output" in one_line_error(run("table", "export", "t", "--format", "parquet", "--store", where))
    monkeypatch.setitem(sys.modules, "pyarrow", None)  # as if it were not installed
    with pytest.raises(Unsupported, match=r"needs the pyarrow package.*pip install pyarrow"):
        tables.export_parquet(tables.open_table("t", store=where), "t.parquet")
    line = one_line_error(run("table", "export", "t", "--format", "parquet", "--output", "t.parquet",
                              "--store", where))
    assert "pyarrow" in line


# -- list: a bounded number of queries -------------------------------------------------------

def test_list_counts_each_table_in_one_query(where):
    tables.build_table(tables.TableSpec.make("BE", "0..5", "1..60"), store=where, name="wide-one")
    tables.build_table(tables.TableSpec.make("MB", "0..5", "1..40", capacity=2), store=where, name="other")
    # a definition whose cells are mostly missing (as a failed build leaves it)
    tables.claim_table(tables.TableSpec.make("BE", "0..9", "1..1000"), "mostly-missing", results.open_store(where))
    target = results.open_store(where)
    statements = []

    def count(*args):
        statements.append(args[2])

    event.listen(target.engine, "before_cursor_execute", count)
    try:
        listed = {name: (spec.cells, stored) for name, spec, stored in tables.list_tables(store=target)}
    finally:
        event.remove(target.engine, "before_cursor_execute", count)
    assert listed == {"wide-one": (360, 360), "other": (240, 240), "mostly-missing": (10_000, 360)}
    assert len(statements) == 1 + 3  # the definitions, then one count per table


# -- labels and the interrupt message ------------------------------------------------------

def test_every_table_is_described_truly(where):
    run("table", "build", "--rule", "FD", "--balls", "0..3", "--urns", "1..3", "--name", "sites", "--store", where)
    run("table", "build", "--quantity", "profiles", "--balls", "0..3", "--urns", "1..3", "--name", "shapes",
        "--store", where)
    lines = run("table", "list", "--store", where).stdout.splitlines()
    assert "  sites: FD configurations, at most 1 per urn, balls 0..3 x urns 1..3, 12/12 cells built" in lines
    shapes = next(line for line in lines if line.startswith("  shapes:"))
    # profiles do not depend on the rule (unlabelled urns), so none is named
    assert shapes.startswith("  shapes: profiles (urns unlabelled, the same under every rule), any number per urn")
    assert " MB" not in shapes
    shown = run("table", "show", "sites", "--store", where).stdout
    assert "sites: FD configurations, at most 1 per urn" in shown


def test_the_interrupt_message_counts_the_cells_stored(where, monkeypatch):
    real = Store.put_many
    calls = []

    def interrupted_after_the_fourth_write(self, items):
        stored = real(self, items)
        calls.append(stored)
        if len(calls) == 4:  # the row is committed; Ctrl-C comes before the build hears of it
            raise KeyboardInterrupt
        return stored

    monkeypatch.setattr(Store, "put_many", interrupted_after_the_fourth_write)
    result = run("table", "build", "--rule", "BE", "--balls", "0..50", "--urns", "1..10", "--name", "cut",
                 "--store", where)
    assert result.exit_code == 130
    with sqlite3.connect(where) as conn:
        stored = conn.execute("SELECT count(*) FROM enumerator_results").fetchone()[0]
    assert stored == 4 * 51
    assert f"Interrupted: {stored} of 510 cells of table cut are stored" in result.stderr


# -- the same reads on PostgreSQL ------------------------------------------------------------

def test_streamed_reads_on_postgresql(postgres_url, small_batches, monkeypatch):
    # a throw-away server (tests/conftest.py); skipped when none can be started.  n and r
    # cross 1-, 2- and 3-digit numbers: the text comparisons must order them numerically
    # whatever the database's collation
    spec = tables.TableSpec.make("BE", "7..103", "8..12")
    tables.build_table(spec, store=postgres_url, name="crossing")
    table = tables.open_table("crossing", store=postgres_url)
    cells = [(n, r, int(text)) for n, r, text, _ in table.cells()]
    assert [(n, r) for n, r, _ in cells] == [(n, r) for r in range(8, 13) for n in range(7, 104)]
    assert all(value == _stars_and_bars(n, r) for n, r, value in cells)
    assert all(len(batch) <= 2 for batch in small_batches["values"])
    window = tables.load_table("crossing", store=postgres_url, balls=range(98, 102), urns=range(9, 11))
    assert set(window.cells) == {(n, r) for n in range(98, 102) for r in (9, 10)} and window.missing == 0
    assert [(name, stored) for name, _, stored in tables.list_tables(store=postgres_url)] == [("crossing", 485)]
    assert table.stored(balls=range(95, 200), urns=range(10, 11)) == 9
    rows = dict(tables.wide_rows(spec, table.cells()))
    assert rows[100] == [str(_stars_and_bars(100, r)) for r in range(8, 13)]
    # cache export: a server-side cursor read two rows at a time
    from enumerator.store import database

    monkeypatch.setattr(database, "ENTRY_BATCH", 2)
    exported = list(csv.DictReader(io.StringIO("".join(results.open_store(postgres_url).export_lines("csv")))))
    assert len(exported) == 485
    assert all(row["value"] == str(_stars_and_bars(int(row["balls"]), int(row["urns"]))) for row in exported)


def test_an_export_stopped_by_a_damaged_cell_leaves_no_file(where, tmp_path):
    # the message names the repair that finds the cell (--all: a sample may miss it), and no partial
    # file is left under the name asked for
    from cli_helpers import run

    tables.build_table(tables.TableSpec.make("BE", "0..20", "1..3"), store=where, name="shelves")
    with sqlite3.connect(where) as conn:
        conn.execute("UPDATE enumerator_results SET value = '999' WHERE balls = '15' AND urns = '2'")
    out = tmp_path / "out"
    out.mkdir()
    target = out / "shelves.csv"
    result = run("table", "export", "shelves", "--store", str(where), "--output", str(target))
    assert result.exit_code == 2 and "cache verify --fix --all" in result.stderr
    assert list(out.iterdir()) == []
    fixed = run("cache", "verify", "--fix", "--all", "--store", str(where))
    assert fixed.exit_code in (0, 1)
    again = run("table", "export", "shelves", "--store", str(where), "--output", str(target))
    assert again.exit_code == 0 and target.read_text().count("\n") > 1
