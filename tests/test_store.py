"""Tests of the result store (enumerator/store/: codec, keys, database, context).

Every stored value is compared with an independent computation: the pure
functions of enumerator.algorithms.counting, brute-force enumeration, or GMP's binomial
(gmpy2.comb) as an outside reference.  No timing is asserted here (timings
belong to scripts/bench.py).
"""

from __future__ import annotations

import itertools
import logging
import math
import os
import sqlite3
from fractions import Fraction
from pathlib import Path

import gmpy2
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from enumerator import Occupancy, StoreError
from enumerator import store as results
from enumerator.algorithms.counting import count_configurations, count_microstates, count_profiles
from enumerator.core.errors import InvalidParameters, TooLarge
from enumerator.store import context as store_context
from enumerator.store import database as store_database
from enumerator.store import keys as store_keys

pytestmark = pytest.mark.usefixtures("no_configured_store")  # no store from the environment (conftest.py)


@pytest.fixture
def store(tmp_path):
    s = results.Store(str(tmp_path / "s.sqlite"))
    yield s
    s.close()


def _raw_count(path: Path, where: str = "") -> int:
    with sqlite3.connect(path) as conn:
        return conn.execute(f"SELECT count(*) FROM enumerator_results {where}").fetchone()[0]


def _brute_configurations(n, bounds):
    """Count admissible vectors by listing every vector (slow reference)."""
    ranges = [range(a, (n if b is None else min(b, n)) + 1) for a, b in bounds]
    return sum(1 for k in itertools.product(*ranges) if sum(k) == n)


def _brute_microstates(n, bounds):
    """Sum n!/(k_1!...k_r!) over admissible vectors (slow reference)."""
    ranges = [range(a, (n if b is None else min(b, n)) + 1) for a, b in bounds]
    total = 0
    for k in itertools.product(*ranges):
        if sum(k) == n:
            w = math.factorial(n)
            for v in k:
                w //= math.factorial(v)
            total += w
    return total


# -- values ------------------------------------------------------------------

exact_values = st.recursive(
    st.integers() | st.fractions(),
    lambda inner: st.lists(inner, max_size=4)
    | st.dictionaries(st.integers(-50, 50), inner, max_size=4)
    | st.dictionaries(st.sampled_from(["mean", "variance", "mode"]), inner, max_size=3),
    max_leaves=12,
)


@settings(max_examples=150, deadline=None)
@given(exact_values)
def test_encoding_round_trips_exactly(value):
    kind, text, digits = results.encode_value(value)
    back = results.decode_value(kind, text)
    assert back == value
    # the same value always has the same text (canonical)
    assert results.encode_value(back) == (kind, text, digits)
    if isinstance(value, int):
        assert kind == "int" and digits == len(str(abs(value)))
    if isinstance(value, Fraction) and value.denominator != 1:
        assert isinstance(back, Fraction) and kind == "fraction"


def test_encoding_keeps_the_type_of_whole_fractions_inside_lists():
    kind, text, _ = results.encode_value([Fraction(3), 3])
    assert text == '["3/1","3"]'
    back = results.decode_value(kind, text)
    assert type(back[0]) is Fraction and type(back[1]) is int


def test_encoding_rejects_inexact_values():
    with pytest.raises(TypeError, match="exact numbers"):
        results.encode_value(0.5)
    with pytest.raises(TypeError, match="exact numbers"):
        results.encode_value(["text"])


def test_a_100000_digit_value_round_trips(store, tmp_path):
    # C(2m, m) with m = 166,100 has 99,993 digits; reference: GMP mpz_bin_uiui (gmpy2.comb)
    model = Occupancy(balls=166_100, urns=166_101, rule="BE")
    expected = int(gmpy2.comb(2 * 166_100, 166_100))
    assert len(gmpy2.mpz(expected).digits()) > 99_000
    with results.using(store):
        assert model.configurations() == expected
        again = Occupancy(balls=166_100, urns=166_101, rule="BE")
        assert again.configurations() == expected
    # and a value of more than 100,000 digits through put/get
    big = gmpy2.mpz(7) ** 118_400 + 1
    key = results.Key("MB", 5, "3*0:", 3)
    store.put("probe", key, 1, big, method="test")
    assert store.get("probe", key, 1) == int(big)
    assert len(gmpy2.mpz(big).digits()) > 100_000
    with sqlite3.connect(tmp_path / "s.sqlite") as conn:
        kind, text, digits = conn.execute(
            "SELECT kind, typeof(value), digits FROM enumerator_results WHERE quantity='probe'"
        ).fetchone()
    assert (kind, text) == ("int", "text") and digits == len(gmpy2.mpz(big).digits())


