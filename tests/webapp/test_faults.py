"""kill -9 in the middle of a bulk import, of the command and of the server, on SQLite and PostgreSQL.

After each kill the database must pass `cupcal db check` (the database's own check, every foreign
key, every run complete with exactly one current result, content hashes) and the runs stored so
far must be whole; importing the same files again must store exactly the rest. Each run is
stored in its own transaction (webapp/services/imports.py), so a kill can lose at most the run
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

from tests.webapp.class_fixtures import make_class
from tests.webapp.class_fixtures import zip_folder
from tests.webapp.fault_helpers import ROOT
from tests.webapp.fault_helpers import assert_sound
from tests.webapp.fault_helpers import count_runs
from tests.webapp.fault_helpers import cupcal
from tests.webapp.fault_helpers import distinct_hashes
from tests.webapp.fault_helpers import env_for
from tests.webapp.fault_helpers import import_args
from tests.webapp.fault_helpers import kill_group
from tests.webapp.fault_helpers import outcomes
from tests.webapp.fault_helpers import start_server
from tests.webapp.fault_helpers import wait_for_runs
from tests.webapp.fault_helpers import write_runs

N_RUNS = 30


@pytest.fixture
def section_id(lab: Any, session: Any) -> int:
    """The Mon AM section of the test roster (groups M01–M04), in the test lab."""
    return make_class(session, lab.ids["coord"]).section_id


def test_cli_killed_mid_import_loses_nothing_and_reimport_completes(
        database_url: str, section_id: int, tmp_path: Path) -> None:
    folder = write_runs(tmp_path / "runs", N_RUNS)
    stored = kills = 0
    for extra in (2, 3, 5):  # three kills, each after a few more runs have been stored
        proc = subprocess.Popen([sys.executable, "-m", "calc.cli", *import_args(folder)], env=env_for(database_url),
                                cwd=ROOT, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                                start_new_session=True)
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
        database_url: str, lab: Any, section_id: int, tmp_path: Path) -> None:
    archive = zip_folder(write_runs(tmp_path / "runs", N_RUNS, seed=8000))
    log = tmp_path / "gunicorn.log"
    route = f"/api/sections/{section_id}/imports"
    headers = lab.auth("coord")

    def post(base: str) -> requests.Response:
        return requests.post(base + route, headers=headers, timeout=300,
                             files={"archive": ("section.zip", archive, "application/zip")})

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
