"""The result store against a real PostgreSQL server.

Every test gets an empty database of its own (the ``postgres_url`` fixture
of tests/conftest.py: a server named by ENUMERATOR_TEST_POSTGRES_URL, else a
throw-away server started from Debian's binaries, tests/pg_server.py).
Without a server the module is skipped; ``.ci/run`` installs one and makes
a missing server a failure.

References: stars and bars ``C(n + r - 1, n)`` (Feller, vol. 1, II.5) and
``r**n`` for MB microstates, computed here with ``math``; schema 1's digest
and checksum functions copied from tests/test_migrations.py (commit f5be745);
brute force over ``itertools.product`` for per-urn bounds.  The expected
numbers never come from the store itself.

Tests marked ``STORE_FIX`` fail against PostgreSQL today; each names the
fix in enumerator/store/ it waits for (non-strict: remove the mark once the
fix is in).
"""

from __future__ import annotations

import csv
import hashlib
import io
import itertools
import json
import math
import multiprocessing
import sys
import traceback
import zlib

import pytest
import sqlalchemy as sa
from cli_helpers import one_line_error, run, run_json
from pg_server import run_sql
from sqlalchemy.engine import make_url

from enumerator import Occupancy, StoreError
from enumerator import store as results
from enumerator.store import schema, tables
from enumerator.store.keys import ALGORITHM_VERSIONS, Key

pytestmark = pytest.mark.usefixtures("no_configured_store", "int_digits")  # conftest.py




def _column_types(url: str) -> dict:
    rows = run_sql(url, "SELECT table_name, column_name, data_type, is_nullable FROM information_schema.columns "
                     "WHERE table_schema = current_schema() ORDER BY table_name, ordinal_position")
    return {(t, c): (d, n) for t, c, d, n in rows}


def _be(n: int, r: int) -> int:
    """BE configurations of n balls in r urns: stars and bars C(n + r - 1, n) (Feller, vol. 1, II.5)."""
    return math.comb(n + r - 1, n)


# -- schema: creation and the version check --------------------------------------------

def test_a_new_database_gets_the_current_schema_with_numbers_as_text(postgres_url):
    store = results.Store(postgres_url)
    assert store.engine.dialect.name == "postgresql"
    version = run_sql(postgres_url, "SELECT value FROM enumerator_meta WHERE key = 'schema_version'")
    assert version == [(str(schema.SCHEMA_VERSION),)]
    types = _column_types(postgres_url)
    # exact values and every number describing a problem are TEXT (numeric stops at 131,072 digits)
    for column in ("value", "balls", "urns", "bounds", "params"):
        assert types[("enumerator_results", column)][0] == "text", column
    for column in ("minimum", "capacity", "balls_first", "balls_last", "urns_first", "urns_last"):
        assert types[("enumerator_tables", column)][0] == "text", column
    indexes = {name for (name,) in run_sql(postgres_url, "SELECT indexname FROM pg_indexes "
                                                      "WHERE tablename = 'enumerator_results'")}
    assert "ix_enumerator_results_row" in indexes
    store.close()
    # opening again changes nothing
    before = _column_types(postgres_url)
    results.Store(postgres_url).close()
    assert _column_types(postgres_url) == before
    assert run_sql(postgres_url, "SELECT count(*) FROM enumerator_meta WHERE key = 'schema_version'") == [(1,)]


def test_a_database_of_a_newer_schema_is_refused(postgres_url):
    results.Store(postgres_url).close()
    run_sql(postgres_url, "UPDATE enumerator_meta SET value = :v WHERE key = 'schema_version'",
         v=str(schema.SCHEMA_VERSION + 1))
    with pytest.raises(StoreError, match=f"schema version {schema.SCHEMA_VERSION + 1}, newer"):
        results.Store(postgres_url)
    # and the CLI says so in one line
    line = one_line_error(run("count", "-n", 3, "-r", 2, "--store", postgres_url))
    assert "newer" in line


def test_an_unreachable_server_is_one_line_without_the_password(postgres_server):
    url = make_url(postgres_server).set(port=1, password="hunter2").render_as_string(hide_password=False)
    line = one_line_error(run("count", "-n", 3, "-r", 2, "--store", url))
    assert "hunter2" not in line and "127.0.0.1" in line


