"""A stored answer without SQLAlchemy: the quick read of :mod:`enumerator.store.quick` (issue 9, "Fast start").

A hit in an SQLite file whose store is not open yet is read with the
standard library's ``sqlite3``; anything unusual goes to the full store,
which answers or refuses exactly as before.  Expected values are closed
forms computed here with the standard library (stars and bars
``math.comb(n + r - 1, r - 1)`` and ``r**n``: common practice); refusals are
compared with what the full store says for the same file.
"""

from __future__ import annotations

import math
import os
import sqlite3
import subprocess
import sys
import threading

import pytest

from enumerator import Occupancy, StoreError
from enumerator import store as results
from enumerator.store import context as store_context
from enumerator.store import quick
from enumerator.store.keys import Key

pytestmark = pytest.mark.usefixtures("private_store")  # a fresh default store per test (conftest.py)


def _filled(path, cases=((5, 3), (7, 4), (40, 6))):
    """A store at *path* holding BE configurations of *cases*, then closed (as a finished process leaves it)."""
    with results.using(str(path)):
        for n, r in cases:
            assert Occupancy(balls=n, urns=r, rule="BE").configurations() == math.comb(n + r - 1, r - 1)  # stars and bars
    results.close_all()
    return path


def _opened(path) -> bool:
    """Whether this process opened the full store (SQLAlchemy) at *path*."""
    return str(path) in store_context._open


# -- a hit loads no SQLAlchemy ---------------------------------------------------------

_CLI_LOADED = r"""
import sys
from enumerator.cli import main
try:
    main(sys.argv[1:])
except SystemExit:
    pass
print("loaded:", " ".join(sorted({m.split(".")[0] for m in sys.modules})), file=sys.stderr)
"""


def _cli(*args):
    proc = subprocess.run([sys.executable, "-c", _CLI_LOADED, *map(str, args)],
                          capture_output=True, text=True, timeout=120)
    loaded = set(proc.stderr.rsplit("loaded:", 1)[-1].split())
    return proc, loaded


def test_a_stored_count_through_the_cli_loads_no_sqlalchemy(tmp_path):
    where = tmp_path / "s.sqlite"
    first, loaded = _cli("count", "-n", 1000, "-r", 200, "--store", where, "--json")
    assert first.returncode == 0 and "sqlalchemy" in loaded  # a miss: computed and written by the full store
    again, loaded = _cli("count", "-n", 1000, "-r", 200, "--store", where, "--json")
    assert again.returncode == 0 and again.stdout == first.stdout
    assert "sqlalchemy" not in loaded, "a stored answer imported SQLAlchemy"
    # stars and bars C(1199, 1000) and 200^1000 (common practice)
    assert f'"configurations": "{math.comb(1199, 1000)}"' in again.stdout
    assert f'"microstates": "{200**1000}"' in again.stdout


def test_an_in_process_hit_opens_no_store(tmp_path):
    path = _filled(tmp_path / "s.sqlite")
    with results.using(str(path)) as chosen:
        assert Occupancy(balls=40, urns=6, rule="BE").configurations() == math.comb(45, 5)  # stars and bars
        assert not _opened(path)
        # a miss opens the full store, which computes and writes
        assert Occupancy(balls=41, urns=6, rule="BE").configurations() == math.comb(46, 5)  # stars and bars
        assert _opened(path) and chosen.path == path.resolve()


def test_an_explicit_location_and_a_directory_are_read_quickly(tmp_path):
    path = _filled(tmp_path / results.DEFAULT_FILENAME)
    model = Occupancy(balls=7, urns=4, rule="BE")
    assert model.configurations(store=str(tmp_path)) == math.comb(10, 3)  # stars and bars
    assert not _opened(tmp_path)
    key = Key.of(model)
    # the reader itself: a hit, and a miss (another version is another key)
    assert quick.read(path.resolve(), "configurations", key, 1) == math.comb(10, 3)
    assert quick.read(path.resolve(), "configurations", key, 99) is quick.MISSING


def test_a_quick_read_writes_nothing_and_switches_no_journal_mode(tmp_path):
    path = _filled(tmp_path / "s.sqlite")
    with sqlite3.connect(path) as conn:
        conn.execute("PRAGMA journal_mode = DELETE")
    before = path.read_bytes()
    with results.using(str(path)):
        assert Occupancy(balls=5, urns=3, rule="BE").configurations() == math.comb(7, 2)  # stars and bars
    results.close_all()
    assert path.read_bytes() == before  # the full store would have switched it to WAL (a write)
    with sqlite3.connect(path) as conn:
        assert conn.execute("PRAGMA journal_mode").fetchone() == ("delete",)


def test_no_file_no_quick_read(tmp_path):
    path = tmp_path / "new.sqlite"
    assert quick.read(path, "configurations", Key.of(Occupancy(balls=2, urns=2, rule="BE")), 1) is quick.MISSING
    assert not path.exists()


# -- anything unusual goes to the full store -------------------------------------------

def _store_message(path, call) -> str:
    with pytest.raises(StoreError) as info:
        call()
    return str(info.value)


def test_a_damaged_row_is_refused_with_the_full_stores_words(tmp_path):
    path = _filled(tmp_path / "s.sqlite")
    with sqlite3.connect(path) as conn:
        conn.execute("UPDATE enumerator_results SET value = '999' WHERE balls = '40'")
    model = Occupancy(balls=40, urns=6, rule="BE")
    quick_words = _store_message(path, lambda: model.configurations(store=str(path)))
    assert not _opened(path)  # refused by the quick read itself
    full_words = _store_message(path, lambda: results.open_store(str(path)).get("configurations", Key.of(model), 1))
    assert quick_words == full_words and "damaged entry" in quick_words and str(path.resolve()) in quick_words


