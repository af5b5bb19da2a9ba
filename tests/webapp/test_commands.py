"""The cupcal commands of the notebook: db upgrade/current/downgrade, load-demo, serve."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pytest
import sqlalchemy as sa
from click.testing import CliRunner

from calc.cli.commands import cli


@pytest.fixture
def env(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> str:
    url = f"sqlite:///{tmp_path / 'cmd.sqlite3'}"
    monkeypatch.setenv("DATABASE_URL", url)
    monkeypatch.setenv("CUPCAL_SECRET_KEY", "cmd")
    return url


def _rows(url: str, sql: str) -> list[Any]:
    engine = sa.create_engine(url)
    try:
        with engine.connect() as conn:
            return list(conn.exec_driver_sql(sql))
    finally:
        engine.dispose()


def test_commands_are_plugged_into_cupcal() -> None:
    out = CliRunner().invoke(cli, ["--help"]).output
    assert "db " in out and "serve" in out and "load-demo" in out


def test_db_upgrade_current_downgrade(env: str) -> None:
    runner = CliRunner()
    r = runner.invoke(cli, ["db", "upgrade"])
    assert r.exit_code == 0, r.output
    r = runner.invoke(cli, ["db", "current"])
    from webapp.migrate import head_revision

    assert head_revision() in r.output
    r = runner.invoke(cli, ["db", "downgrade", "base"])
    assert r.exit_code == 0 and _rows(env, "select name from sqlite_master where name='runs'") == []


def test_load_demo_stores_and_analyses_every_demo_run(env: str, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(
        "webapp.DEFAULTS",
        {**__import__("webapp").DEFAULTS, "PASSWORD_METHOD": "scrypt:1024:8:1", "MONTE_CARLO_TRIALS": 1000},
    )
    runner = CliRunner()
    assert runner.invoke(cli, ["db", "upgrade"]).exit_code == 0
    r = runner.invoke(cli, ["load-demo"])
    assert r.exit_code == 0, r.output
    assert "odile.brackwater@ternhollow.example" in r.output and "tern-hollow-demo" in r.output
    assert "lucan.ferreira-holt@ternhollow.example" in r.output  # a student of the second section
    folder = Path(__file__).resolve().parents[2] / "fixtures" / "demo"
    demo = sorted(p.stem for p in [*folder.glob("*.toml"), *(folder / "class").glob("*.toml")])
    stored = sorted(Path(name).stem for (name,) in _rows(env, "select run_file_name from runs"))
    assert stored == demo
    assert _rows(env, "select count(*) from results")[0][0] == len(demo)
    # both calibrations went into the cup's history, after the spare cup's hand-entered value
    notes = [n for (n,) in _rows(env, "select note from calibrations order by id")]
    assert any(n.startswith("electrical-calibration run") for n in notes)
    assert any(n.startswith("mixing-calibration run") for n in notes)
    # the students own their runs and their groups see them
    owners = _rows(
        env, "select p.name, r.run_file_name from runs r join people p on p.id = r.author_id where r.kind='dissolution'"
    )
    assert {o for (o, name) in owners if not name.startswith(("heron", "kestrel"))} == {"Tomas Vesterby-Quail"}
    # the class practical: each run by a student of the group its file names, in the course's two sections
    assert {o for (o, name) in owners if name.startswith("kestrel-a")} == {"Lucan Ferreira-Holt"}
    sections = _rows(env, "select s.name, g.name from groups g join sections s on s.id = g.section_id order by 1, 2")
    assert sections == [
        ("Thursday afternoon", "Kestrel A"),
        ("Thursday afternoon", "Kestrel B"),
        ("Tuesday morning", "Heron A"),
        ("Tuesday morning", "Heron B"),
    ]
    assert _rows(env, "select count(*) from run_reviews where excluded")[0][0] == 1
    assert _rows(env, "select count(*) from comments")[0][0] == 4
    r = runner.invoke(cli, ["load-demo"])
    assert r.exit_code != 0 and "not empty" in r.output


def test_serve_migrates_loads_the_demo_and_prints_sign_ins(env: str, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(
        "webapp.DEFAULTS",
        {**__import__("webapp").DEFAULTS, "PASSWORD_METHOD": "scrypt:1024:8:1", "MONTE_CARLO_TRIALS": 0},
    )
    called = {}
    monkeypatch.setattr("flask.Flask.run", lambda self, **kw: called.update(kw))
    port = _free_port()
    r = CliRunner().invoke(cli, ["serve", "--port", str(port)])
    assert r.exit_code == 0, r.output
    assert f"http://127.0.0.1:{port}" in r.output and "kasper.lindqvist-mayo@ternhollow.example" in r.output
    assert called["host"] == "127.0.0.1" and called["port"] == port
    folder = Path(__file__).resolve().parents[2] / "fixtures" / "demo"
    n_demo = len([*folder.glob("*.toml"), *(folder / "class").glob("*.toml")])
    assert _rows(env, "select count(*) from runs")[0][0] == n_demo
    r = CliRunner().invoke(cli, ["serve", "--port", str(port)])  # second start: nothing loaded twice
    assert r.exit_code == 0 and _rows(env, "select count(*) from runs")[0][0] == n_demo


def _free_port() -> int:
    import socket

    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


def test_serve_refuses_a_busy_port_before_saying_it_serves(env: str) -> None:
    import socket

    with socket.socket() as busy:
        busy.bind(("127.0.0.1", 0))
        busy.listen()
        port = busy.getsockname()[1]
        r = CliRunner().invoke(cli, ["serve", "--port", str(port)])
    assert r.exit_code == 2
    assert f"port {port} on 127.0.0.1 is already in use" in r.output and "--port" in r.output
    assert "serving on" not in r.output and "Traceback" not in r.output
    assert not Path(env.removeprefix("sqlite:///")).exists()  # nothing migrated either


def test_serve_with_workers_runs_gunicorn_processes_that_answer(env: str, tmp_path: Path) -> None:
    import signal
    import subprocess
    import sys
    import time

    import psutil
    import requests

    from tests.webapp.fault_helpers import ROOT, env_for, free_port, kill_group

    port = free_port()
    log = (tmp_path / "serve.log").open("wb")
    proc = subprocess.Popen(
        [sys.executable, "-m", "calc.cli", "serve", "--no-demo", "--workers", "2", "--port", str(port)],
        env=env_for(env),
        cwd=ROOT,
        stdout=log,
        stderr=log,
        start_new_session=True,
    )
    try:
        deadline, status = time.monotonic() + 60, None
        while time.monotonic() < deadline and status != 200 and proc.poll() is None:
            try:
                status = requests.get(f"http://127.0.0.1:{port}/auth/login", timeout=20).status_code
            except requests.RequestException:
                time.sleep(0.2)
        assert status == 200, (tmp_path / "serve.log").read_text(errors="replace")
        deadline = time.monotonic() + 30  # the first worker may answer before the second has started
        workers = psutil.Process(proc.pid).children()
        while len(workers) < 2 and time.monotonic() < deadline:
            time.sleep(0.2)
            workers = psutil.Process(proc.pid).children()
        assert len(workers) == 2, workers
        proc.send_signal(signal.SIGTERM)  # gunicorn's graceful stop
        assert proc.wait(timeout=30) == 0
    finally:
        kill_group(proc)
        log.close()
    assert "with 2 worker processes" in (tmp_path / "serve.log").read_text(errors="replace")
