"""Record readings to a CSV log as they come: one row per reading, flushed and synced to disk each time.

The log (header ``time_s,temperature_C``, the project's own, see :mod:`calc.io.readings`) is appended
to, flushed and ``os.fsync``-ed after every reading, so a pulled cable, a crash or ``kill -9`` loses at
most the reading being written. Beside it a small sidecar file ``<log>.live.json`` (written atomically:
temporary file, fsync, rename) holds what a restart needs: the wall-clock time of t = 0 and the
notebook's ``client_key`` and live-run id. Starting again with the same log
resumes it: a torn last row is cut off, time and the reading number (``seq``) go on. While a recorder
writes a log it holds an exclusive lock on it (``flock``, where the system has it), so a second
recorder on the same file is refused.

Times: without device time stamps, t is the wall-clock time since the first start (so a pause while
the recorder was down shows as a gap); with them, t is the device's stamp as sent (its clock goes on
while the recorder is down). Times increase strictly (the notebook requires it): a device stamp that is
not after the previous one is refused like a line that does not match; a host-clock time that is not
(a burst of lines within a millisecond, a clock set back across a restart) becomes the previous time
plus 1 ms.
"""

from __future__ import annotations

import json
import os
import time
import uuid
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from calc.errors import InputError
from calc.live.devices import DeviceProfile
from calc.live.sources import Source, SourceEnded

__all__ = ["HEADER", "CsvLog", "Sidecar", "Recorder", "Summary", "open_log", "sidecar_path"]

HEADER = "time_s,temperature_C"
SHOWN_BAD_LINES = 5
"""How many refused lines are shown in full (all are counted)."""


def sidecar_path(log: Path) -> Path:
    """Return the sidecar file of ``log``."""
    return log.with_name(log.name + ".live.json")


def _sync_directory(path: Path) -> None:
    try:
        fd = os.open(path, os.O_RDONLY)
    except OSError:  # not possible on every system; the rename is still atomic
        return
    try:
        os.fsync(fd)
    finally:
        os.close(fd)


@dataclass
class Sidecar:
    """What a restart needs to resume a log (see the module docstring)."""

    t0_epoch: float
    client_key: str = field(default_factory=lambda: str(uuid.uuid4()))
    live_run_id: int | None = None
    notebook: str | None = None

    @classmethod
    def read(cls, path: Path) -> Sidecar:
        """Read the sidecar at ``path``; refuse one that is not ours."""
        try:
            data = json.loads(path.read_text(encoding="utf-8"))
            return cls(
                float(data["t0_epoch"]),
                str(data["client_key"]),
                None if data.get("live_run_id") is None else int(data["live_run_id"]),
                data.get("notebook"),
            )
        except (OSError, ValueError, KeyError, TypeError) as exc:
            raise InputError(
                f"cannot read the recorder's sidecar file ({exc}); expected the JSON that `cupcal record` writes",
                source=str(path),
            ) from None

    def write(self, path: Path) -> None:
        """Write atomically: a temporary file, fsync, rename over the old one, fsync the folder."""
        tmp = path.with_name(path.name + ".tmp")
        with open(tmp, "w", encoding="utf-8") as handle:
            json.dump(self.__dict__, handle, indent=1)
            handle.flush()
            os.fsync(handle.fileno())
        os.replace(tmp, path)
        _sync_directory(path.parent)


def _lock(handle: Any, path: Path) -> None:
    """Hold an exclusive lock on the log, so that a second recorder on the same file is refused."""
    try:
        import fcntl
    except ImportError:  # Windows: no advisory locks here
        return
    try:
        fcntl.flock(handle.fileno(), fcntl.LOCK_EX | fcntl.LOCK_NB)
    except OSError:
        raise InputError(
            "another `cupcal record` is writing this log; stop it first, or choose another file", source=str(path)
        ) from None


class CsvLog:
    """The CSV log, opened for appending; :attr:`rows` holds every (time_s, °C) in it."""

    def __init__(self, path: Path) -> None:
        self.path = path
        self.rows: list[tuple[float, float]] = []
        self._handle = open(path, "a", encoding="utf-8", newline="\n")  # noqa: SIM115 - held while recording
        try:
            _lock(self._handle, path)
            self.resumed = os.fstat(self._handle.fileno()).st_size > 0
            if self.resumed:
                self._read_existing()  # appends then go to the (possibly cut) end
            else:
                self._write(HEADER)
        except BaseException:
            self._handle.close()
            raise

    def _read_existing(self) -> None:
        """Read the rows already in the file; cut off a torn last row (a crash mid-write)."""
        data = self.path.read_bytes()
        complete = data[: data.rfind(b"\n") + 1]
        if len(complete) < len(data):
            with open(self.path, "r+b") as handle:
                handle.truncate(len(complete))
                os.fsync(handle.fileno())
        lines = complete.decode("utf-8", "replace").splitlines()
        if not lines or lines[0].strip() != HEADER:
            raise InputError(
                f"the file exists and does not start with {HEADER!r}; expected a log that "
                "`cupcal record` wrote (to resume it) or a new file name",
                source=str(self.path),
            )
        for number, line in enumerate(lines[1:], start=2):
            try:
                t, c = (float(x) for x in line.split(","))
            except ValueError:
                raise InputError(
                    f"cannot resume: the row {line[:60]!r} is not 'time,temperature'",
                    source=str(self.path),
                    line=number,
                ) from None
            self.rows.append((t, c))

    def _write(self, line: str) -> None:
        self._handle.write(line + "\n")
        self._handle.flush()
        os.fsync(self._handle.fileno())

    def append(self, time_s: float, temperature_c: float) -> int:
        """Write one row, flushed and synced; return its seq (0-based row number)."""
        time_s, temperature_c = round(time_s, 3) + 0.0, round(temperature_c, 4) + 0.0  # + 0.0: no "-0.000"
        self._write(f"{time_s:.3f},{temperature_c:.4f}")
        self.rows.append((time_s, temperature_c))
        return len(self.rows) - 1

    def close(self) -> None:
        self._handle.close()


