"""``make bench``: the race figures of issue 12 (tests/benchmarks/race_bench.py), 200 trials each,
under gunicorn with 2 workers, on SQLite and on PostgreSQL. ``CUPCAL_RACE_ARGS="--trials 20"`` gives
a quick pass; the counts are printed and written to ``bench-results/races-*.json``.
"""

from __future__ import annotations

import os
import shlex

import pytest

from tests.benchmarks.race_bench import main
from tests.webapp.postgres import INSTALL_HINT, find_bindir


def _extra() -> list[str]:
    return shlex.split(os.environ.get("CUPCAL_RACE_ARGS", ""))


def test_races_sqlite() -> None:
    assert main(["--db", "sqlite", *_extra()]) == 0, "see the counts printed above"


def test_races_postgresql() -> None:
    if find_bindir() is None:
        if os.environ.get("CUPCAL_REQUIRE_POSTGRES") == "1":
            pytest.fail(f"CUPCAL_REQUIRE_POSTGRES=1 but: {INSTALL_HINT}")
        pytest.skip(INSTALL_HINT)
    assert main(["--db", "postgresql", *_extra()]) == 0, "see the counts printed above"
