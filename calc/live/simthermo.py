"""A simulated thermometer: plays a run with a known truth into a pseudo-terminal, like a real port.

:class:`SimThermometer` takes the times (s) and readings (°C) of a simulated run (the caller makes
them with :mod:`calc.simulation`, e.g. ``realistic_scenario``, which adds the bench's artefacts:
spikes from a loose contact, stirring noise, room drift, dropped rows, jittered stamps) and writes
one line per reading, in the format of a device profile, at the run's own pace divided by
``speed``. It can also slip in garbled lines (``garble`` = the share of extra lines of noise), as a
flaky cable does. :meth:`SimThermometer.open_pty` makes a pseudo-terminal pair (``pty.openpty``) and
:meth:`SimThermometer.start` plays into its master side in a thread; the recorder opens the slave side by name through
pyserial, exactly as it opens a USB thermometer. Nobody reading the port loses the lines, as on a
real port (the pty is non-blocking on the simulator's side).
"""

from __future__ import annotations

import os
import threading
import time
from collections.abc import Callable, Iterator

import numpy as np
from numpy.typing import ArrayLike

from calc.errors import InputError
from calc.live.devices import DeviceProfile

__all__ = ["SimThermometer", "GARBLED"]

#: Lines of noise a flaky connection sends (none of them matches a built-in profile).
GARBLED = ("ERR", "\x15\x15?", "--", "T?:", "#####")


class SimThermometer:
    """Play readings as lines at their own pace (see the module docstring)."""

    def __init__(
        self,
        times_s: ArrayLike,
        temps_c: ArrayLike,
        profile: DeviceProfile,
        *,
        speed: float = 1.0,
        garble: float = 0.0,
        seed: int | None = None,
    ) -> None:
        if not speed > 0:
            raise InputError(f"the speed must be > 0, got {speed}", field="--speed")
        if not 0 <= garble < 1:
            raise InputError(f"the share of garbled lines must be in [0, 1), got {garble}", field="--garble")
        if speed != 1 and not profile.has_time:
            raise InputError(
                f"a speed other than 1 needs a device profile with time stamps; {profile.name!r} "
                "has none (the recorder would stamp the sped-up wall clock)",
                field="--speed",
            )
        self.times = np.asarray(times_s, float)
        self.temps = np.asarray(temps_c, float)
        self.profile, self.speed, self.garble = profile, speed, garble
        self._rng = np.random.default_rng(seed)
        self.done = threading.Event()
        self.written: list[tuple[float, str]] = []  # (monotonic time written, line) of every line sent
        self.dropped = 0  # lines nobody was reading (the port's buffer was full)
        self._master: int | None = None
        self._thread: threading.Thread | None = None
        self._stop = threading.Event()

    def lines(self) -> Iterator[tuple[float, str]]:
        """Yield (seconds after start, line), garbled lines included, in the order they are sent."""
        t0 = float(self.times[0]) if self.times.size else 0.0
        for t, c in zip(self.times, self.temps):
            due = (float(t) - t0) / self.speed
            if self.garble and self._rng.uniform() < self.garble:
                yield due, str(self._rng.choice(GARBLED))
            yield due, self.profile.format(float(t), float(c))

    def play(self, write: Callable[[bytes], bool], *, start: float | None = None) -> None:
        """Write every line at its time through ``write`` (returns False when the line was dropped)."""
        start = time.monotonic() if start is None else start
        for due, line in self.lines():
            delay = start + due - time.monotonic()
            if delay > 0 and self._stop.wait(delay):
                break
            if self._stop.is_set():
                break
            if write((line + "\r\n").encode("utf-8")):
                self.written.append((time.monotonic(), line))
            else:
                self.dropped += 1
        self.done.set()

    def _write_master(self, data: bytes) -> bool:
        assert self._master is not None
        try:
            return os.write(self._master, data) == len(data)
        except (BlockingIOError, OSError):
            return False

    def open_pty(self) -> str:
        """Make a pseudo-terminal; return the port name to open (e.g. /dev/pts/3)."""
        try:
            import pty
            import tty
        except ImportError:
            raise InputError(
                "the simulated thermometer needs a pseudo-terminal (Linux or macOS); on this system, "
                "use --command or --follow with a program that prints readings",
                field="--simulate",
            ) from None

        master, slave = pty.openpty()
        tty.setraw(slave)  # no echo, no line editing: bytes pass as a serial line passes them
        os.set_blocking(master, False)
        self._master, self._slave = master, slave  # the slave stays open here so the pty outlives a reader
        return os.ttyname(slave)

    def start(self, delay_s: float = 0.0) -> None:
        """Start playing into the pseudo-terminal after ``delay_s``.

        Start once the reader has the port open (pyserial empties a port's input when it opens it), or
        give the reader ``delay_s`` to open it.
        """
        if self._master is None:
            raise RuntimeError("open_pty() first")
        self._thread = threading.Thread(
            target=self.play,
            args=(self._write_master,),
            kwargs={"start": time.monotonic() + delay_s},
            name="cupcal-simthermo",
            daemon=True,
        )
        self._thread.start()

    def close(self) -> None:
        """Stop playing and close the pseudo-terminal (a reader then sees the cable pulled)."""
        self._stop.set()
        if self._thread is not None:
            self._thread.join(timeout=5)
        for fd in (self._master, getattr(self, "_slave", None)):
            if fd is not None:
                try:
                    os.close(fd)
                except OSError:
                    pass
        self._master = None
