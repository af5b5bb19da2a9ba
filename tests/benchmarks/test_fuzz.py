"""Fuzz figure: at least 10,000 generated hostile requests over all routes give no 5xx, and
command-line fuzzing gives no internal error.

Run: .venv/bin/python -m pytest -q -s tests/benchmarks/test_fuzz.py -p no:cacheprovider -o addopts=""
The requests are those of tests/webapp/fuzzing.py, half on SQLite and half on PostgreSQL, as a
coordinator (who may do the most); the answers are counted by status code and printed.
"""

from __future__ import annotations

import time
from collections import Counter
from typing import Any

from tests.calc.cli_fuzzing import fuzz_cli
from tests.webapp.conftest import (
    app,  # noqa: F401  (fixtures: SQLite and PostgreSQL)
    database_url,  # noqa: F401
    lab,  # noqa: F401
    pg_database,  # noqa: F401
    pg_server,  # noqa: F401
    session,  # noqa: F401
    sqlite_template,  # noqa: F401
)
from tests.webapp.fuzzing import fuzz

PER_DATABASE = 5000


def test_ten_thousand_hostile_requests_get_no_5xx(app: Any, lab: Any, database_url: str) -> None:  # noqa: F811
    statuses: Counter[int] = Counter()
    start = time.perf_counter()
    sent, failures = fuzz(app, lab, PER_DATABASE, statuses=statuses)
    took = time.perf_counter() - start
    db = database_url.split(":", 1)[0]
    print(
        f"\nfuzz on {db}: {sent} requests in {took:.0f} s; by status: {dict(sorted(statuses.items()))}; "
        f"5xx: {len(failures)}"
    )
    for f in failures[:20]:
        print("  ", f)
    assert sent >= PER_DATABASE * 0.95
    assert not failures


def test_command_line_fuzzing_gives_no_internal_error() -> None:
    runs, internal = fuzz_cli(2000)
    print(f"\ncommand-line fuzz: {runs} invocations, internal errors: {len(internal)}")
    for f in internal[:20]:
        print("  ", f)
    assert not internal
