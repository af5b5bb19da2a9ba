"""kill -9 in the middle of a bulk import, of the command and of the server, on SQLite and PostgreSQL.

After each kill the database must pass `cupcal db check` (the database's own check, every foreign
key, every run complete with exactly one current result, content hashes) and the runs stored so
far must be whole; importing the same files again must store exactly the rest. Each run is
stored in its own transaction (webapp/services/import_store.py), so a kill can lose at most the run
in progress, never leave half of one. (Atomic commit is the database's promise: SQLite's WAL and
PostgreSQL's write-ahead log, common practice, no source.)
"""

from __future__ import annotations

import subprocess
import sys
import threading
from pathlib import Path
from typing import Any

import pytest
import requests
import sqlalchemy as sa

from tests.webapp.class_fixtures import make_class, zip_folder
from tests.webapp.fault_helpers import (
    ROOT,
    assert_sound,
    count_runs,
    cupcal,
    distinct_hashes,
    env_for,
    import_args,
    kill_group,
    outcomes,
    start_server,
    wait_for_runs,
    write_runs,
)

# kill -9 and full-disk tests take about a quarter of the suite's time: marked, still run by default
pytestmark = pytest.mark.slow

N_RUNS = 30


@pytest.fixture
def section_id(lab: Any, session: Any) -> int:
    """The Mon AM section of the test roster (groups M01–M04), in the test lab."""
    return make_class(session, lab.ids["coord"]).section_id


def test_cli_killed_mid_import_loses_nothing_and_reimport_completes(
    database_url: str, section_id: int, tmp_path: Path
) -> None:
    folder = write_runs(tmp_path / "runs", N_RUNS)
    stored = kills = 0
    for extra in (2, 3, 5):  # three kills, each after a few more runs have been stored
        proc = subprocess.Popen(
            [sys.executable, "-m", "calc.cli", *import_args(folder)],
            env=env_for(database_url),
            cwd=ROOT,
            stdout=subprocess.DEVNULL,
            stderr=subprocess.DEVNULL,
            start_new_session=True,
        )
        wait_for_runs(database_url, proc, stored + extra)
        kills += kill_group(proc)
        assert_sound(database_url)
        now = count_runs(database_url)
        assert now >= stored, "a kill took away runs stored before it"
        stored = now
    assert kills == 3 and 0 < stored < N_RUNS, (kills, stored)

    done = cupcal(database_url, *import_args(folder))
    assert done.returncode == 0, done.stdout + done.stderr
    assert outcomes(done.stdout) == {"stored": N_RUNS - stored, "unchanged": stored, "error": 0}, done.stdout
    assert count_runs(database_url) == N_RUNS == distinct_hashes(database_url)
    assert_sound(database_url, command=True)


def test_server_killed_mid_import_loses_nothing_and_reimport_completes(
    database_url: str, lab: Any, section_id: int, tmp_path: Path
) -> None:
    archive = zip_folder(write_runs(tmp_path / "runs", N_RUNS, seed=8000))
    log = tmp_path / "gunicorn.log"
    route = f"/api/sections/{section_id}/imports"
    headers = lab.auth("coord")

    def post(base: str) -> requests.Response:
        return requests.post(
            base + route, headers=headers, timeout=300, files={"archive": ("section.zip", archive, "application/zip")}
        )

    proc, base = start_server(database_url, log)
    outcome: dict[str, Any] = {}

    def client() -> None:
        try:
            outcome["response"] = post(base)
        except requests.RequestException as exc:  # the server died under it: expected
            outcome["error"] = exc

    thread = threading.Thread(target=client)
    thread.start()
    try:
        wait_for_runs(database_url, proc, 4)
    finally:
        was_running = kill_group(proc)
        thread.join(timeout=60)
    stored = count_runs(database_url)
    assert was_running and "error" in outcome, outcome
    assert 0 < stored < N_RUNS, stored
    assert_sound(database_url)

    proc, base = start_server(database_url, log)
    try:
        r = post(base)
    finally:
        kill_group(proc)
    assert r.status_code == 200, r.text
    assert r.json()["counts"] == {"stored": N_RUNS - stored, "unchanged": stored, "error": 0, "ignored": 0}
    assert count_runs(database_url) == N_RUNS == distinct_hashes(database_url)
    assert_sound(database_url, command=True)


def test_server_killed_under_uploads_keeps_every_acknowledged_run(database_url: str, lab: Any, tmp_path: Path) -> None:
    """Eight clients upload runs one by one; kill -9 the server: every run answered 201 is stored and whole."""
    from tests.webapp.conftest import demo_files

    toml, csv = demo_files("diss-kcl-01")
    proc, base = start_server(database_url, tmp_path / "gunicorn.log")
    acknowledged: list[int] = []
    refused: list[str] = []
    stop = threading.Event()

    def client(n: int) -> None:
        i = 0
        while not stop.is_set():
            i += 1
            text = toml.replace('title = "', f'title = "client {n} upload {i}: ', 1)
            try:
                r = requests.post(
                    base + "/api/runs",
                    headers=lab.auth("a1"),
                    timeout=60,
                    data={"monte_carlo": "0"},
                    files={"run_file": ("r.toml", text.encode()), "readings": ("r.csv", csv)},
                )
            except requests.RequestException:
                return  # the server died under it: expected
            if r.status_code != 201:  # checked in the test's own thread below
                refused.append(f"{r.status_code}: {r.text[:200]}")
                return
            acknowledged.append(r.json()["id"])

    threads = [threading.Thread(target=client, args=(n,)) for n in range(8)]
    for t in threads:
        t.start()
    try:
        wait_for_runs(database_url, proc, 12)
    finally:
        kill_group(proc)
        stop.set()
        for t in threads:
            t.join(timeout=60)
    assert not refused, refused
    assert len(acknowledged) >= 8, acknowledged
    engine = sa.create_engine(database_url, poolclass=sa.pool.NullPool)
    try:
        with engine.connect() as conn:
            stored = set(conn.scalars(sa.text("SELECT id FROM runs")))
    finally:
        engine.dispose()
    assert set(acknowledged) <= stored, "a run answered 201 is missing after the kill"
    assert len(stored) - len(acknowledged) <= 8  # at most one in flight per client, stored but unanswered
    assert_sound(database_url)
