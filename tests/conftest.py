"""Test-suite wide settings.

Every test run gets a private result store in a temporary folder, so the
suite never writes to the checkout's ``store/`` folder nor reads results a
previous run left there.  Tests of the location rule override this with
``monkeypatch``.
"""

from __future__ import annotations

import os
import shutil
import tempfile

import pytest

_STORE_DIR = None


def pytest_configure(config):
    global _STORE_DIR
    if "ENUMERATOR_STORE" not in os.environ:
        _STORE_DIR = tempfile.mkdtemp(prefix="enumerator-test-store-")
        os.environ["ENUMERATOR_STORE"] = os.path.join(_STORE_DIR, "results.sqlite")


def pytest_unconfigure(config):
    if _STORE_DIR is not None:
        os.environ.pop("ENUMERATOR_STORE", None)
        shutil.rmtree(_STORE_DIR, ignore_errors=True)


# -- Result stores ---------------------------------------------------------------
# Store-isolation fixtures shared by the test modules; a module opts in with
# ``pytestmark = pytest.mark.usefixtures("private_store")`` (or one of the others).

@pytest.fixture
def private_store(monkeypatch, tmp_path):
    """A fresh default store, ``default.sqlite`` in the test's own folder, with caching on.

    Every open store is closed before and after the test.
    """
    from enumerator import store as results

    monkeypatch.setenv(results.ENV_STORE, str(tmp_path / "default.sqlite"))
    monkeypatch.delenv(results.ENV_NO_CACHE, raising=False)
    results.close_all()
    yield
    results.close_all()


@pytest.fixture
def no_configured_store(monkeypatch):
    """No store named by the environment and caching on; every open store is closed after the test."""
    from enumerator import store as results

    monkeypatch.delenv(results.ENV_STORE, raising=False)
    monkeypatch.delenv(results.ENV_NO_CACHE, raising=False)
    yield
    results.close_all()


@pytest.fixture
def int_digits():
    """Restore the interpreter's integer-text digit limit, which a test may raise."""
    import sys

    digits = sys.get_int_max_str_digits()
    yield
    sys.set_int_max_str_digits(digits)


@pytest.fixture(scope="module")
def no_cache():
    """Pure computations: keep a whole module out of any result store (``ENUMERATOR_NO_CACHE=1``)."""
    with pytest.MonkeyPatch.context() as patch:
        patch.setenv("ENUMERATOR_NO_CACHE", "1")
        yield


# -- PostgreSQL ----------------------------------------------------------------
# The store's PostgreSQL tests (tests/test_store_postgres.py) run against a
# real server: the one ENUMERATOR_TEST_POSTGRES_URL names, else a throw-away
# server started from Debian's binaries for the session (tests/pg_server.py).
# Without either they are skipped, unless ENUMERATOR_TEST_POSTGRES_REQUIRED=1
# (set by .ci/run, which installs the server), which turns the skip into a failure.

@pytest.fixture(scope="session")
def postgres_server():
    """The URL of a PostgreSQL server's admin database whose user may create databases."""
    import pg_server

    required = os.environ.get(pg_server.ENV_REQUIRED, "") not in ("", "0")
    given = os.environ.get(pg_server.ENV_URL, "").strip()
    try:
        import psycopg  # noqa: F401  (the driver the URLs name)
    except ImportError as error:
        if required:
            pytest.fail(f"PostgreSQL tests required but the driver is missing: {error}", pytrace=False)
        pytest.skip(f"no PostgreSQL driver ({error}); pip install -e '.[test]'")
    if given:
        yield given
        return
    try:
        server = pg_server.start()
    except (pg_server.Unavailable, RuntimeError, OSError) as error:
        if required:
            pytest.fail(f"PostgreSQL tests required ({pg_server.ENV_REQUIRED}=1) but no server "
                        f"could be started: {error}", pytrace=False)
        pytest.skip(f"no PostgreSQL server: {error}")
    try:
        yield server.url
    finally:
        server.stop()


@pytest.fixture
def postgres_url(postgres_server):
    """A SQLAlchemy URL of a fresh, empty PostgreSQL database, dropped after the test."""
    import pg_server

    from enumerator import store as results

    url = pg_server.create_database(postgres_server)
    try:
        yield url
    finally:
        results.close_all()  # the store's pooled connections, before the database goes
        pg_server.drop_database(postgres_server, url)
