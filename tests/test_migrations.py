"""Tests of the store's schema upgrades (enumerator/store/migrations.py).

The upgrade machinery (order, atomicity, locks, read-only stores) is
exercised with synthetic steps registered on a temporary copy of the step
list (monkeypatch): a store written at the current schema is opened by code
that believes the current schema is one (or two) higher.  The real step 1->2
is tested on schema-1 files written by hand with raw SQL in schema 1's
layout, keyed the way schema 1 keyed them (tests/test_migrations.py,
``_old_digest``: the digest function of commit f5be745, copied here, so the
old keys do not come from the code under test).

Answers read back are checked against closed forms computed here with the
standard library (stars and bars ``math.comb(n + r - 1, r - 1)`` and
``r**n``: Feller, vol. 1, II.5) or brute force over ``itertools.product``,
never against the store itself.
"""

from __future__ import annotations

import hashlib
import itertools
import math
import os
import sqlite3
import threading
import zlib
from pathlib import Path

import pytest
from cli_helpers import one_line_error, run, run_json

from enumerator import Occupancy, StoreError
from enumerator import store as results
from enumerator.store import migrations, schema, tables

pytestmark = pytest.mark.usefixtures("no_configured_store")  # no store from the environment (conftest.py)


#: The schema the synthetic steps start from (the one this code writes).
NOW = schema.SCHEMA_VERSION


@pytest.fixture
def old_store(tmp_path) -> Path:
    """A store written at the current schema with a few answers in it (BE counts and MB microstates)."""
    path = tmp_path / "old.sqlite"
    with results.using(str(path)):
        for n in range(6):
            Occupancy(balls=n, urns=4, rule="BE").configurations()
            Occupancy(balls=n, urns=3, rule="MB").microstates()
    results.close_all()
    assert _version(path) == str(NOW)
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

    _use_steps(monkeypatch, migrations.Migration(NOW, "add a note to every result", step))
    store = results.Store(str(old_store))
    assert len(calls) == 1
    assert _version(old_store) == str(NOW + 1)
    assert "note" in _columns(old_store)
    with sqlite3.connect(old_store) as conn:
        assert conn.execute("SELECT DISTINCT note FROM enumerator_results").fetchall() == [("carried over",)]
    assert store.stats()["schema_version"] == NOW + 1 and store.stats()["entries"] == 12
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

    _use_steps(monkeypatch, migrations.Migration(NOW, "note", first), migrations.Migration(NOW + 1, "note again", second))
    results.Store(str(old_store)).close()
    assert order == ["1->2", "2->3"]
    assert _version(old_store) == str(NOW + 2)
    with sqlite3.connect(old_store) as conn:
        assert conn.execute("SELECT DISTINCT note FROM enumerator_results").fetchall() == [("twice",)]
    _answers_are_right(old_store)


def test_a_new_store_is_created_at_the_current_schema_without_running_steps(tmp_path, monkeypatch):
    calls = []
    _use_steps(monkeypatch, migrations.Migration(NOW, "never needed", lambda connection: calls.append(1)))
    path = tmp_path / "new.sqlite"
    results.Store(str(path)).close()
    assert calls == [] and _version(path) == str(NOW + 1)


def test_a_failing_step_leaves_the_store_untouched_at_its_old_schema(old_store, monkeypatch):
    before = _dump(old_store)

    def half_done(connection):
        _add_note_column(connection)  # a real change, which must be rolled back
        raise RuntimeError("disk on fire")

    _use_steps(monkeypatch, migrations.Migration(NOW, "add a note", half_done))
    with pytest.raises(StoreError) as info:
        results.Store(str(old_store))
    message = str(info.value)
    assert "\n" not in message
    assert str(old_store) in message and f"schema version {NOW}" in message
    assert f"failed at step {NOW}->{NOW + 1} (add a note): disk on fire" in message
    assert f"nothing was changed (it is still at schema version {NOW})" in message
    assert "store=" in message
    assert _dump(old_store) == before
    assert _version(old_store) == str(NOW) and "note" not in _columns(old_store)


