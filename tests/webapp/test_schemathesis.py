"""Property-based requests against the API's own OpenAPI document (schemathesis).

Every operation of ``/api/openapi.json`` is called with generated paths, queries and bodies,
authenticated as a coordinator (who may do the most), on SQLite and on PostgreSQL (each
database rejects out-of-range numbers in its own way). Checks (schemathesis):
no 5xx (``not_a_server_error``), every status code is one the document lists
(``status_code_conformance``) and every documented JSON body matches its schema
(``response_schema_conformance``). A bounded, derandomised number of examples per operation
keeps this reproducible and quick.
"""

from __future__ import annotations

import tempfile
from pathlib import Path
from typing import Any

import pytest
import schemathesis
from hypothesis import HealthCheck, settings
from schemathesis.checks import not_a_server_error
from schemathesis.specs.openapi.checks import (
    response_schema_conformance,
    status_code_conformance,
)

from webapp import create_app


def _schema_app() -> Any:
    """Return an app used only to serve the OpenAPI document (no database is touched)."""
    folder = Path(tempfile.mkdtemp(prefix="cupcal-schema-"))
    app = create_app({"TESTING": True, "DATABASE_URL": f"sqlite:///{folder / 'unused.sqlite3'}",
                      "SECRET_KEY": "schema only"})
    app.instance_path = str(folder / "instance")
    return app


schema = schemathesis.openapi.from_wsgi("/api/openapi.json", _schema_app())


@schema.parametrize()
@settings(max_examples=12, deadline=None, derandomize=True, database=None,
          suppress_health_check=list(HealthCheck))
def test_no_server_errors_and_responses_match_the_document(case: Any, app: Any, lab: Any) -> None:
    case.call_and_validate(app=app, headers=lab.auth("coord"),
                           checks=[not_a_server_error, status_code_conformance, response_schema_conformance])


def test_a_series_of_run_ids_beyond_any_id_is_a_clear_400(client: Any, lab: Any) -> None:
    # found by the test above: a huge id reached the database (OverflowError on SQLite, a 500)
    r = client.post("/api/series", headers=lab.auth("coord"), json={"name": "big", "run_ids": [2**70]})
    assert r.status_code == 400 and r.get_json()["field"] == "run_ids"
    r = client.post("/api/series", headers=lab.auth("coord"), json={"name": "zero", "run_ids": [0]})
    assert r.status_code == 400 and r.get_json()["field"] == "run_ids"


def test_ids_beyond_an_integer_column_name_nothing(client: Any, lab: Any) -> None:
    # found by the test above on PostgreSQL: such an id reached the server, which refused it (a 500)
    huge = 66351230932
    for method, path in (("GET", f"/api/runs/{huge}"), ("PATCH", f"/api/calorimeters/{huge}"),
                         ("GET", f"/runs/{huge}"), ("POST", f"/api/runs/{huge}/lock")):
        r = client.open(path, method=method, headers=lab.auth("coord"), json={})
        assert r.status_code == 404, (method, path, r.status_code)
    r = client.get(f"/api/runs?calorimeter_id={huge}", headers=lab.auth("coord"))
    assert r.status_code == 400 and r.get_json()["field"] == "calorimeter_id"