@pytest.fixture
def second_user(postgres_url, postgres_server):
    """A login role with no rights beyond PostgreSQL's defaults (dropped after the test); yields its name."""
    (allowed,), = run_sql(postgres_server, "SELECT rolsuper OR rolcreaterole FROM pg_roles WHERE rolname = current_user")
    if not allowed:
        pytest.skip("the test server's user may not create roles")
    name = "enumerator_user_" + make_url(postgres_url).database[-12:]
    run_sql(postgres_server, f'CREATE ROLE "{name}" LOGIN')
    try:
        yield name
    finally:
        results.close_all()
        run_sql(postgres_url, f'DROP OWNED BY "{name}"')
        run_sql(postgres_server, f'DROP ROLE "{name}"')


def test_a_user_without_create_rights_cannot_make_the_store_and_is_told_in_one_line(postgres_url, second_user):
    url = make_url(postgres_url).set(username=second_user).render_as_string(hide_password=False)
    # PostgreSQL 15 grants no CREATE on schema public to other users
    line = one_line_error(run("count", "-n", 3, "-r", 2, "--store", url))
    assert "permission denied" in line and "Traceback" not in line


def test_a_second_user_with_rights_on_the_tables_only_shares_the_store(postgres_url, second_user):
    with results.using(postgres_url):  # the owner creates the store and remembers one count
        assert Occupancy(balls=10, urns=4, rule="BE").configurations() == _be(10, 4)
    results.close_all()
    for grant in ("GRANT SELECT, INSERT, UPDATE, DELETE ON ALL TABLES IN SCHEMA public TO",
                  "GRANT USAGE ON ALL SEQUENCES IN SCHEMA public TO"):
        run_sql(postgres_url, f'{grant} "{second_user}"')
    url = make_url(postgres_url).set(username=second_user).render_as_string(hide_password=False)
    store = ("--store", url)
    assert run_json("count", "-n", 10, "-r", 4, "--rule", "BE", *store)["configurations"] == str(_be(10, 4))
    built = run_json("table", "build", "--rule", "BE", "--balls", "0..12", "--urns", "3..5", *store)
    assert built["reused"] == "1" and built["computed"] == str(13 * 3 - 1)
    assert run_json("cache", "verify", "--all", *store)["mismatches"] == []
    (count,), = run_sql(postgres_url, "SELECT count(*) FROM enumerator_results")
    assert count == 13 * 3


# -- huge values ---------------------------------------------------------------------------

def test_a_100000_digit_value_round_trips_as_text(postgres_url):
    sys.set_int_max_str_digits(0)
    m = 166_100  # C(2m, m) has about 0.602 * 2m = 100,000 digits
    model = Occupancy(balls=m, urns=m + 1, rule="BE")
    expected = _be(m, m + 1)  # stars and bars, C(2m, m)
    assert len(str(expected)) >= 100_000
    with results.using(postgres_url):
        assert model.configurations() == expected
    results.close_all()
    # stored whole, as text, with its digit count
    rows = run_sql(postgres_url, "SELECT length(value), digits, pg_typeof(value)::text FROM enumerator_results "
                              "WHERE quantity = 'configurations'")
    assert rows == [(len(str(expected)), len(str(expected)), "text")]
    # read back by a fresh store, under the model's key
    fresh = results.Store(postgres_url)
    stored = fresh.get("configurations", Key.of(model), ALGORITHM_VERSIONS["configurations"])
    assert stored == expected


def test_a_value_past_numeric_s_131072_digits_is_kept_whole(postgres_url):
    sys.set_int_max_str_digits(0)
    n, r = 150_000, 10  # MB microstates r**n: 150,001 digits, more than numeric holds
    with results.using(postgres_url):
        assert Occupancy(balls=n, urns=r, rule="MB").microstates() == r**n
    results.close_all()
    fresh = results.Store(postgres_url)
    key = Key.of(Occupancy(balls=n, urns=r, rule="MB"))
    assert fresh.get("microstates", key, ALGORITHM_VERSIONS["microstates"]) == r**n
    assert run_sql(postgres_url, "SELECT max(digits) FROM enumerator_results") == [(n + 1,)]


def test_urns_past_64_bits_are_stored_as_decimal_text(postgres_url):
    r = 2**70  # BE with n = 3: C(r + 2, 3) (stars and bars)
    with results.using(postgres_url):
        assert Occupancy(balls=3, urns=r, rule="BE").configurations() == _be(3, r)
    assert run_sql(postgres_url, "SELECT urns FROM enumerator_results") == [(str(r),)]


# -- the upgrade from schema 1 ---------------------------------------------------------------

