"""Someone else's store, another application's file, and every kind of damage (issue 11, item 6).

* A store the user may read but not write answers reads, with one warning,
  and the quick read keeps answering (the chmod tests skip under root, for
  whom permissions do not bite; the immutable route they take is also driven
  by hand here).
* An SQLite file that is not a store is refused before anything in it
  changes (byte for byte).
* Each kind of damage is reported as damage, with how to repair it, and
  ``cache verify --fix --all`` repairs it; ``--sample`` draws in SQL.

Expected values are closed forms computed here (stars and bars
``math.comb(n + r - 1, r - 1)`` for BE configurations and ``r**n`` for MB
assignments: common practice) or brute-force enumeration written in the test.
"""

from __future__ import annotations

import itertools
import json
import logging
import math
import os
import sqlite3
from fractions import Fraction

import pytest
import sqlalchemy as sa
from cli_helpers import one_line_error, run, run_json

from enumerator import Occupancy, StoreError
from enumerator import store as results
from enumerator.store import database as store_database
from enumerator.store import entries as store_entries
from enumerator.store import quick
from enumerator.store.keys import Key, key_digest, row_checksum

ROOT = hasattr(os, "geteuid") and os.geteuid() == 0
needs_permissions = pytest.mark.skipif(ROOT, reason="chmod does not bite for root")


pytestmark = pytest.mark.usefixtures("private_store")  # a fresh default store per test (conftest.py)


def _stars_and_bars(n: int, r: int) -> int:
    return math.comb(n + r - 1, r - 1)  # BE configurations: stars and bars (common practice)


def _filled(path, cases=((5, 3), (7, 4), (9, 4))):
    """A WAL store at *path* holding BE configurations of *cases*, closed as a finished process leaves it."""
    with results.using(str(path)):
        for n, r in cases:
            assert Occupancy(balls=n, urns=r, rule="BE").configurations() == _stars_and_bars(n, r)
    results.close_all()
    return path


def _files_beside(path) -> set:
    return {p.name for p in path.parent.iterdir() if p.name.startswith(path.name + "-")}


# -- a store the user may read but not write -------------------------------------------------

@needs_permissions
def test_a_read_only_file_in_a_read_only_folder_answers_reads_with_one_warning(tmp_path, caplog):
    folder = tmp_path / "theirs"
    folder.mkdir()
    path = _filled(folder / "s.sqlite")
    assert path.read_bytes()[18] == 2  # WAL mode (SQLite file format, header byte 18)
    before = path.read_bytes()
    path.chmod(0o444)
    folder.chmod(0o555)
    try:
        caplog.set_level(logging.WARNING, logger="enumerator.store")
        store = results.Store(str(path))
        assert store.read_only
        key = Key.of(Occupancy(balls=7, urns=4, rule="BE"))
        assert store.get("configurations", key, 1) == _stars_and_bars(7, 4)
        assert store.stats()["entries"] == 3 and store.verify()["mismatches"] == []
        assert store.put("configurations", Key.of(Occupancy(balls=2, urns=2, rule="BE")), 1, 3) is False
        store.close()
        warnings = [r for r in caplog.records if "read-only" in r.getMessage()]
        assert len(warnings) == 1 and str(path) in warnings[0].getMessage()
        # the quick read answers too, and a miss is computed (closed form) and not stored
        assert quick.read(path, "configurations", key, 1) == _stars_and_bars(7, 4)
        with results.using(str(path)):
            assert Occupancy(balls=11, urns=4, rule="BE").configurations() == _stars_and_bars(11, 4)
        results.close_all()
        quick.close_all()
        assert path.read_bytes() == before and _files_beside(path) == set()
    finally:
        folder.chmod(0o755)
        path.chmod(0o644)


@needs_permissions
def test_a_read_only_file_in_a_writable_folder_leaves_no_file_of_the_reader_beside_it(tmp_path):
    path = _filled(tmp_path / "s.sqlite")
    path.chmod(0o444)
    try:
        payload = run_json("count", "-n", 9, "-r", 4, "--rule", "BE", "--store", path)
        assert payload["configurations"] == str(_stars_and_bars(9, 4))
        assert run_json("cache", "stats", "--store", path)["read_only"] is True
        results.close_all()
        quick.close_all()
        assert _files_beside(path) == set()  # a -shm owned by the reader would stop the owner writing
    finally:
        path.chmod(0o644)