def test_values_beyond_64_bits_are_text_not_sqlite_integers(store, tmp_path):
    model = Occupancy(balls=100, urns=7, rule="MB")
    with results.using(store):
        assert model.microstates() == 7**100  # closed form r^n (Feller, vol. 1, II.5)
    with sqlite3.connect(tmp_path / "s.sqlite") as conn:
        assert conn.execute("SELECT typeof(value), typeof(balls) FROM enumerator_results").fetchone() == ("text", "text")


# -- remembering ------------------------------------------------------------------

@settings(max_examples=40, deadline=None)
@given(
    n=st.integers(0, 7),
    bounds=st.lists(st.tuples(st.integers(0, 2), st.one_of(st.none(), st.integers(0, 4))), min_size=1, max_size=4),
    rule=st.sampled_from(["MB", "BE"]),
)
def test_a_store_hit_equals_a_fresh_computation_and_brute_force(tmp_path_factory, n, bounds, rule):
    bounds = [(a, None if b is None else max(a, b)) for a, b in bounds]
    path = tmp_path_factory.mktemp("hit") / "s.sqlite"
    with results.using(str(path)):
        first = Occupancy(balls=n, bounds=bounds, rule=rule)
        cold = (first.configurations(), first.microstates(), first.profiles())
        second = Occupancy(balls=n, bounds=bounds, rule=rule)
        warm = (second.configurations(), second.microstates(), second.profiles())
    fresh = Occupancy(balls=n, bounds=bounds, rule=rule)
    pure = (count_configurations(fresh), count_microstates(fresh), count_profiles(fresh))
    assert cold == warm == pure
    assert warm[0] == _brute_configurations(n, bounds)
    if rule == "MB":
        assert warm[1] == _brute_microstates(n, bounds)
    results.close_all()


def test_second_call_answers_from_the_store(store):
    calls = []

    def compute():
        calls.append(1)
        return 10**30 + 7

    key = results.Key("BE", 12, "4*0:", 4)
    assert results.remember("widgets", key, compute, version=1, store=store) == 10**30 + 7
    assert results.remember("widgets", key, compute, version=1, store=store) == 10**30 + 7
    assert len(calls) == 1
    # another process would see it too: a fresh Store on the same file
    other = results.Store(store.location)
    assert other.get("widgets", key, 1) == 10**30 + 7
    assert other.put("widgets", key, 1, 10**30 + 7) is False  # already there: kept once
    other.close()


def test_keys_separate_quantity_rule_balls_bounds_params_and_version(store):
    base = results.Key("BE", 5, "3*0:", 3)
    store.put("q", base, 1, 1)
    variants = [
        ("q2", base, 1, ""),
        ("q", results.Key("MB", 5, "3*0:", 3), 1, ""),
        ("q", results.Key("BE", 6, "3*0:", 3), 1, ""),
        ("q", results.Key("BE", 5, "3*0:2", 3), 1, ""),
        ("q", base, 2, ""),
        ("q", base, 1, "j=2"),
    ]
    for quantity, key, version, params in variants:
        assert store.get(quantity, key, version, params) is None
    assert store.get("q", base, 1) == 1


def test_a_new_algorithm_version_never_serves_an_old_value(store, monkeypatch):
    model = Occupancy(balls=6, urns=3, rule="BE")
    key = results.Key.of(model)
    store.put("configurations", key, results.ALGORITHM_VERSIONS["configurations"], 999, method="planted")
    with results.using(store):
        # the planted (wrong) value is served under its version ...
        assert Occupancy(balls=6, urns=3, rule="BE").configurations() == 999
        monkeypatch.setitem(results.ALGORITHM_VERSIONS, "configurations", results.ALGORITHM_VERSIONS["configurations"] + 1)
        # ... but never under a newer one: C(8, 2) = 28 (BE closed form C(n+r-1, r-1))
        assert Occupancy(balls=6, urns=3, rule="BE").configurations() == 28
        assert store.stats()["stale"] == 1
        assert store.clear(stale_only=True) == 1
        assert store.stats()["entries"] == 1