#: Schema 1's tables as SQLAlchemy created them on PostgreSQL (the schema-1
#: models of tests/test_migrations.py: urns and the table numbers BIGINT).
_SCHEMA_1 = [
    'CREATE TABLE enumerator_meta ("key" VARCHAR(64) NOT NULL, value TEXT NOT NULL, PRIMARY KEY ("key"))',
    "CREATE TABLE enumerator_results (id SERIAL NOT NULL, key_digest VARCHAR(64) NOT NULL, "
    "quantity VARCHAR(64) NOT NULL, rule VARCHAR(8) NOT NULL, balls TEXT NOT NULL, urns BIGINT NOT NULL, "
    "bounds TEXT NOT NULL, params TEXT NOT NULL, version INTEGER NOT NULL, kind VARCHAR(16) NOT NULL, "
    "value TEXT NOT NULL, digits BIGINT NOT NULL, checksum BIGINT NOT NULL, method VARCHAR(200) NOT NULL, "
    "elapsed_ns BIGINT NOT NULL, created_at TIMESTAMP WITH TIME ZONE NOT NULL, PRIMARY KEY (id), "
    "UNIQUE (key_digest))",
    "CREATE INDEX ix_enumerator_results_row ON enumerator_results (quantity, rule, urns, version)",
    "CREATE TABLE enumerator_tables (id SERIAL NOT NULL, name VARCHAR(200) NOT NULL, "
    "quantity VARCHAR(64) NOT NULL, rule VARCHAR(8) NOT NULL, minimum BIGINT NOT NULL, capacity BIGINT, "
    "balls_first BIGINT NOT NULL, balls_last BIGINT NOT NULL, urns_first BIGINT NOT NULL, "
    "urns_last BIGINT NOT NULL, created_at TIMESTAMP WITH TIME ZONE NOT NULL, PRIMARY KEY (id), UNIQUE (name))",
]


def _old_digest(quantity, rule, bounds, params, version, balls) -> str:
    """Schema 1's key digest (``_digest`` of enumerator/store/database.py at commit f5be745)."""
    text = "\x1f".join((quantity, rule, bounds, params, str(version), str(balls)))
    return hashlib.sha256(text.encode()).hexdigest()


def _old_checksum(digest, kind, text) -> int:
    """Schema 1's row checksum (``_checksum`` at commit f5be745)."""
    return zlib.crc32(text.encode(), zlib.crc32(f"{digest}:{kind}:".encode()))


def _brute(bounds, n):
    """BE configurations within per-urn bounds, by listing every vector (brute force)."""
    ranges = (range(a, (n if b is None else min(b, n)) + 1) for a, b in bounds)
    return sum(1 for k in itertools.product(*ranges) if sum(k) == n)


GROUPED = [(0, 2), (0, 2), (1, None)]  # schema 1: "0:2,0:2,1:"; schema 2: "2x0:2,1x1:"


def _write_schema_1(url: str) -> None:
    engine = sa.create_engine(url, poolclass=sa.pool.NullPool)
    rows = []
    for n in range(6):  # uniform text: stars and bars
        rows.append(("BE", n, 4, "4*0:", _be(n, 4)))
    for n in range(5):  # per-urn text: brute force
        rows.append(("BE", n, 3, "0:2,0:2,1:", _brute(GROUPED, n)))
    try:
        with engine.begin() as conn:
            for statement in _SCHEMA_1:
                conn.exec_driver_sql(statement)
            conn.execute(sa.text("INSERT INTO enumerator_meta VALUES ('schema_version', '1'), "
                                 "('created_by', 'enumerator (schema 1)'), ('created_at', '2026-01-01T00:00:00+00:00')"))
            for rule, n, r, bounds, value in rows:
                digest = _old_digest("configurations", rule, bounds, "", 1, n)
                conn.execute(sa.text(
                    "INSERT INTO enumerator_results (key_digest, quantity, rule, balls, urns, bounds, params, "
                    "version, kind, value, digits, checksum, method, elapsed_ns, created_at) VALUES (:digest, "
                    "'configurations', :rule, :n, :r, :bounds, '', 1, 'int', :value, :digits, :checksum, "
                    "'by hand', 0, '2026-01-01 00:00:00+00')"),
                    {"digest": digest, "rule": rule, "n": str(n), "r": r, "bounds": bounds, "value": str(value),
                     "digits": len(str(value)), "checksum": _old_checksum(digest, "int", str(value))})
            conn.exec_driver_sql(
                "INSERT INTO enumerator_tables (name, quantity, rule, minimum, capacity, balls_first, balls_last, "
                "urns_first, urns_last, created_at) VALUES ('be4', 'configurations', 'BE', 0, NULL, 0, 5, 4, 4, "
                "'2026-01-01 00:00:00+00')")
    finally:
        engine.dispose()


