"""Shared fixtures: external tools the suite needs, and a throw-away PostgreSQL server.

Tests that need a real simulator, browser or database *fail* when the tool is missing and the
``CI`` environment variable is set (``tests/run-all.sh`` installs them); on a developer's machine
they skip with a message saying how to get the tool.
"""

from __future__ import annotations

import glob
import itertools
import os
import shutil
import socket
import subprocess
import tempfile
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[1]


def require_tool(found: bool, what: str) -> None:
    """Fail under CI, skip elsewhere, when an external tool the test needs is missing."""
    if found:
        return
    message = f"{what} is missing: `bash tests/run-all.sh` installs it"
    if os.environ.get("CI"):
        pytest.fail(message)
    pytest.skip(message)


def _pg_bin(name: str) -> str | None:
    candidates = sorted(glob.glob(f"/usr/lib/postgresql/*/bin/{name}"), reverse=True)
    return candidates[0] if candidates else shutil.which(name)


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class _PostgresServer:
    """A PostgreSQL cluster in a temporary folder, listening on a loopback port."""

    def __init__(self) -> None:
        self.initdb = _pg_bin("initdb")
        self.pg_ctl = _pg_bin("pg_ctl")
        self.root = Path(tempfile.mkdtemp(prefix="partcheck-pg-"))
        self.data = self.root / "data"
        self.port = _free_port()
        self._as_user: list[str] = []
        if os.geteuid() == 0:  # the server refuses to run as root: run it as the postgres user
            shutil.chown(self.root, "postgres")
            self._as_user = ["runuser", "-u", "postgres", "--"]
        self._names = itertools.count()

    def _run(self, *args: str) -> None:
        subprocess.run([*self._as_user, *args], check=True, capture_output=True, text=True, timeout=120)

    def start(self) -> None:
        self._run(self.initdb, "-D", str(self.data), "-A", "trust", "-U", "partcheck", "--no-sync", "-E", "UTF8")
        options = f"-k {self.root} -p {self.port} -c listen_addresses=127.0.0.1 -c fsync=off"
        self._run(self.pg_ctl, "-D", str(self.data), "-o", options, "-l", str(self.root / "log"), "-w", "start")

    def stop(self) -> None:
        try:
            self._run(self.pg_ctl, "-D", str(self.data), "-m", "fast", "-w", "stop")
        finally:
            shutil.rmtree(self.root, ignore_errors=True)

    def url(self, database: str = "postgres") -> str:
        return f"postgresql+psycopg://partcheck@127.0.0.1:{self.port}/{database}"

    def new_database(self, icu_locale: str | None = None) -> str:
        """Create an empty database and return its SQLAlchemy URL.

        ``icu_locale`` (such as ``"en-US"``) gives the database a natural-language collation, as a
        team server usually has, instead of the cluster's C collation.
        """
        import psycopg

        name = f"t{os.getpid()}_{next(self._names)}"
        options = (f" TEMPLATE template0 LOCALE_PROVIDER icu ICU_LOCALE '{icu_locale}' LOCALE 'C.UTF-8'"
                   if icu_locale else "")
        with psycopg.connect(f"host=127.0.0.1 port={self.port} user=partcheck dbname=postgres", autocommit=True) as conn:
            conn.execute(f'CREATE DATABASE "{name}"{options}')
        return self.url(name)


@pytest.fixture(scope="session")
def postgres_server():
    """A running throw-away PostgreSQL server for the whole session (stopped afterwards)."""
    require_tool(bool(_pg_bin("initdb") and _pg_bin("pg_ctl")), "the PostgreSQL server (Debian package postgresql)")
    server = _PostgresServer()
    try:
        server.start()
    except subprocess.CalledProcessError as exc:
        shutil.rmtree(server.root, ignore_errors=True)
        pytest.fail(f"could not start a PostgreSQL server: {exc.stderr or exc.stdout}")
    yield server
    server.stop()


@pytest.fixture
def postgres_url(postgres_server) -> str:
    """SQLAlchemy URL of a fresh, empty database on the session's PostgreSQL server."""
    return postgres_server.new_database()


@pytest.fixture(params=["sqlite", pytest.param("postgresql", marks=pytest.mark.postgres)])
def catalog_url(request, tmp_path) -> str:
    """A fresh catalog location on each backend: SQLite file path, then PostgreSQL URL.

    The PostgreSQL database collates text the English way (ICU ``en-US``), as a team server
    usually does, so that a test relying on the database's own order of text fails.
    """
    if request.param == "sqlite":
        return str(tmp_path / "catalog.sqlite")
    return request.getfixturevalue("postgres_server").new_database(icu_locale="en-US")
