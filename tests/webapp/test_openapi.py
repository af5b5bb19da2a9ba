"""The OpenAPI document is valid OpenAPI 3 and documents every API route and method."""

from __future__ import annotations

import re
from typing import Any

from openapi_spec_validator import validate


def _documented(doc: dict[str, Any]) -> set[tuple[str, str]]:
    return {(path, method) for path, ops in doc["paths"].items() for method in ops}


def _routes(app: Any) -> set[tuple[str, str]]:
    out = set()
    for rule in app.url_map.iter_rules():
        if not rule.rule.startswith("/api/"):
            continue
        path = re.sub(r"<(?:[a-z]+:)?([a-z_]+)>", r"{\1}", rule.rule)
        for method in rule.methods - {"HEAD", "OPTIONS"}:
            out.add((path, method.lower()))
    return out


def test_document_is_valid_openapi(client: Any) -> None:
    r = client.get("/api/openapi.json")  # no token needed
    assert r.status_code == 200
    doc = r.get_json()
    assert doc["openapi"].startswith("3.")
    validate(doc)  # openapi-spec-validator, against the OpenAPI 3.1 schema


def test_every_route_is_documented_and_nothing_else(app: Any, client: Any) -> None:
    doc = client.get("/api/openapi.json").get_json()
    assert _routes(app) == _documented(doc)


def test_every_operation_documents_its_errors_and_path_parameters(client: Any) -> None:
    doc = client.get("/api/openapi.json").get_json()
    for path, ops in doc["paths"].items():
        names = set(re.findall(r"{(\w+)}", path))
        for method, op in ops.items():
            assert op["summary"] and op["responses"], (path, method)
            assert names == {p["name"] for p in op.get("parameters", []) if p["in"] == "path"}, (path, method)
            if path != "/api/openapi.json":
                assert "401" in op["responses"], (path, method)