def test_instances_remember_their_answer(store):
    model = Occupancy(balls=40, urns=9, rule="MB", capacity=6)
    with results.using(store):
        value = model.microstates()
        store.clear()
        assert model.microstates() == value  # from the instance memo, no query needed
        assert store.stats()["entries"] == 0
        assert Occupancy(balls=40, urns=9, rule="MB", capacity=6).microstates() == value


def test_remember_needs_a_version_for_unknown_quantities(store):
    with pytest.raises(ValueError, match="register_quantity"):
        results.remember("never-registered", results.Key("BE", 1, "1*0:", 1), lambda: 1, store=store)


def test_registered_quantity_is_verified_with_its_recomputer(store):
    results.register_quantity("square_of_balls", 3, lambda model, params: model.balls**2)
    try:
        key = results.Key("BE", 9, "2*0:", 2)
        assert results.remember("square_of_balls", key, lambda: 81, store=store) == 81
        store.put("square_of_balls", results.Key("BE", 4, "2*0:", 2), 3, 17)  # wrong on purpose
        report = store.verify()
        assert report["checked"] == 2
        assert [(m["balls"], m["stored"], m["expected"]) for m in report["mismatches"]] == [(4, "17", "16")]
    finally:
        results.ALGORITHM_VERSIONS.pop("square_of_balls")
        store_keys._RECOMPUTE.pop("square_of_balls")


# -- bypass ------------------------------------------------------------------

def test_env_no_cache_bypasses_the_store(tmp_path, monkeypatch):
    path = tmp_path / "s.sqlite"
    monkeypatch.setenv(results.ENV_STORE, str(path))
    monkeypatch.setenv(results.ENV_NO_CACHE, "1")
    assert results.current_store() is None
    assert Occupancy(balls=5, urns=3, rule="BE").configurations() == 21  # C(7, 2)
    assert not path.exists()
    monkeypatch.setenv(results.ENV_NO_CACHE, "0")
    assert Occupancy(balls=5, urns=3, rule="BE").configurations() == 21
    assert _raw_count(path) == 1


def test_bypass_switches_the_store_off_for_its_block_only(tmp_path):
    path = tmp_path / "s.sqlite"
    with results.using(str(path)):
        with results.bypass():
            Occupancy(balls=4, urns=4, rule="MB").microstates()
            with results.bypass():
                Occupancy(balls=5, urns=4, rule="MB").microstates()
            assert results.current_store() is None
        Occupancy(balls=6, urns=4, rule="MB").microstates()
    assert _raw_count(path) == 1


def test_the_active_store_is_per_thread_and_never_leaks(tmp_path):
    import threading

    seen = {}

    def other_thread():
        seen["other"] = results.current_store()

    with results.using(str(tmp_path / "mine.sqlite")) as mine:
        thread = threading.Thread(target=other_thread)
        thread.start()
        thread.join()
        # using() yields a handle that opens the store on first use (issue 9, "Fast start")
        assert results.current_store() is mine.store
    # a fresh thread sees the default (here: ENUMERATOR_STORE is unset, so not 'mine')
    assert seen["other"] is not mine.store


def test_an_explicit_store_argument_wins_over_the_active_one(tmp_path):
    path, other = tmp_path / "explicit.sqlite", tmp_path / "active.sqlite"
    explicit = results.open_store(str(path))
    with results.using(str(other)):
        # C(6, 3) = 20 (Feller, vol. 1, II.5: BE with 4 urns and 3 balls)
        assert Occupancy(balls=3, urns=4, rule="BE").configurations(store=explicit) == 20
    assert _raw_count(path) == 1
    assert not other.exists() or _raw_count(other) == 0


def test_be_and_fd_microstates_share_the_configurations_entry(store, tmp_path):
    with results.using(store):
        # FD: C(r, n) = C(6, 2) = 15 (Feller, vol. 1, II.5)
        assert Occupancy(balls=2, urns=6, rule="FD").microstates() == 15
        assert Occupancy(balls=2, urns=6, rule="FD").configurations() == 15
    with sqlite3.connect(tmp_path / "s.sqlite") as conn:
        assert conn.execute("SELECT quantity FROM enumerator_results").fetchall() == [("configurations",)]


# -- location ------------------------------------------------------------------

