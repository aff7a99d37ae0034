"""A throw-away PostgreSQL server for the store's tests (used by tests/conftest.py).

:func:`start` runs Debian's ``initdb`` and ``pg_ctl`` in a fresh temporary
directory: trust authentication for TCP connections from 127.0.0.1 only, no
Unix socket, a free loopback port, ``fsync`` off (the data is thrown away).
``initdb`` refuses to run as root, so under root the directory is handed to
the ``postgres`` user (created by Debian's ``postgresql-common``) and the
commands run through ``runuser -u postgres --``.  :meth:`Server.stop` stops
the server (``pg_ctl stop -m immediate``) and deletes the directory.

Every test database is made by :func:`create_database` and dropped by
:func:`drop_database` (``DROP DATABASE ... WITH (FORCE)``, PostgreSQL 13+),
so each test starts from an empty database.
"""

from __future__ import annotations

import glob
import os
import pwd
import shutil
import socket
import subprocess
import tempfile
import time
import uuid
from dataclasses import dataclass
from pathlib import Path
from typing import List, Optional

#: A server to use instead of starting one: a SQLAlchemy URL of a database on
#: it whose user may create databases (``postgresql+psycopg://user@host/db``).
ENV_URL = "ENUMERATOR_TEST_POSTGRES_URL"
#: When set to 1 (``.ci/run`` sets it), a server that cannot be started fails
#: the PostgreSQL tests instead of skipping them.
ENV_REQUIRED = "ENUMERATOR_TEST_POSTGRES_REQUIRED"

#: Where Debian puts the server binaries (the newest version is taken).
_DEBIAN_BIN = "/usr/lib/postgresql/*/bin"


class Unavailable(Exception):
    """No server can be started here (the message says why)."""


@dataclass
class Server:
    """A running throw-away server: its admin URL (database ``postgres``), directory and binaries."""

    url: str
    directory: Path
    bindir: Path
    user: Optional[str]

    def stop(self) -> None:
        """Stop the server at once and delete its directory."""
        try:
            _run(self.user, [str(self.bindir / "pg_ctl"), "-D", str(self.directory / "data"),
                             "-m", "immediate", "-w", "stop"], timeout=60)
        except (subprocess.SubprocessError, OSError):
            pass  # stopped already; the directory goes anyway
        shutil.rmtree(self.directory, ignore_errors=True)


def binaries() -> Optional[Path]:
    """The directory holding ``initdb``, ``pg_ctl`` and ``postgres``, or None.

    Debian's versioned directory first (its ``pg_ctl`` finds its own
    ``postgres``), then ``PATH``.
    """
    for candidate in sorted(glob.glob(_DEBIAN_BIN), key=_version_key, reverse=True):
        if all(os.access(os.path.join(candidate, tool), os.X_OK) for tool in ("initdb", "pg_ctl", "postgres")):
            return Path(candidate)
    initdb = shutil.which("initdb")
    if initdb is not None:
        folder = Path(os.path.realpath(initdb)).parent
        if (folder / "pg_ctl").exists() and (folder / "postgres").exists():
            return folder
    return None


def _version_key(path: str) -> tuple:
    part = Path(path).parent.name
    return tuple(int(p) for p in part.split(".") if p.isdigit()) or (0,)


def _run(user: Optional[str], command: List[str], timeout: float = 120) -> str:
    """Run *command* (as *user* through ``runuser`` when given); return its output, raise on failure."""
    if user is not None:
        command = ["runuser", "-u", user, "--", *command]
    done = subprocess.run(command, stdout=subprocess.PIPE, stderr=subprocess.STDOUT, text=True,
                          timeout=timeout, cwd="/")
    if done.returncode != 0:
        raise subprocess.CalledProcessError(done.returncode, command, done.stdout)
    return done.stdout


def _free_port() -> int:
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


