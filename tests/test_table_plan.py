"""Tests of the plan of a table build (enumerator/store/tables.py: plan_table, check_table_plan).

A build is planned as a whole before any cell is computed: its time, one
row's memory and its store size.  Checked here: a build past the limits is
refused before anything is stored (the store unchanged, no file made by the
CLI), a normal build is not refused, a resumed build plans only what is
left, the sample of rows extrapolates the full sum, and the estimates are
compared with measured builds: the digits against counts computed outside
the project (SciPy's exact binomials, Python's integer powers), the store
size against the file, the time against the build's CPU time within a
generous factor (no timed asserts: the factor is wide and CPU time does not
depend on the machine's load).
"""

from __future__ import annotations

import os
import sqlite3
import time

import pytest
from cli_helpers import one_line_error, run
from scipy.special import comb

from enumerator import TooLarge
from enumerator.core.limits import limited
from enumerator.store import cluster, tables
from enumerator.store.context import open_store
from enumerator.store.database import Store

pytestmark = pytest.mark.usefixtures("no_configured_store")  # no store from the environment (conftest.py)


def _snapshot(path):
    """The rows and table definitions of a SQLite store, to compare before and after a refusal."""
    with sqlite3.connect(path) as conn:
        rows = conn.execute("SELECT key_digest, value FROM enumerator_results ORDER BY id").fetchall()
        defs = conn.execute("SELECT * FROM enumerator_tables ORDER BY id").fetchall()
    return rows, defs


@pytest.fixture
def built(tmp_path):
    """A store holding one small table, and its path."""
    path = str(tmp_path / "plan.sqlite")
    store = Store(path)
    tables.build_table(tables.TableSpec.make("BE", "0..20", "1..5"), store=store)
    yield store, path
    store.close()


# -- refusals before any cell ---------------------------------------------------

def test_a_tiny_time_limit_refuses_before_anything_is_stored(built):
    store, path = built
    before = _snapshot(path)
    spec = tables.TableSpec.make("MB", "0..200", "1..40", capacity=20)
    with limited(seconds=1e-4), pytest.raises(TooLarge) as refused:
        tables.build_table(spec, store=store)
    message = str(refused.value)
    assert "\n" not in message
    assert "would take about" in message and "in the store" in message
    assert "max_seconds=" in message and "balls=" in message and "workers=" in message
    assert _snapshot(path) == before  # no cell, no table definition


def test_a_tiny_memory_limit_refuses_with_one_rows_memory(built):
    store, path = built
    before = _snapshot(path)
    with limited(memory=100), pytest.raises(TooLarge, match="memory"):
        tables.build_table(tables.TableSpec.make("MB", "0..100", "1..10"), store=store)
    assert _snapshot(path) == before


def test_the_cluster_route_refuses_before_anything_is_stored(built):
    store, path = built
    before = _snapshot(path)
    spec = tables.TableSpec.make("MB", "0..200", "1..40", capacity=20)
    with limited(seconds=1e-4), pytest.raises(TooLarge, match="more workers="):
        cluster.build_table_distributed(spec, store=store, workers=2)
    assert _snapshot(path) == before


def test_a_store_beyond_the_free_disk_is_refused(built, monkeypatch):
    store, path = built
    before = _snapshot(path)
    import shutil
    from collections import namedtuple

    usage = namedtuple("usage", "total used free")
    monkeypatch.setattr(shutil, "disk_usage", lambda folder: usage(10**9, 10**9 - 1000, 1000))
    with pytest.raises(TooLarge, match="free in"):
        tables.build_table(tables.TableSpec.make("BE", "0..30", "1..8"), store=store)
    assert _snapshot(path) == before


def test_a_normal_build_is_not_refused(built):
    store, _ = built
    spec = tables.TableSpec.make("MB", "0..40", "1..8", capacity=5)
    report = tables.build_table(spec, store=store)
    assert report.computed == spec.cells
    # every cell stored: nothing left to plan, nothing to refuse even at a tiny limit
    with limited(seconds=1e-9, memory=1):
        again = tables.build_table(spec, store=store)
    assert again.computed == 0 and again.reused == spec.cells
    assert tables.plan_table(spec, store).cells == 0


def test_the_cli_refuses_in_one_line_and_makes_no_file(tmp_path):
    path = tmp_path / "new" / "t.sqlite"
    result = run("table", "build", "--rule", "MB", "--balls", "0..400", "--urns", "1..100", "--capacity", "50",
                 "--max-seconds", "0.01", "--store", str(path), "--json")
    line = one_line_error(result)
    for words in ("would take about", "MB in the store", "--max-seconds", "--balls", "--urns", "--workers",
                  "--cluster", "40,100 cells"):
        assert words in line, (words, line)
    assert not path.exists() and not path.parent.exists()


def test_the_cli_refuses_on_an_existing_store_and_leaves_it_unchanged(built):
    store, path = built
    before = _snapshot(path)
    result = run("table", "build", "--rule", "BE", "--balls", "0..300", "--urns", "1..60",
                 "--store", path, env={"ENUMERATOR_MAX_SECONDS": "0.001"})
    assert "ENUMERATOR_MAX_SECONDS" in one_line_error(result)
    assert _snapshot(path) == before


# -- what is planned -------------------------------------------------------------