def test_a_failure_in_a_later_step_undoes_the_earlier_ones(old_store, monkeypatch):
    before = _dump(old_store)

    def broken(connection):
        raise ValueError("no such thing")

    _use_steps(monkeypatch, migrations.Migration(NOW, "note", _add_note_column), migrations.Migration(NOW + 1, "break", broken))
    with pytest.raises(StoreError, match=f"step {NOW + 1}->{NOW + 2}"):
        results.Store(str(old_store))
    assert _dump(old_store) == before


def test_after_a_failed_upgrade_the_old_code_still_uses_the_store(old_store, monkeypatch):
    with monkeypatch.context() as patched:
        _use_steps(patched, migrations.Migration(NOW, "fails", lambda connection: 1 / 0))
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

    _use_steps(monkeypatch, migrations.Migration(NOW, "note", step))
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
    assert _version(old_store) == str(NOW + 1) and _columns(old_store).count("note") == 1


# -- stores that cannot be upgraded ---------------------------------------------------

def test_a_read_only_old_store_is_refused_with_what_to_do(old_store, monkeypatch):
    # (the tests may run as root, who can write anywhere, so the permission is simulated)
    before = _dump(old_store)
    _use_steps(monkeypatch, migrations.Migration(NOW, "note", _add_note_column))
    monkeypatch.setattr(os, "access", lambda path, mode: False)
    with pytest.raises(StoreError) as info:
        results.Store(str(old_store))
    message = str(info.value)
    assert "\n" not in message and str(old_store) in message
    assert f"schema version {NOW}" in message and "read-only" in message
    assert "write access" in message and "store=" in message
    monkeypatch.undo()
    assert _dump(old_store) == before


def test_an_old_store_opened_through_a_read_only_url_is_refused(old_store, monkeypatch):
    # SQLite's own read-only mode: refused by SQLite even for root
    before = _dump(old_store)
    _use_steps(monkeypatch, migrations.Migration(NOW, "note", _add_note_column))
    with pytest.raises(StoreError) as info:
        results.Store(f"sqlite:///file:{old_store}?mode=ro&uri=true")
    message = str(info.value)
    assert "read-only" in message and "write access" in message and str(old_store) in message
    monkeypatch.undo()
    assert _dump(old_store) == before


def test_the_cli_refuses_a_read_only_old_store_in_one_line(old_store, monkeypatch):
    _use_steps(monkeypatch, migrations.Migration(NOW, "note", _add_note_column))
    url = f"sqlite:///file:{old_store}?mode=ro&uri=true"
    line = one_line_error(run("count", "-n", 3, "-r", 4, "--rule", "BE", "--store", url))
    assert "read-only" in line and "write access" in line and "--no-cache" in line
    # with write access the same command upgrades it and answers: C(6, 3) = 20
    assert run_json("count", "-n", 3, "-r", 4, "--rule", "BE", "--store", old_store)["configurations"] == "20"
    assert _version(old_store) == str(NOW + 1)


def test_a_newer_store_is_still_refused(old_store):
    with sqlite3.connect(old_store) as conn:
        conn.execute("UPDATE enumerator_meta SET value = ? WHERE key = 'schema_version'", (str(schema.SCHEMA_VERSION + 1),))
    with pytest.raises(StoreError, match="newer than this enumerator understands"):
        results.Store(str(old_store))


# -- the real step 1 -> 2: a schema-1 file written by hand ---------------------------------