@needs_permissions
def test_your_own_file_in_a_folder_you_may_not_write_answers_reads(tmp_path):
    # a WAL file needs its -shm and -wal beside it: the folder refuses them, so it is read read-only
    folder = tmp_path / "mounted"
    folder.mkdir()
    path = _filled(folder / "s.sqlite")
    folder.chmod(0o555)
    try:
        key = Key.of(Occupancy(balls=5, urns=3, rule="BE"))
        assert quick.read(path, "configurations", key, 1) == _stars_and_bars(5, 3)
        store = results.Store(str(path))
        assert store.read_only and store.get("configurations", key, 1) == _stars_and_bars(5, 3)
        store.close()
        line = one_line_error(run("cache", "clear", "--yes", "--store", path))
        assert "read-only" in line
        quick.close_all()
        results.close_all()
        assert _files_beside(path) == set()
    finally:
        folder.chmod(0o755)


def test_someone_elses_wal_file_is_read_immutable_and_left_as_it_was(tmp_path, monkeypatch, caplog):
    # as the tests may run as root, "this user may not write it" is simulated
    path = _filled(tmp_path / "s.sqlite")
    before = path.read_bytes()
    assert _files_beside(path) == set() and before[18] == 2
    real_access = os.access
    monkeypatch.setattr(os, "access", lambda p, mode: False if mode == os.W_OK else real_access(p, mode))
    caplog.set_level(logging.WARNING, logger="enumerator.store")
    key = Key.of(Occupancy(balls=9, urns=4, rule="BE"))
    assert quick.read(path, "configurations", key, 1) == _stars_and_bars(9, 4)
    store = results.Store(str(path))
    assert store.read_only and store.get("configurations", key, 1) == _stars_and_bars(9, 4)
    assert store.stats()["entries"] == 3
    store.close()
    quick.close_all()
    assert len([r for r in caplog.records if "read-only" in r.getMessage()]) == 1
    assert path.read_bytes() == before and _files_beside(path) == set()


def test_the_quick_read_of_someone_elses_file_sees_what_the_owner_writes_later(tmp_path, monkeypatch):
    path = _filled(tmp_path / "s.sqlite")
    key = Key.of(Occupancy(balls=12, urns=5, rule="BE"))
    real_access = os.access
    monkeypatch.setattr(os, "access", lambda p, mode: False if mode == os.W_OK else real_access(p, mode))
    assert quick.read(path, "configurations", key, 1) is quick.MISSING  # read immutable: no log beside it
    monkeypatch.undo()
    owner = results.Store(str(path))  # the owner stores the answer (and closes, as a process ends)
    owner.put("configurations", key, 1, _stars_and_bars(12, 5))
    owner.close()
    monkeypatch.setattr(os, "access", lambda p, mode: False if mode == os.W_OK else real_access(p, mode))
    assert quick.read(path, "configurations", key, 1) == _stars_and_bars(12, 5)


def test_a_writable_file_in_a_folder_that_takes_no_journal_is_read(tmp_path, monkeypatch):
    # SQLite cannot create the -wal/-shm files it needs (an unwritable folder): simulated
    path = _filled(tmp_path / "s.sqlite")
    from enumerator.store import engine as store_engine

    def no_wal(engine):
        raise store_engine.sa_exc.OperationalError("PRAGMA journal_mode = WAL", {}, Exception("unable to open database file"))

    monkeypatch.setattr(store_database, "enable_wal", no_wal)
    store = results.Store(str(path))
    assert store.read_only
    assert store.get("configurations", Key.of(Occupancy(balls=5, urns=3, rule="BE")), 1) == _stars_and_bars(5, 3)
    store.close()


# -- another application's SQLite file ------------------------------------------------------

@pytest.mark.parametrize("journal", ["delete", "wal"])
def test_another_applications_database_is_refused_and_left_byte_identical(tmp_path, journal):
    path = tmp_path / "recipes.db"
    with sqlite3.connect(path) as conn:
        conn.execute(f"PRAGMA journal_mode = {journal}")
        conn.execute("CREATE TABLE recipes (id INTEGER PRIMARY KEY, title TEXT)")
        conn.execute("INSERT INTO recipes (title) VALUES ('lentil soup')")
    conn.close()
    before = path.read_bytes()
    with pytest.raises(StoreError) as info:
        results.Store(str(path))
    message = str(info.value)
    assert "not an enumerator store" in message and "recipes" in message and "untouched" in message
    assert "\n" not in message and "delete" not in message  # not ours: never told to delete it
    line = one_line_error(run("count", "-n", 3, "-r", 2, "--store", path))
    assert "not an enumerator store" in line and "--store" in line
    one_line_error(run("cache", "verify", "--all", "--fix", "--store", path))
    one_line_error(run("cache", "clear", "--yes", "--store", path))
    results.close_all()
    quick.close_all()
    assert path.read_bytes() == before and _files_beside(path) == set()
    with sqlite3.connect(path) as conn:
        assert conn.execute("SELECT name FROM sqlite_master").fetchall() == [("recipes",)]
        assert conn.execute("PRAGMA journal_mode").fetchone() == (journal,)
    conn.close()


