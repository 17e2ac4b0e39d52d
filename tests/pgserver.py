"""A throw-away PostgreSQL server for the tests: initdb, pg_ctl start on 127.0.0.1 at a free
port, stop and start again, remove. The server binaries come from the system packages
(Debian: postgresql); as root, the cluster runs as the unprivileged user ``nobody``, since
PostgreSQL refuses to run as root.

Without the binaries the shared-store tests skip with a message naming the package, except
when ``MASSTRAIL_REQUIRE_POSTGRES`` is set (CI sets it): then they fail.
"""

from __future__ import annotations

import glob
import os
import pwd
import shutil
import socket
import subprocess
import tempfile
from pathlib import Path

PACKAGE = "postgresql (Debian/Ubuntu: apt-get install postgresql)"


def binaries() -> Path | None:
    """The folder of initdb and pg_ctl, or None."""
    found = shutil.which("pg_ctl")
    if found:
        return Path(found).resolve().parent
    versions = sorted(glob.glob("/usr/lib/postgresql/*/bin/pg_ctl"), reverse=True)
    return Path(versions[0]).parent if versions else None


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class Server:
    """One cluster: ``url`` connects as its superuser ``postgres``."""

    def __init__(self, fsync: bool = False) -> None:
        self.fsync = fsync  # off for the tests' speed; a benchmark keeps it on, as servers do
        bindir = binaries()
        if bindir is None:
            raise FileNotFoundError(PACKAGE)
        self.bindir = bindir
        self.folder = Path(tempfile.mkdtemp(prefix="masstrail-pg-"))
        self.data = self.folder / "data"
        self.log = self.folder / "server.log"
        self.port = _free_port()
        self.user = None
        if os.geteuid() == 0:
            nobody = pwd.getpwnam("nobody")
            self.user = nobody.pw_uid
            os.chown(self.folder, nobody.pw_uid, nobody.pw_gid)
        self._run("initdb", "-D", str(self.data), "-U", "postgres", "--auth=trust", "-E", "UTF8",
                  "--no-sync", "--locale=C")  # fmt: skip
        self.start()

    @property
    def url(self) -> str:
        return self.url_as("postgres")

    def url_as(self, role: str, database: str = "postgres") -> str:
        return f"postgresql://{role}@127.0.0.1:{self.port}/{database}"

    def _run(self, tool: str, *args: str) -> None:
        subprocess.run([str(self.bindir / tool), *args], check=True, user=self.user,
                       cwd=self.folder, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE,
                       env={**os.environ, "LC_ALL": "C"})  # fmt: skip

    def start(self) -> None:
        opts = (f"-p {self.port} -c listen_addresses=127.0.0.1 -c unix_socket_directories='' "
                f"-c fsync={'on' if self.fsync else 'off'} -c max_connections=60")  # fmt: skip
        self._run("pg_ctl", "start", "-D", str(self.data), "-l", str(self.log), "-w", "-o", opts)

    def stop(self) -> None:
        self._run("pg_ctl", "stop", "-D", str(self.data), "-m", "fast", "-w")

    def database(self, name: str) -> str:
        """A new empty database; its superuser URL."""
        import psycopg

        with psycopg.connect(self.url, autocommit=True) as conn:
            conn.execute(f'CREATE DATABASE "{name}"')
        return self.url_as("postgres", name)

    def remove(self) -> None:
        try:
            self.stop()
        finally:
            shutil.rmtree(self.folder, ignore_errors=True)
