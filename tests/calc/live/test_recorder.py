"""The recorder writes every reading at once, resumes a log, and counts every line it refuses."""

from __future__ import annotations

import json
import time

import numpy as np
import pytest

from calc.errors import InputError
from calc.io.readings import read_readings
from calc.live.devices import PROFILES
from calc.live.recorder import HEADER, CsvLog, Recorder, open_log, sidecar_path
from calc.live.sources import Source, SourceEnded


class ListSource(Source):
    """Lines from a list, then the end (failed=False, like a command that finished)."""

    name = "list"

    def __init__(self, lines):
        self.lines = list(lines)

    def readline(self, timeout):
        if not self.lines:
            raise SourceEnded("the list ended", failed=False)
        return self.lines.pop(0)


def _record(path, lines, profile="stamped-kelvin", clock=time.time):
    log, sidecar, side = open_log(path, clock=clock)
    shown = []
    recorder = Recorder(ListSource(lines), PROFILES[profile], log, sidecar, side, on_bad_line=shown.append, clock=clock)
    summary = recorder.run(lambda: False)
    log.close()
    return summary, shown


def test_each_reading_is_a_row_of_the_projects_own_log_format(tmp_path):
    path = tmp_path / "run.csv"
    lines = [f"{t:.1f};{294.15 + 0.01 * t:.3f}" for t in range(12)]
    summary, shown = _record(path, lines)
    assert summary.recorded == summary.total == 12 and summary.bad_lines == 0 and not summary.failed
    assert path.read_text().splitlines()[0] == HEADER
    readings = read_readings(path)  # the analysis reads the log as it is
    assert len(readings) == 12
    # 294.15 K = 21.00 °C (SI Brochure, 9th ed., 2.3.1)
    assert readings.temperature_K[0] == pytest.approx(294.15)
    assert readings.time_s[-1] == 11.0


def test_every_refused_line_is_counted_and_the_first_five_shown(tmp_path):
    good = [f"{t}.0;295.000" for t in range(10)]
    bad = ["ERR", "", "12;abc", "#", "295.1", "T?", "x;y", "--"]  # the blank line carries nothing, not refused
    lines = good[:3] + bad + good[3:] + ["5.0;295.0"]  # the last: its time is not after 9.0
    summary, shown = _record(tmp_path / "r.csv", lines)
    assert summary.recorded == 10
    assert summary.bad_lines == 8  # 7 non-matching lines + 1 time going back
    assert len(shown) == 5 and shown[0].startswith("'ERR': does not match the device profile 'stamped-kelvin'")
    assert "'12;abc'" in shown[1]
    assert summary.ended_by == "the list ended"


def test_a_device_time_not_after_the_previous_is_refused_not_written(tmp_path):
    summary, shown = _record(tmp_path / "r.csv", ["10.0;295", "9.0;295", "11.0;295", "11.0;295.1"])
    assert summary.recorded == 2 and summary.bad_lines == 2
    assert "its time 9.000 s is not after the previous reading's 10.000 s" in shown[0]
    assert "its time 11.000 s is not after the previous reading's 11.000 s" in shown[1]


def test_host_clock_times_increase_strictly_in_a_burst_and_after_a_clock_set_back(tmp_path):
    path = tmp_path / "r.csv"
    summary, _ = _record(path, ["21.0"] * 50, profile="bare-celsius")  # 50 lines read within a few ms
    clock = iter([0.0, 0.0])  # the computer's clock set back to before the first start
    _record(path, ["21.5"] * 3, profile="bare-celsius", clock=lambda: next(clock))
    times = read_readings(path).time_s
    assert summary.recorded == 50 and times.size == 53
    assert (np.diff(times) > 0).all()