def test_an_empty_file_or_a_database_without_tables_becomes_a_store(tmp_path):
    empty = tmp_path / "empty.sqlite"
    empty.touch()
    bare = tmp_path / "bare.sqlite"
    with sqlite3.connect(bare) as conn:
        conn.execute("PRAGMA user_version = 7")
    conn.close()
    for path in (empty, bare):
        payload = run_json("count", "-n", 4, "-r", 3, "--rule", "MB", "--store", path)
        assert payload["microstates"] == str(3**4)
        assert run_json("cache", "stats", "--store", path)["entries"] == "2"


def test_a_store_that_lost_its_meta_table_is_damage_not_another_application(tmp_path):
    path = _filled(tmp_path / "s.sqlite")
    with sqlite3.connect(path) as conn:
        conn.execute("DROP TABLE enumerator_meta")
    conn.close()
    line = one_line_error(run("cache", "stats", "--store", path))
    assert "is damaged" in line and "enumerator_meta" in line and "delete it" in line
    assert "permission" not in line


def test_a_text_file_is_not_a_store_and_is_left_alone(tmp_path):
    path = tmp_path / "notes.txt"
    path.write_text("buy lentils\n" * 40)
    line = one_line_error(run("count", "-n", 3, "-r", 2, "--store", path))
    assert "not an enumerator store" in line and "not an SQLite database" in line
    assert path.read_text() == "buy lentils\n" * 40


# -- damage: reported as damage, repaired by verify --fix --all --------------------------------

def _rows(path, where="", *args):
    with sqlite3.connect(path) as conn:
        conn.row_factory = sqlite3.Row
        found = [dict(r) for r in conn.execute(f"SELECT * FROM enumerator_results {where}", args)]
    conn.close()
    return found


def _execute(path, sql, *args):
    with sqlite3.connect(path) as conn:
        conn.execute(sql, args)
    conn.close()


def _refile(path, row, **changes):
    """Rewrite *row* with *changes*, its digest and checksum made to agree with the new key fields."""
    new = dict(row, **changes)
    key = Key(new["rule"], int(new["balls"]), new["bounds"], int(new["urns"]))
    digest = key_digest(new["quantity"], key, new["params"], new["version"])
    _execute(path, "UPDATE enumerator_results SET quantity = ?, balls = ?, params = ?, kind = ?, value = ?, "
             "key_digest = ?, checksum = ? WHERE id = ?", new["quantity"], new["balls"], new["params"],
             new["kind"], new["value"], digest, row_checksum(digest, new["kind"], new["value"]), row["id"])


def _max_law(n: int, r: int) -> dict:
    """P(max occupancy = m) for MB by listing all r**n assignments (brute force)."""
    counts = {}
    for balls in itertools.product(range(r), repeat=n):
        top = max(balls.count(u) for u in range(r))
        counts[top] = counts.get(top, 0) + 1
    return {str(m): str(Fraction(c, r**n)) for m, c in sorted(counts.items())}


@pytest.fixture
def damaged(tmp_path):
    """A store with counts, a distribution and a coefficient row, as the commands leave it."""
    path = tmp_path / "s.sqlite"
    for n in (3, 4, 5):
        run_json("count", "-n", n, "-r", 3, "--rule", "BE", "--store", path)
    law = run_json("dist", "--stat", "max", "-n", 4, "-r", 3, "--store", path)
    assert law["pmf"] == _max_law(4, 3)
    results.close_all()
    quick.close_all()
    return path


def _verify(path, *flags):
    result = run("cache", "verify", "--all", *flags, "--store", path, "--json")
    return result.exit_code, json.loads(result.stdout)


def _assert_clean(path):
    code, report = _verify(path)
    assert code == 0 and report["mismatches"] == [], report


