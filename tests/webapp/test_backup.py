"""``cupcal backup OUT`` / ``cupcal restore IN``: a round trip gives back every row, byte for byte.

Round trips run on SQLite (online backup API) and PostgreSQL (pg_dump custom format /
pg_restore). The SQLite check ``PRAGMA integrity_check`` = ``ok`` is SQLite's own documented
verification (sqlite.org/pragma.html#pragma_integrity_check).
"""

from __future__ import annotations

import shutil
import sqlite3
from pathlib import Path
from typing import Any

import pytest
import sqlalchemy as sa
from click.testing import CliRunner

from calc.cli.commands import cli
from tests.webapp.conftest import FAST_HASH, create_database, demo_files, upload
from webapp import create_app
from webapp.db import get_engine
from webapp.models import Base
from webapp.services.integrity import check_database

RUNS = ("diss-kcl-01", "neut-hcl-naoh-01")


def _invoke(monkeypatch: pytest.MonkeyPatch, url: str, *args: str) -> Any:
    monkeypatch.setenv("DATABASE_URL", url)
    monkeypatch.setenv("CUPCAL_SECRET_KEY", "backup tests")
    return CliRunner().invoke(cli, list(args))


def _dump(url: str) -> dict[str, list[tuple[Any, ...]]]:
    """Return every row of every table (and Alembic's revision), ordered by primary key."""
    engine = sa.create_engine(url)
    out: dict[str, list[tuple[Any, ...]]] = {}
    try:
        with engine.connect() as conn:
            for table in Base.metadata.sorted_tables:
                order = list(table.primary_key.columns) or list(table.columns)
                rows = conn.execute(sa.select(table).order_by(*order)).all()
                out[table.name] = [tuple(bytes(v) if isinstance(v, memoryview) else v for v in r) for r in rows]
            out["alembic_version"] = [tuple(r) for r in conn.exec_driver_sql("SELECT version_num FROM alembic_version")]
    finally:
        engine.dispose()
    return out


def _files(url: str) -> dict[str, tuple[str, bytes]]:
    engine = sa.create_engine(url)
    try:
        with engine.connect() as conn:
            rows = conn.exec_driver_sql("SELECT run_file_name, run_toml, readings_raw FROM runs").all()
    finally:
        engine.dispose()
    return {name: (toml, bytes(raw)) for name, toml, raw in rows}


def _fresh_target(database_url: str, request: pytest.FixtureRequest, tmp_path: Path) -> str:
    if database_url.startswith("sqlite"):
        path = tmp_path / "restored.sqlite3"  # a migrated, empty database (schema but no rows)
        shutil.copyfile(request.getfixturevalue("sqlite_template"), path)
        return f"sqlite:///{path}"
    return create_database(request.getfixturevalue("pg_server"), "cupcal_restored")  # no schema at all


