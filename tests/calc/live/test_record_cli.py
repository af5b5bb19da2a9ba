"""`cupcal record` end to end: a pseudo-terminal thermometer read through pyserial, bad ports and units,
Ctrl-C and SIGTERM, and kill -9 followed by a restart that resumes the same log and the same live run."""

from __future__ import annotations

import json
import signal
import sys
import time

import numpy as np
import pytest
import serial
from click.testing import CliRunner

from calc.cli.commands import cli
from calc.io.readings import read_readings
from calc.live.devices import PROFILES
from calc.live.recorder import HEADER, sidecar_path
from calc.live.simthermo import SimThermometer
from tests.calc.live.fake_notebook import FakeNotebook
from tests.calc.live.record_helpers import (
    assert_the_notebook_holds_the_log,
    finish_with_ctrl_c,
    readings_lost,
    rows,
    start_recorder,
    wait_rows,
)


def _invoke(*args):
    return CliRunner().invoke(cli, ["record", *map(str, args)])


def test_a_port_that_does_not_exist_is_one_line_and_exit_2_and_no_file(tmp_path):
    res = _invoke(tmp_path / "run.csv", "--port", "/dev/ttyNOSUCH7")
    assert res.exit_code == 2
    assert res.output.strip() == (
        "cupcal record: --port: the serial port '/dev/ttyNOSUCH7' does not exist; "
        "check the cable and the name (e.g. /dev/ttyUSB0 or COM3)"
    )
    assert not (tmp_path / "run.csv").exists()


def test_a_busy_port_is_one_line_and_exit_2(tmp_path):
    thermo = SimThermometer([0.0], [21.0], PROFILES["bare-celsius"])
    port = thermo.open_pty()
    holder = serial.Serial(port, exclusive=True)  # another program holds the port
    try:
        res = _invoke(tmp_path / "run.csv", "--port", port)
    finally:
        holder.close()
        thermo.close()
    assert res.exit_code == 2
    assert f"--port: the serial port '{port}' is busy: another program holds it" in res.output
    assert "Traceback" not in res.output and len(res.output.strip().splitlines()) == 1


@pytest.mark.parametrize(
    ("args", "said"),
    [
        (["--pattern", "(?P<value>\\S+) C", "--unit", "Celsius grade"], "--unit: unknown unit 'Celsius grade'"),
        (["--pattern", "(?P<value>\\S+)", "--unit", "C"], "--unit: the unit 'C' is not a temperature"),
        (["--device", "no-such-probe"], "--device: unknown device 'no-such-probe'"),
        (["--speed", "2", "--simulate", "dissolution", "--device", "bare-celsius"], "--speed: a speed other than 1"),
        (["--speed", "2"], "--simulate: --speed, --seed and --garble go with --simulate KIND"),
    ],
)
def test_unreadable_units_and_devices_are_refused_by_name(tmp_path, args, said):
    res = (
        _invoke(tmp_path / "run.csv", "--port", "/dev/null", *args)
        if "--simulate" not in args
        else _invoke(tmp_path / "run.csv", *args)
    )
    assert res.exit_code == 2 and said in res.output and "Traceback" not in res.output


def test_fahrenheit_lines_on_a_pty_are_read_through_pyserial_and_logged_in_celsius(tmp_path):
    fahrenheit = [68.0, 70.25, 98.6, 212.0] * 5
    thermo = SimThermometer(
        np.arange(20) * 0.02, [(f - 32) / 1.8 for f in fahrenheit], PROFILES["labelled-fahrenheit"], garble=0.2, seed=4
    )
    port = thermo.open_pty()
    thermo.start(delay_s=1.5)  # the command opens the port meanwhile
    try:
        res = _invoke(
            tmp_path / "run.csv", "--port", port, "--device", "labelled-fahrenheit", "--max-readings", 20, "--quiet"
        )
    finally:
        thermo.close()
    assert res.exit_code == 0, res.output
    logged = read_readings(tmp_path / "run.csv").temperature_K - 273.15
    # t/°C = (t/°F − 32)/1.8 (NIST SP 811, 2008 ed., B.9, from memory): 68 °F = 20 °C, 98.6 °F = 37 °C, 212 °F = 100 °C
    assert np.allclose(logged, [20.0, 21.25, 37.0, 100.0] * 5, atol=1e-4)
    garbled = sum(
        line not in {PROFILES["labelled-fahrenheit"].format(0, c) for c in logged} for _, line in thermo.written
    )
    assert garbled > 0 and f"{garbled} line(s) did not give a reading" in res.output


