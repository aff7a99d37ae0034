"""The store's PostgreSQL write path: COPY into a temporary table, then one upsert.

Run against a real server (the ``postgres_url`` fixture of tests/conftest.py;
skipped without one).  The write path must keep the semantics of the
multi-row ``INSERT ... ON CONFLICT DO NOTHING`` it replaced: every key stored
once whatever the concurrent writers do, the number of new rows reported,
and the same row texts (values, digit counts, checksums) as that INSERT and
as an SQLite store.

References: powers computed here with Python's ``pow`` (no store code);
stars and bars ``C(n + r - 1, n)`` (Feller, vol. 1, II.5) with ``math.comb``;
PostgreSQL's SQLSTATE codes 40P01 deadlock_detected and 40001
serialization_failure (PostgreSQL documentation, Appendix A); the limit of
``numeric`` (131,072 digits before the decimal point, PostgreSQL
documentation, 8.1.2).
"""

from __future__ import annotations

import math
import sys
import threading

import pytest
import sqlalchemy as sa
from pg_server import run_sql
from sqlalchemy import exc as sa_exc
from sqlalchemy.engine import make_url

from enumerator import Occupancy
from enumerator import store as results
from enumerator.store import engine as store_engine
from enumerator.store.keys import ALGORITHM_VERSIONS, Key

VERSION = ALGORITHM_VERSIONS["configurations"]
pytestmark = pytest.mark.usefixtures("no_configured_store", "int_digits")  # conftest.py

#: Columns that a row's key and value decide (not its id, nor when it was written).
COLUMNS = ("key_digest", "quantity", "rule", "balls", "urns", "bounds", "params", "version", "kind",
           "value", "digits", "checksum", "method", "elapsed_ns")




def _be(n: int, r: int) -> int:
    """BE configurations of n balls in r urns: stars and bars (Feller, vol. 1, II.5)."""
    return math.comb(n + r - 1, n)


def _items(ns, r=3, method="test"):
    return [("configurations", Key.of(Occupancy(balls=n, urns=r, rule="BE")), VERSION, _be(n, r), "", method, n)
            for n in ns]


def _rows(url: str) -> dict:
    names = ", ".join(COLUMNS)
    return {row[0]: tuple(row) for row in run_sql(url, f"SELECT {names} FROM enumerator_results")}


def test_the_store_writes_postgresql_by_copy(postgres_url):
    store = results.Store(postgres_url)
    if store.engine.dialect.driver != "psycopg":
        pytest.skip("the COPY path is psycopg 3's")
    assert store._copy is not None
    assert store.put_many(_items(range(4))) == 4
    # the session's temporary table exists on the connection that wrote, and is empty after the commit
    with store.engine.connect() as conn:
        assert conn.exec_driver_sql("SELECT count(*) FROM pg_temp.enumerator_incoming").scalar() == 0


def test_new_rows_are_counted_once_including_duplicates_and_rows_another_writer_stored(postgres_url):
    store = results.Store(postgres_url)
    assert store.put_many(_items([0, 1, 2, 2, 1])) == 3  # a key twice in one batch is stored and counted once
    # another writer stores n = 5 behind the store's back (a plain INSERT of the same row)
    other = results.Store(postgres_url)
    assert other.put_many(_items([5])) == 1
    assert store.put_many(_items(range(8))) == 4  # 3, 4, 6, 7 are new
    assert store.put_many(_items(range(8))) == 0
    assert store.put(*_items([8])[0][:4]) is True and store.put(*_items([8])[0][:4]) is False
    (count, distinct), = run_sql(postgres_url, "SELECT count(*), count(DISTINCT key_digest) FROM enumerator_results")
    assert count == distinct == 9
    for n in range(9):  # stars and bars
        assert store.get("configurations", Key.of(Occupancy(balls=n, urns=3, rule="BE")), VERSION) == _be(n, 3)


def test_copy_writes_the_same_rows_as_insert_and_as_sqlite(postgres_url, postgres_server, tmp_path):
    import pg_server

    sys.set_int_max_str_digits(0)
    items = _items(range(0, 400, 7), r=40, method="same rows\tand a tab, a \\ and a\nnewline")
    items.append(("microstates", Key.of(Occupancy(balls=5000, urns=2**70, rule="MB")),
                  ALGORITHM_VERSIONS["microstates"], (2**70) ** 5000, "", "big", 1))
    by_copy = results.Store(postgres_url)
    assert by_copy.put_many(items) == len(items)
    second = pg_server.create_database(postgres_server)
    try:
        by_insert = results.Store(second)
        by_insert._copy = None  # the multi-row INSERT ... ON CONFLICT DO NOTHING path
        assert by_insert.put_many(items) == len(items)
        by_insert.close()
        copied, inserted = _rows(postgres_url), _rows(second)
    finally:
        pg_server.drop_database(postgres_server, second)
    lite = results.Store(str(tmp_path / "lite.sqlite"))
    assert lite.put_many(items) == len(items)
    engine = sa.create_engine(f"sqlite:///{tmp_path / 'lite.sqlite'}", poolclass=sa.pool.NullPool)
    with engine.connect() as conn:
        sqlite_rows = {row[0]: tuple(row) for row in conn.exec_driver_sql(
            f"SELECT {', '.join(COLUMNS)} FROM enumerator_results")}
    engine.dispose()
    assert copied == inserted == sqlite_rows
    assert len(copied) == len(items)
    # the values are the references (stars and bars; the power by Python's pow)
    assert {int(row[9]) for row in copied.values()} == {_be(n, 40) for n in range(0, 400, 7)} | {(2**70) ** 5000}


