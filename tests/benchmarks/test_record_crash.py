"""`cupcal record` under kill -9, and how fast a reading reaches the notebook (docs/recording.md).

1. Crash trials: a simulated thermometer on a pseudo-terminal sends 10 readings/s; a `cupcal record`
   process streams them to a fake notebook (tests/calc/live/fake_notebook.py) and is killed with
   SIGKILL at a random moment, then started again with the same command, ``TRIALS`` times. Per
   crash: readings lost (sent while the recorder was up, from its first logged reading to the kill,
   and not in the log; must be ≤ 1), whether the restart resumed the same file and the same live-run
   id. At the end a last run is stopped with Ctrl-C and ``--finish``; the notebook must hold exactly
   the log's rows, in order.
2. Latency at 1 reading/s: from the moment a line is written to the pty to the moment the fake
   notebook stores the reading (same machine, same monotonic clock), median and 95th percentile.

Run with ``make bench`` (or ``pytest -s tests/benchmarks/test_record_crash.py -o addopts=""``).
"""

from __future__ import annotations

import json
import random
import signal
import time

import numpy as np

from calc.live.devices import PROFILES
from calc.live.recorder import sidecar_path
from calc.live.simthermo import SimThermometer
from tests.calc.live import record_helpers as rec
from tests.calc.live.fake_notebook import FakeNotebook

TRIALS = 24
LATENCY_READINGS = 90


def _crash_trials(tmp_path, nb: FakeNotebook) -> list[dict]:
    n = 20000
    thermo = SimThermometer(np.arange(n) * 0.1, 21.0 + np.arange(n) * 1e-4, PROFILES["stamped-kelvin"])
    port = thermo.open_pty()
    out, run_file = tmp_path / "crash.csv", tmp_path / "crash.toml"
    run_file.write_text('kind = "dissolution"\n')
    args = ("--notebook", nb.url, "--run-file", str(run_file))
    rng = random.Random(20261205)
    trials, live_id = [], None
    thermo.start()
    try:
        for _trial in range(TRIALS):
            earlier = rec.rows(out)
            before, inode = len(earlier), out.stat().st_ino if out.exists() else None
            proc = rec.start_recorder(out, port, *args)
            rec.wait_rows(out, before + rng.randint(3, 30))
            time.sleep(rng.uniform(0.0, 0.1))  # anywhere between two readings, mid-write included
            killed_at = time.monotonic()
            proc.send_signal(signal.SIGKILL)
            proc.communicate(timeout=10)  # waits, and closes its pipes (not left to the collector)
            side = json.loads(sidecar_path(out).read_text())
            live_id = live_id or side["live_run_id"]
            trials.append(
                {
                    "lost": rec.readings_lost(thermo, rec.rows(out)[before:], killed_at),
                    # the restart appended to the very file: same inode, earlier rows untouched
                    "same_file": rec.rows(out)[:before] == earlier and inode in (None, out.stat().st_ino),
                    "same_live_run": side["live_run_id"] == live_id and len(nb.runs) == 1,
                    "rows": len(rec.rows(out)),
                }
            )
        status, _stdout, stderr = rec.finish_with_ctrl_c(out, port, *args, more_rows=10, timeout=60)
    finally:
        thermo.close()
    assert status == 0, stderr
    rec.assert_the_notebook_holds_the_log(nb.runs[live_id], out)
    return trials


def _latency(tmp_path, nb: FakeNotebook) -> np.ndarray:
    thermo = SimThermometer(
        np.arange(LATENCY_READINGS + 10) * 1.0, np.full(LATENCY_READINGS + 10, 21.0), PROFILES["stamped-kelvin"]
    )
    port = thermo.open_pty()
    out, run_file = tmp_path / "latency.csv", tmp_path / "latency.toml"
    run_file.write_text('kind = "dissolution"\n')
    proc = rec.start_recorder(
        out, port, "--notebook", nb.url, "--run-file", str(run_file), "--max-readings", str(LATENCY_READINGS)
    )
    thermo.start(delay_s=3.0)  # the recorder opens the port meanwhile
    try:
        stdout, stderr = proc.communicate(timeout=LATENCY_READINGS + 60)
    finally:
        thermo.close()
    assert proc.returncode == 0, stderr
    written = {line.split(";")[0]: at for at, line in thermo.written}
    run = max(nb.runs.values(), key=lambda r: r.id)
    return np.array([run.arrived[seq] - written[f"{t:.1f}"] for seq, t, _ in run.readings])


def test_kill_9_loses_at_most_one_reading_and_readings_reach_the_notebook_fast(tmp_path):
    with FakeNotebook() as nb:
        trials = _crash_trials(tmp_path, nb)
        delays_ms = 1000 * _latency(tmp_path, nb)
    lost = np.array([t["lost"] for t in trials])
    print(f"\n`cupcal record` under kill -9 ({len(trials)} trials, 10 readings/s, pty + fake notebook)")
    print(" trial | rows in log | readings lost | same file | same live run")
    for i, t in enumerate(trials, 1):
        print(f" {i:5d} | {t['rows']:11d} | {t['lost']:13d} | {str(t['same_file']):9s} | {t['same_live_run']}")
    print(f" lost per crash: max {lost.max()}, mean {lost.mean():.2f}; crashes with a loss: {(lost > 0).sum()}")
    print(
        f"\nlatency pty → notebook at 1 reading/s ({delays_ms.size} readings): "
        f"median {np.median(delays_ms):.1f} ms, p95 {np.percentile(delays_ms, 95):.1f} ms, "
        f"max {delays_ms.max():.1f} ms"
    )
    assert len(trials) >= 20
    assert lost.max() <= 1
    assert all(t["same_file"] and t["same_live_run"] for t in trials)
    assert delays_ms.size == LATENCY_READINGS
