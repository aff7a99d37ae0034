"""The command line of the result store and lookup tables: ``table ...``, ``cache ...``.

Values are checked against closed forms computed here with the standard
library (stars and bars ``math.comb(n + r - 1, r - 1)``, ``r**n``: common
practice) and against SymPy's Stirling numbers.  Exact integers in JSON are
strings of digits (DESIGN.md).
"""

from __future__ import annotations

import csv
import io
import itertools
import json
import math
import sqlite3
import subprocess
import sys

import cli_helpers
import pytest
from cli_helpers import run, run_json
from sympy.functions.combinatorial.numbers import stirling

from enumerator import store as results
from enumerator.store import tables

pytestmark = pytest.mark.usefixtures("private_store")  # a fresh default store per test (conftest.py)


@pytest.fixture
def where(tmp_path):
    return str(tmp_path / "cli.sqlite")


def one_line_error(result, code=2) -> str:
    # some store commands report progress on stdout before they fail
    return cli_helpers.one_line_error(result, code, quiet_stdout=False)


# -- table build / list / show / export ---------------------------------------------

def test_table_build_then_rebuild_reuses_every_cell(where):
    first = run_json("table", "build", "--rule", "BE", "--balls", "0..40", "--urns", "1..8", "--store", where)
    assert first["name"] == "BE-configurations-n0..40-r1..8"
    assert (first["cells"], first["computed"], first["reused"]) == ("328", "328", "0")
    again = run_json("table", "build", "--rule", "BE", "--balls", "0..40", "--urns", "1..8", "--store", where)
    assert (again["computed"], again["reused"]) == ("0", "328")
    payload = run_json("table", "show", first["name"], "--balls", "0..40", "--urns", "1..8", "--store", where)
    values = {(int(c["balls"]), int(c["urns"])): c["value"] for c in payload["cells"]}
    # stars and bars: C(n + r - 1, r - 1) (common practice)
    assert values == {(n, r): str(math.comb(n + r - 1, r - 1)) for n in range(41) for r in range(1, 9)}


def test_table_build_human_output_and_list(where):
    result = run("table", "build", "--rule", "MB", "--balls", "0..30", "--urns", "1..5", "--minimum", "1",
                 "--name", "parcels", "--store", where)
    assert result.exit_code == 0, result.output
    assert "Table parcels: MB microstates, at least 1 per urn" in result.stdout
    assert "computed now" in result.stdout and "155" in result.stdout
    listed = run("table", "list", "--store", where)
    assert listed.stdout.splitlines()[1] == (
        "  parcels: MB microstates, at least 1 per urn, balls 0..30 x urns 1..5, 155/155 cells built"
    )
    payload = run_json("table", "list", "--store", where)
    assert payload["tables"] == [{
        "name": "parcels", "rule": "MB", "quantity": "microstates", "minimum": "1", "capacity": None,
        "balls": "0..30", "urns": "1..5", "cells": "155", "stored": "155",
    }]
    # every urn occupied: r! S(n, r) (SymPy's Stirling numbers of the second kind)
    exported = run("table", "export", "parcels", "--format", "csv", "--store", where)
    rows = list(csv.DictReader(io.StringIO(exported.stdout)))
    assert len(rows) == 155
    for row in rows:
        n, r = int(row["balls"]), int(row["urns"])
        expected = math.factorial(r) * int(stirling(n, r))
        assert row["value"] == str(expected) and row["digits"] == str(len(str(expected)))


def test_table_show_window_for_people(where):
    run("table", "build", "--rule", "MB", "--balls", "0..100", "--urns", "1..4", "--name", "cavity", "--store", where)
    result = run("table", "show", "cavity", "--balls", "98..100", "--urns", "1..3", "--store", where)
    assert result.exit_code == 0, result.output
    assert "cavity: MB microstates, any number per urn" in result.stdout
    line = next(row for row in result.stdout.splitlines() if row.startswith("│ 100"))
    # 2^100 has 31 digits and starts 12...; 3^100 has 48 digits and starts 51... (r^n)
    assert "1" in line and "12…[31]" in line and "51…[48]" in line
    assert "'table export' gives them in full" in result.stdout


