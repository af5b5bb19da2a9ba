"""Where a thermometer's lines come from: a serial port, a command's output, or a file being appended to.

Every source has ``readline(timeout)`` → a line without its end (``str``), ``None`` when nothing came
within ``timeout`` seconds, and raises :class:`SourceEnded` when no more lines can come (the port was
unplugged, the command ended). ``close()`` releases it. Opening a port that does not exist or that
another program holds raises :class:`calc.errors.InputError` with a one-line message.
"""

from __future__ import annotations

import io
import os
import queue
import subprocess
import threading
import time
from pathlib import Path

from calc.errors import CupcalError, InputError

__all__ = ["Source", "SourceEnded", "SerialSource", "CommandSource", "FollowSource", "MAX_LINE"]

MAX_LINE = 4096
"""The longest line kept whole (longer ones are cut and then refused as not matching)."""


class SourceEnded(CupcalError):
    """No more lines can come from the source (the message says why; ``failed``: not a normal end)."""

    def __init__(self, message: str, *, failed: bool = True) -> None:
        super().__init__(message)
        self.failed = failed


class Source:
    """A source of lines (see the module docstring)."""

    name = "source"

    def readline(self, timeout: float) -> str | None:  # pragma: no cover - interface
        raise NotImplementedError

    def close(self) -> None:  # pragma: no cover - interface
        pass


class _Lines:
    """Split bytes into lines (\\n, \\r\\n or \\r), decoding each as UTF-8 with replacement."""

    def __init__(self) -> None:
        self.buffer = b""
        self.ready: list[str] = []
        self._after_cr = False  # the last byte fed was a CR: an LF right after it ends no second line

    def feed(self, data: bytes) -> None:
        if self._after_cr and data.startswith(b"\n"):
            data = data[1:]
        if data:
            self._after_cr = data.endswith(b"\r")
        self.buffer += data.replace(b"\r\n", b"\n").replace(b"\r", b"\n")
        *lines, self.buffer = self.buffer.split(b"\n")
        if len(self.buffer) > MAX_LINE:
            lines.append(self.buffer)
            self.buffer = b""
        self.ready += [line[:MAX_LINE].decode("utf-8", "replace") for line in lines]

    def pop(self) -> str | None:
        return self.ready.pop(0) if self.ready else None


class _ByteSource(Source):
    """A source that reads bytes and splits them into lines; each kind says how more bytes come (``_more``)."""

    _lines: _Lines

    def readline(self, timeout: float) -> str | None:
        deadline = time.monotonic() + timeout
        while True:
            line = self._lines.pop()
            if line is not None:
                return line
            if not self._more(deadline):
                return None

    def _more(self, deadline: float) -> bool:  # pragma: no cover - interface
        """Feed what has come to ``self._lines``; False once ``deadline`` (monotonic) has passed with nothing.

        Raises :class:`SourceEnded` when no more can come.
        """
        raise NotImplementedError


def _port_message(port: str, exc: Exception) -> str:
    """Return a one-line message for a port that cannot be opened."""
    text = str(exc)
    errno = getattr(exc, "errno", None)
    if errno == 2 or "No such file" in text or "could not open port" in text and "FileNotFound" in text:
        return f"the serial port {port!r} does not exist; check the cable and the name (e.g. /dev/ttyUSB0 or COM3)"
    if errno in (11, 16) or "busy" in text.lower() or "exclusively lock" in text or "Resource temporarily" in text:
        return f"the serial port {port!r} is busy: another program holds it; close that program and try again"
    if errno == 21 or "Inappropriate ioctl" in text or "Is a directory" in text:
        return f"{port!r} is not a serial port; expected a device such as /dev/ttyUSB0 or COM3"
    if "Access is denied" in text:  # Windows says so for a port another program holds
        return f"the serial port {port!r} is busy or not open to you: close any program that holds it and try again"
    if errno == 13 or "Permission denied" in text:
        return f"no permission to open the serial port {port!r}; ask for access to it (e.g. the dialout group)"
    return f"cannot open the serial port {port!r}: {text.splitlines()[0] if text else exc.__class__.__name__}"