def _be_row(path, n):
    [row] = _rows(path, "WHERE quantity = 'configurations' AND balls = ?", str(n))
    return row


def test_an_undecodable_value_is_damage_and_fix_recomputes_it(damaged):
    row = _be_row(damaged, 4)
    _refile(damaged, row, kind="fraction", value="x/y")  # checksum agrees, but not a fraction
    line = one_line_error(run("count", "-n", 4, "-r", 3, "--rule", "BE", "--store", damaged))
    assert "damaged" in line and "cache verify --fix --all" in line and "permission" not in line
    human = run("cache", "verify", "--all", "--store", damaged)
    assert human.exit_code == 1 and "damaged entry, unreadable value" in human.stdout
    assert "Repair them with 'enumerator cache verify --fix --all" in human.stdout
    code, report = _verify(damaged, "--fix")
    assert code == 0 and report["fixed"] == "1"
    assert report["mismatches"][0]["problem"].startswith("unreadable value")
    assert report["mismatches"][0]["expected"] == str(_stars_and_bars(4, 3))
    _assert_clean(damaged)
    assert run_json("count", "-n", 4, "-r", 3, "--rule", "BE", "--store", damaged)["configurations"] == "15"


def test_a_changed_digit_fails_the_checksum_and_fix_recomputes_it(damaged):
    row = _be_row(damaged, 5)
    _execute(damaged, "UPDATE enumerator_results SET value = '22' WHERE id = ?", row["id"])  # 21 by stars and bars
    code, report = _verify(damaged)
    assert code == 1 and report["mismatches"][0]["problem"].startswith("damaged (checksum")
    assert _verify(damaged, "--fix")[1]["fixed"] == "1"
    _assert_clean(damaged)
    assert run_json("count", "-n", 5, "-r", 3, "--rule", "BE", "--store", damaged)["configurations"] == "21"


def test_a_row_under_a_wrong_digest_is_damage_and_fix_refiles_it(damaged):
    # the key says n = 6 while the row is filed under n = 3's digest (and would answer for n = 3)
    row = _be_row(damaged, 3)
    _execute(damaged, "UPDATE enumerator_results SET balls = '6' WHERE id = ?", row["id"])
    code, report = _verify(damaged)
    assert code == 1 and report["mismatches"][0]["problem"].startswith("wrong digest")
    assert report["mismatches"][0]["expected"] == str(_stars_and_bars(6, 3))
    assert _verify(damaged, "--fix")[1]["fixed"] == "1"
    _assert_clean(damaged)
    assert run_json("count", "-n", 6, "-r", 3, "--rule", "BE", "--store", damaged)["configurations"] == "28"
    assert run_json("count", "-n", 3, "-r", 3, "--rule", "BE", "--store", damaged)["configurations"] == "10"


def test_a_value_that_no_longer_matches_recomputation_is_fixed(damaged):
    row = _be_row(damaged, 4)
    _refile(damaged, row, value="16")  # checksum agrees; stars and bars says 15
    code, report = _verify(damaged)
    assert code == 1 and report["mismatches"][0]["problem"] == "value differs from a fresh computation"
    assert _verify(damaged, "--fix")[1]["fixed"] == "1"
    _assert_clean(damaged)


@pytest.mark.parametrize("params", ["no such statistic", ""])
def test_unreadable_parameters_are_damage_and_fix_removes_the_row(damaged, params):
    [row] = _rows(damaged, "WHERE quantity = 'distribution'")
    _refile(damaged, row, params=params)
    code, report = _verify(damaged)
    assert code == 1 and report["mismatches"][0]["problem"].startswith("unreadable parameters")
    assert report["mismatches"][0]["expected"] == ""
    assert _verify(damaged, "--fix")[1]["fixed"] == "1"
    assert _rows(damaged, "WHERE quantity = 'distribution'") == []
    _assert_clean(damaged)


def test_a_coefficient_row_with_garbage_parameters_is_damage(damaged):
    run_json("gf", "-n", 4, "-r", 3, "--rule", "BE", "--store", damaged)
    rows = _rows(damaged, "WHERE quantity = 'coefficient_row'")
    if not rows:
        pytest.skip("gf stores no coefficient row here")
    _refile(damaged, rows[0], params="upto=lots")
    code, report = _verify(damaged)
    assert code == 1 and report["mismatches"][0]["problem"].startswith("unreadable parameters")
    assert _verify(damaged, "--fix")[1]["fixed"] == "1"
    _assert_clean(damaged)