def test_a_restart_resumes_the_same_log_and_cuts_a_torn_last_row(tmp_path):
    path = tmp_path / "r.csv"
    _record(path, [f"{t}.0;295.0" for t in range(5)])
    key = json.loads(sidecar_path(path).read_text())["client_key"]
    with open(path, "ab") as handle:
        handle.write(b"5.000,21.8")  # a crash in the middle of a row
    summary, _ = _record(path, [f"{t}.0;296.0" for t in range(5, 9)])
    rows = path.read_text().splitlines()
    assert rows[0] == HEADER and len(rows) == 1 + 9
    assert rows[6] == "5.000,22.8500"  # the torn row is gone; the restart's reading takes its place
    assert summary.total == 9 and summary.recorded == 4
    assert json.loads(sidecar_path(path).read_text())["client_key"] == key


def test_a_host_clock_log_goes_on_from_the_first_start(tmp_path):
    path = tmp_path / "r.csv"
    clock = iter([1000.0, 1000.0, 1100.0])  # first start at 1000 s, restart 100 s later
    _record(path, ["21.0"], profile="bare-celsius", clock=lambda: next(clock))
    assert json.loads(sidecar_path(path).read_text())["t0_epoch"] == 1000.0
    summary, _ = _record(path, ["21.5"], profile="bare-celsius", clock=lambda: next(clock))
    times = [float(row.split(",")[0]) for row in path.read_text().splitlines()[1:]]
    assert times[0] == pytest.approx(0.0, abs=0.05)
    assert times[1] == pytest.approx(100.0, abs=0.05)  # the 100 s while it was down show as a gap


def test_a_file_not_written_by_the_recorder_is_not_touched(tmp_path):
    path = tmp_path / "other.csv"
    path.write_text("time_s,temperature_C\n0,21\n")
    with pytest.raises(InputError, match="has no sidecar 'other.csv.live.json'"):
        open_log(path)
    assert path.read_text() == "time_s,temperature_C\n0,21\n"
    sidecar_path(path).write_text("not json")
    with pytest.raises(InputError, match="cannot read the recorder's sidecar"):
        open_log(path)


def test_the_sidecar_is_replaced_whole(tmp_path):
    path = tmp_path / "r.csv"
    log, sidecar, side = open_log(path)
    sidecar.live_run_id = 7
    sidecar.write(side)
    log.close()
    assert json.loads(side.read_text())["live_run_id"] == 7
    assert not side.with_name(side.name + ".tmp").exists()


def test_a_log_row_is_on_disk_before_append_returns(tmp_path):
    path = tmp_path / "r.csv"
    log = CsvLog(path)
    seq = log.append(1.5, 21.25)
    # read through a second handle while the first is still open: the row is there already
    assert seq == 0 and path.read_text() == f"{HEADER}\n1.500,21.2500\n"
    log.close()


def test_a_full_disk_ends_the_recording_with_a_message_and_keeps_the_rows_before(tmp_path, monkeypatch):
    path = tmp_path / "r.csv"
    log, sidecar, side = open_log(path)
    write = CsvLog._write

    def fill_up(self, line):
        if len(self.rows) >= 3:
            raise OSError(28, "No space left on device")
        write(self, line)

    monkeypatch.setattr(CsvLog, "_write", fill_up)
    recorder = Recorder(ListSource([f"{t}.0;295.0" for t in range(10)]), PROFILES["stamped-kelvin"], log, sidecar, side)
    summary = recorder.run(lambda: False)
    log.close()
    assert summary.failed and summary.recorded == 3
    assert summary.ended_by == "cannot write to the log (No space left on device); the rows before are kept"
    assert path.read_text().splitlines()[1:] == ["0.000,21.8500", "1.000,21.8500", "2.000,21.8500"]


def test_a_second_recorder_on_the_same_log_is_refused(tmp_path):
    path = tmp_path / "r.csv"
    log, _sidecar, _side = open_log(path)
    try:
        with pytest.raises(InputError, match="another `cupcal record` is writing this log"):
            open_log(path)
    finally:
        log.close()
    second, _sidecar, _side = open_log(path)  # free again once the first has closed it
    second.close()
    assert path.read_text() == HEADER + "\n"
