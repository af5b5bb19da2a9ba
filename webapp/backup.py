"""Back up and restore the notebook's database (``cupcal backup OUT``, ``cupcal restore IN``).

SQLite is copied with the online backup API (:meth:`sqlite3.Connection.backup`), page by
page under SQLite's own locking, so a running server can be backed up consistently and the
copy is a plain SQLite file. PostgreSQL is dumped with the machine's ``pg_dump`` in custom
format and restored with ``pg_restore`` (found like the tests find ``initdb``: on the PATH,
else the newest ``/usr/lib/postgresql/*/bin``). A restore refuses a database that already
holds data unless ``force`` is given. Every failure is a :class:`BackupError` with a one-line
message.
"""

from __future__ import annotations

import glob
import os
import shutil
import sqlite3
import subprocess
import tempfile
from contextlib import closing
from pathlib import Path

import sqlalchemy as sa
from sqlalchemy.engine import make_url

from webapp.db import normalize_url

SQLITE_MAGIC = b"SQLite format 3\x00"
PGDUMP_MAGIC = b"PGDMP"
#: tables that hold no user data: a database with rows only here counts as empty
BOOKKEEPING_TABLES = frozenset({"alembic_version"})


class BackupError(RuntimeError):
    """A backup or restore could not be made (the message says why, in one line)."""


# ---------------------------------------------------------------- helpers


def _dialect(url: str) -> str:
    name = make_url(normalize_url(url)).get_backend_name()
    if name not in ("sqlite", "postgresql"):
        raise BackupError(f"cannot back up a {name!r} database; only SQLite and PostgreSQL are supported")
    return name


def _sqlite_path(url: str) -> Path:
    database = make_url(url).database
    if not database or database == ":memory:":
        raise BackupError(f"{url!r} is an in-memory SQLite database; there is no file to back up or restore")
    return Path(database)


def find_pg_tool(name: str) -> Path:
    """Return the path of ``pg_dump`` or ``pg_restore``; raise :class:`BackupError` when absent."""
    found = shutil.which(name)
    if found:
        return Path(found)
    candidates = sorted(glob.glob("/usr/lib/postgresql/*/bin"), key=_version, reverse=True)
    for c in candidates:
        if (Path(c) / name).exists():
            return Path(c) / name
    raise BackupError(
        f"{name} not found: install the PostgreSQL client programs (Debian/Ubuntu: apt-get install postgresql-client)"
    )


def _version(path: str) -> float:
    try:
        return float(Path(path).parent.name)
    except ValueError:
        return 0.0


def _libpq(url: str) -> tuple[str, dict[str, str]]:
    """Return a libpq connection URI without the password, and the environment carrying it."""
    u = make_url(normalize_url(url))
    env = dict(os.environ)
    if u.password:
        env["PGPASSWORD"] = str(u.password)
    uri = u.set(drivername="postgresql", password=None).render_as_string(hide_password=False)
    return uri, env


def _pg_tool(tool: str, url: str, *args: str) -> None:
    """Run the PostgreSQL client ``tool`` (pg_dump, pg_restore) on the database at ``url`` with ``args``.

    :raise BackupError: with the tool's last line of output when it fails
    """
    uri, env = _libpq(url)
    done = subprocess.run([str(find_pg_tool(tool)), f"--dbname={uri}", *args], env=env, capture_output=True, text=True)
    if done.returncode != 0:
        lines = [ln.strip() for ln in (done.stderr or done.stdout).splitlines() if ln.strip()]
        raise BackupError(f"{tool} failed: {lines[-1] if lines else f'exit status {done.returncode}'}")


def _magic(path: Path, size: int) -> bytes:
    try:
        with open(path, "rb") as fh:
            return fh.read(size)
    except OSError as exc:
        raise BackupError(f"cannot read {path}: {exc.strerror}") from None


