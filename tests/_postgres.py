"""A throwaway PostgreSQL server for the store tests (Debian's ``postgresql`` package).

``initdb`` into a temporary folder, ``pg_ctl start`` listening on a unix socket in that folder
only (no TCP), stopped and removed after the test session. ``initdb`` refuses to run as root:
as root the server runs as the ``postgres`` system user (``runuser -u postgres --``), which the
Debian package creates. ``.ci/run`` installs the package when it is missing (``make
postgres-deps``).

In CI (environment ``CI=true``) a server that cannot start fails the PostgreSQL tests loudly;
elsewhere they are skipped with a loud message saying why.
"""

from __future__ import annotations

import glob
import os
import shutil
import socket
import subprocess
import sys
import tempfile
import uuid
import warnings
from pathlib import Path

import pytest


class PostgresUnavailable(RuntimeError):
    pass


def find_bindir() -> str | None:
    """The folder holding initdb and pg_ctl (newest Debian cluster version first)."""
    cands = sorted(glob.glob("/usr/lib/postgresql/*/bin"), key=lambda p: int(p.split("/")[-2]) if p.split("/")[-2].isdigit() else 0,
                   reverse=True)
    for d in cands:
        if os.access(os.path.join(d, "initdb"), os.X_OK) and os.access(os.path.join(d, "pg_ctl"), os.X_OK):
            return d
    w = shutil.which("initdb")
    return os.path.dirname(w) if w else None


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class PostgresServer:
    def __init__(self) -> None:
        self.bindir = find_bindir()
        if self.bindir is None:
            raise PostgresUnavailable("initdb/pg_ctl not found (install Debian's postgresql package: "
                                      "apt-get install -y postgresql, or `make postgres-deps`)")
        self.root = Path(tempfile.mkdtemp(prefix="lumeval-pg-"))
        self.data = self.root / "data"
        self.sock = self.root / "sock"
        self.sock.mkdir()
        self.port = _free_port()
        self.user = "lumeval"
        self.prefix: list[str] = []
        if os.geteuid() == 0:
            try:
                import pwd

                pw = pwd.getpwnam("postgres")
            except KeyError:
                raise PostgresUnavailable("running as root and there is no 'postgres' system user to run the server "
                                          "(initdb refuses root)") from None
            os.chmod(self.root, 0o755)
            for p in (self.root, self.sock):
                os.chown(p, pw.pw_uid, pw.pw_gid)
            self.prefix = ["runuser", "-u", "postgres", "--"]
        self.started = False

    def _run(self, *args: str, timeout: float = 120) -> None:
        r = subprocess.run(self.prefix + list(args), capture_output=True, text=True, timeout=timeout)
        if r.returncode != 0:
            raise PostgresUnavailable(f"{os.path.basename(args[0])} failed ({r.returncode}): "
                                      f"{(r.stderr or r.stdout).strip()[-600:]}")

    def start(self) -> PostgresServer:
        b = self.bindir
        self._run(f"{b}/initdb", "-D", str(self.data), "-A", "trust", "-U", self.user, "-E", "UTF8", "--locale=C",
                  "--no-sync")
        opts = (f"-c listen_addresses='' -k {self.sock} -p {self.port} -c fsync=off -c synchronous_commit=off "
                "-c full_page_writes=off -c max_connections=40")
        self._run(f"{b}/pg_ctl", "-D", str(self.data), "-l", str(self.root / "server.log"), "-o", opts, "-w", "-t",
                  "60", "start")
        self.started = True
        return self

    def url(self, dbname: str = "postgres", user: str | None = None) -> str:
        return f"postgresql://{user or self.user}@/{dbname}?host={self.sock}&port={self.port}"

    def admin(self, sql: str, dbname: str = "postgres") -> None:
        import psycopg

        with psycopg.connect(host=str(self.sock), port=self.port, user=self.user, dbname=dbname,
                             autocommit=True) as c:
            c.execute(sql)

    def create_database(self) -> str:
        name = "t_" + uuid.uuid4().hex[:12]
        self.admin(f'CREATE DATABASE "{name}"')
        return name

    def drop_database(self, name: str) -> None:
        self.admin(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)')

    def stop(self) -> None:
        try:
            if self.started:
                subprocess.run(self.prefix + [f"{self.bindir}/pg_ctl", "-D", str(self.data), "-m", "immediate", "-w",
                                              "stop"], capture_output=True, timeout=60)
        finally:
            shutil.rmtree(self.root, ignore_errors=True)


def in_ci() -> bool:
    return os.environ.get("CI", "").lower() == "true"


@pytest.fixture(scope="session")
def postgres_server():
    """A running throwaway PostgreSQL server for the whole session (see the module docstring)."""
    srv = None
    try:
        srv = PostgresServer().start()
    except (PostgresUnavailable, OSError, subprocess.TimeoutExpired) as exc:
        if srv is not None:
            srv.stop()
        msg = f"PostgreSQL test server could not start: {exc}"
        if in_ci():
            pytest.fail("CI=true, so this is an error, not a skip: " + msg, pytrace=False)
        warnings.warn(msg, stacklevel=2)
        sys.stderr.write("\n" + "!" * 78 + "\nPOSTGRESQL TESTS SKIPPED: " + msg + "\n" + "!" * 78 + "\n")
        pytest.skip(msg)
    yield srv
    srv.stop()


@pytest.fixture(params=["sqlite", "postgresql"])
def store_url(request, tmp_path):
    """A fresh, empty store on each backend: a SQLite file path, or a new PostgreSQL database."""
    if request.param == "sqlite":
        yield str(tmp_path / "history.db")
        return
    srv = request.getfixturevalue("postgres_server")
    name = srv.create_database()
    try:
        yield srv.url(name)
    finally:
        srv.drop_database(name)
