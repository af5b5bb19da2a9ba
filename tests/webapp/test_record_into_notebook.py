"""`cupcal record` streams a simulated thermometer into the real notebook and finishes it into a stored run.

The recorder's side of the live-run contract (docs/recording.md) against the notebook's own API, not
a stand-in: a live-scoped token, a pty thermometer read through pyserial, garbled lines refused, and
``--finish`` storing the run with the recorder's log kept as sent. SQLite only (the API's own tests
cover PostgreSQL). Skipped where the notebook has no live-run API.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import threading
from pathlib import Path
from typing import Any

import pytest

pytest.importorskip("webapp.api.live")

ROOT = Path(__file__).resolve().parents[2]


@pytest.mark.slow
def test_record_streams_into_the_notebook_and_finishes_a_stored_run(
    app: Any, lab: Any, session: Any, tmp_path: Path, database_url: str
) -> None:
    if not database_url.startswith("sqlite"):
        pytest.skip("SQLite is enough for the recorder's side; the API's own tests cover PostgreSQL")
    from werkzeug.serving import make_server

    from webapp.models import Person
    from webapp.services.tokens import issue_scoped_token

    _token, secret = issue_scoped_token(session, session.get(Person, lab.ids["a1"]), "bench recorder", "live")
    session.commit()
    server = make_server("127.0.0.1", 0, app, threaded=True)
    threading.Thread(target=server.serve_forever, daemon=True).start()
    out = tmp_path / "live.csv"
    try:
        done = subprocess.run(
            [
                sys.executable,
                "-m",
                "calc.cli",
                "record",
                str(out),
                "--simulate",
                "dissolution",
                "--seed",
                "3",
                "--speed",
                "400",
                "--garble",
                "0.01",
                "--quiet",
                "--notebook",
                f"http://127.0.0.1:{server.server_port}",
                "--finish",
            ],
            capture_output=True,
            text=True,
            timeout=300,
            env={**os.environ, "PYTHONPATH": str(ROOT), "CUPCAL_TOKEN": secret},
        )
    finally:
        server.shutdown()
    assert done.returncode == 0, done.stderr
    assert "all readings sent" in done.stdout and "line(s) did not give a reading" in done.stdout
    live_id = json.loads((tmp_path / "live.csv.live.json").read_text())["live_run_id"]
    got = app.test_client().get(f"/api/live-runs/{live_id}", headers=lab.auth("a1")).get_json()
    rows = out.read_text().splitlines()[1:]
    assert got["state"] == "finished" and got["n_readings"] == len(rows) and got["last_seq"] == len(rows) - 1
    assert f"stored as run {got['run_id']}" in done.stdout