def test_table_export_formats_and_output_file(where, tmp_path):
    run("table", "build", "--rule", "FD", "--balls", "0..6", "--urns", "1..6", "--name", "sites", "--store", where)
    payload = json.loads(run("table", "export", "sites", "--format", "json", "--store", where).stdout)
    # FD: C(r, n) (common practice)
    assert {(c["balls"], c["urns"]): c["value"] for c in payload["cells"]} == {
        (str(n), str(r)): str(math.comb(r, n)) for n in range(7) for r in range(1, 7)
    }
    markdown = run("table", "export", "sites", "--format", "markdown", "--store", where).stdout
    assert "| 3 | 6 | 20 | 2 |" in markdown
    target = tmp_path / "sites.tex"
    result = run("table", "export", "sites", "--format", "latex", "--output", target, "--store", where)
    assert result.exit_code == 0 and result.stdout == ""
    assert "3 & 6 & 20 & 2 \\\\" in target.read_text()


def test_table_errors_are_one_line(where):
    assert "no table named 'nothing'" in one_line_error(run("table", "show", "nothing", "--store", where))
    assert "--balls" in one_line_error(run("table", "build", "--rule", "BE", "--balls", "9..2", "--urns", "1", "--store", where))
    assert "FD allows at most one" in one_line_error(
        run("table", "build", "--rule", "FD", "--balls", "0..3", "--urns", "1..2", "--capacity", "2", "--store", where)
    )
    run("table", "build", "--rule", "BE", "--balls", "0..3", "--urns", "1..2", "--name", "t", "--store", where)
    assert "already exists with another definition" in one_line_error(
        run("table", "build", "--rule", "BE", "--balls", "0..4", "--urns", "1..2", "--name", "t", "--store", where)
    )
    assert run("table", "drop", "t", "--store", where).exit_code == 0
    assert "no table named 't'" in one_line_error(run("table", "drop", "t", "--store", where))


def test_ctrl_c_during_a_build_keeps_finished_rows_and_the_rerun_finishes(where, monkeypatch):
    real = tables.row_values
    calls = []

    def interrupted_on_the_fourth_row(*args):
        calls.append(args)
        if len(calls) == 4:
            raise KeyboardInterrupt
        return real(*args)

    monkeypatch.setattr(tables, "row_values", interrupted_on_the_fourth_row)
    args = ("table", "build", "--rule", "BE", "--balls", "0..50", "--urns", "1..10", "--capacity", "5", "--store", where)
    result = run(*args)
    assert result.exit_code == 130
    assert "run the same command again to finish" in result.stderr
    monkeypatch.setattr(tables, "row_values", real)
    resumed = run_json(*args)
    assert (resumed["reused"], resumed["computed"]) == (str(3 * 51), str(7 * 51))
    with sqlite3.connect(where) as conn:
        assert conn.execute("SELECT count(*) FROM enumerator_results").fetchone()[0] == 510


def test_four_cli_builds_at_once_store_every_cell_once(where):
    grids = [("0..80", "1..30"), ("40..120", "10..40"), ("0..120", "20..35"), ("20..100", "1..40")]
    procs = [
        subprocess.Popen(
            [sys.executable, "-m", "enumerator", "table", "build", "--rule", "BE", "--capacity", "9",
             "--balls", balls, "--urns", urns, "--store", where, "--json"],
            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
        )
        for balls, urns in grids
    ]
    for proc in procs:
        out, err = proc.communicate(timeout=300)
        assert proc.returncode == 0, err
        assert err == ""  # nothing reaches the user: no "database is locked"
        assert json.loads(out)["cells"]
    cells = set()
    for balls, urns in grids:
        cells.update(itertools.product(tables.parse_range(balls, "b"), tables.parse_range(urns, "u")))
    stats = run_json("cache", "stats", "--store", where)
    assert stats["entries"] == str(len(cells)) and stats["tables"] == "4"
    with sqlite3.connect(where) as conn:
        stored = conn.execute("SELECT balls, urns, value FROM enumerator_results").fetchall()
    assert len({(b, r) for b, r, _ in stored}) == len(stored) == len(cells)
    rows = {}
    for balls_text, urns_text, value in stored:
        r = int(urns_text)  # r is decimal text (schema 2), like n and the values
        if r not in rows:
            rows[r] = tables.row_values("BE", "configurations", r, 0, 9, 120)[0]
        assert int(value) == rows[r][int(balls_text)]
    assert run("cache", "verify", "--all", "--store", where).exit_code == 0


