"""A throwaway PostgreSQL server for the tests: the machine's initdb/pg_ctl, a temporary
directory, 127.0.0.1 and a free port. Started once per test process (xdist worker)."""

from __future__ import annotations

import glob
import os
import pwd
import shutil
import socket
import subprocess
import tempfile
from dataclasses import dataclass
from pathlib import Path

INSTALL_HINT = (
    "PostgreSQL server binaries (initdb, pg_ctl) not found: install them to run the storage and web "
    "tests on PostgreSQL too (Debian/Ubuntu: apt-get install postgresql)"
)


class PostgresUnavailable(RuntimeError):
    """The server cannot be started here (the message says why and what to install)."""


def find_bindir() -> Path | None:
    """Return the directory holding initdb and pg_ctl, or None."""
    initdb = shutil.which("initdb")
    if initdb:
        real = Path(os.path.realpath(initdb)).parent
        if (real / "pg_ctl").exists():
            return real
    candidates = sorted(glob.glob("/usr/lib/postgresql/*/bin"), key=lambda p: _version(p), reverse=True)
    for c in candidates:
        if (Path(c) / "initdb").exists() and (Path(c) / "pg_ctl").exists():
            return Path(c)
    return None


def _version(path: str) -> float:
    try:
        return float(Path(path).parent.name)
    except ValueError:
        return 0.0


def _free_port() -> int:
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


def _run_as_user() -> str | None:
    """Return the user to run the server as when we are root (initdb refuses root)."""
    if os.geteuid() != 0:
        return None
    for name in ("postgres", "nobody"):
        try:
            pwd.getpwnam(name)
            return name
        except KeyError:
            continue
    raise PostgresUnavailable("running as root and no 'postgres' or 'nobody' user exists to run the server")


@dataclass
class PostgresServer:
    """A running throwaway server."""

    bindir: Path
    root: Path
    port: int
    user: str | None
    #: the write-ahead log's own folder when it is kept apart from the data (``start_server(wal_parent=…)``)
    wal: Path | None = None

    @property
    def data(self) -> Path:
        return self.root / "data"

    def url(self, dbname: str) -> str:
        """Return the SQLAlchemy URL of a database on this server."""
        return f"postgresql+psycopg://cupcal@127.0.0.1:{self.port}/{dbname}"

    def _cmd(self, *args: str) -> list[str]:
        prefix = ["runuser", "-u", self.user, "--"] if self.user else []
        return prefix + list(args)

    def stop(self) -> None:
        """Stop the server and remove its directory."""
        subprocess.run(
            self._cmd(str(self.bindir / "pg_ctl"), "-D", str(self.data), "-m", "immediate", "-w", "stop"),
            check=False,
            capture_output=True,
        )
        shutil.rmtree(self.root, ignore_errors=True)
        if self.wal is not None:
            shutil.rmtree(self.wal, ignore_errors=True)


def start_server(parent: Path | None = None, wal_parent: Path | None = None) -> PostgresServer:
    """Initialise and start a server; raise :class:`PostgresUnavailable` when it cannot be done.

    Its files go in a new folder under ``parent`` (default: the temporary folder); with
    ``wal_parent``, the write-ahead log goes in a new folder there instead (initdb ``--waldir``).
    """
    bindir = find_bindir()
    if bindir is None:
        raise PostgresUnavailable(INSTALL_HINT)
    user = _run_as_user()
    root = Path(tempfile.mkdtemp(prefix="cupcal-pg-", dir=parent))
    wal = Path(tempfile.mkdtemp(prefix="cupcal-pgwal-", dir=wal_parent)) if wal_parent is not None else None
    if user:
        info = pwd.getpwnam(user)
        for folder in (root, wal):
            if folder is not None:
                os.chown(folder, info.pw_uid, info.pw_gid)
    server = PostgresServer(bindir, root, 0, user, wal)
    init = subprocess.run(
        server._cmd(
            str(bindir / "initdb"),
            "-D",
            str(server.data),
            "-U",
            "cupcal",
            "--auth=trust",
            "-E",
            "UTF8",
            "--locale=C",
            "--no-sync",
            *([f"--waldir={wal / 'wal'}"] if wal else []),
        ),
        capture_output=True,
        text=True,
    )
    if init.returncode != 0:
        for folder in (root, wal):
            if folder is not None:
                shutil.rmtree(folder, ignore_errors=True)
        raise PostgresUnavailable(f"initdb failed: {init.stderr.strip() or init.stdout.strip()}")
    last = ""
    for _attempt in range(3):
        server.port = _free_port()
        opts = (
            f"-c listen_addresses=127.0.0.1 -p {server.port} -c unix_socket_directories={root} "
            "-c fsync=off -c synchronous_commit=off -c full_page_writes=off -c max_connections=60"
        )
        start = subprocess.run(
            server._cmd(
                str(bindir / "pg_ctl"),
                "-D",
                str(server.data),
                "-l",
                str(root / "server.log"),
                "-o",
                opts,
                "-w",
                "-t",
                "30",
                "start",
            ),
            capture_output=True,
            text=True,
        )
        if start.returncode == 0:
            return server
        last = start.stderr.strip() or start.stdout.strip()
    log = (root / "server.log").read_text(errors="replace")[-2000:] if (root / "server.log").exists() else ""
    for folder in (root, wal):
        if folder is not None:
            shutil.rmtree(folder, ignore_errors=True)
    raise PostgresUnavailable(f"pg_ctl could not start the server: {last}\n{log}")