def test_a_garbage_created_at_is_harmless_damage_and_fix_rewrites_it(damaged):
    row = _be_row(damaged, 5)
    _execute(damaged, "UPDATE enumerator_results SET created_at = 'last tuesday' WHERE id = ?", row["id"])
    human = run("cache", "verify", "--all", "--store", damaged)
    assert human.exit_code == 0, human.output  # the value is right: not exit 1
    assert "unreadable created_at" in human.stdout and "Traceback" not in human.output
    code, report = _verify(damaged, "--fix")
    assert code == 0 and report["fixed"] == "1"
    _assert_clean(damaged)
    assert _be_row(damaged, 5)["created_at"][:2] == "20"
    # export reads the row again (the time was the only damage)
    assert run("cache", "export", "--store", damaged).exit_code == 0


def test_a_row_of_an_unknown_quantity_is_damage_and_fix_removes_it(damaged):
    row = _be_row(damaged, 3)
    _refile(damaged, row, quantity="no_such_quantity")
    code, report = _verify(damaged)
    assert code == 0 and report["mismatches"][0]["problem"].startswith("unknown quantity")
    assert _verify(damaged, "--fix")[1]["fixed"] == "1"
    assert _rows(damaged, "WHERE quantity = 'no_such_quantity'") == []


def test_an_unreadable_n_is_damage_and_fix_removes_the_row(damaged):
    row = _be_row(damaged, 3)
    _execute(damaged, "UPDATE enumerator_results SET balls = 'three' WHERE id = ?", row["id"])
    code, report = _verify(damaged)
    assert code == 1 and report["mismatches"][0]["problem"].startswith("unreadable key")
    assert _verify(damaged, "--fix")[1]["fixed"] == "1"
    _assert_clean(damaged)


def test_reading_a_row_whose_number_does_not_read_is_damage_not_a_crash(damaged):
    row = _be_row(damaged, 3)
    _execute(damaged, "UPDATE enumerator_results SET urns = '3 urns' WHERE id = ?", row["id"])
    line = one_line_error(run("cache", "export", "--store", damaged), quiet_stdout=False)
    assert "damaged row" in line and "cache verify --fix --all" in line
    code, report = _verify(damaged, "--fix")
    assert code == 0 and report["fixed"] == "1"
    assert run("cache", "export", "--store", damaged).exit_code == 0


def test_a_damaged_distribution_that_dist_points_to_is_repaired_by_verify_fix_all(damaged):
    [row] = _rows(damaged, "WHERE quantity = 'distribution'")
    _execute(damaged, "UPDATE enumerator_results SET value = replace(value, '1/27', '2/27') WHERE id = ?", row["id"])
    line = one_line_error(run("dist", "--stat", "max", "-n", 4, "-r", 3, "--store", damaged))
    assert "damaged" in line and "cache verify --fix --all" in line
    code, report = _verify(damaged, "--fix")
    assert code == 0 and report["fixed"] == "1" and report["skipped"] == "0"
    assert report["mismatches"][0]["quantity"] == "distribution"
    assert run_json("dist", "--stat", "max", "-n", 4, "-r", 3, "--store", damaged)["pmf"] == _max_law(4, 3)
    _assert_clean(damaged)