def test_a_schema_1_database_is_upgraded_in_place(postgres_url, postgres_server):
    _write_schema_1(postgres_url)
    assert _column_types(postgres_url)[("enumerator_results", "urns")][0] == "bigint"
    store = results.Store(postgres_url)  # runs step 1 -> 2, PostgreSQL branch (ALTER COLUMN ... TYPE TEXT)
    assert run_sql(postgres_url, "SELECT value FROM enumerator_meta WHERE key = 'schema_version'") == [
        (str(schema.SCHEMA_VERSION),)]
    # the same layout as a database the current code creates
    import pg_server

    fresh = pg_server.create_database(postgres_server)
    try:
        results.Store(fresh).close()
        assert _column_types(postgres_url) == _column_types(fresh)
    finally:
        pg_server.drop_database(postgres_server, fresh)
    texts = {bounds for (bounds,) in run_sql(postgres_url, "SELECT bounds FROM enumerator_results")}
    assert texts == {"4*0:", "2x0:2,1x1:"}
    # the old rows answer under the new keys, read straight from the store
    for n in range(6):
        assert store.get("configurations", Key.of(Occupancy(balls=n, urns=4, rule="BE")), 1) == _be(n, 4)
    for n in range(5):
        model = Occupancy(balls=n, bounds=GROUPED, rule="BE")
        assert store.get("configurations", Key.of(model), 1) == _brute(GROUPED, n)
    data = tables.load_table("be4", store=store)
    assert {n: data.value(n, 4) for n in range(6)} == {n: _be(n, 4) for n in range(6)}
    # and a verify of everything finds nothing wrong
    report = store.verify()
    assert report["mismatches"] == [] and report["checked"] == 11


# -- concurrent builders -----------------------------------------------------------------------

#: Four overlapping grids of BE configurations: urns 1..30 shifted by 0..3 and balls 0..60 shifted by 0..6.
_GRIDS = [("0..60" if i % 2 == 0 else "6..66", f"{1 + i}..{30 + i}") for i in range(4)]


def _builder(url, balls, urns, name, barrier, answers):
    """One builder process: wait for the others, then build its table into *url*; report what happened."""
    try:
        barrier.wait(60)
        report = tables.build_table(tables.TableSpec.make(rule="BE", balls=balls, urns=urns), name=name, store=url)
        answers.put(("ok", name, report.computed, report.reused, report.stored))
    except BaseException as error:  # reported to the test, which fails with it
        answers.put(("error", name, f"{type(error).__name__}: {error}", traceback.format_exc()))


def _build_concurrently(url: str, method: str) -> list:
    context = multiprocessing.get_context(method)
    barrier = context.Barrier(len(_GRIDS))
    answers = context.Queue()
    workers = [context.Process(target=_builder, args=(url, balls, urns, f"grid{i}", barrier, answers))
               for i, (balls, urns) in enumerate(_GRIDS)]
    for worker in workers:
        worker.start()
    try:
        outcome = [answers.get(timeout=240) for _ in workers]
        for worker in workers:
            worker.join(60)
    finally:
        _end(workers)
    assert [worker.exitcode for worker in workers] == [0] * len(workers)
    return outcome


def _end(workers) -> None:
    """Terminate any worker still running (a hung one must not outlive the test)."""
    for worker in workers:
        if worker.is_alive():
            worker.terminate()
            worker.join(10)


def _check_every_cell_once(url: str, outcome: list) -> None:
    errors = [answer for answer in outcome if answer[0] != "ok"]
    assert errors == [], errors
    wanted = set()
    for balls, urns in _GRIDS:
        b0, b1 = map(int, balls.split(".."))
        r0, r1 = map(int, urns.split(".."))
        wanted |= {(n, r) for n in range(b0, b1 + 1) for r in range(r0, r1 + 1)}
    rows = run_sql(url, "SELECT balls, urns, value FROM enumerator_results WHERE quantity = 'configurations'")
    cells = [(int(n), int(r)) for n, r, _ in rows]
    assert len(cells) == len(set(cells)) == len(wanted)  # every cell once
    assert set(cells) == wanted
    assert {(int(n), int(r)): int(v) for n, r, v in rows} == {(n, r): _be(n, r) for n, r in wanted}
    assert run_sql(url, "SELECT count(*), count(DISTINCT key_digest) FROM enumerator_results") == [
        (len(wanted), len(wanted))]
    listed = {name: stored for name, _, stored in tables.list_tables(store=url)}
    assert listed == {f"grid{i}": 61 * 30 for i in range(len(_GRIDS))}


