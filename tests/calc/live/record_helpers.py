"""Helpers shared by the `cupcal record` tests and benchmark: start a recorder process, read its log."""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path
from typing import Any

from calc.live.simthermo import SimThermometer
from tests.calc.live.fake_notebook import TOKEN

ROOT = Path(__file__).resolve().parents[3]


def start_recorder(out: Path, port: str, *extra: str) -> subprocess.Popen:
    """Start `cupcal record OUT --port PORT --device stamped-kelvin --quiet …` in its own process."""
    env = {**os.environ, "PYTHONPATH": str(ROOT), "CUPCAL_TOKEN": TOKEN}
    return subprocess.Popen(
        [
            sys.executable,
            "-m",
            "calc.cli",
            "record",
            str(out),
            "--port",
            port,
            "--device",
            "stamped-kelvin",
            "--quiet",
            *extra,
        ],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        env=env,
    )


def rows(out: Path) -> list[str]:
    """Return the log's rows (header left out); none when there is no log yet."""
    return out.read_text().splitlines()[1:] if out.exists() else []


def wait_rows(out: Path, n: int, seconds: float = 30.0) -> None:
    """Wait until the log holds at least ``n`` rows."""
    deadline = time.monotonic() + seconds
    while len(rows(out)) < n:
        assert time.monotonic() < deadline, f"fewer than {n} rows after {seconds} s"
        time.sleep(0.01)


def readings_lost(thermo: SimThermometer, logged_rows: list[str], killed_at: float) -> int:
    """Count the lines sent while a recorder was up (from its first logged line to its kill) not in its rows."""
    logged = {f"{float(row.split(',')[0]):.1f}" for row in logged_rows}
    first = min(float(stamp) for stamp in logged)
    sent = [line.split(";")[0] for at, line in thermo.written if at < killed_at and float(line.split(";")[0]) >= first]
    return sum(stamp not in logged for stamp in sent)


def finish_with_ctrl_c(out: Path, port: str, *args: str, more_rows: int, timeout: float) -> tuple[int, str, str]:
    """Start the recorder once more with ``--finish``, let it log ``more_rows`` rows, press Ctrl-C (SIGINT) and
    wait; return its exit status, stdout and stderr."""
    proc = start_recorder(out, port, *args, "--finish")
    wait_rows(out, len(rows(out)) + more_rows)
    proc.send_signal(signal.SIGINT)
    stdout, stderr = proc.communicate(timeout=timeout)
    return proc.returncode, stdout, stderr


def assert_the_notebook_holds_the_log(run: Any, out: Path) -> None:
    """The fake notebook's finished live run holds exactly the log's rows, in order, and the log as its CSV."""
    logged = rows(out)
    assert [r[0] for r in run.readings] == list(range(len(logged)))
    assert [f"{r[1]:.3f},{r[2]:.4f}" for r in run.readings] == logged
    assert run.state == "finished" and run.csv == out.read_text()