def test_round_trip_gives_back_every_row_and_file(
    app: Any,
    client: Any,
    lab: Any,
    database_url: str,
    request: pytest.FixtureRequest,
    tmp_path: Path,
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    ids = []
    for name in RUNS:
        r = upload(client, lab.auth("a1"), name)
        assert r.status_code == 201, r.get_json()
        ids.append(r.get_json()["id"])
    assert client.post(f"/api/runs/{ids[0]}/lock", headers=lab.auth("a1")).status_code == 200  # a signed run too
    get_engine(app).dispose()
    before = _dump(database_url)
    assert all(
        before[t] for t in ("people", "api_tokens", "calorimeters", "runs", "run_inputs", "results", "audit_entries")
    )

    out = tmp_path / "notebook.backup"
    r = _invoke(monkeypatch, database_url, "backup", str(out))
    assert r.exit_code == 0, r.output
    assert out.stat().st_size > 0

    target = _fresh_target(database_url, request, tmp_path)
    r = _invoke(monkeypatch, target, "restore", str(out))
    assert r.exit_code == 0, r.output

    after = _dump(target)
    assert set(after) == set(before)
    for table in before:
        assert after[table] == before[table], f"table {table} differs after the round trip"
    # the stored run files and readings are the uploaded bytes, before and after
    files = _files(target)
    for name in RUNS:
        toml, raw = demo_files(name)
        assert files[f"{name}.toml"] == (toml, raw)
    # the restored database passes `cupcal db check` (SQLite's integrity_check, foreign keys, complete runs)
    engine = sa.create_engine(target)
    try:
        report = check_database(engine)
    finally:
        engine.dispose()
    assert report.ok and report.runs == len(RUNS), report.summary()

    # the restored notebook works on: ids continue after the restored ones (PostgreSQL sequences too)
    restored = create_app(
        {
            "TESTING": True,
            "DATABASE_URL": target,
            "SECRET_KEY": "test secret",
            "PASSWORD_METHOD": FAST_HASH,
            "MONTE_CARLO_TRIALS": 0,
        }
    )
    try:
        r = upload(restored.test_client(), lab.auth("a2"), RUNS[0])
        assert r.status_code == 201, r.get_json()
        assert r.get_json()["id"] == max(ids) + 1
    finally:
        get_engine(restored).dispose()


# ---------------------------------------------------------------- refusals (SQLite: no server needed)


@pytest.fixture
def filled(sqlite_template: Path, tmp_path: Path) -> str:
    """Return the URL of a migrated SQLite database holding one person."""
    path = tmp_path / "filled.sqlite3"
    shutil.copyfile(sqlite_template, path)
    with sqlite3.connect(path) as conn:
        conn.execute(
            "INSERT INTO people (email, name, role, password_hash, active, created_at) "
            "VALUES ('x@lab.example', 'X', 'coordinator', 'h', 1, '2024-01-01 00:00:00')"
        )
    return f"sqlite:///{path}"


def _people(url: str) -> list[str]:
    with sqlite3.connect(sa.engine.make_url(url).database) as conn:
        return [r[0] for r in conn.execute("SELECT email FROM people ORDER BY id")]


def test_restore_refuses_a_database_with_data_unless_forced(
    filled: str, sqlite_template: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    empty = tmp_path / "empty.sqlite3"
    shutil.copyfile(sqlite_template, empty)
    backup = tmp_path / "empty.backup"
    assert _invoke(monkeypatch, f"sqlite:///{empty}", "backup", str(backup)).exit_code == 0
    r = _invoke(monkeypatch, filled, "restore", str(backup))
    assert r.exit_code == 2
    assert "already holds data" in r.output and "--force" in r.output and "Traceback" not in r.output
    assert _people(filled) == ["x@lab.example"]  # untouched
    r = _invoke(monkeypatch, filled, "restore", "--force", str(backup))
    assert r.exit_code == 0, r.output
    assert _people(filled) == []


def test_backup_refuses_to_overwrite_a_file_unless_forced(
    filled: str, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    out = tmp_path / "b.sqlite3"
    out.write_bytes(b"keep me")
    r = _invoke(monkeypatch, filled, "backup", str(out))
    assert r.exit_code == 2 and "exists" in r.output and "Traceback" not in r.output
    assert out.read_bytes() == b"keep me"
    assert _invoke(monkeypatch, filled, "backup", "--force", str(out)).exit_code == 0
    assert _people(f"sqlite:///{out}") == ["x@lab.example"]
    assert not list(tmp_path.glob(".b.sqlite3.*.part"))  # no temporary file left behind


@pytest.mark.parametrize("content", [b"", b"not a database at all\n", b"PGDMP\x01\x0e\x00"])
def test_restore_rejects_what_is_not_a_sqlite_backup(
    content: bytes, tmp_path: Path, sqlite_template: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    bad = tmp_path / "bad.backup"
    bad.write_bytes(content)
    target = tmp_path / "t.sqlite3"
    shutil.copyfile(sqlite_template, target)
    r = _invoke(monkeypatch, f"sqlite:///{target}", "restore", str(bad))
    assert r.exit_code == 2 and "is not a SQLite database file" in r.output and "Traceback" not in r.output
    assert len(r.output.strip().splitlines()) == 1


def test_missing_input_and_missing_folder_are_one_line_errors(
    filled: str, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    r = _invoke(monkeypatch, filled, "restore", str(tmp_path / "nope.backup"))
    assert r.exit_code == 2 and "does not exist" in r.output and "Traceback" not in r.output
    r = _invoke(monkeypatch, filled, "backup", str(tmp_path / "no-such-folder" / "b.sqlite3"))
    assert r.exit_code == 2 and "does not exist" in r.output and "Traceback" not in r.output


def test_backup_of_a_busy_database_is_consistent(filled: str, tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """A writer's open transaction (the running server) is neither waited for nor half-copied."""
    path = sa.engine.make_url(filled).database
    writer = sqlite3.connect(path, isolation_level=None)
    writer.execute("PRAGMA journal_mode=WAL")  # as webapp.db sets it
    try:
        writer.execute("BEGIN IMMEDIATE")
        writer.execute(
            "INSERT INTO people (email, name, role, password_hash, active, created_at) "
            "VALUES ('y@lab.example', 'Y', 'student', 'h', 1, '2024-01-01 00:00:00')"
        )
        out = tmp_path / "busy.backup"
        r = _invoke(monkeypatch, filled, "backup", str(out))
        assert r.exit_code == 0, r.output
        writer.execute("COMMIT")
    finally:
        writer.close()
    assert _people(f"sqlite:///{out}") == ["x@lab.example"]  # the committed state at backup time
    with sqlite3.connect(out) as conn:
        assert conn.execute("PRAGMA integrity_check").fetchall() == [("ok",)]
        assert conn.execute("PRAGMA journal_mode").fetchone()[0] == "delete"  # one self-contained file