def test_concurrent_builders_on_a_prepared_database_store_every_cell_once(postgres_url):
    results.Store(postgres_url).close()  # the schema exists before the builders start
    _check_every_cell_once(postgres_url, _build_concurrently(postgres_url, "spawn"))


def test_concurrent_builders_on_an_empty_database_store_every_cell_once(postgres_url):
    _check_every_cell_once(postgres_url, _build_concurrently(postgres_url, "spawn"))


def test_builders_forked_from_a_process_using_the_store_store_every_cell_once(postgres_url):
    store = results.open_store(postgres_url)  # the parent holds a pooled connection when it forks
    tables.build_table(tables.TableSpec.make(rule="BE", balls="0..3", urns="1..2"), name="seed", store=store)
    outcome = _build_concurrently(postgres_url, "fork")
    errors = [answer for answer in outcome if answer[0] != "ok"]
    assert errors == [], errors
    run_sql(postgres_url, "DELETE FROM enumerator_tables WHERE name = 'seed'")
    _check_every_cell_once(postgres_url, outcome)


def test_put_counts_only_the_rows_that_were_new(postgres_url):
    store = results.Store(postgres_url)
    version = ALGORITHM_VERSIONS["configurations"]
    items = [("configurations", Key.of(Occupancy(balls=n, urns=3, rule="BE")), version, _be(n, 3), "", "test", 0)
             for n in range(5)]
    assert store.put_many(items[:3]) == 3
    assert store.put_many(items) == 2  # two of five are new
    assert store.put(*items[0][:4]) is False  # stored already
    assert run_sql(postgres_url, "SELECT count(*) FROM enumerator_results") == [(5,)]


def _opener(urls, barrier, answers):
    """Open each of *urls* in turn, all processes at once (a barrier before each)."""
    failures = []
    for url in urls:
        barrier.wait(60)
        try:
            results.Store(url).close()
        except BaseException as error:
            failures.append(f"{type(error).__name__}: {error}")
    answers.put(failures)


def test_processes_opening_an_empty_database_at_once_all_succeed(postgres_server):
    import pg_server

    urls = [pg_server.create_database(postgres_server) for _ in range(8)]
    try:
        context = multiprocessing.get_context("spawn")
        barrier, answers = context.Barrier(4), context.Queue()
        workers = [context.Process(target=_opener, args=(urls, barrier, answers)) for _ in range(4)]
        for worker in workers:
            worker.start()
        try:
            failures = [failure for _ in workers for failure in answers.get(timeout=240)]
            for worker in workers:
                worker.join(60)
        finally:
            _end(workers)
        assert failures == []
        for url in urls:  # each created once, at the current schema
            assert run_sql(url, "SELECT value FROM enumerator_meta WHERE key = 'schema_version'") == [
                (str(schema.SCHEMA_VERSION),)]
    finally:
        for url in urls:
            pg_server.drop_database(postgres_server, url)


# -- the command line with --store postgresql+psycopg://... ----------------------------------------

def test_table_build_list_show_export_through_the_cli(postgres_url):
    store = ("--store", postgres_url)
    built = run_json("table", "build", "--rule", "BE", "--balls", "0..25", "--urns", "1..6", "--name", "be", *store)
    assert built["cells"] == str(26 * 6) and built["computed"] == str(26 * 6)
    listed = run_json("table", "list", *store)
    assert [(t["name"], t["stored"]) for t in listed["tables"]] == [("be", str(26 * 6))]
    shown = run_json("table", "show", "be", *store)
    assert shown["missing"] == "0" and shown["cells"]
    for cell in shown["cells"]:  # the window it shows, cell by cell
        assert int(cell["value"]) == _be(int(cell["balls"]), int(cell["urns"]))
    exported = run("table", "export", "be", "--format", "csv", *store)
    assert exported.exit_code == 0, exported.output
    rows = list(csv.DictReader(io.StringIO(exported.stdout)))
    assert len(rows) == 26 * 6
    assert all(int(row["value"]) == _be(int(row["balls"]), int(row["urns"])) for row in rows)
    text = run("table", "list", *store)
    assert text.exit_code == 0 and "156/156 cells built" in text.stdout