#: Schema 1's tables, as schema 1's code created them in SQLite (read from a
#: store that code wrote).
_SCHEMA_1 = """
CREATE TABLE enumerator_meta (
    "key" VARCHAR(64) NOT NULL, value TEXT NOT NULL, PRIMARY KEY ("key"));
CREATE TABLE enumerator_results (
    id INTEGER NOT NULL, key_digest VARCHAR(64) NOT NULL, quantity VARCHAR(64) NOT NULL,
    rule VARCHAR(8) NOT NULL, balls TEXT NOT NULL, urns BIGINT NOT NULL, bounds TEXT NOT NULL,
    params TEXT NOT NULL, version INTEGER NOT NULL, kind VARCHAR(16) NOT NULL, value TEXT NOT NULL,
    digits BIGINT NOT NULL, checksum BIGINT NOT NULL, method VARCHAR(200) NOT NULL,
    elapsed_ns BIGINT NOT NULL, created_at DATETIME NOT NULL, PRIMARY KEY (id), UNIQUE (key_digest));
CREATE INDEX ix_enumerator_results_row ON enumerator_results (quantity, rule, urns, version);
CREATE TABLE enumerator_tables (
    id INTEGER NOT NULL, name VARCHAR(200) NOT NULL, quantity VARCHAR(64) NOT NULL,
    rule VARCHAR(8) NOT NULL, minimum BIGINT NOT NULL, capacity BIGINT, balls_first BIGINT NOT NULL,
    balls_last BIGINT NOT NULL, urns_first BIGINT NOT NULL, urns_last BIGINT NOT NULL,
    created_at DATETIME NOT NULL, PRIMARY KEY (id), UNIQUE (name));
"""


def _old_digest(quantity, rule, bounds, params, version, balls) -> str:
    """Schema 1's key digest (``_digest`` of enumerator/store/database.py at commit f5be745)."""
    text = "\x1f".join((quantity, rule, bounds, params, str(version), str(balls)))
    return hashlib.sha256(text.encode()).hexdigest()


def _old_checksum(digest, kind, text) -> int:
    """Schema 1's row checksum (``_checksum`` at commit f5be745)."""
    return zlib.crc32(text.encode(), zlib.crc32(f"{digest}:{kind}:".encode()))


def _old_text(bounds) -> str:
    """Schema 1's canonical text of per-urn bounds that are not all equal (one ``a:b`` per urn)."""
    return ",".join(f"{a}:" if b is None else f"{a}:{b}" for a, b in bounds)


def _brute(bounds, n, rule):
    """Configurations (BE) or microstates (MB) by listing every vector in the bounds (brute force)."""
    total = 0
    for k in itertools.product(*(range(a, min(n, n if b is None else b) + 1) for a, b in bounds)):
        if sum(k) == n:
            total += 1 if rule == "BE" else math.factorial(n) // math.prod(map(math.factorial, k))
    return total


class _OldStore:
    """Writes a schema-1 store file with raw SQL, rows keyed the way schema 1 keyed them."""

    def __init__(self, path: Path):
        self.path = path
        self.conn = sqlite3.connect(path)
        self.conn.executescript(_SCHEMA_1)
        self.conn.executemany("INSERT INTO enumerator_meta VALUES (?, ?)", [
            ("schema_version", "1"), ("created_by", "enumerator (schema 1)"), ("created_at", "2026-01-01T00:00:00+00:00")])

    def result(self, quantity, rule, n, urns, bounds, value, *, params="", version=1, checksum=None,
               digest=None) -> str:
        digest = digest or _old_digest(quantity, rule, bounds, params, version, n)
        text = str(value)
        self.conn.execute(
            "INSERT INTO enumerator_results (key_digest, quantity, rule, balls, urns, bounds, params, version, "
            "kind, value, digits, checksum, method, elapsed_ns, created_at) "
            "VALUES (?, ?, ?, ?, ?, ?, ?, ?, 'int', ?, ?, ?, 'by hand', 0, '2026-01-01 00:00:00.000000')",
            (digest, quantity, rule, str(n), urns, bounds, params, version, text, len(text),
             _old_checksum(digest, "int", text) if checksum is None else checksum),
        )
        return digest

    def close(self):
        self.conn.commit()
        self.conn.close()


def _rows(path: Path) -> dict:
    """``id -> (key_digest, bounds, urns, typeof(urns), checksum, value)`` of every result row."""
    with sqlite3.connect(path) as conn:
        return {row[0]: row[1:] for row in conn.execute(
            "SELECT id, key_digest, bounds, urns, typeof(urns), checksum, value FROM enumerator_results")}