class SerialSource(_ByteSource):
    """A thermometer on a serial port (or a pseudo-terminal), read with pyserial."""

    def __init__(self, port: str, baudrate: int = 9600) -> None:
        import serial  # pyserial; imported here so that `cupcal --help` stays fast

        self.name = port
        self._lines = _Lines()
        try:
            # exclusive: a second program on the same port is refused instead of sharing its bytes
            self._port = serial.Serial(port, baudrate=baudrate, timeout=0.05, exclusive=True)
        except (serial.SerialException, OSError, ValueError) as exc:
            raise InputError(_port_message(port, exc), field="--port") from None
        self._error = serial.SerialException

    def _more(self, deadline: float) -> bool:
        try:
            data = self._port.read(max(1, self._port.in_waiting))
        except (self._error, OSError) as exc:
            raise SourceEnded(
                f"the serial port {self.name!r} stopped answering ({exc}); "
                "the log is kept: start the same command again to go on"
            ) from None
        if data:
            self._lines.feed(data)
            return True
        return time.monotonic() < deadline

    def close(self) -> None:
        try:
            self._port.close()
        except Exception:  # closing a port that vanished must not hide the summary
            pass


class CommandSource(_ByteSource):
    """The standard output of a command that prints one reading per line."""

    def __init__(self, argv: list[str]) -> None:
        self.name = " ".join(argv)
        try:
            self._process = subprocess.Popen(argv, stdout=subprocess.PIPE, stdin=subprocess.DEVNULL)
        except (OSError, ValueError) as exc:
            raise InputError(f"cannot start the command {self.name!r} ({exc})", field="--command") from None
        self._queue: queue.Queue[bytes | None] = queue.Queue()
        self._thread = threading.Thread(target=self._pump, name="cupcal-command-reader", daemon=True)
        self._thread.start()
        self._lines = _Lines()
        self._ended = False

    def _pump(self) -> None:
        stdout = self._process.stdout
        assert isinstance(stdout, io.BufferedReader)  # stdout=PIPE with the default buffering
        for chunk in iter(lambda: stdout.read1(MAX_LINE), b""):
            self._queue.put(chunk)
        self._queue.put(None)

    def _more(self, deadline: float) -> bool:
        if self._ended:
            code = self._process.wait()
            raise SourceEnded(f"the command {self.name!r} ended (exit status {code})", failed=code != 0)
        try:
            chunk = self._queue.get(timeout=max(0.0, deadline - time.monotonic()))
        except queue.Empty:
            return False
        if chunk is None:
            self._ended = True
            self._lines.feed(b"\n" if self._lines.buffer else b"")
        else:
            self._lines.feed(chunk)
        return True

    def close(self) -> None:
        if self._process.poll() is None:
            self._process.terminate()
            try:
                self._process.wait(timeout=5)
            except subprocess.TimeoutExpired:
                self._process.kill()
        self._thread.join(timeout=5)  # the command has ended: its pipe gives end of file
        if self._process.stdout is not None and not self._thread.is_alive():
            self._process.stdout.close()  # else the pipe is closed only when collected (a ResourceWarning)


class FollowSource(_ByteSource):
    """A file another program appends lines to; only lines added after opening are read (or all)."""

    def __init__(self, path: str | Path, *, from_start: bool = False) -> None:
        self.name = str(path)
        try:
            self._file = open(path, "rb")  # noqa: SIM115 - held open while recording
        except OSError as exc:
            raise InputError(
                f"cannot open the file to follow ({exc.strerror or exc})", source=self.name, field="--follow"
            ) from None
        if not from_start:
            self._file.seek(0, os.SEEK_END)
        self._lines = _Lines()

    def _more(self, deadline: float) -> bool:
        data = self._file.read(MAX_LINE)
        if data:
            self._lines.feed(data)
            return True
        if time.monotonic() >= deadline:
            return False
        time.sleep(min(0.05, max(0.0, deadline - time.monotonic())))
        return True

    def close(self) -> None:
        self._file.close()
