"""Zero 5xx: generated hostile requests to every route, JSON API, page forms and /oembed (hypothesis).

A small derandomised sample in the default run, on SQLite and PostgreSQL; the benchmark
``tests/benchmarks/test_fuzz.py`` sends at least 10,000. Each failing request is printed so it
can be replayed.
"""

from __future__ import annotations

from collections import Counter
from typing import Any

from hypothesis import HealthCheck, given, settings

from tests.webapp.conftest import csrf_token, sign_in, upload
from tests.webapp.fuzzing import is_server_error, requests, send, targets


def fuzz(
    app: Any, lab: Any, examples: int, who: str = "coord", statuses: Counter[int] | None = None
) -> tuple[int, list[str]]:
    """Send ``examples`` generated requests as ``who`` (token and signed-in session); return (sent, failures).

    ``statuses`` (when given) counts the answers by status code."""
    client = app.test_client()
    r = upload(client, lab.auth("coord"), "diss-kcl-01", calorimeter_id=lab.calorimeter_id)
    assert r.status_code == 201
    sign_in(client, f"{who}@lab.example")
    token = csrf_token(client.get("/runs/upload").get_data(as_text=True))
    t = targets(app)
    t.ids = [1, 2, r.get_json()["id"]]
    failures: list[str] = []
    sent = [0]

    @settings(
        max_examples=examples, deadline=None, derandomize=True, database=None, suppress_health_check=list(HealthCheck)
    )
    @given(requests(t))
    def one(req: dict[str, Any]) -> None:
        response = send(client, req, lab.auth(who), token)
        sent[0] += 1
        if statuses is not None:
            statuses[response.status_code] += 1
        if is_server_error(response):
            failures.append(
                f"{response.status_code} {req['method']} {req['path']} "
                f"{str(req.get('query_string'))[:200]} {str(req.get('data'))[:300]}"
            )

    one()
    return sent[0], failures


def test_generated_requests_to_every_route_get_no_5xx(app: Any, lab: Any) -> None:
    sent, failures = fuzz(app, lab, 250)
    assert sent >= 200
    assert not failures, "\n".join(failures[:20])


def test_a_student_fuzzing_gets_no_5xx_either(app: Any, lab: Any) -> None:
    sent, failures = fuzz(app, lab, 100, who="a1")
    assert not failures, "\n".join(failures[:20])