def test_a_resumed_build_plans_only_the_rows_left(tmp_path):
    store = Store(str(tmp_path / "resume.sqlite"))
    whole = tables.TableSpec.make("MB", "0..60", "1..40", capacity=9)
    tables.build_table(tables.TableSpec.make("MB", "0..60", "1..17", capacity=9), store=store)
    plan = tables.plan_table(whole, store)
    rest = tables.plan_table(tables.TableSpec.make("MB", "0..60", "18..40", capacity=9), Store("sqlite://"))
    assert plan.cells == whole.cells - 17 * 61 == rest.cells
    assert plan.rows == 23
    assert plan.seconds_approx == pytest.approx(rest.seconds_approx, rel=1e-9)
    assert plan.store_bytes_approx == pytest.approx(rest.store_bytes_approx, rel=1e-9)
    store.close()


def test_a_sample_of_rows_extrapolates_the_full_sum(monkeypatch):
    spec = tables.TableSpec.make("MB", "0..30", "1..3000", capacity=4)
    empty = Store("sqlite://")
    sampled = tables.plan_table(spec, empty)
    assert sampled.sampled
    monkeypatch.setattr(tables, "PLAN_ROWS", 10**6)
    full = tables.plan_table(spec, empty)
    assert not full.sampled
    assert sampled.seconds_approx == pytest.approx(full.seconds_approx, rel=0.05)
    assert sampled.digits_approx == pytest.approx(full.digits_approx, rel=0.05)


def test_the_workers_divide_the_rows_time_not_the_writes():
    spec = tables.TableSpec.make("MB", "0..300", "1..50", capacity=30)
    one = tables.plan_table(spec, Store("sqlite://"))
    four = cluster.plan_table_distributed(spec, Store("sqlite://"), workers=4)
    assert four.workers == 4
    assert four.seconds_approx == pytest.approx(one.compute_seconds_approx / 4 + one.write_seconds_approx)
    assert four.seconds_approx < one.seconds_approx


def test_planning_a_table_of_millions_of_cells_reads_a_bounded_sample(monkeypatch):
    spec = tables.TableSpec.make("MB", "0..1999", "1..2500")  # 5,000,000 cells
    rows = []
    real = tables._row_log2

    def counted(spec_, r, balls):
        rows.append(len(balls))
        return real(spec_, r, balls)

    monkeypatch.setattr(tables, "_row_log2", counted)
    plan = tables.plan_table(spec, Store("sqlite://"))
    assert plan.cells == 5_000_000 and plan.sampled
    assert len(rows) <= tables.PLAN_ROWS and max(rows) <= tables.PLAN_BALLS
    # r^n has n log10(r) + 1 digits (floor): the whole table's digits summed directly, outside the planner
    import math

    exact = sum(math.floor(n * math.log10(r)) + 1 if r > 1 else 1 for r in range(1, 2501) for n in range(2000))
    assert plan.digits_approx == pytest.approx(exact, rel=0.02)


# -- estimates against measured builds ----------------------------------------------

@pytest.mark.parametrize("rule, balls, urns, capacity, digits_of", [
    # BE configurations C(n + r - 1, n): scipy.special.comb(exact=True)
    ("BE", "0..150", "1..30", None, lambda n, r: len(str(comb(n + r - 1, n, exact=True)))),
    # MB microstates r^n: Python's integer power
    ("MB", "0..150", "1..30", None, lambda n, r: len(str(r ** n))),
])
def test_the_digits_match_counts_computed_outside(rule, balls, urns, capacity, digits_of):
    spec = tables.TableSpec.make(rule, balls, urns, capacity=capacity)
    plan = tables.plan_table(spec, Store("sqlite://"))
    actual = sum(digits_of(n, r) for r in spec.urns for n in spec.balls)
    # the planner's sizes are upper bounds, tight to within a few per cent here
    assert actual * 0.99 <= plan.digits_approx <= actual * 1.1


def test_the_estimates_against_a_measured_build(tmp_path):
    """Store size within a factor 2 of the file, digits of bounded rows within 1.5, time within a factor 8."""
    path = str(tmp_path / "measured.sqlite")
    spec = tables.TableSpec.make("MB", "0..250", "1..40", capacity=30)
    store = Store(path)
    plan = tables.plan_table(spec, store)
    size_before = sum(os.path.getsize(p) for p in (path, path + "-wal") if os.path.exists(p))
    cpu = time.process_time()
    tables.build_table(spec, store=store)
    cpu = time.process_time() - cpu
    digits = sum(d for _, _, _, d in tables.StoredTable("t", spec, store).cells())
    store.close()
    size = sum(os.path.getsize(p) for p in (path, path + "-wal") if os.path.exists(p)) - size_before
    assert digits <= plan.digits_approx <= 1.5 * digits
    assert size / 2 <= plan.store_bytes_approx <= 2 * size
    # rough by design (core/limits.py: a factor of a few either way); CPU time, not wall
    assert cpu / 8 <= plan.seconds_approx <= cpu * 8, (plan.seconds_approx, cpu)


def test_a_store_that_does_not_exist_yet_plans_the_whole_table(tmp_path):
    probe = open_store(str(tmp_path / "absent.sqlite"), create=False)
    assert not probe.exists
    spec = tables.TableSpec.make("BE", "0..10", "1..4")
    assert tables.plan_table(spec, probe).cells == spec.cells
    assert not (tmp_path / "absent.sqlite").exists()


def test_the_cell_cap_is_explained_in_the_help():
    result = run("table", "build", "--help")
    assert result.exit_code == 0
    text = " ".join(result.stdout.replace("│", " ").split())
    assert f"at most {tables.MAX_CELLS:,} cells" in text and "--max-seconds" in text