def test_location_rule_explicit_then_env_then_checkout_then_user_cache(tmp_path, monkeypatch):
    import platformdirs

    monkeypatch.setenv(results.ENV_STORE, str(tmp_path / "env.sqlite"))
    assert results.default_location() == str(tmp_path / "env.sqlite")
    with results.using(str(tmp_path / "explicit.sqlite")) as chosen:
        assert chosen.path == (tmp_path / "explicit.sqlite").resolve()
    monkeypatch.delenv(results.ENV_STORE)
    checkout = store_context._checkout_store_dir()
    repo = Path(store_context.__file__).resolve().parent.parent.parent
    if (repo / "pyproject.toml").is_file() and (repo / "store").is_dir():
        assert checkout == repo / "store"
        assert results.default_location() == str(repo / "store" / results.DEFAULT_FILENAME)
    monkeypatch.setattr(store_context, "_this_checkout_store_dir", lambda: None)  # as if installed, not a checkout
    expected = Path(platformdirs.user_cache_dir("enumerator", appauthor=False)) / results.DEFAULT_FILENAME
    assert results.default_location() == str(expected)


def test_checkout_detection_never_picks_site_packages(tmp_path):
    for root in (tmp_path / "checkout", tmp_path / "lib" / "site-packages"):
        (root / "enumerator").mkdir(parents=True)
        (root / "store").mkdir()
        (root / "pyproject.toml").write_text("[project]\n")
    assert store_context._checkout_store_dir(tmp_path / "checkout" / "enumerator") == (tmp_path / "checkout" / "store").resolve()
    assert store_context._checkout_store_dir(tmp_path / "lib" / "site-packages" / "enumerator") is None
    (tmp_path / "bare" / "enumerator").mkdir(parents=True)
    assert store_context._checkout_store_dir(tmp_path / "bare" / "enumerator") is None


def test_a_directory_or_an_sqlalchemy_url_is_accepted(tmp_path):
    in_dir = results.Store(str(tmp_path))
    assert in_dir.path == (tmp_path / results.DEFAULT_FILENAME).resolve()
    in_dir.close()
    url = f"sqlite:///{tmp_path / 'by-url.sqlite'}"
    with results.using(url) as chosen:
        assert Occupancy(balls=3, urns=3, rule="BE").configurations() == 10  # C(5, 2)
        assert chosen.path == (tmp_path / "by-url.sqlite").resolve()
    assert _raw_count(tmp_path / "by-url.sqlite") == 1


def test_a_url_without_its_driver_is_a_clear_error():
    with pytest.raises(StoreError) as info:
        results.Store("nosuchdialect://user@host/db")
    assert "driver" in str(info.value) and "\n" not in str(info.value)


# -- damage and versions ----------------------------------------------------------

def test_a_non_database_file_is_a_one_line_error_naming_it(tmp_path):
    path = tmp_path / "notes.sqlite"
    path.write_bytes(b"these are my notes, not a database\n" * 50)
    with pytest.raises(StoreError) as info:
        with results.using(str(path)):
            Occupancy(balls=3, urns=2, rule="BE").configurations()
    message = str(info.value)
    assert str(path) in message and "delete" in message and "\n" not in message