def test_a_200000_digit_value_round_trips_whole_by_copy(postgres_url):
    sys.set_int_max_str_digits(0)
    n = 236_700  # 7**n has floor(n log10 7) + 1 = 200,035 digits: past numeric's 131,072 (PostgreSQL 8.1.2)
    expected = pow(7, n)
    text = str(expected)
    assert len(text) >= 200_000
    key = Key.of(Occupancy(balls=n, urns=7, rule="MB"))
    version = ALGORITHM_VERSIONS["microstates"]
    store = results.Store(postgres_url)
    # in one batch with small rows on either side
    batch = _items(range(3)) + [("microstates", key, version, expected, "", "pow", 0)] + _items(range(3, 6))
    assert store.put_many(batch) == 7
    results.close_all()
    rows = run_sql(postgres_url, "SELECT length(value), digits, pg_typeof(value)::text, md5(value) "
                              "FROM enumerator_results WHERE quantity = 'microstates'")
    import hashlib

    assert rows == [(len(text), len(text), "text", hashlib.md5(text.encode()).hexdigest())]
    fresh = results.Store(postgres_url)
    assert fresh.get("microstates", key, version) == expected  # checksum and digit count checked on read
    assert fresh.verify(sample=None)["mismatches"] == []


def test_overlapping_writers_in_opposite_orders_store_every_key_once_and_count_it_once(postgres_url):
    """Two writers put the same keys at once, one in reverse order: each key stored once, counted by one of them."""
    rounds = [_items(range(600), r=5 + k) for k in range(3)]  # fresh keys each round: every round contends
    stores = [results.Store(postgres_url), results.Store(postgres_url)]
    counted = [0, 0]
    errors = []
    barrier = threading.Barrier(2)

    def writer(index):
        try:
            for items in rounds:
                barrier.wait(30)
                counted[index] += stores[index].put_many(items if index == 0 else items[::-1])
        except BaseException as error:  # reported by the test
            errors.append(f"{type(error).__name__}: {error}")

    threads = [threading.Thread(target=writer, args=(i,)) for i in range(2)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join(120)
    assert errors == []
    assert sum(counted) == 3 * 600
    (count, distinct), = run_sql(postgres_url, "SELECT count(*), count(DISTINCT key_digest) FROM enumerator_results")
    assert count == distinct == 3 * 600


@pytest.fixture
def user_without_temporary_tables(postgres_url, postgres_server):
    """A login role with rights on the store's tables in a database that grants no TEMPORARY; yields its URL."""
    (allowed,), = run_sql(postgres_server, "SELECT rolsuper FROM pg_roles WHERE rolname = current_user")
    if not allowed:
        pytest.skip("the test server's user is not a superuser")
    database = make_url(postgres_url).database
    name = "enumerator_notemp_" + database[-12:]
    results.Store(postgres_url).close()  # the owner creates the store
    run_sql(postgres_server, f'CREATE ROLE "{name}" LOGIN')
    run_sql(postgres_server, f'REVOKE TEMPORARY ON DATABASE "{database}" FROM PUBLIC')
    for grant in ("GRANT SELECT, INSERT, UPDATE, DELETE ON ALL TABLES IN SCHEMA public TO",
                  "GRANT USAGE ON ALL SEQUENCES IN SCHEMA public TO"):
        run_sql(postgres_url, f'{grant} "{name}"')
    try:
        yield make_url(postgres_url).set(username=name).render_as_string(hide_password=False)
    finally:
        results.close_all()
        run_sql(postgres_url, f'DROP OWNED BY "{name}"')
        run_sql(postgres_server, f'DROP ROLE "{name}"')


def test_a_user_who_may_not_create_temporary_tables_writes_by_insert(user_without_temporary_tables, postgres_url):
    store = results.Store(user_without_temporary_tables)
    assert store.put_many(_items(range(5))) == 5
    assert store._copy is None  # fell back to INSERT for the rest of its life
    assert store.put_many(_items(range(8))) == 3
    assert {int(n): int(v) for n, v in run_sql(postgres_url, "SELECT balls, value FROM enumerator_results")} == {
        n: _be(n, 3) for n in range(8)}


def test_a_transaction_postgresql_rolled_back_is_retried():
    psycopg = pytest.importorskip("psycopg")
    calls = []

    def action():
        calls.append(1)
        if len(calls) == 1:  # SQLSTATE 40P01, as PostgreSQL reports a deadlock it broke
            raise sa_exc.OperationalError("INSERT ...", None, psycopg.errors.DeadlockDetected("deadlock detected"))
        if len(calls) == 2:  # SQLSTATE 40001
            raise sa_exc.OperationalError("INSERT ...", None, psycopg.errors.SerializationFailure("could not"))
        return "done"

    assert store_engine.retry(action) == "done" and len(calls) == 3
    # any other OperationalError is raised at once
    other = sa_exc.OperationalError("INSERT ...", None, psycopg.errors.QueryCanceled("canceling statement"))
    with pytest.raises(sa_exc.OperationalError):
        store_engine.retry(lambda: (_ for _ in ()).throw(other))