@dataclass
class Summary:
    """What a recording did."""

    recorded: int = 0  # readings written by this session
    total: int = 0  # rows in the log
    bad_lines: int = 0
    shown: list[str] = field(default_factory=list)
    ended_by: str = ""
    failed: bool = False  # ended by a fault (the port vanished), not by the user or the source's normal end


class Recorder:
    """Read lines from a source, write readings to the log, hand each to ``on_reading``."""

    def __init__(
        self,
        source: Source,
        profile: DeviceProfile,
        log: CsvLog,
        sidecar: Sidecar,
        sidecar_file: Path,
        *,
        on_reading: Callable[[int, float, float], None] | None = None,
        on_bad_line: Callable[[str], None] | None = None,
        clock: Callable[[], float] = time.time,
    ) -> None:
        self.source, self.profile, self.log = source, profile, log
        self.sidecar, self.sidecar_file = sidecar, sidecar_file
        self.on_reading = on_reading or (lambda seq, t, c: None)
        self.on_bad_line = on_bad_line or (lambda text: None)
        self.clock = clock
        self.summary = Summary(total=len(log.rows))
        self._mono0 = time.monotonic()
        self._epoch0 = clock()

    def _time(self, device_time: float | None) -> float:
        if device_time is not None:  # the device's own clock, which goes on while the recorder is down
            return device_time
        # wall clock at start (survives restarts), monotonic since (immune to clock steps while running)
        t = round(self._epoch0 - self.sidecar.t0_epoch + time.monotonic() - self._mono0, 3)
        if self.log.rows and t <= self.log.rows[-1][0]:
            # a burst of lines within a millisecond, or a computer clock set back across a restart:
            # 1 ms after the previous reading, far below how well the host clock dates a line anyway
            t = self.log.rows[-1][0] + 0.001
        return t

    def _refuse(self, line: str, why: str) -> None:
        self.summary.bad_lines += 1
        if len(self.summary.shown) < SHOWN_BAD_LINES:
            text = f"{line[:80]!r}: {why}"
            self.summary.shown.append(text)
            self.on_bad_line(text)

    def handle(self, line: str) -> bool:
        """Record one line; return whether it gave a reading."""
        if not line.strip():
            return False  # blank lines between readings carry nothing
        reading = self.profile.read(line)
        if reading is None:
            self._refuse(line, f"does not match the device profile {self.profile.name!r}")
            return False
        t = self._time(reading.device_time_s)
        if self.log.rows and round(t, 3) <= self.log.rows[-1][0]:
            self._refuse(line, f"its time {t:.3f} s is not after the previous reading's {self.log.rows[-1][0]:.3f} s")
            return False
        seq = self.log.append(t, reading.temperature_c)
        self.summary.recorded += 1
        self.summary.total = len(self.log.rows)
        self.on_reading(seq, *self.log.rows[-1])
        return True

    def run(
        self,
        should_stop: Callable[[], bool],
        *,
        max_readings: int | None = None,
        idle_stop: Callable[[], bool] | None = None,
        poll_s: float = 0.2,
    ) -> Summary:
        """Record until ``should_stop()``, the source ends, ``max_readings`` or idle with ``idle_stop()``."""
        while not should_stop():
            if max_readings is not None and self.summary.recorded >= max_readings:
                self.summary.ended_by = f"{max_readings} readings recorded"
                break
            try:
                line = self.source.readline(poll_s)
            except SourceEnded as exc:
                self.summary.ended_by, self.summary.failed = str(exc), exc.failed
                break
            if line is None:
                if idle_stop is not None and idle_stop():
                    self.summary.ended_by = "the simulated run is over"
                    break
                continue
            try:
                self.handle(line)
            except OSError as exc:  # a full disk, a removed USB stick: the rows before are on disk
                self.summary.ended_by = f"cannot write to the log ({exc.strerror or exc}); the rows before are kept"
                self.summary.failed = True
                break
        else:
            self.summary.ended_by = "stopped (Ctrl-C or SIGTERM)"
        return self.summary


def open_log(path: Path, *, clock: Callable[[], float] = time.time) -> tuple[CsvLog, Sidecar, Path]:
    """Open ``path`` for recording, resuming it with its sidecar when it already holds readings."""
    side = sidecar_path(path)
    if path.exists() and path.stat().st_size > 0 and not side.exists():
        raise InputError(
            f"the file exists but has no sidecar {side.name!r}, so it was not written by "
            "`cupcal record`; choose a new file name or move it away",
            source=str(path),
        )
    if path.is_dir():
        raise InputError("is a folder; expected the name of the CSV log to write", source=str(path))
    sidecar = Sidecar.read(side) if side.exists() and path.exists() else Sidecar(t0_epoch=clock())
    try:
        log = CsvLog(path)
    except OSError as exc:
        raise InputError(f"cannot write the log ({exc.strerror or exc})", source=str(path)) from None
    sidecar.write(side)
    return log, sidecar, side