def test_a_truncated_database_is_refused_not_misread(tmp_path):
    path = tmp_path / "s.sqlite"
    with results.using(str(path)):
        for n in range(200):
            Occupancy(balls=n, urns=12, rule="MB", capacity=9).microstates()
    results.close_all()
    data = path.read_bytes()
    path.write_bytes(data[: len(data) // 2])
    with pytest.raises(StoreError) as info:
        s = results.Store(str(path))
        for _entry in s.entries():
            pass
    assert str(path) in str(info.value) and "damaged" in str(info.value)


def test_a_damaged_value_is_refused_then_repaired_by_verify(store, tmp_path):
    with results.using(store):
        right = Occupancy(balls=30, urns=6, rule="MB", capacity=8).microstates()
    with sqlite3.connect(tmp_path / "s.sqlite") as conn:
        text = conn.execute("SELECT value FROM enumerator_results").fetchone()[0]
        wrong = ("1" if text[0] != "1" else "2") + text[1:]  # same length, one digit changed
        conn.execute("UPDATE enumerator_results SET value = ?", (wrong,))
    with results.using(store):
        with pytest.raises(StoreError, match="damaged entry") as info:
            Occupancy(balls=30, urns=6, rule="MB", capacity=8).microstates()
        assert "cache verify --fix" in str(info.value)
        report = store.verify(fix=True)
        assert report["checked"] == 1 and report["fixed"] == 1
        assert report["mismatches"][0]["problem"].startswith("damaged")
        assert Occupancy(balls=30, urns=6, rule="MB", capacity=8).microstates() == right
        assert store.verify()["mismatches"] == []


def test_a_newer_schema_is_refused_clearly(tmp_path):
    path = tmp_path / "s.sqlite"
    results.Store(str(path)).close()
    with sqlite3.connect(path) as conn:
        conn.execute("UPDATE enumerator_meta SET value = ? WHERE key = 'schema_version'", (str(results.SCHEMA_VERSION + 1),))
    with pytest.raises(StoreError) as info:
        results.Store(str(path))
    message = str(info.value)
    assert "newer" in message and "upgrade enumerator" in message and str(path) in message


def test_the_schema_records_its_version(store, tmp_path):
    with sqlite3.connect(tmp_path / "s.sqlite") as conn:
        assert conn.execute("SELECT value FROM enumerator_meta WHERE key='schema_version'").fetchone() == (str(results.SCHEMA_VERSION),)
        assert conn.execute("PRAGMA journal_mode").fetchone() == ("wal",)


# -- read-only ------------------------------------------------------------------

def test_a_read_only_store_answers_and_says_so_once(tmp_path, caplog):
    path = tmp_path / "s.sqlite"
    with results.using(str(path)):
        stored = Occupancy(balls=9, urns=4, rule="BE").configurations()
    results.close_all()
    url = f"sqlite:///file:{path}?mode=ro&uri=true"
    caplog.set_level(logging.WARNING, logger="enumerator.store")
    with results.using(url):
        assert Occupancy(balls=9, urns=4, rule="BE").configurations() == stored == 220  # C(12, 3)
        # not stored, computed: C(n+r-1, r-1) (BE closed form)
        for n in range(10, 15):
            assert Occupancy(balls=n, urns=4, rule="BE").configurations() == math.comb(n + 3, 3)
    warnings = [r for r in caplog.records if "read-only" in r.getMessage()]
    assert len(warnings) == 1 and str(path) in warnings[0].getMessage()
    assert _raw_count(path) == 1


def test_an_unwritable_location_is_treated_as_read_only(tmp_path, monkeypatch, caplog):
    # (the tests may run as root, who can write anywhere, so the check is simulated)
    monkeypatch.setattr(os, "access", lambda path, mode: False)
    caplog.set_level(logging.WARNING, logger="enumerator.store")
    path = tmp_path / "nowhere" / "s.sqlite"
    with results.using(str(path)) as chosen:
        assert chosen.read_only
        assert Occupancy(balls=4, urns=3, rule="MB").microstates() == 81  # 3^4
        assert Occupancy(balls=5, urns=3, rule="MB").microstates() == 243
    assert not path.exists()
    assert len([r for r in caplog.records if "read-only" in r.getMessage()]) == 1


# -- housekeeping ------------------------------------------------------------------

def test_stats_clear_and_export(store):
    with results.using(store):
        for n in range(5):
            Occupancy(balls=n, urns=3, rule="MB").microstates()
            Occupancy(balls=n, urns=3, rule="BE").configurations()
    stats = store.stats()
    assert stats["entries"] == 10
    assert stats["by_quantity"] == {"microstates": {"MB": 5}, "configurations": {"BE": 5}}
    assert stats["largest_digits"] == 2  # 3^4 = 81
    lines = list(store.export_lines("csv"))
    assert lines[0].startswith("quantity,rule,balls,urns,bounds")
    assert len(lines) == 11
    import json

    records = [json.loads(line) for line in store.export_lines("jsonl")]
    assert {(r["rule"], r["balls"], r["value"]) for r in records if r["rule"] == "MB"} == {
        ("MB", str(n), str(3**n)) for n in range(5)
    }
    assert all(isinstance(r["balls"], str) and isinstance(r["value"], str) for r in records)
    assert store.clear(quantity="microstates") == 5
    assert store.clear() == 5
    assert store.stats()["entries"] == 0


def test_verify_recomputes_a_sample(store):
    with results.using(store):
        for n in range(20):
            Occupancy(balls=n, urns=4, rule="MB", capacity=5).microstates()
    report = store.verify(sample=5, seed=1)
    assert report["checked"] == 5 and report["mismatches"] == []
    assert store.verify()["checked"] == 20


def test_model_from_key_inverts_the_canonical_bounds():
    for model in (
        Occupancy(balls=7, urns=4, rule="BE", capacity=3, minimum=1),
        Occupancy(balls=7, bounds=[(0, 2), (1, None), (0, 5)], rule="MB"),
        Occupancy(balls=2, urns=5, rule="FD"),
    ):
        again = results.model_from_key(model.rule.value, model.balls, model.canonical_bounds())
        assert again == model


# -- threads ------------------------------------------------------------------

def test_threads_opening_one_location_at_once_share_one_store(tmp_path, monkeypatch):
    import threading

    opened = []

    class CountingStore(results.Store):
        def __init__(self, location, **options):
            opened.append(location)
            super().__init__(location, **options)

    # open_store imports the class when it opens a store (so a stored answer loads no SQLAlchemy)
    monkeypatch.setattr(store_database, "Store", CountingStore)
    where = str(tmp_path / "shared.sqlite")
    barrier = threading.Barrier(8)
    got = []

    def opener():
        barrier.wait()
        got.append(results.open_store(where))

    threads = [threading.Thread(target=opener) for _ in range(8)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    assert len(opened) == 1 and len(got) == 8 and all(s is got[0] for s in got)


def test_threads_sharing_one_store_get_exact_answers(store):
    import threading

    errors = []

    def worker(offset):
        try:
            for n in range(offset, 40, 4):
                model = Occupancy(balls=n, urns=5, rule="MB", capacity=9)
                value = results.remember("microstates", model, lambda m=model: count_microstates(m), store=store)
                # brute force where it is quick, the pure computation beyond
                expected = _brute_microstates(n, [(0, 9)] * 5) if n < 12 else count_microstates(model)
                assert value == expected
        except Exception as error:  # collected, asserted below
            errors.append(error)

    threads = [threading.Thread(target=worker, args=(i % 4,)) for i in range(8)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    assert errors == []
    assert store.stats()["entries"] == 40  # each key stored once


def test_the_store_modules_doctests_pass():
    import doctest
    import importlib

    for name in ("codec", "keys", "schema", "migrations", "engine", "entries", "database", "context", "tables"):
        module = importlib.import_module(f"enumerator.store.{name}")
        assert doctest.testmod(module).failed == 0, name


@settings(max_examples=100, deadline=None)
@given(st.integers() | st.fractions())
def test_a_stored_number_is_the_text_of_the_one_exact_codec(value):
    # the store writes numbers with enumerator.core.exact, the codec of the JSON output (no second encoder)
    from enumerator.core.exact import exact_text

    kind, text, _ = results.encode_value(value)
    assert text == exact_text(value) == str(value)  # reference: str(int) / str(Fraction) (Python docs)
    assert kind == ("int" if isinstance(value, int) else "fraction")


# -- groups, weights and urns of any size (schema 2) ---------------------------------------

def test_a_result_for_2_to_the_64_urns_round_trips(store, tmp_path):
    model = Occupancy(balls=3, urns=2**64, rule="BE")
    # BE closed form C(n + r - 1, n) (Feller, vol. 1, II.5), computed here by the standard library
    expected = math.comb(3 + 2**64 - 1, 3)
    calls = []

    def compute():
        calls.append(1)
        return expected

    assert results.remember("configurations", model, compute, store=store) == expected
    results.close_all()
    again = results.Store(str(tmp_path / "s.sqlite"))
    try:
        assert results.remember("configurations", Occupancy(balls=3, urns=2**64, rule="BE"), compute,
                                store=again) == expected
        assert calls == [1]
        (entry,) = list(again.entries())
        assert entry.urns == 2**64 and entry.bounds == "18446744073709551616*0:" and entry.intact
        line = next(iter(again.export_lines("jsonl")))
        assert '"urns": "18446744073709551616"' in line
        version = results.ALGORITHM_VERSIONS["configurations"]
        assert set(again.stored_balls("configurations", "BE", entry.bounds, 2**64, version)) == {3}
    finally:
        again.close()
    with sqlite3.connect(tmp_path / "s.sqlite") as conn:
        assert conn.execute("SELECT urns, typeof(urns) FROM enumerator_results").fetchone() == (
            "18446744073709551616", "text")


def test_groups_of_huge_counts_are_one_short_key(store):
    model = Occupancy(balls=2, groups=[(2**64, 0, 1), (2**70, 0, None)], rule="BE")
    key = results.Key.of(model)
    assert key.bounds == f"{2**64}x0:1,{2**70}x0:" and key.urns == 2**64 + 2**70
    # BE: two balls in r urns, C(r + 1, 2), less the r_1 vectors that put both in one capped urn
    r, capped = 2**64 + 2**70, 2**64
    expected = math.comb(r + 1, 2) - capped
    assert results.remember("configurations", model, lambda: expected, store=store) == expected
    assert store.get("configurations", key, results.ALGORITHM_VERSIONS["configurations"]) == expected
    assert results.model_from_key("BE", 2, key.bounds) == model


def test_a_weighted_result_round_trips_under_its_own_key(store):
    weighted = Occupancy(balls=2, weights="2x1,3", rule="MB")
    plain = Occupancy(balls=2, urns=3, rule="MB")
    assert results.Key.of(weighted).bounds == "2x0:@1,1x0:@3"
    # total weight of MB with weights 1, 1, 3: (1 + 1 + 3)^2 = 25 (multinomial theorem, from memory)
    total = Fraction(25)
    results.register_quantity("test_total_weight", 1)
    try:
        assert results.remember("test_total_weight", weighted, lambda: total, store=store) == total
        # the unweighted model is another key: its answer is never the weighted one
        assert results.remember("test_total_weight", plain, lambda: 9, store=store) == 9  # 3^2
        assert results.remember("test_total_weight", weighted, lambda: 0, store=store) == total
        entries = {entry.bounds: entry for entry in store.entries()}
        assert set(entries) == {"2x0:@1,1x0:@3", "3*0:"} and entries["2x0:@1,1x0:@3"].urns == 3
        assert results.model_from_key("MB", 2, "2x0:@1,1x0:@3") == weighted
        # a fractional weight keeps its exact text: 3 urns of weight 1/2
        half = Occupancy(balls=2, urns=3, weights="3x1/2", rule="MB")
        assert results.Key.of(half).bounds == "3*0:@1/2"
        assert results.model_from_key("MB", 2, "3*0:@1/2") == half
    finally:
        results.ALGORITHM_VERSIONS.pop("test_total_weight")


def _brute_total_weight(n, bounds, weights):
    """MB total weight: sum over admissible k of n!/(k_1!...k_r!) prod w_i^k_i (brute force)."""
    ranges = [range(a, (n if b is None else min(b, n)) + 1) for a, b in bounds]
    total = Fraction(0)
    for k in itertools.product(*ranges):
        if sum(k) == n:
            term = Fraction(math.factorial(n), math.prod(map(math.factorial, k)))
            total += term * math.prod(Fraction(w) ** j for w, j in zip(weights, k))
    return total


def test_verify_fix_recomputes_grouped_and_weighted_entries(store, monkeypatch):
    def total_weight(model, params):
        # a recomputer that reads the model rebuilt from the key: its groups and weights
        bounds, weights = [], []
        for g in model.groups:
            bounds += [(g.lower, g.upper)] * g.count
            weights += [g.weight] * g.count
        return _brute_total_weight(model.balls, bounds, weights)

    monkeypatch.setitem(results.ALGORITHM_VERSIONS, "test_total_weight", 1)
    monkeypatch.setitem(store_keys._RECOMPUTE, "test_total_weight", total_weight)
    grouped = Occupancy(balls=3, bounds=[(0, 2), (0, 2), (1, None)], rule="MB")
    weighted = Occupancy(balls=2, weights="2x1,3", bounds="2x0:2,1x1:", rule="MB")
    version = results.ALGORITHM_VERSIONS
    store.put("microstates", results.Key.of(grouped), version["microstates"], 1)  # wrong on purpose
    store.put("configurations", results.Key.of(grouped), version["configurations"], 1)
    store.put("configurations", results.Key.of(weighted), version["configurations"], 1)
    store.put("test_total_weight", results.Key.of(weighted), 1, Fraction(1))
    report = store.verify(fix=True)
    assert report["checked"] == 4 and len(report["mismatches"]) == 4 and report["fixed"] == 4
    assert store.verify()["mismatches"] == []
    bounds = [(0, 2), (0, 2), (1, None)]
    assert store.get("microstates", results.Key.of(grouped), version["microstates"]) == _brute_microstates(3, bounds)
    assert store.get("configurations", results.Key.of(grouped), version["configurations"]) == (
        _brute_configurations(3, bounds))
    # the weights do not change which vectors are admissible
    assert store.get("configurations", results.Key.of(weighted), version["configurations"]) == (
        _brute_configurations(2, bounds))
    # weights 1, 1, 3 with urn 3 holding at least one ball: 25 - (1 + 1)^2 = 21 (multinomial
    # theorem less the assignments that leave urn 3 empty); brute force agrees
    assert store.get("test_total_weight", results.Key.of(weighted), 1) == 21 == (
        _brute_total_weight(2, bounds, [1, 1, 3]))


def test_verify_reports_an_unreadable_key_and_fix_drops_it(store):
    store.put("configurations", results.Key("BE", 2, "2x0:zz", 2), results.ALGORITHM_VERSIONS["configurations"], 3)
    report = store.verify()
    (mismatch,) = report["mismatches"]
    assert mismatch["problem"].startswith("unreadable key") and mismatch["expected"] == ""
    assert store.verify(fix=True)["fixed"] == 1
    assert store.stats()["entries"] == 0


def test_verify_skips_a_sound_entry_whose_recomputation_is_refused(store, monkeypatch):
    def refuse(model, params):
        raise TooLarge("too large to recompute here")

    monkeypatch.setitem(results.ALGORITHM_VERSIONS, "test_refused", 1)
    monkeypatch.setitem(store_keys._RECOMPUTE, "test_refused", refuse)
    store.put("test_refused", results.Key("BE", 3, f"{2**64}*0:", 2**64), 1, 7)
    assert store.verify() == {"checked": 0, "skipped": 1, "mismatches": [], "fixed": 0}


def test_model_from_key_reads_groups_weights_and_schema_1_texts():
    assert results.model_from_key("BE", 1, "0:2,0:2,1:") == Occupancy(balls=1, bounds="2x0:2,1x1:", rule="BE")
    assert results.model_from_key("BE", 1, "0:2,0:2,1:").canonical_bounds() == "2x0:2,1x1:"
    model = results.model_from_key("MB", 4, f"{2**64}x0:3@2,1x1:@1/3")
    assert model.urns == 2**64 + 1 and model.canonical_bounds() == f"{2**64}x0:3@2,1x1:@1/3"
    with pytest.raises(InvalidParameters):
        results.model_from_key("BE", 1, "0:2,zz")


def test_no_store_module_imports_a_private_name_of_another(private_borrowings):
    # a helper two modules share gets a public name: a private one stays in its module;
    # the rule read straight off each module's source (the fixture in conftest.py)
    folder = Path(results.__file__).parent
    assert private_borrowings(folder.parent, folder.glob("*.py")) == []


def test_stored_quantities_and_holds_quantity_match_the_rows(store, tmp_path):
    # reference: SELECT DISTINCT over the file with the standard library's sqlite3
    assert store.stored_quantities() == [] and not store.holds_quantity("microstates")
    for name in ("zeta", "alpha", "microstates", "alpha2", "Beta"):
        for n in range(3):
            store.put(name, store_keys.Key.of(Occupancy(balls=n, urns=2)), 1, n)
    with sqlite3.connect(tmp_path / "s.sqlite") as conn:
        names = sorted(row[0] for row in conn.execute("SELECT DISTINCT quantity FROM enumerator_results"))
    assert store.stored_quantities() == names == ["Beta", "alpha", "alpha2", "microstates", "zeta"]
    assert all(store.holds_quantity(name) for name in names)
    assert not store.holds_quantity("alph") and not store.holds_quantity("beta")


def test_open_store_without_create_makes_nothing_and_keeps_nothing(tmp_path):
    where = tmp_path / "a" / "b" / "s.sqlite"
    absent = results.open_store(str(where), create=False)
    assert not absent.exists and not absent.read_only and not (tmp_path / "a").exists()
    assert (absent.stats()["entries"], absent.tables(), list(absent.entries())) == (0, [], [])
    assert absent.stored_quantities() == [] and absent.verify()["checked"] == 0
    # not kept: the next open that may create makes the store, and every later open finds it
    made = results.open_store(str(where))
    assert made is not absent and made.exists and where.exists()
    assert results.open_store(str(where), create=False) is made
    # a place where no folder can be made (below a file) reads as empty and read-only
    blocker = tmp_path / "plain-file"
    blocker.write_text("not a folder")
    below = results.Store(str(blocker / "s.sqlite"), create=False)
    assert not below.exists and below.read_only and below.stats()["entries"] == 0