def start() -> Server:
    """Start a throw-away server on 127.0.0.1 and return it.

    Raises
    ------
    Unavailable
        When no binaries are found, or under root when there is no
        ``postgres`` user or no ``runuser``.
    RuntimeError
        When ``initdb`` or ``pg_ctl start`` fails (the server's log is in the message).
    """
    bindir = binaries()
    if bindir is None:
        raise Unavailable("no PostgreSQL server binaries (initdb, pg_ctl) in /usr/lib/postgresql/*/bin "
                          f"or on PATH; install Debian's postgresql package or set {ENV_URL}")
    user = None
    if os.geteuid() == 0:  # initdb refuses root
        try:
            owner = pwd.getpwnam("postgres")
        except KeyError:
            raise Unavailable("running as root and there is no 'postgres' user to run initdb as") from None
        if shutil.which("runuser") is None:
            raise Unavailable("running as root and runuser is missing")
        user = "postgres"
    # under root, /tmp rather than $TMPDIR: the postgres user must be able to reach the directory
    parent = "/tmp" if user is not None and os.path.isdir("/tmp") else None
    directory = Path(tempfile.mkdtemp(prefix="enumerator-pg-", dir=parent))
    try:
        if user is not None:
            os.chown(directory, owner.pw_uid, owner.pw_gid)
        data = directory / "data"
        try:
            _run(user, [str(bindir / "initdb"), "-D", str(data), "-U", "postgres", "-A", "trust",
                        "-E", "UTF8", "--locale=C", "--no-sync"])
        except subprocess.CalledProcessError as error:
            raise RuntimeError(f"initdb failed:\n{error.output}") from None
        # trust for TCP from 127.0.0.1 only: no other line, no Unix socket
        hba = data / "pg_hba.conf"
        hba.write_text("host all all 127.0.0.1/32 trust\n")
        if user is not None:
            os.chown(hba, owner.pw_uid, owner.pw_gid)
        log = directory / "server.log"
        failure = ""
        for _ in range(5):  # another process may take the free port first
            port = _free_port()
            options = (f"-c listen_addresses=127.0.0.1 -p {port} -c unix_socket_directories='' "
                       "-c fsync=off -c synchronous_commit=off -c full_page_writes=off -c max_connections=100")
            try:
                _run(user, [str(bindir / "pg_ctl"), "-D", str(data), "-l", str(log), "-o", options,
                            "-w", "-t", "60", "start"])
            except subprocess.CalledProcessError as error:
                failure = error.output + (log.read_text(errors="replace") if log.exists() else "")
                continue
            url = f"postgresql+psycopg://postgres@127.0.0.1:{port}/postgres"
            server = Server(url=url, directory=directory, bindir=bindir, user=user)
            _wait_until_accepting(url)
            return server
        raise RuntimeError(f"pg_ctl start failed:\n{failure}")
    except BaseException:
        shutil.rmtree(directory, ignore_errors=True)
        raise


def _wait_until_accepting(url: str, seconds: float = 30.0) -> None:
    import sqlalchemy

    engine = sqlalchemy.create_engine(url)
    deadline = time.monotonic() + seconds
    try:
        while True:
            try:
                with engine.connect() as conn:
                    conn.exec_driver_sql("SELECT 1")
                return
            except sqlalchemy.exc.OperationalError:
                if time.monotonic() > deadline:
                    raise
                time.sleep(0.2)
    finally:
        engine.dispose()


def _admin(url: str):
    import sqlalchemy

    return sqlalchemy.create_engine(url, isolation_level="AUTOCOMMIT", poolclass=sqlalchemy.pool.NullPool)


def run_sql(url: str, statement: str, **params) -> list:
    """Run one statement on *url* in its own transaction; return its rows (no store code involved)."""
    import sqlalchemy

    engine = sqlalchemy.create_engine(url, poolclass=sqlalchemy.pool.NullPool)
    try:
        with engine.begin() as conn:
            result = conn.execute(sqlalchemy.text(statement), params)
            return result.all() if result.returns_rows else []
    finally:
        engine.dispose()


def create_database(server_url: str) -> str:
    """Create an empty database on the server of *server_url*; return its URL."""
    from sqlalchemy.engine import make_url

    name = "enumerator_test_" + uuid.uuid4().hex[:12]
    engine = _admin(server_url)
    try:
        with engine.connect() as conn:
            conn.exec_driver_sql(f'CREATE DATABASE "{name}" TEMPLATE template0 ENCODING \'UTF8\'')
    finally:
        engine.dispose()
    return make_url(server_url).set(database=name).render_as_string(hide_password=False)


def drop_database(server_url: str, url: str) -> None:
    """Drop the database of *url* (made by :func:`create_database`), closing its connections."""
    from sqlalchemy.engine import make_url

    name = make_url(url).database
    engine = _admin(server_url)
    try:
        with engine.connect() as conn:
            conn.exec_driver_sql(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)')
    finally:
        engine.dispose()
