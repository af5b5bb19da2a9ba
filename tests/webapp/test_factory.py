"""The app factory: configuration order, SQLite pragmas, database URLs."""

from __future__ import annotations

from pathlib import Path

import pytest
import sqlalchemy as sa

import webapp
from webapp import create_app
from webapp.db import get_engine, normalize_url


def test_no_app_at_module_level() -> None:
    assert not any(type(v).__name__ == "Flask" for v in vars(webapp).values())


def test_defaults_use_sqlite_in_the_instance_folder(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.delenv("DATABASE_URL", raising=False)
    monkeypatch.delenv("CUPCAL_SECRET_KEY", raising=False)
    app = create_app({"TESTING": True})
    try:
        assert app.config["DATABASE_URL"] == "sqlite:///" + str(Path(app.instance_path) / "cupcal.sqlite3")
    finally:
        get_engine(app).dispose()


def test_order_defaults_instance_file_environment_mapping(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    instance = tmp_path / "instance"
    instance.mkdir()
    (instance / "config.py").write_text(
        "CALIBRATION_DUE_DAYS = 7\nPAGE_SIZE = 11\nDATABASE_URL = 'sqlite:///from-file.sqlite3'\nSECRET_KEY = 'file'\n"
    )
    monkeypatch.setattr("flask.Flask.auto_find_instance_path", lambda self: str(instance))
    monkeypatch.setenv("DATABASE_URL", f"sqlite:///{tmp_path / 'from-env.sqlite3'}")
    monkeypatch.setenv("CUPCAL_SECRET_KEY", "env")
    app = create_app({"PAGE_SIZE": 12})
    try:
        assert app.config["CALIBRATION_DUE_DAYS"] == 7  # instance file over default
        assert app.config["DATABASE_URL"].endswith("from-env.sqlite3")  # environment over file
        assert app.config["SECRET_KEY"] == "env"
        assert app.config["PAGE_SIZE"] == 12  # mapping over everything
        assert app.config["MONTE_CARLO_TRIALS"] == 100_000  # default
    finally:
        get_engine(app).dispose()


def test_secret_key_is_created_once_in_the_instance_folder(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.delenv("CUPCAL_SECRET_KEY", raising=False)
    monkeypatch.setattr("flask.Flask.auto_find_instance_path", lambda self: str(tmp_path / "inst"))
    a = create_app({"DATABASE_URL": "sqlite://"})
    b = create_app({"DATABASE_URL": "sqlite://"})
    assert a.config["SECRET_KEY"] == b.config["SECRET_KEY"] and len(a.config["SECRET_KEY"]) == 64
    assert (tmp_path / "inst" / "secret_key").stat().st_mode & 0o077 == 0


def test_sqlite_connections_get_wal_foreign_keys_and_busy_timeout(tmp_path: Path) -> None:
    app = create_app(
        {"DATABASE_URL": f"sqlite:///{tmp_path / 'x.sqlite3'}", "SECRET_KEY": "x", "SQLITE_BUSY_TIMEOUT_MS": 4321}
    )
    try:
        with get_engine(app).connect() as conn:
            assert conn.exec_driver_sql("PRAGMA journal_mode").scalar() == "wal"
            assert conn.exec_driver_sql("PRAGMA foreign_keys").scalar() == 1
            assert conn.exec_driver_sql("PRAGMA busy_timeout").scalar() == 4321
    finally:
        get_engine(app).dispose()


@pytest.mark.parametrize(
    ("given", "expected"),
    [
        ("postgres://u:p@h/db", "postgresql+psycopg://u:p@h/db"),
        ("postgresql://u@h:5433/db", "postgresql+psycopg://u@h:5433/db"),
        ("postgresql+psycopg://u@h/db", "postgresql+psycopg://u@h/db"),
        ("sqlite:///x.sqlite3", "sqlite:///x.sqlite3"),
    ],
)
def test_postgres_urls_use_psycopg_3(given: str, expected: str) -> None:
    assert normalize_url(given) == expected
    assert sa.make_url(normalize_url(given)).drivername == sa.make_url(expected).drivername


def test_instance_folder_can_be_moved(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.delenv("DATABASE_URL", raising=False)
    monkeypatch.delenv("CUPCAL_SECRET_KEY", raising=False)
    monkeypatch.setenv("CUPCAL_INSTANCE_PATH", str(tmp_path / "lab"))
    app = create_app()
    try:
        assert app.instance_path == str(tmp_path / "lab")
        assert app.config["DATABASE_URL"] == f"sqlite:///{tmp_path / 'lab' / 'cupcal.sqlite3'}"
        assert (tmp_path / "lab" / "secret_key").read_text() == app.config["SECRET_KEY"]
    finally:
        get_engine(app).dispose()


def test_a_secret_key_made_by_another_process_meanwhile_wins(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    # two server workers starting at once: the other one links its key into place first
    import os

    monkeypatch.delenv("CUPCAL_SECRET_KEY", raising=False)
    monkeypatch.setenv("CUPCAL_INSTANCE_PATH", str(tmp_path / "inst"))
    real_link = os.link

    def other_process_first(src: str, dst: str) -> None:
        Path(dst).write_text("f" * 64, encoding="ascii")
        real_link(src, dst)  # raises FileExistsError, as it would

    monkeypatch.setattr(os, "link", other_process_first)
    app = create_app({"DATABASE_URL": "sqlite://"})
    assert app.config["SECRET_KEY"] == "f" * 64
    assert [p.name for p in (tmp_path / "inst").iterdir()] == ["secret_key"]  # no temporary file left