@pytest.fixture
def counted(monkeypatch):
    """Counts the calls of the pure counting functions (a store hit makes none)."""
    from enumerator.algorithms import counting

    calls = []
    for name in ("count_configurations", "count_microstates"):
        real = getattr(counting, name)

        def spy(*args, _real=real, _name=name, **kwargs):
            calls.append(_name)
            return _real(*args, **kwargs)

        monkeypatch.setattr(counting, name, spy)
    return calls


GROUPED = [(0, 2), (0, 2), (1, None)]  # schema 1: "0:2,0:2,1:"; schema 2: "2x0:2,1x1:"
MIXED = [(0, 1), (0, None), (2, 3)]  # schema 1: "0:1,0:,2:3"; schema 2: "1x0:1,1x0:,1x2:3"


@pytest.fixture
def schema_1_store(tmp_path) -> Path:
    """A schema-1 file: uniform rows, per-urn rows, a table definition, one unreadable and one damaged row."""
    path = tmp_path / "schema1.sqlite"
    old = _OldStore(path)
    for n in range(6):  # uniform: stars and bars C(n + 3, 3) (Feller, vol. 1, II.5)
        old.result("configurations", "BE", n, 4, "4*0:", math.comb(n + 3, 3))
    for n in range(5):  # per urn, values by brute force
        old.result("configurations", "BE", n, 3, _old_text(GROUPED), _brute(GROUPED, n, "BE"))
        old.result("microstates", "MB", n, 3, _old_text(MIXED), _brute(MIXED, n, "MB"))
    # a long per-urn text: 1999 urns holding at most one ball and one unbounded urn
    long_bounds = [(0, 1)] * 1999 + [(0, None)]
    # BE: k_last = n - (number of occupied capped urns): sum_j C(1999, j), j <= 2 (stars and bars by cases)
    old.result("configurations", "BE", 2, 2000, _old_text(long_bounds), sum(math.comb(1999, j) for j in range(3)))
    # the same question as the uniform row "2*0:1" written per urn (never written by schema 1's code)
    old.result("configurations", "BE", 1, 2, "0:1,0:1", 2)
    old.result("configurations", "BE", 1, 2, "2*0:1", 2)
    old.result("configurations", "BE", 1, 2, "0:2,zz", 2)  # unreadable bounds text
    old.result("configurations", "BE", 5, 3, _old_text([(0, 1), (0, 2), (0, 3)]), 1, checksum=12345)  # damaged
    old.conn.execute(
        "INSERT INTO enumerator_tables (name, quantity, rule, minimum, capacity, balls_first, balls_last, "
        "urns_first, urns_last, created_at) VALUES ('be4', 'configurations', 'BE', 0, NULL, 0, 5, 4, 4, "
        "'2026-01-01 00:00:00.000000')"
    )
    old.close()
    return path


