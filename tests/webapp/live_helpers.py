"""Helpers of the live-run tests: a demo run file without its readings key, and its readings as rows."""

from __future__ import annotations

import csv
import io
import re
from typing import Any

from tests.webapp.conftest import demo_files


def live_run_file(name: str = "diss-kcl-01") -> str:
    """Return a demo run file as a recorder sends it: no ``readings`` key (the readings come by the API)."""
    toml, _csv = demo_files(name)
    out = re.sub(r"(?m)^readings = .*\n", "", toml)
    assert out != toml
    return out


def demo_rows(name: str = "diss-kcl-01") -> list[tuple[float, float]]:
    """Return a demo log's (time s, temperature °C) rows."""
    _toml, raw = demo_files(name)
    reader = csv.reader(io.StringIO(raw.decode("utf-8")))
    next(reader)
    return [(float(t), float(c)) for t, c in reader]


def batch(rows: list[tuple[float, float]], start: int, stop: int) -> list[list[Any]]:
    """Return readings ``start`` to ``stop`` (exclusive) as the API takes them: [seq, time_s, temperature_c]."""
    return [[i, rows[i][0], rows[i][1]] for i in range(start, min(stop, len(rows)))]


def start_live(
    client: Any, headers: dict[str, str], key: str = "7f1c2d4e-0000-4000-8000-000000000001", **extra: Any
) -> Any:
    """POST a new live run of the KCl demo and return the response."""
    return client.post(
        "/api/live-runs", json={"run_file": live_run_file(), "client_key": key, **extra}, headers=headers
    )
