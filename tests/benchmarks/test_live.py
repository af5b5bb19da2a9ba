"""``make bench``: live runs (issue 15), tests/benchmarks/live_bench.py.

(a) one live run at 1 reading/s, its live page's event stream open: the latency from POST to the
stream, median and p95 (target: p95 ≤ 1 s); (b) 30 live runs at once at 1 reading/s each, the room
view open, on gunicorn with 2 workers: no reading lost, p95 ≤ 2 s, and the server's CPU; (c) as (a), but
the readings go to one gunicorn and the page's stream is read from a second one on the same database
(p95 ≤ 2 s; tests/webapp/test_live_two_servers.py checks every reading and the order). Each on
SQLite and on PostgreSQL. Nothing is timed here: a test fails when the script finds a problem; the
figures are printed and written to ``bench-results/live-*.json``. ``CUPCAL_LIVE_ARGS="--duration 20"``
gives a quick pass (default: 60 s for (a), 120 s for (b)).
"""

from __future__ import annotations

import os
import shlex

import pytest

from tests.benchmarks.live_bench import main
from tests.webapp.conftest import require_postgres_binaries


def _extra() -> list[str]:
    return shlex.split(os.environ.get("CUPCAL_LIVE_ARGS", ""))


def _needs_postgres(db: str) -> None:
    if db == "postgresql":
        require_postgres_binaries()


@pytest.mark.parametrize("db", ["sqlite", "postgresql"])
def test_live_page_latency(db: str) -> None:
    _needs_postgres(db)
    assert main(["--db", db, "--runs", "1", "--page", "--duration", "60", *_extra()]) == 0, "see the problems above"


@pytest.mark.parametrize("db", ["postgresql", "sqlite"])
def test_thirty_live_runs_with_the_room_view(db: str) -> None:
    _needs_postgres(db)
    # each run holds 400 readings (6.7 min of a log at 1/s) first: the advisor's cost grows with the log
    assert main(["--db", db, "--runs", "30", "--duration", "120", "--preload", "400", *_extra()]) == 0, (
        "see the problems above"
    )


@pytest.mark.parametrize("db", ["sqlite", "postgresql"])
def test_live_page_latency_across_two_servers(db: str) -> None:
    _needs_postgres(db)
    assert main(["--db", db, "--runs", "1", "--page", "--servers", "2", "--duration", "60", *_extra()]) == 0, (
        "see the problems above"
    )