def test_step_1_to_2_refiles_per_urn_rows_and_keeps_uniform_ones(schema_1_store, counted):
    before = _rows(schema_1_store)
    store = results.Store(str(schema_1_store))
    assert _version(schema_1_store) == "2"
    after = _rows(schema_1_store)
    for row_id, (digest, bounds, _, _, checksum, value) in before.items():
        if "*" in bounds:  # uniform texts: the same text, digest and checksum as schema 1's
            assert after[row_id][:2] == (digest, bounds) and after[row_id][4:] == (checksum, value)
    texts = {row[1] for row in after.values()}
    assert "2x0:2,1x1:" in texts and "1x0:1,1x0:,1x2:3" in texts and "1999x0:1,1x0:" in texts
    assert not {_old_text(GROUPED), _old_text(MIXED), "0:1,0:1"} & texts
    assert "0:2,zz" in texts  # unreadable: left for cache verify
    damaged = [row for row in after.values() if row[1] == "0:1,0:2,0:3"]
    assert len(damaged) == 1 and damaged[0][4] == 12345  # never re-checksummed over a damaged value
    assert len(after) == len(before) - 1  # "0:1,0:1" merged into "2*0:1"
    assert {row[3] for row in after.values()} == {"text"}  # r is decimal text now
    # the same models answer from the store: no counting function runs
    with results.using(store):
        for n in range(6):
            assert Occupancy(balls=n, urns=4, rule="BE").configurations() == math.comb(n + 3, 3)
        for n in range(5):
            assert Occupancy(balls=n, bounds=GROUPED, rule="BE").configurations() == _brute(GROUPED, n, "BE")
            assert Occupancy(balls=n, bounds=MIXED, rule="MB").microstates() == _brute(MIXED, n, "MB")
        long_model = Occupancy(balls=2, bounds="1999x0:1,1x0:", rule="BE")
        assert long_model.configurations() == 1 + 1999 + math.comb(1999, 2)
        assert Occupancy(balls=1, urns=2, rule="BE", capacity=1).configurations() == 2
        assert counted == []
        # (the spy does see a computation: a model the file never held; C(8, 3) = 56)
        assert Occupancy(balls=5, urns=4, rule="BE", capacity=5).configurations() == math.comb(8, 3)
        assert counted == ["count_configurations"]
    # and the lookup table defined in schema 1 still reads (its cells are the uniform rows)
    data = tables.load_table("be4", store=store)
    assert {n: data.value(n, 4) for n in range(6)} == {n: math.comb(n + 3, 3) for n in range(6)}


def test_step_1_to_2_gives_the_layout_of_a_new_store(schema_1_store, tmp_path):
    results.Store(str(schema_1_store)).close()
    fresh = tmp_path / "fresh.sqlite"
    results.Store(str(fresh)).close()

    def layout(path):
        with sqlite3.connect(path) as conn:
            tables_ = [name for (name,) in conn.execute(
                "SELECT name FROM sqlite_master WHERE type = 'table' ORDER BY name")]
            return {name: (conn.execute(f"PRAGMA table_info({name})").fetchall(),
                           sorted(row[1:3] for row in conn.execute(f"PRAGMA index_list({name})")))
                    for name in tables_}

    assert layout(schema_1_store) == layout(fresh)


def test_step_1_to_2_works_in_small_batches(schema_1_store, monkeypatch, counted):
    monkeypatch.setattr(migrations, "REWRITE_BATCH", 2)
    store = results.Store(str(schema_1_store))
    with results.using(store):
        for n in range(5):
            assert Occupancy(balls=n, bounds=GROUPED, rule="BE").configurations() == _brute(GROUPED, n, "BE")
    assert counted == []


def test_a_failure_during_step_1_to_2_keeps_the_schema_1_file(schema_1_store, monkeypatch):
    before = _dump(schema_1_store)

    def broken(connection, batch=None):
        raise RuntimeError("interrupted after the tables were copied")

    monkeypatch.setattr(migrations, "_rewrite_per_urn_keys", broken)
    with pytest.raises(StoreError, match="step 1->2"):
        results.Store(str(schema_1_store))
    assert _dump(schema_1_store) == before and _version(schema_1_store) == "1"


def test_after_step_1_to_2_verify_reports_what_was_left_and_fix_repairs_it(schema_1_store):
    store = results.Store(str(schema_1_store))
    report = store.verify()
    problems = {m["bounds"]: m["problem"] for m in report["mismatches"]}
    assert problems["0:2,zz"].startswith("unreadable key")
    assert problems["0:1,0:2,0:3"].startswith("damaged")
    assert len(problems) == 2
    fixed = store.verify(fix=True)
    assert fixed["fixed"] == 2
    assert store.verify()["mismatches"] == []
    texts = {row[1] for row in _rows(schema_1_store).values()}
    assert "0:2,zz" not in texts and "0:1,0:2,0:3" not in texts
    # the damaged answer now lives under its group text (value by brute force)
    with results.using(store):
        bounds = [(0, 1), (0, 2), (0, 3)]
        assert Occupancy(balls=5, bounds=bounds, rule="BE").configurations() == _brute(bounds, 5, "BE")
