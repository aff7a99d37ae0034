"""Tests of the store's schema upgrades (enumerator/store/migrations.py).

There is one schema so far, so the upgrade path is exercised with synthetic
steps registered on a temporary copy of the step list (monkeypatch): a store
written at schema 1 is opened by code that believes the current schema is 2
(or 3).  Answers read back are checked against closed forms computed here
with the standard library (stars and bars ``math.comb(n + r - 1, r - 1)``
and ``r**n``: Feller, vol. 1, II.5), never against the store itself.
"""

from __future__ import annotations

import math
import os
import sqlite3
import threading
from pathlib import Path

import pytest
from cli_helpers import one_line_error, run, run_json

from enumerator import Occupancy, StoreError
from enumerator import store as results
from enumerator.store import migrations, schema


@pytest.fixture(autouse=True)
def _isolated(monkeypatch):
    monkeypatch.delenv(results.ENV_STORE, raising=False)
    monkeypatch.delenv(results.ENV_NO_CACHE, raising=False)
    yield
    results.close_all()


@pytest.fixture
def old_store(tmp_path) -> Path:
    """A store written at schema 1 with a few answers in it (BE counts and MB microstates)."""
    path = tmp_path / "old.sqlite"
    with results.using(str(path)):
        for n in range(6):
            Occupancy(balls=n, urns=4, rule="BE").configurations()
            Occupancy(balls=n, urns=3, rule="MB").microstates()
    results.close_all()
    assert _version(path) == "1"
    return path


def _version(path: Path) -> str:
    with sqlite3.connect(path) as conn:
        return conn.execute("SELECT value FROM enumerator_meta WHERE key = 'schema_version'").fetchone()[0]


def _columns(path: Path) -> list:
    with sqlite3.connect(path) as conn:
        return [row[1] for row in conn.execute("PRAGMA table_info(enumerator_results)")]


def _dump(path: Path) -> list:
    """Every table and row of the store as SQL text (the store's whole content)."""
    conn = sqlite3.connect(path)
    try:
        return list(conn.iterdump())
    finally:
        conn.close()


def _add_note_column(connection):
    connection.exec_driver_sql("ALTER TABLE enumerator_results ADD COLUMN note TEXT")
    connection.exec_driver_sql("UPDATE enumerator_results SET note = 'carried over'")


def _use_steps(monkeypatch, *steps):
    """Make *steps* the step list (after the real ones) and the last one's target the current schema."""
    monkeypatch.setattr(migrations, "MIGRATIONS", migrations.MIGRATIONS + tuple(steps))
    monkeypatch.setattr(schema, "SCHEMA_VERSION", steps[-1].target)


def _answers_are_right(path: Path) -> None:
    with results.using(str(path)):
        for n in range(6):
            assert Occupancy(balls=n, urns=4, rule="BE").configurations() == math.comb(n + 3, 3)
            assert Occupancy(balls=n, urns=3, rule="MB").microstates() == 3**n


# -- the step list ------------------------------------------------------------------

def test_the_step_list_leads_from_the_first_schema_to_the_current_one():
    steps = migrations.plan(schema.FIRST_SCHEMA_VERSION)
    assert len(steps) == schema.SCHEMA_VERSION - schema.FIRST_SCHEMA_VERSION
    assert [step.source for step in steps] == list(range(schema.FIRST_SCHEMA_VERSION, schema.SCHEMA_VERSION))
    assert migrations.plan(schema.SCHEMA_VERSION) == ()


def test_a_gap_or_a_duplicate_in_the_step_list_is_a_defect_not_a_guess():
    one = migrations.Migration(1, "one", lambda connection: None)
    three = migrations.Migration(3, "three", lambda connection: None)
    with pytest.raises(ValueError, match="0 steps from schema 2"):
        migrations.plan(1, 4, [one, three])
    with pytest.raises(ValueError, match="2 steps from schema 1"):
        migrations.plan(1, 2, [one, one])
    with pytest.raises(ValueError, match="newer"):
        migrations.plan(3, 2, [one])


# -- upgrading -----------------------------------------------------------------------

def test_an_old_store_is_upgraded_on_opening_and_answers_the_same(old_store, monkeypatch):
    calls = []

    def step(connection):
        calls.append(1)
        _add_note_column(connection)

    _use_steps(monkeypatch, migrations.Migration(1, "add a note to every result", step))
    store = results.Store(str(old_store))
    assert len(calls) == 1
    assert _version(old_store) == "2"
    assert "note" in _columns(old_store)
    with sqlite3.connect(old_store) as conn:
        assert conn.execute("SELECT DISTINCT note FROM enumerator_results").fetchall() == [("carried over",)]
    assert store.stats()["schema_version"] == 2 and store.stats()["entries"] == 12
    store.close()
    _answers_are_right(old_store)
    # opened again: already current, the step does not run twice
    results.Store(str(old_store)).close()
    assert len(calls) == 1


def test_two_steps_run_in_order_in_one_open(old_store, monkeypatch):
    order = []

    def first(connection):
        order.append("1->2")
        _add_note_column(connection)

    def second(connection):
        order.append("2->3")
        connection.exec_driver_sql("UPDATE enumerator_results SET note = 'twice'")

    _use_steps(monkeypatch, migrations.Migration(1, "note", first), migrations.Migration(2, "note again", second))
    results.Store(str(old_store)).close()
    assert order == ["1->2", "2->3"]
    assert _version(old_store) == "3"
    with sqlite3.connect(old_store) as conn:
        assert conn.execute("SELECT DISTINCT note FROM enumerator_results").fetchall() == [("twice",)]
    _answers_are_right(old_store)