def test_an_unreadable_row_is_refused_with_the_full_stores_words(tmp_path):
    path = _filled(tmp_path / "s.sqlite")
    from enumerator.store.keys import key_digest, row_checksum

    model = Occupancy(balls=7, urns=4, rule="BE")
    digest = key_digest("configurations", Key.of(model), "", 1)
    with sqlite3.connect(path) as conn:  # intact by its checksum, but not a fraction
        conn.execute("UPDATE enumerator_results SET kind = 'fraction', value = 'x/y', checksum = ? WHERE key_digest = ?",
                     (row_checksum(digest, "fraction", "x/y"), digest))
    quick_words = _store_message(path, lambda: model.configurations(store=str(path)))
    full_words = _store_message(path, lambda: results.open_store(str(path)).get("configurations", Key.of(model), 1))
    assert quick_words == full_words and "unreadable entry" in quick_words


def test_a_newer_schema_is_refused_by_the_full_store(tmp_path):
    path = _filled(tmp_path / "s.sqlite")
    with sqlite3.connect(path) as conn:
        conn.execute("UPDATE enumerator_meta SET value = ? WHERE key = 'schema_version'", (str(results.SCHEMA_VERSION + 1),))
    message = _store_message(path, lambda: Occupancy(balls=5, urns=3, rule="BE").configurations(store=str(path)))
    assert "newer" in message and "upgrade enumerator" in message  # Store's refusal (test_store.py)


def test_a_missing_table_is_left_to_the_full_store_which_creates_it(tmp_path):
    path = _filled(tmp_path / "s.sqlite")
    with sqlite3.connect(path) as conn:
        conn.execute("DROP TABLE enumerator_tables")
    assert Occupancy(balls=5, urns=3, rule="BE").configurations(store=str(path)) == math.comb(7, 2)  # stars and bars
    assert _opened(path)
    with sqlite3.connect(path) as conn:
        assert conn.execute("SELECT count(*) FROM sqlite_master WHERE name = 'enumerator_tables'").fetchone() == (1,)


def test_a_file_that_is_not_a_database_is_refused_by_the_full_store(tmp_path):
    path = tmp_path / "s.sqlite"
    path.write_bytes(b"this is not an SQLite database, just some text" * 40)
    message = _store_message(path, lambda: Occupancy(balls=5, urns=3, rule="BE").configurations(store=str(path)))
    assert "not an SQLite database" in message  # engine.explain_failure's words


def test_a_locked_file_is_left_to_the_full_store(tmp_path, monkeypatch):
    path = _filled(tmp_path / "s.sqlite")
    with sqlite3.connect(path) as conn:
        conn.execute("PRAGMA journal_mode = DELETE")
    monkeypatch.setattr(quick, "_BUSY_TIMEOUT", 0.01)
    holder = sqlite3.connect(path, isolation_level=None)
    holder.execute("BEGIN EXCLUSIVE")  # no reader may start (rollback journal)
    try:
        assert quick.read(path.resolve(), "configurations", Key.of(Occupancy(balls=5, urns=3, rule="BE")), 1) is quick.MISSING
    finally:
        holder.execute("ROLLBACK")
        holder.close()
    assert Occupancy(balls=5, urns=3, rule="BE").configurations(store=str(path)) == math.comb(7, 2)  # stars and bars


def test_a_replaced_file_is_read_afresh(tmp_path):
    path = _filled(tmp_path / "s.sqlite", cases=((5, 3),))
    model = Occupancy(balls=5, urns=3, rule="BE")
    assert model.configurations(store=str(path)) == math.comb(7, 2)  # a quick read keeps its connection
    other = _filled(tmp_path / "other.sqlite", cases=((6, 3),))
    os.replace(other, path)
    assert quick.read(path.resolve(), "configurations", Key.of(model), 1) is quick.MISSING  # not in the new file
    assert quick.read(path.resolve(), "configurations", Key.of(Occupancy(balls=6, urns=3, rule="BE")), 1) == math.comb(8, 2)


def test_an_older_schema_version_is_upgraded_by_the_full_store(tmp_path, monkeypatch):
    from enumerator.store import migrations, schema

    path = _filled(tmp_path / "s.sqlite")
    step = migrations.Migration(schema.SCHEMA_VERSION, "nothing to change", lambda connection: None)
    monkeypatch.setattr(migrations, "MIGRATIONS", migrations.MIGRATIONS + (step,))
    monkeypatch.setattr(schema, "SCHEMA_VERSION", step.target)
    assert Occupancy(balls=40, urns=6, rule="BE").configurations(store=str(path)) == math.comb(45, 5)  # stars and bars
    assert _opened(path)
    with sqlite3.connect(path) as conn:
        assert conn.execute("SELECT value FROM enumerator_meta WHERE key = 'schema_version'").fetchone() == (str(step.target),)


# -- threads and closing ---------------------------------------------------------------

def test_threads_share_the_quick_reader_and_close_all_closes_it(tmp_path):
    cases = [(n, r) for n in range(0, 30, 3) for r in range(1, 6)]
    path = _filled(tmp_path / "s.sqlite", cases=cases)
    errors = []
    barrier = threading.Barrier(6)

    def worker():
        try:
            barrier.wait()
            for _ in range(5):
                for n, r in cases:
                    got = Occupancy(balls=n, urns=r, rule="BE").configurations(store=str(path))
                    assert got == math.comb(n + r - 1, r - 1)  # stars and bars
        except BaseException as error:  # pragma: no cover - reported below
            errors.append(error)

    threads = [threading.Thread(target=worker) for _ in range(6)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    assert errors == [] and not _opened(path)
    reader = quick._readers[path.resolve()]
    assert reader.conn is not None
    results.close_all()
    assert reader.conn is None and quick._readers == {}