def test_cache_verify_export_clear_through_the_cli(postgres_url):
    store = ("--store", postgres_url)
    sys.set_int_max_str_digits(0)
    for n, r in ((10, 4), (40, 7)):
        counted = run_json("count", "-n", n, "-r", r, "--rule", "BE", *store)
        assert counted["configurations"] == str(_be(n, r))
    run_json("count", "-n", 3000, "-r", 10, "--rule", "MB", *store)  # 10**3000, 3001 digits
    checked = run_json("cache", "verify", "--all", *store)
    (rows,), = run_sql(postgres_url, "SELECT count(*) FROM enumerator_results")
    assert (checked["checked"], checked["mismatches"]) == (str(rows), [])
    # damage one value behind the store's back: verify names it, --fix puts the right one back
    run_sql(postgres_url, "UPDATE enumerator_results SET value = '287' WHERE value = '286'")
    damaged = run("cache", "verify", "--all", "--json", *store)
    payload = json.loads(damaged.stdout.splitlines()[0])
    assert [m["stored"] for m in payload["mismatches"]] == ["287"]
    fixed = run("cache", "verify", "--all", "--fix", "--json", *store)
    assert json.loads(fixed.stdout.splitlines()[0])["fixed"] == "1"
    assert run_sql(postgres_url, "SELECT count(*) FROM enumerator_results WHERE value = :v", v=str(_be(10, 4))) == [(1,)]
    # export: every row, values in full
    exported = run("cache", "export", "--format", "jsonl", *store)
    assert exported.exit_code == 0, exported.output
    lines = [json.loads(line) for line in exported.stdout.splitlines()]
    assert len(lines) == rows
    assert {_be(10, 4), _be(40, 7), 10**3000} <= {int(line["value"]) for line in lines}
    # clear
    refused = run("cache", "clear", *store)
    assert refused.exit_code == 2
    cleared = run("cache", "clear", "--yes", *store)
    assert cleared.exit_code == 0, cleared.output
    assert run_sql(postgres_url, "SELECT count(*) FROM enumerator_results") == [(0,)]
    assert run_json("table", "list", *store)["tables"] == []


def test_cache_stats_through_the_cli(postgres_url):
    store = ("--store", postgres_url)
    run_json("count", "-n", 10, "-r", 4, "--rule", "BE", *store)
    stats = run_json("cache", "stats", *store)
    assert stats["entries"] == "1"


def test_the_plain_postgresql_url_form_works_when_psycopg_is_sqlalchemy_s_default(postgres_url):
    plain = make_url(postgres_url).set(drivername="postgresql")
    if plain.get_dialect().driver != "psycopg":
        pytest.skip(f"postgresql:// means the {plain.get_dialect().driver} driver with this SQLAlchemy")
    url = plain.render_as_string(hide_password=False)
    assert run_json("count", "-n", 5, "-r", 3, "--rule", "BE", "--store", url)["configurations"] == str(_be(5, 3))
    assert run_sql(postgres_url, "SELECT value FROM enumerator_results") == [(str(_be(5, 3)),)]


def test_the_password_of_a_store_url_is_never_shown(postgres_url):
    # trust authentication ignores the password, so the store opens and shows its name
    url = make_url(postgres_url).set(password="hunter2").render_as_string(hide_password=False)
    listed = run("table", "list", "--json", "--store", url)
    assert listed.exit_code == 0, listed.output
    assert "hunter2" not in listed.output and "***" in json.loads(listed.stdout)["store"]


def test_reading_commands_make_no_tables_in_an_empty_database(postgres_url):
    # a database without the store's tables stays without them until something is stored
    # (reference: PostgreSQL's own catalogue, information_schema.tables)
    def tables_here():
        return run_sql(postgres_url, "SELECT count(*) FROM information_schema.tables "
                                     "WHERE table_schema = current_schema()")

    store = ("--store", postgres_url)
    assert tables_here() == [(0,)]
    assert run_json("cache", "stats", *store)["entries"] == "0"
    assert run_json("table", "list", *store)["tables"] == []
    assert run("cache", "export", *store).stdout == ""
    assert tables_here() == [(0,)]
    run_json("count", "-n", 10, "-r", 4, "--rule", "BE", *store)
    assert tables_here()[0][0] >= 3 and run_json("cache", "stats", *store)["entries"] == "1"
