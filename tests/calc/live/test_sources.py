"""Messages for ports that cannot be opened, and the line splitting every source shares."""

from __future__ import annotations

import pytest
import serial

from calc.live.sources import MAX_LINE, _Lines, _port_message


@pytest.mark.parametrize(
    ("exc", "said"),
    [
        # the texts pyserial 3.5 gives on Linux (seen on this machine) and on Windows (from memory)
        (
            serial.SerialException(2, "could not open port /dev/ttyX: [Errno 2] No such file or directory"),
            "does not exist",
        ),
        (
            serial.SerialException(
                11, "Could not exclusively lock port /dev/pts/3: [Errno 11] Resource temporarily unavailable"
            ),
            "is busy: another program holds it",
        ),
        (serial.SerialException(13, "could not open port /dev/ttyS0: [Errno 13] Permission denied"), "no permission"),
        (
            serial.SerialException(
                "could not open port 'COM7': FileNotFoundError(2, 'The system cannot find the file "
                "specified.', None, 2)"
            ),
            "does not exist",
        ),
        (
            serial.SerialException("could not open port 'COM3': PermissionError(13, 'Access is denied.', None, 5)"),
            "is busy or not open to you",
        ),
        (
            serial.SerialException("Could not configure port: (25, 'Inappropriate ioctl for device')"),
            "is not a serial port",
        ),
    ],
)
def test_a_port_that_cannot_be_opened_gets_one_plain_line(exc, said):
    message = _port_message("P", exc)
    assert said in message and "\n" not in message


def test_lines_split_on_any_line_end_across_chunks_and_long_lines_are_cut():
    lines = _Lines()
    for chunk in (b"21.5\r", b"\n22", b".0\r23.0\n", "24,5 °C\n".encode(), b"\xff\n"):
        lines.feed(chunk)
    got = []
    while (line := lines.pop()) is not None:
        got.append(line)
    assert got == ["21.5", "22.0", "23.0", "24,5 °C", "\ufffd"]
    lines.feed(b"9" * (MAX_LINE + 10))
    assert len(lines.pop()) == MAX_LINE