def test_a_simulated_run_is_recorded_whole_and_its_truth_and_run_file_given(tmp_path):
    from calc.simulation.realistic import realistic_scenario

    res = _invoke(
        tmp_path / "sim.csv", "--simulate", "electrical-calibration", "--seed", 11, "--speed", 1000, "--quiet"
    )
    assert res.exit_code == 0, res.output
    sim = realistic_scenario("electrical-calibration", 11, resolution=0.01, mixing_given=True)
    log = read_readings(tmp_path / "sim.csv")
    assert len(log) == sim.time_s.size
    assert np.allclose(log.time_s, sim.time_s, atol=0.051)  # the profile writes 0.1 s
    assert np.allclose(log.temperature_K - 273.15, sim.reading_C, atol=0.0006)  # and 0.001 K
    assert f"C_cal = {sim.truth.calorimeter_heat_capacity_J_K:.2f} J/K" in res.output
    assert 'readings = "sim.csv"' in (tmp_path / "sim.toml").read_text()


def test_a_command_and_a_followed_file_are_sources_too(tmp_path):
    code = "import sys\nfor i in range(12): print(f'{21 + i / 10:.2f}', flush=True)\nprint('oops')"
    res = _invoke(tmp_path / "cmd.csv", "--command", f'{sys.executable} -c "{code}"', "--quiet")
    assert res.exit_code == 0, res.output
    assert len(read_readings(tmp_path / "cmd.csv")) == 12 and "1 line(s) did not give a reading" in res.output
    followed = tmp_path / "probe.txt"
    followed.write_text("".join(f"{t}.0;29{t % 10}.0\n" for t in range(10, 25)))
    res = _invoke(
        tmp_path / "f.csv",
        "--follow",
        followed,
        "--from-start",
        "--device",
        "stamped-kelvin",
        "--max-readings",
        15,
        "--quiet",
    )
    assert res.exit_code == 0, res.output
    assert read_readings(tmp_path / "f.csv").time_s[0] == 10.0


@pytest.mark.parametrize("signum", [signal.SIGINT, signal.SIGTERM])
def test_ctrl_c_and_sigterm_end_cleanly(tmp_path, signum):
    thermo = SimThermometer(np.arange(2000) * 0.05, np.full(2000, 21.0), PROFILES["stamped-kelvin"])
    port = thermo.open_pty()
    out = tmp_path / "run.csv"
    proc = start_recorder(out, port)
    thermo.start()
    try:
        wait_rows(out, 5)
        proc.send_signal(signum)
        stdout, stderr = proc.communicate(timeout=30)
    finally:
        thermo.close()
    assert proc.returncode == 0, stderr
    assert "ended: stopped (Ctrl-C or SIGTERM)" in stdout and "Traceback" not in stderr
    text = out.read_text()
    assert text.startswith(HEADER + "\n") and text.endswith("\n")
    assert f"{len(rows(out))} in the log" in stdout


@pytest.mark.slow
def test_kill_9_loses_at_most_the_last_reading_and_a_restart_resumes_the_log_and_the_live_run(tmp_path):
    n = 4000
    thermo = SimThermometer(np.arange(n) * 0.1, 21.0 + np.arange(n) * 1e-3, PROFILES["stamped-kelvin"])
    port = thermo.open_pty()
    out, run_file = tmp_path / "run.csv", tmp_path / "run.toml"
    run_file.write_text('kind = "dissolution"\n')
    with FakeNotebook() as nb:
        args = ("--notebook", nb.url, "--run-file", str(run_file))
        thermo.start()
        try:
            for _crash in range(3):
                before = len(rows(out))
                proc = start_recorder(out, port, *args)
                wait_rows(out, before + 10)
                killed_at = time.monotonic()
                proc.send_signal(signal.SIGKILL)
                proc.communicate(timeout=10)  # waits, and closes its pipes (not left to the collector)
                assert readings_lost(thermo, rows(out)[before:], killed_at) <= 1
            status, stdout, stderr = finish_with_ctrl_c(out, port, *args, more_rows=20, timeout=30)
        finally:
            thermo.close()
        assert status == 0, stderr
        times = [float(r.split(",")[0]) for r in rows(out)]
        assert times == sorted(times) and len(set(times)) == len(times)
        assert len(nb.runs) == 1  # every restart found the same live run by its client_key
        assert json.loads(sidecar_path(out).read_text())["live_run_id"] == 1
        assert_the_notebook_holds_the_log(nb.runs[1], out)
        assert "stored as run 1001" in stdout
