"""Zero 5xx: generated hostile requests to every route, JSON API, page forms and /oembed (hypothesis).

A small derandomised sample in the default run, on SQLite and PostgreSQL; the benchmark
``tests/benchmarks/test_fuzz.py`` sends at least 10,000. Each failing request is printed so it
can be replayed.
"""

from __future__ import annotations

from typing import Any

from tests.webapp.fuzzing import fuzz


def test_generated_requests_to_every_route_get_no_5xx(app: Any, lab: Any) -> None:
    sent, failures = fuzz(app, lab, 250)
    assert sent >= 200
    assert not failures, "\n".join(failures[:20])


def test_a_student_fuzzing_gets_no_5xx_either(app: Any, lab: Any) -> None:
    sent, failures = fuzz(app, lab, 100, who="a1")
    assert not failures, "\n".join(failures[:20])