# -- cache stats / verify / clear / export ---------------------------------------------

def test_cache_stats_after_counts(where):
    for n in range(6):
        run("count", "-n", n, "-r", 3, "--rule", "MB", "--store", where)
    stats = run_json("cache", "stats", "--store", where)
    # MB count stores microstates (MB) and configurations (MB) per model
    assert stats["entries"] == "12" and stats["by_quantity"]["microstates"] == {"MB": "6"}
    assert stats["largest_digits"] == "3"  # 3^5 = 243
    human = run("cache", "stats", "--store", where).stdout
    assert "entries" in human and "12" in human


def test_cache_verify_reports_and_fixes_a_wrong_value(where):
    for n in range(8):
        run("count", "-n", n, "-r", 4, "--rule", "BE", "--capacity", 3, "--store", where)
    assert run("cache", "verify", "--all", "--store", where).exit_code == 0
    with sqlite3.connect(where) as conn:
        conn.execute("UPDATE enumerator_results SET value = '99' WHERE balls = '7'")
    result = run("cache", "verify", "--all", "--store", where)
    assert result.exit_code == 1
    [line] = [row for row in result.stdout.splitlines() if row.startswith("MISMATCH")]
    # C(n, r) with bounds 0..3 in 4 urns at n = 7: 16 vectors (brute force, small case)
    brute = sum(1 for k in itertools.product(range(4), repeat=4) if sum(k) == 7)
    assert "configurations BE n=7 bounds 4*0:3" in line and f"recomputed {brute}" in line
    payload = run_json("cache", "verify", "--all", "--fix", "--store", where)
    assert payload["fixed"] == "1" and payload["mismatches"][0]["expected"] == str(brute)
    assert run("cache", "verify", "--all", "--store", where).exit_code == 0
    assert run_json("count", "-n", 7, "-r", 4, "--rule", "BE", "--capacity", 3, "--store", where)["configurations"] == str(brute)