def test_a_new_store_is_created_at_the_current_schema_without_running_steps(tmp_path, monkeypatch):
    calls = []
    _use_steps(monkeypatch, migrations.Migration(1, "never needed", lambda connection: calls.append(1)))
    path = tmp_path / "new.sqlite"
    results.Store(str(path)).close()
    assert calls == [] and _version(path) == "2"


def test_a_failing_step_leaves_the_store_untouched_at_its_old_schema(old_store, monkeypatch):
    before = _dump(old_store)

    def half_done(connection):
        _add_note_column(connection)  # a real change, which must be rolled back
        raise RuntimeError("disk on fire")

    _use_steps(monkeypatch, migrations.Migration(1, "add a note", half_done))
    with pytest.raises(StoreError) as info:
        results.Store(str(old_store))
    message = str(info.value)
    assert "\n" not in message
    assert str(old_store) in message and "schema version 1" in message
    assert "failed at step 1->2 (add a note): disk on fire" in message
    assert "nothing was changed (it is still at schema version 1)" in message
    assert "--store" in message
    assert _dump(old_store) == before
    assert _version(old_store) == "1" and "note" not in _columns(old_store)


def test_a_failure_in_a_later_step_undoes_the_earlier_ones(old_store, monkeypatch):
    before = _dump(old_store)

    def broken(connection):
        raise ValueError("no such thing")

    _use_steps(monkeypatch, migrations.Migration(1, "note", _add_note_column), migrations.Migration(2, "break", broken))
    with pytest.raises(StoreError, match="step 2->3"):
        results.Store(str(old_store))
    assert _dump(old_store) == before


def test_after_a_failed_upgrade_the_old_code_still_uses_the_store(old_store, monkeypatch):
    with monkeypatch.context() as patched:
        _use_steps(patched, migrations.Migration(1, "fails", lambda connection: 1 / 0))
        with pytest.raises(StoreError):
            results.Store(str(old_store))
    _answers_are_right(old_store)


def test_concurrent_openers_upgrade_once(old_store, monkeypatch):
    calls = []
    guard = threading.Lock()

    def step(connection):
        with guard:
            calls.append(threading.get_ident())
        _add_note_column(connection)

    _use_steps(monkeypatch, migrations.Migration(1, "note", step))
    barrier = threading.Barrier(4)
    errors = []

    def opener():
        barrier.wait()
        try:
            results.Store(str(old_store)).close()
        except Exception as error:  # collected, asserted below
            errors.append(error)

    threads = [threading.Thread(target=opener) for _ in range(4)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    assert errors == []
    assert len(calls) == 1  # each opener re-reads the version under the write lock
    assert _version(old_store) == "2" and _columns(old_store).count("note") == 1


# -- stores that cannot be upgraded ---------------------------------------------------

def test_a_read_only_old_store_is_refused_with_what_to_do(old_store, monkeypatch):
    # (the tests may run as root, who can write anywhere, so the permission is simulated)
    before = _dump(old_store)
    _use_steps(monkeypatch, migrations.Migration(1, "note", _add_note_column))
    monkeypatch.setattr(os, "access", lambda path, mode: False)
    with pytest.raises(StoreError) as info:
        results.Store(str(old_store))
    message = str(info.value)
    assert "\n" not in message and str(old_store) in message
    assert "schema version 1" in message and "read-only" in message
    assert "write access" in message and "--store" in message
    monkeypatch.undo()
    assert _dump(old_store) == before


def test_an_old_store_opened_through_a_read_only_url_is_refused(old_store, monkeypatch):
    # SQLite's own read-only mode: refused by SQLite even for root
    before = _dump(old_store)
    _use_steps(monkeypatch, migrations.Migration(1, "note", _add_note_column))
    with pytest.raises(StoreError) as info:
        results.Store(f"sqlite:///file:{old_store}?mode=ro&uri=true")
    message = str(info.value)
    assert "read-only" in message and "write access" in message and str(old_store) in message
    monkeypatch.undo()
    assert _dump(old_store) == before


def test_the_cli_refuses_a_read_only_old_store_in_one_line(old_store, monkeypatch):
    _use_steps(monkeypatch, migrations.Migration(1, "note", _add_note_column))
    url = f"sqlite:///file:{old_store}?mode=ro&uri=true"
    line = one_line_error(run("count", "-n", 3, "-r", 4, "--rule", "BE", "--store", url))
    assert "read-only" in line and "write access" in line and "--no-cache" in line
    # with write access the same command upgrades it and answers: C(6, 3) = 20
    assert run_json("count", "-n", 3, "-r", 4, "--rule", "BE", "--store", old_store)["configurations"] == "20"
    assert _version(old_store) == "2"


def test_a_newer_store_is_still_refused(old_store):
    with sqlite3.connect(old_store) as conn:
        conn.execute("UPDATE enumerator_meta SET value = ? WHERE key = 'schema_version'", (str(schema.SCHEMA_VERSION + 1),))
    with pytest.raises(StoreError, match="newer than this enumerator understands"):
        results.Store(str(old_store))
