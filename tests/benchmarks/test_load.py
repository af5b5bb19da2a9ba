"""``make bench``: the load test of issue 7 (tests/benchmarks/load_test.py) on SQLite, on PostgreSQL, and
the ceiling of the stack (a minimal Flask endpoint).

Full size by default: 16 clients create 2,000 runs and read for at least 120 s on each database
(a few minutes each). ``CUPCAL_LOAD_ARGS="--runs 200 --duration 20"`` gives a quick pass. Nothing
is timed here: a test fails on any error, lost or duplicated run (the script's exit code); the
figures are printed and written to ``bench-results/load-*.json``.
"""

from __future__ import annotations

import os
import shlex

from tests.benchmarks.load_test import main
from tests.webapp.conftest import require_postgres_binaries


def _extra() -> list[str]:
    return shlex.split(os.environ.get("CUPCAL_LOAD_ARGS", ""))


def test_load_sqlite() -> None:
    assert main(["--db", "sqlite", *_extra()]) == 0, "see the errors and problems printed above"


def test_load_postgresql() -> None:
    require_postgres_binaries()
    assert main(["--db", "postgresql", *_extra()]) == 0, "see the errors and problems printed above"


def test_load_ceiling() -> None:
    assert main(["--ceiling", *_extra()]) == 0, "see the errors printed above"