def test_cache_verify_fix_recomputes_grouped_and_weighted_entries(where):
    args = ("-n", 2, "--bounds", "2x0:2,1x1:", "--weights", "2x1,3", "--rule", "BE", "--store", where)
    first = run_json("count", *args)
    grouped = run_json("count", "-n", 3, "--bounds", "2x0:2,1x1:", "--rule", "MB", "--store", where)
    with sqlite3.connect(where) as conn:
        texts = {row[0] for row in conn.execute("SELECT DISTINCT bounds FROM enumerator_results")}
        conn.execute("UPDATE enumerator_results SET value = '99'")
    assert texts == {"2x0:2@1,1x1:@3", "2x0:2,1x1:"}
    payload = run_json("cache", "verify", "--all", "--fix", "--store", where)
    assert payload["fixed"] == str(len(payload["mismatches"])) and len(payload["mismatches"]) >= 3
    assert run("cache", "verify", "--all", "--store", where).exit_code == 0
    # brute force over the vectors with k_1, k_2 <= 2 and k_3 >= 1
    vectors = {n: [k for k in itertools.product(range(3), range(3), range(n + 1)) if sum(k) == n and k[2] >= 1]
               for n in (2, 3)}
    # BE weights 1, 1, 3: the total weight is the sum of 3^k_3 over the vectors
    assert run_json("count", *args) == first
    assert first["configurations"] == str(len(vectors[2]))
    assert first["microstates"] == str(sum(3 ** k[2] for k in vectors[2]))
    again = run_json("count", "-n", 3, "--bounds", "2x0:2,1x1:", "--rule", "MB", "--store", where)
    assert again == grouped and grouped["configurations"] == str(len(vectors[3]))
    assert grouped["microstates"] == str(sum(math.factorial(3) // math.prod(map(math.factorial, k)) for k in vectors[3]))


def test_a_schema_1_store_is_upgraded_by_the_cli_and_answers_from_it(tmp_path):
    # a schema-1 file with one per-urn answer, keyed as schema 1 keyed it (its digest: the
    # SHA-256 of the key fields joined by \x1f, commit f5be745), read back under the group text
    import hashlib
    import zlib

    path = tmp_path / "old.sqlite"
    old_text, planted = "0:2,0:2,1:", "7"  # a value no computation gives: it must come from the file
    digest = hashlib.sha256("\x1f".join(("configurations", "BE", old_text, "", "1", "3")).encode()).hexdigest()
    with sqlite3.connect(path) as conn:
        conn.executescript(
            "CREATE TABLE enumerator_meta (key VARCHAR(64) NOT NULL PRIMARY KEY, value TEXT NOT NULL);"
            "CREATE TABLE enumerator_results (id INTEGER NOT NULL PRIMARY KEY, key_digest VARCHAR(64) NOT NULL UNIQUE,"
            " quantity VARCHAR(64) NOT NULL, rule VARCHAR(8) NOT NULL, balls TEXT NOT NULL, urns BIGINT NOT NULL,"
            " bounds TEXT NOT NULL, params TEXT NOT NULL, version INTEGER NOT NULL, kind VARCHAR(16) NOT NULL,"
            " value TEXT NOT NULL, digits BIGINT NOT NULL, checksum BIGINT NOT NULL, method VARCHAR(200) NOT NULL,"
            " elapsed_ns BIGINT NOT NULL, created_at DATETIME NOT NULL);"
            "CREATE INDEX ix_enumerator_results_row ON enumerator_results (quantity, rule, urns, version);"
            "CREATE TABLE enumerator_tables (id INTEGER NOT NULL PRIMARY KEY, name VARCHAR(200) NOT NULL UNIQUE,"
            " quantity VARCHAR(64) NOT NULL, rule VARCHAR(8) NOT NULL, minimum BIGINT NOT NULL, capacity BIGINT,"
            " balls_first BIGINT NOT NULL, balls_last BIGINT NOT NULL, urns_first BIGINT NOT NULL,"
            " urns_last BIGINT NOT NULL, created_at DATETIME NOT NULL);"
            "INSERT INTO enumerator_meta VALUES ('schema_version', '1');"
        )
        conn.execute(
            "INSERT INTO enumerator_results VALUES (1, ?, 'configurations', 'BE', '3', 3, ?, '', 1, 'int', ?, 1, ?,"
            " 'by hand', 0, '2026-01-01 00:00:00.000000')",
            (digest, old_text, planted, zlib.crc32(planted.encode(), zlib.crc32(f"{digest}:int:".encode()))),
        )
    payload = run_json("count", "-n", 3, "--bounds", "0:2,0:2,1:", "--rule", "BE", "--store", path)
    assert payload["configurations"] == planted  # served from the upgraded file, not recomputed
    stats = run_json("cache", "stats", "--store", path)
    assert stats["schema_version"] == "2" and stats["entries"] == "1"
    # and verify finds the planted value wrong: 6 vectors (brute force)
    brute = sum(1 for k in itertools.product(range(3), range(3), range(4)) if sum(k) == 3 and k[2] >= 1)
    report = run_json("cache", "verify", "--all", "--fix", "--store", path)
    assert report["mismatches"][0]["bounds"] == "2x0:2,1x1:" and report["mismatches"][0]["expected"] == str(brute)
    assert run_json("count", "-n", 3, "--bounds", "0:2,0:2,1:", "--rule", "BE", "--store", path)["configurations"] == (
        str(brute))


def test_cache_clear_asks_for_yes_and_clears(where):
    run("count", "-n", 5, "-r", 3, "--store", where)
    assert "add --yes to confirm" in one_line_error(run("cache", "clear", "--store", where))
    assert run_json("cache", "clear", "--stale", "--store", where)["removed"] == "0"
    assert run_json("cache", "clear", "--yes", "--store", where)["removed"] == "2"
    assert run_json("cache", "stats", "--store", where)["entries"] == "0"


def test_cache_export_jsonl_and_csv(where, tmp_path):
    run("count", "-n", 70, "-r", 2, "--rule", "MB", "--store", where)
    records = [json.loads(row) for row in run("cache", "export", "--store", where).stdout.splitlines()]
    micro = next(r for r in records if r["quantity"] == "microstates")
    assert micro["value"] == str(2**70) and micro["digits"] == "22" and micro["balls"] == "70"
    target = tmp_path / "all.csv"
    result = run("cache", "export", "--format", "csv", "--output", target, "--store", where)
    assert result.stdout == f"Wrote 3 lines to {target}.\n"
    rows = list(csv.DictReader(target.open()))
    assert {r["quantity"] for r in rows} == {"microstates", "configurations"}


# -- the store options on the counting commands ------------------------------------------

def test_a_non_database_store_is_a_one_line_error(tmp_path):
    bad = tmp_path / "notes.txt"
    bad.write_text("shopping list\n" * 100)
    line = one_line_error(run("count", "-n", 3, "-r", 2, "--store", bad))
    assert str(bad) in line and "delete" in line
    line = one_line_error(run("cache", "stats", "--store", bad))
    assert str(bad) in line


def test_a_newer_schema_is_refused_through_the_cli(where):
    run("count", "-n", 3, "-r", 2, "--store", where)
    results.close_all()
    with sqlite3.connect(where) as conn:
        conn.execute("UPDATE enumerator_meta SET value = '99' WHERE key = 'schema_version'")
    line = one_line_error(run("count", "-n", 3, "-r", 2, "--store", where))
    assert "schema version 99" in line and "upgrade enumerator" in line


def test_a_read_only_store_answers_and_warns_once(where):
    run("count", "-n", 3, "-r", 2, "--store", where)
    url = f"sqlite:///file:{where}?mode=ro&uri=true"
    proc = subprocess.run(
        [sys.executable, "-m", "enumerator", "count", "-n", "40", "-r", "6", "--rule", "MB",
         "--capacity", "9", "--store", url, "--json"],
        capture_output=True, text=True, timeout=120,
    )
    assert proc.returncode == 0, proc.stderr
    from enumerator import Occupancy
    from enumerator.algorithms.counting import count_microstates

    assert json.loads(proc.stdout)["microstates"] == str(count_microstates(Occupancy(balls=40, urns=6, rule="MB", capacity=9)))
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 1 and "read-only" in lines[0] and where in lines[0]


def test_env_no_cache_for_the_cli(tmp_path, monkeypatch):
    target = tmp_path / "never.sqlite"
    monkeypatch.setenv(results.ENV_STORE, str(target))
    monkeypatch.setenv(results.ENV_NO_CACHE, "1")
    assert run_json("count", "-n", 6, "-r", 3, "--rule", "BE")["configurations"] == str(math.comb(8, 2))
    assert not target.exists()


def test_clearing_a_quantity_no_command_stores_is_refused(tmp_path):
    # a typo must not read as "nothing to remove" (common practice for destructive commands)
    from cli_helpers import one_line_error, run

    message = one_line_error(run("cache", "clear", "--quantity", "microstate", "--yes",
                                 "--store", str(tmp_path / "s.db")))
    assert "no quantity 'microstate'" in message and "microstates" in message


def test_a_show_window_outside_the_table_is_refused(where):
    assert run("table", "build", "--rule", "BE", "--balls", "0..5", "--urns", "1..3", "--name", "small",
               "--store", where).exit_code == 0
    message = one_line_error(run("table", "show", "small", "--balls", "100..200", "--store", where))
    assert "outside the table" in message and "0..5" in message


def test_clear_checks_the_quantity_without_a_pass_over_the_store(where, monkeypatch):
    # the names are checked by index seeks: stats() (a grouped pass over every row) must not run
    from enumerator.core.model import UrnModel
    from enumerator.store.database import Store

    run("count", "-n", 4, "-r", 3, "--store", where)
    target = results.open_store(where)
    # a quantity no command stores, put there by a library user (2^4 = 16, r^n)
    assert results.remember("lab-notes", UrnModel(balls=4, urns=2), lambda: 2**4, version=1, store=target) == 16

    def no_full_pass(self):
        raise AssertionError("cache clear --quantity read the whole store")

    monkeypatch.setattr(Store, "stats", no_full_pass)
    message = one_line_error(run("cache", "clear", "--quantity", "lab-note", "--yes", "--store", where))
    assert "no quantity 'lab-note'" in message and "lab-notes" in message and "microstates" in message
    assert run_json("cache", "clear", "--quantity", "lab-notes", "--yes", "--store", where)["removed"] == "1"
    assert run_json("cache", "clear", "--quantity", "microstates", "--yes", "--store", where)["removed"] == "1"
    with sqlite3.connect(where) as conn:
        assert conn.execute("SELECT DISTINCT quantity FROM enumerator_results").fetchall() == [("configurations",)]


#: Every table and cache command but 'table build': each only reads or removes.
NON_CREATING = [
    ("cache", "stats"), ("cache", "export"), ("cache", "export", "--format", "csv"),
    ("cache", "verify"), ("cache", "verify", "--fix"), ("cache", "clear", "--yes"),
    ("cache", "clear", "--quantity", "microstates", "--yes"),
    ("table", "list"), ("table", "show", "t"), ("table", "export", "t"), ("table", "drop", "t"),
]


@pytest.mark.parametrize("command", NON_CREATING, ids=" ".join)
def test_a_command_that_only_reads_or_removes_creates_no_store(tmp_path, command):
    # where there is no store it sees an empty one: the exit code and any error line of a new,
    # empty store (made here by 'count', then cleared), and no folder, file or table appears
    empty = tmp_path / "empty.sqlite"
    run("count", "-n", 2, "-r", 2, "--store", empty)
    run("cache", "clear", "--yes", "--store", empty)
    expected = run(*command, "--store", empty)
    for missing in (tmp_path / "no" / "such" / "folder" / "s.sqlite", tmp_path / "absent.sqlite"):
        result = run(*command, "--store", missing)
        assert result.exit_code == expected.exit_code, result.output
        assert result.stderr.replace(str(missing), str(empty)) == expected.stderr
        assert not missing.exists() and not (tmp_path / "no").exists()


def test_stats_of_a_missing_store_is_empty_and_a_later_build_creates_it(tmp_path):
    where = tmp_path / "later" / "s.sqlite"
    stats = run_json("cache", "stats", "--store", where)
    assert (stats["entries"], stats["tables"], stats["file_bytes"], stats["read_only"]) == ("0", "0", None, False)
    assert run_json("table", "list", "--store", where)["tables"] == []
    assert not where.parent.exists()
    # the same process then builds there: the store is made, and every reader sees it
    built = run_json("table", "build", "--rule", "BE", "--balls", "0..4", "--urns", "1..2", "--store", where)
    assert built["computed"] == "10" and where.exists()
    assert run_json("cache", "stats", "--store", where)["entries"] == "10"
    # C(n + r - 1, r - 1) configurations (stars and bars, common practice)
    cells = run_json("table", "show", built["name"], "--store", where)["cells"]
    assert {(c["balls"], c["urns"]): c["value"] for c in cells} == {
        (str(n), str(r)): str(math.comb(n + r - 1, r - 1)) for n in range(5) for r in (1, 2)}


def test_stats_of_a_file_that_is_not_a_store_yet_leaves_it_empty(tmp_path):
    # an empty file (or a database without the store's tables) becomes a store only by a write
    empty = tmp_path / "blank.sqlite"
    empty.touch()
    assert run_json("cache", "stats", "--store", empty)["file_bytes"] == "0"
    assert run("table", "list", "--store", empty).exit_code == 0
    assert empty.stat().st_size == 0
