"""``make bench``: the race figures of issue 12 (tests/benchmarks/race_bench.py), 200 trials each,
under gunicorn with 2 workers, on SQLite and on PostgreSQL. ``CUPCAL_RACE_ARGS="--trials 20"`` gives
a quick pass; the counts are printed and written to ``bench-results/races-*.json``.
"""

from __future__ import annotations

import os
import shlex

from tests.benchmarks.race_bench import main
from tests.webapp.conftest import require_postgres_binaries


def _extra() -> list[str]:
    return shlex.split(os.environ.get("CUPCAL_RACE_ARGS", ""))


def test_races_sqlite() -> None:
    assert main(["--db", "sqlite", *_extra()]) == 0, "see the counts printed above"


def test_races_postgresql() -> None:
    require_postgres_binaries()
    assert main(["--db", "postgresql", *_extra()]) == 0, "see the counts printed above"
