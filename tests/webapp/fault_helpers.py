"""Shared helpers of the fault tests: `cupcal` and gunicorn as real processes, counting and checking.

The processes get the test database in ``DATABASE_URL`` and a fixed secret key (so nothing is
written to an instance folder). Run files are simulated KCl dissolutions (invented data).
"""

from __future__ import annotations

import os
import signal
import socket
import subprocess
import sys
import tempfile
import time
from pathlib import Path
from typing import Any

import requests
import sqlalchemy as sa

from tests.webapp.class_fixtures import simulated_run

ROOT = Path(__file__).resolve().parents[2]
SECTION = "Thermo Lab/Mon AM"
GROUPS = ("M01", "M02", "M03", "M04")


def env_for(url: str) -> dict[str, str]:
    """Return the environment of a notebook process on the database ``url``."""
    return {
        **os.environ,
        "DATABASE_URL": url,
        "CUPCAL_SECRET_KEY": "fault tests",
        "PYTHONUNBUFFERED": "1",
        # an instance folder of its own (none of the developer's instance/config.py); nothing is written
        "CUPCAL_INSTANCE_PATH": os.path.join(tempfile.gettempdir(), "cupcal-test-instance"),
    }


def cupcal(url: str, *args: str, timeout: float = 180) -> subprocess.CompletedProcess[str]:
    """Run ``cupcal ARGS`` to the end and return what it did."""
    return subprocess.run(
        [sys.executable, "-m", "calc.cli", *args],
        env=env_for(url),
        cwd=ROOT,
        capture_output=True,
        text=True,
        timeout=timeout,
    )


def import_args(folder: Path) -> list[str]:
    """Return the arguments of a bulk import of ``folder`` as the test lab's coordinator."""
    return ["import", str(folder), "--section", SECTION, "--as", "coord@lab.example"]


def write_runs(folder: Path, n: int, *, seed: int = 7000) -> Path:
    """Write ``n`` simulated runs named after the Mon AM groups into ``folder``; return it."""
    for i in range(n):
        simulated_run(folder, f"{GROUPS[i % len(GROUPS)]}-run{i:03d}", seed=seed + i)
    return folder


def scalar(url: str, sql: str) -> int:
    """Return the number ``sql`` selects (a fresh connection each time, none kept)."""
    engine = sa.create_engine(url, poolclass=sa.pool.NullPool)
    try:
        with engine.connect() as conn:
            return int(conn.scalar(sa.text(sql)))
    finally:
        engine.dispose()


def count_runs(url: str) -> int:
    """Return how many runs the database holds."""
    return scalar(url, "SELECT count(*) FROM runs")


def distinct_hashes(url: str) -> int:
    """Return how many distinct content hashes the stored runs have."""
    return scalar(url, "SELECT count(DISTINCT content_hash) FROM runs")


def assert_sound(url: str, *, command: bool = False) -> str:
    """Assert that the database passes its integrity check; return the report.

    ``command``: run ``cupcal db check`` as a process (else the same check, in this process).
    """
    if command:
        done = cupcal(url, "db", "check")
        assert done.returncode == 0, done.stdout + done.stderr
        assert ": ok: " in done.stdout, done.stdout
        return done.stdout
    from webapp.services.integrity import check_database

    engine = sa.create_engine(url, poolclass=sa.pool.NullPool)
    try:
        report = check_database(engine)
    finally:
        engine.dispose()
    assert report.ok, report.summary()
    return report.summary()


def outcomes(output: str) -> dict[str, int]:
    """Count the per-file outcome lines (``stored``, ``unchanged``, ``error``) of ``cupcal import``."""
    counts = {"stored": 0, "unchanged": 0, "error": 0}
    for line in output.splitlines():
        word = line.split(" ", 1)[0]
        if word in counts:
            counts[word] += 1
    return counts


def wait_for_runs(url: str, proc: subprocess.Popen[Any], at_least: int, timeout: float = 90) -> None:
    """Wait until the database holds ``at_least`` runs, or ``proc`` ends, or ``timeout`` passes."""
    deadline = time.monotonic() + timeout
    while proc.poll() is None and time.monotonic() < deadline:
        if count_runs(url) >= at_least:
            return
        time.sleep(0.02)


def kill_group(proc: subprocess.Popen[Any]) -> bool:
    """Send SIGKILL to ``proc`` and its children (its own process group); return whether it was running."""
    running = proc.poll() is None
    if running:
        os.killpg(proc.pid, signal.SIGKILL)
    proc.wait(timeout=30)
    return running


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


def start_server(url: str, log: Path, workers: int = 2) -> tuple[subprocess.Popen[Any], str]:
    """Start gunicorn with ``workers`` workers on the notebook; return the process and its base URL."""
    port = free_port()
    cmd = [
        sys.executable,
        "-m",
        "gunicorn",
        "--workers",
        str(workers),
        "--bind",
        f"127.0.0.1:{port}",
        "--timeout",
        "120",
        "webapp:create_app()",
    ]
    with log.open("ab") as fh:  # the server writes to its own copy of the descriptor; ours is closed at once
        proc = subprocess.Popen(cmd, env=env_for(url), cwd=ROOT, stdout=fh, stderr=fh, start_new_session=True)
    base = f"http://127.0.0.1:{port}"
    deadline = time.monotonic() + 60
    try:
        while time.monotonic() < deadline:
            if proc.poll() is not None:
                raise AssertionError(f"gunicorn ended at start:\n{log.read_text(errors='replace')[-3000:]}")
            try:
                if requests.get(base + "/auth/login", timeout=20).status_code == 200:
                    return proc, base
            except requests.RequestException:  # not listening yet, or the workers still loading
                time.sleep(0.1)
        raise AssertionError(f"gunicorn did not answer within 60 s:\n{log.read_text(errors='replace')[-3000:]}")
    except BaseException:
        kill_group(proc)  # never leave a server behind
        raise
