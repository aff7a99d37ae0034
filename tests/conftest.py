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


# -- Private names ---------------------------------------------------------------
# A helper two modules share gets a public name in its home module; a private
# (underscore) name stays in its module.  The rule is read straight off each
# module's source: tests/test_private_imports.py checks the whole package,
# tests/test_store.py the store.

def _module_of(path, root):
    """The dotted name of the module at *path* (``root`` is the package's folder) and its package."""
    parts = list(path.relative_to(root.parent).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts.pop()
        return ".".join(parts), ".".join(parts)
    return ".".join(parts), ".".join(parts[:-1])


def _is_module(dotted, root):
    """Is *dotted* (``enumerator.x.y``) one of the package's modules or subpackages?"""
    base = root.parent.joinpath(*dotted.split("."))
    return base.with_suffix(".py").is_file() or (base / "__init__.py").is_file()


def _private(name):
    return name.startswith("_") and not name.startswith("__")


def _module_named(expr, bound, root):
    """The package module an expression (``series`` or ``enumerator.core.series``) names, or ``None``."""
    import ast

    if isinstance(expr, ast.Name):
        return bound.get(expr.id)
    if isinstance(expr, ast.Attribute):
        outer = _module_named(expr.value, bound, root)
        if outer is not None and _is_module(f"{outer}.{expr.attr}", root):
            return f"{outer}.{expr.attr}"
    return None


def _private_borrowings(root, modules=None):
    """Every private name a module under *root* takes from another module of the package.

    Two ways to borrow are found: ``from <module> import _name`` (relative or
    absolute, at any depth of the file) and ``<module>._name`` on a name bound
    to one of the package's modules by an import.  Returns sorted
    ``(importer path, home module, name)`` triples, the path relative to the
    package's parent (``"enumerator/algorithms/laws.py"``).
    """
    import ast
    from pathlib import Path

    root = Path(root)
    package = root.name
    found = set()
    for path in sorted(modules if modules is not None else root.rglob("*.py")):
        path = Path(path)
        own, here = _module_of(path, root)
        where = path.relative_to(root.parent).as_posix()
        tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
        bound = {}  # local name -> dotted name of a package module
        for node in ast.walk(tree):
            if isinstance(node, ast.ImportFrom):
                if node.level:
                    base = here.split(".")[: len(here.split(".")) - (node.level - 1)]
                    home = ".".join(base + ([node.module] if node.module else []))
                else:
                    home = node.module or ""
                if home != package and not home.startswith(package + "."):
                    continue
                for alias in node.names:
                    if _is_module(f"{home}.{alias.name}", root):
                        bound[alias.asname or alias.name] = f"{home}.{alias.name}"
                        if _private(alias.name):
                            found.add((where, home, alias.name))
                    elif _private(alias.name) and home != own:
                        found.add((where, home, alias.name))
            elif isinstance(node, ast.Import):
                for alias in node.names:
                    if alias.name == package or alias.name.startswith(package + "."):
                        if alias.asname:
                            bound[alias.asname] = alias.name
                        else:
                            bound[package] = package
        for node in ast.walk(tree):
            if isinstance(node, ast.Attribute) and _private(node.attr):
                home = _module_named(node.value, bound, root)
                if home is not None and home != own:
                    found.add((where, home, node.attr))
    return sorted(found)


@pytest.fixture(scope="session")
def private_borrowings():
    """The function listing private names borrowed between a package's modules.

    ``private_borrowings(root, modules=None)``: *root* is the package's folder
    (``Path(enumerator.__file__).parent``), *modules* the files to read
    (default: every ``.py`` under *root*); the answer is a sorted list of
    ``(importer path, home module, name)`` triples.
    """
    return _private_borrowings