def holds_data(url: str) -> bool:
    """Return whether any table of the database (other than Alembic's bookkeeping) has a row."""
    if _dialect(url) == "sqlite" and not _sqlite_path(url).exists():
        return False
    engine = sa.create_engine(normalize_url(url))
    try:
        with engine.connect() as conn:
            inspector = sa.inspect(conn)
            for table in inspector.get_table_names():
                if table in BOOKKEEPING_TABLES or table.startswith("sqlite_"):
                    continue
                quoted = conn.dialect.identifier_preparer.quote(table)
                if conn.exec_driver_sql(f"SELECT 1 FROM {quoted} LIMIT 1").first() is not None:
                    return True
        return False
    except sa.exc.OperationalError as exc:
        raise BackupError(f"cannot open the database: {str(exc.orig).strip().splitlines()[0]}") from None
    finally:
        engine.dispose()


# ---------------------------------------------------------------- backup


def backup(url: str, out: Path, *, force: bool = False) -> None:
    """Write a backup of the database at ``url`` to ``out`` (refuse an existing file unless ``force``)."""
    dialect = _dialect(url)
    out = Path(out)
    if out.exists() and not force:
        raise BackupError(f"{out} exists; choose another name or give --force to replace it")
    if out.is_dir():
        raise BackupError(f"{out} is a folder; give a file name")
    if not out.parent.is_dir():
        raise BackupError(f"folder {out.parent} does not exist")
    # write beside the target, then rename: a failed backup never leaves a half-written file
    fd, tmp_name = tempfile.mkstemp(prefix=f".{out.name}.", suffix=".part", dir=out.parent)
    os.close(fd)
    tmp = Path(tmp_name)
    try:
        if dialect == "sqlite":
            _backup_sqlite(_sqlite_path(url), tmp)
        else:
            _pg_tool("pg_dump", url, "--format=custom", "--no-owner", "--no-privileges", f"--file={tmp}")
        os.replace(tmp, out)
    finally:
        tmp.unlink(missing_ok=True)


def _backup_sqlite(src: Path, dest: Path) -> None:
    if not src.is_file():
        raise BackupError(f"the SQLite database {src} does not exist")
    dest.unlink(missing_ok=True)
    try:
        # the source waits for a writer of the running server
        with closing(sqlite3.connect(src, timeout=30)) as source, closing(sqlite3.connect(dest)) as target:
            source.backup(target)
            target.execute("PRAGMA journal_mode=DELETE")  # a self-contained file: no WAL beside it
    except sqlite3.Error as exc:
        raise BackupError(f"SQLite backup of {src} failed: {exc}") from None


# ---------------------------------------------------------------- restore


def restore(url: str, source: Path, *, force: bool = False) -> None:
    """Restore the backup ``source`` into the database at ``url``.

    A database that holds data is refused unless ``force``; then its contents are replaced.
    """
    dialect = _dialect(url)
    source = Path(source)
    if not source.is_file():
        raise BackupError(f"{source} is not a file")
    magic = SQLITE_MAGIC if dialect == "sqlite" else PGDUMP_MAGIC
    if _magic(source, len(magic)) != magic:
        kind = "a SQLite database file" if dialect == "sqlite" else "a pg_dump custom-format archive"
        raise BackupError(f"{source} is not {kind} (a backup made by `cupcal backup` of this kind of database)")
    if not force and holds_data(url):
        raise BackupError(
            "the database already holds data; restore only into an empty database, "
            "or give --force to replace its contents"
        )
    if dialect == "sqlite":
        _restore_sqlite(source, _sqlite_path(url))
    else:
        options = ("--clean", "--if-exists", "--no-owner", "--no-privileges", "--single-transaction", "--exit-on-error")
        _pg_tool("pg_restore", url, *options, str(source))


def _restore_sqlite(source: Path, target: Path) -> None:
    if not target.parent.is_dir():
        raise BackupError(f"folder {target.parent} does not exist")
    try:
        with closing(sqlite3.connect(f"file:{source}?mode=ro", uri=True)) as src:
            problems = [row[0] for row in src.execute("PRAGMA integrity_check")]
            if problems != ["ok"]:
                raise BackupError(f"{source} fails SQLite's integrity check: {problems[0]}")
            with closing(sqlite3.connect(target, timeout=30)) as dst:
                src.backup(dst)
                problems = [row[0] for row in dst.execute("PRAGMA integrity_check")]
    except sqlite3.Error as exc:
        raise BackupError(f"SQLite restore from {source} failed: {exc}") from None
    if problems != ["ok"]:
        raise BackupError(f"the restored database fails SQLite's integrity check: {problems[0]}")