def test_a_truncated_file_is_damage_never_a_permissions_problem(damaged):
    data = damaged.read_bytes()
    damaged.write_bytes(data[: len(data) // 2])
    for args in (("count", "-n", 5, "-r", 3, "--rule", "BE"), ("cache", "verify", "--all"), ("cache", "stats")):
        line = one_line_error(run(*args, "--store", damaged))
        assert "damaged" in line and "delete it" in line and "permission" not in line, line
        results.close_all()
        quick.close_all()


def test_verify_on_a_read_only_store_reports_and_says_who_can_repair(damaged, monkeypatch):
    row = _be_row(damaged, 4)
    _refile(damaged, row, value="16")
    real_access = os.access
    monkeypatch.setattr(os, "access", lambda p, mode: False if mode == os.W_OK else real_access(p, mode))
    human = run("cache", "verify", "--all", "--fix", "--store", damaged)
    assert human.exit_code == 1 and "read-only, so they stay" in human.stdout


# -- verify reads in batches and samples in SQL -----------------------------------------------

@pytest.fixture
def many(tmp_path):
    store = results.Store(str(tmp_path / "many.sqlite"))
    store.put_many(
        ("configurations", Key.of(Occupancy(balls=n, urns=r, rule="BE")), 1, _stars_and_bars(n, r), "", "", 0)
        for n in range(30) for r in range(1, 8)
    )
    yield store
    store.close()


def _spy(monkeypatch):
    loaded = []
    real = store_entries.StoredEntry.from_columns.__func__

    def spy(cls, columns):
        loaded.append(columns["id"])
        return real(cls, columns)

    monkeypatch.setattr(store_entries.StoredEntry, "from_columns", classmethod(spy))
    return loaded


def test_a_sample_reads_only_the_rows_it_draws(many, monkeypatch):
    loaded = _spy(monkeypatch)
    report = many.verify(sample=9, seed=3)
    assert report["checked"] == 9 and report["mismatches"] == [] and len(loaded) == 9
    assert len(set(loaded)) == 9
    first = sorted(loaded)
    loaded.clear()
    many.verify(sample=9, seed=3)
    assert sorted(loaded) == first  # the same seed draws the same rows
    loaded.clear()
    many.verify(sample=9, seed=4)
    assert sorted(loaded) != first


def test_a_sample_of_a_sparse_store_is_still_drawn_without_reading_values(many, monkeypatch):
    # delete all but every 20th row: the id range is mostly gaps
    with many.engine.begin() as conn:
        conn.exec_driver_sql("DELETE FROM enumerator_results WHERE id % 20 != 0")
    loaded = _spy(monkeypatch)
    for seed in (None, 5):
        loaded.clear()
        report = many.verify(sample=4, seed=seed)
        assert report["checked"] == 4 and len(set(loaded)) == 4 and all(i % 20 == 0 for i in loaded)


def test_a_sample_larger_than_the_store_checks_everything(many, monkeypatch):
    loaded = _spy(monkeypatch)
    assert many.verify(sample=10**9)["checked"] == 210 == len(loaded)


def test_verify_all_reads_in_bounded_batches_and_fixes_each_once(many, monkeypatch):
    monkeypatch.setattr(store_database, "VERIFY_BATCH", 16)
    monkeypatch.setattr(store_database, "VERIFY_BYTES", 40)  # a few values per read
    reads = []
    real = store_database.Store._load_entries

    def counted(self, ids):
        got = real(self, ids)
        reads.append(len(got))
        return got

    monkeypatch.setattr(store_database.Store, "_load_entries", counted)
    path = many.path
    # two wrong values; one filed under an older, non-canonical text moves to a new id when fixed
    _execute(path, "UPDATE enumerator_results SET value = '7', checksum = 0 WHERE id IN (3, 100)")
    report = many.verify(fix=True)
    assert report["checked"] == 210 and report["fixed"] == 2 and max(reads) <= 16
    assert many.verify()["mismatches"] == []


def test_a_digest_mismatch_row_moved_by_fix_is_not_checked_twice(many):
    # n = 0, r = 1 refiled as n = 40 (its key now names another answer): fix moves it past the last id
    path = many.path
    row = _rows(path, "WHERE balls = '0' AND urns = '1'")[0]
    _execute(path, "UPDATE enumerator_results SET balls = '40' WHERE id = ?", row["id"])
    report = many.verify(fix=True)
    assert report["checked"] == 210 and report["fixed"] == 1
    assert many.get("configurations", Key.of(Occupancy(balls=40, urns=1, rule="BE")), 1) == 1


def test_sampling_and_repair_on_postgresql(postgres_url, monkeypatch):
    store = results.Store(postgres_url)
    store.put_many(
        ("configurations", Key.of(Occupancy(balls=n, urns=r, rule="BE")), 1, _stars_and_bars(n, r), "", "", 0)
        for n in range(20) for r in range(1, 6)
    )
    loaded = _spy(monkeypatch)
    assert store.verify(sample=7, seed=1)["checked"] == 7 and len(set(loaded)) == 7
    with store.engine.begin() as conn:
        conn.execute(sa.text("DELETE FROM enumerator_results WHERE mod(id, 25) != 0"))
        conn.execute(sa.text("UPDATE enumerator_results SET value = '1' WHERE id = 50"))  # fails its checksum
    for seed in (None, 2):
        loaded.clear()
        assert store.verify(sample=3, seed=seed)["checked"] == 3 and len(set(loaded)) == 3
    report = store.verify(fix=True)
    assert report["checked"] == 4 and report["fixed"] == 1
    assert report["mismatches"][0]["problem"].startswith("damaged (checksum")
    assert store.verify()["mismatches"] == []
    store.close()
