"""Property-based requests against the API's own OpenAPI document (schemathesis).

Every operation of ``/api/openapi.json`` is called with generated paths, queries and bodies,
authenticated as a coordinator (who may do the most), on SQLite and on PostgreSQL (each
database rejects out-of-range numbers in its own way). Checks (schemathesis): every check of a
single call (``ALL_CHECKS``: no 5xx, documented status codes, bodies, content types and headers,
schema-invalid data rejected, auth not ignored, undeclared methods answered 405 with ``Allow``). A bounded, derandomised number of examples per operation
keeps this reproducible and quick.
"""

from __future__ import annotations

import tempfile
from pathlib import Path
from typing import Any

import schemathesis
from hypothesis import HealthCheck, settings
from schemathesis.checks import not_a_server_error
from schemathesis.specs.openapi.checks import (
    content_type_conformance,
    ignored_auth,
    missing_required_header,
    negative_data_rejection,
    response_headers_conformance,
    response_schema_conformance,
    status_code_conformance,
    unsupported_method,
    use_after_free,
)

from webapp import create_app

#: every check schemathesis has for a single call, but positive_data_acceptance: the document is looser
#: than the server (an empty "name", a run file that is valid text but not a valid run), so a
#: schema-valid request may rightly get 400; max_response_time needs a budget (the benchmarks time it)
ALL_CHECKS = [
    not_a_server_error,
    status_code_conformance,
    response_schema_conformance,
    content_type_conformance,
    response_headers_conformance,
    negative_data_rejection,
    ignored_auth,
    missing_required_header,
    unsupported_method,
    use_after_free,
]


def _schema_app() -> Any:
    """Return an app used only to serve the OpenAPI document (no database is touched)."""
    folder = Path(tempfile.mkdtemp(prefix="cupcal-schema-"))
    app = create_app(
        {"TESTING": True, "DATABASE_URL": f"sqlite:///{folder / 'unused.sqlite3'}", "SECRET_KEY": "schema only"}
    )
    app.instance_path = str(folder / "instance")
    return app


schema = schemathesis.openapi.from_wsgi("/api/openapi.json", _schema_app())


@schema.parametrize()
@settings(max_examples=12, deadline=None, derandomize=True, database=None, suppress_health_check=list(HealthCheck))
def test_no_server_errors_and_responses_match_the_document(case: Any, app: Any, lab: Any) -> None:
    case.call_and_validate(app=app, headers=lab.auth("coord"), checks=ALL_CHECKS)


def test_a_series_of_run_ids_beyond_any_id_is_a_clear_400(client: Any, lab: Any) -> None:
    # found by the test above: a huge id reached the database (OverflowError on SQLite, a 500)
    r = client.post("/api/series", headers=lab.auth("coord"), json={"name": "big", "run_ids": [2**70]})
    assert r.status_code == 400 and r.get_json()["field"] == "run_ids"
    r = client.post("/api/series", headers=lab.auth("coord"), json={"name": "zero", "run_ids": [0]})
    assert r.status_code == 400 and r.get_json()["field"] == "run_ids"


def test_ids_beyond_an_integer_column_name_nothing(client: Any, lab: Any) -> None:
    # found by the test above on PostgreSQL: such an id reached the server, which refused it (a 500)
    huge = 66351230932
    for method, path in (
        ("GET", f"/api/runs/{huge}"),
        ("PATCH", f"/api/calorimeters/{huge}"),
        ("GET", f"/runs/{huge}"),
        ("POST", f"/api/runs/{huge}/lock"),
    ):
        r = client.open(path, method=method, headers=lab.auth("coord"), json={})
        assert r.status_code == 404, (method, path, r.status_code)
    r = client.get(f"/api/runs?calorimeter_id={huge}", headers=lab.auth("coord"))
    assert r.status_code == 400 and r.get_json()["field"] == "calorimeter_id"
