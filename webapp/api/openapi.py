"""The OpenAPI 3.1 document of the API, maintained by hand.

A test checks that every route under ``/api/`` is documented here with its methods,
and that the document is valid OpenAPI (openapi-spec-validator).
"""

from __future__ import annotations

from typing import Any

from calc import __version__
from flask import jsonify

from webapp.api import bp


def _ref(name: str) -> dict[str, str]:
    return {"$ref": f"#/components/schemas/{name}"}


def _json(schema: dict[str, Any], description: str) -> dict[str, Any]:
    return {"description": description, "content": {"application/json": {"schema": schema}}}


def _errors(*codes: int) -> dict[str, Any]:
    return {str(c): {"$ref": f"#/components/responses/E{c}"} for c in codes}


def _id(name: str) -> dict[str, Any]:
    return {"name": name, "in": "path", "required": True, "schema": {"type": "integer"}}


def _op(summary: str, ok: dict[str, Any], *codes: int, params: list[dict[str, Any]] | None = None,
        body: dict[str, Any] | None = None, status: str = "200", public: bool = False) -> dict[str, Any]:
    op: dict[str, Any] = {"summary": summary, "responses": {status: ok, **_errors(*codes)}}
    if params:
        op["parameters"] = params
    if body:
        op["requestBody"] = body
    if public:
        op["security"] = []
    return op


_PAGE_PARAMS = [
    {"name": "page", "in": "query", "schema": {"type": "integer", "minimum": 1}},
    {"name": "per_page", "in": "query", "schema": {"type": "integer", "minimum": 1}},
]

_OPTIONS_PROPS: dict[str, Any] = {
    "method": {"type": "string", "description": "corrected-ΔT method (see /api/methods)"},
    "fore": {"type": "array", "items": {"type": "number"}, "minItems": 2, "maxItems": 2,
             "description": "fore period [start, end] in s"},
    "after": {"type": "array", "items": {"type": "number"}, "minItems": 2, "maxItems": 2,
              "description": "after period [start, end] in s"},
    "monte_carlo": {"type": "integer", "minimum": 0, "description": "Monte Carlo trials (JCGM 101); 0: none"},
    "seed": {"type": "integer", "minimum": 0},
    "mixing_time": {"oneOf": [{"type": "number"},
                              {"type": "array", "items": {"type": "number"}, "minItems": 2, "maxItems": 2}],
                    "description": "mixing time in s, or [value, standard uncertainty] (default uncertainty 1 s); "
                                   "overrides the run file's, and is not detected from the log"},
}

_QTY = {"type": "object", "properties": {"value": {"type": ["number", "null"]},
                                         "standard_uncertainty": {"type": ["number", "null"]},
                                         "unit": {"type": "string"}}}

SCHEMAS: dict[str, Any] = {
    "Error": {"type": "object", "required": ["error"],
              "properties": {"error": {"type": "string"}, "field": {"type": "string"}}},
    "Quantity": _QTY,
    "Ref": {"type": ["object", "null"], "properties": {"id": {"type": "integer"}, "name": {"type": "string"}}},
    "Person": {"type": "object", "properties": {"id": {"type": "integer"}, "name": {"type": "string"},
                                                "email": {"type": "string"}, "role": {"type": "string"},
                                                "group": _ref("Ref")}},
    "Group": {"type": "object", "properties": {"id": {"type": "integer"}, "name": {"type": "string"},
                                               "course_id": {"type": ["integer", "null"]}}},
    "Course": {"type": "object", "properties": {"id": {"type": "integer"}, "name": {"type": "string"},
                                                "term": {"type": "string"}}},
    "Calibration": {"type": "object", "properties": {
        "id": {"type": "integer"}, "calorimeter_id": {"type": "integer"}, "heat_capacity": _ref("Quantity"),
        "taken_at": {"type": "string", "format": "date-time"}, "result_id": {"type": ["integer", "null"]},
        "run_id": {"type": ["integer", "null"]}, "note": {"type": "string"}}},
    "Calorimeter": {"type": "object", "properties": {
        "id": {"type": "integer"}, "name": {"type": "string"}, "parts": {"type": "string"},
        "location": {"type": "string"}, "created_at": {"type": "string", "format": "date-time"},
        "calibration_interval_days": {"type": ["integer", "null"]},
        "current_calibration": {"oneOf": [_ref("Calibration"), {"type": "null"}]},
        "calibrations": {"type": "array", "items": _ref("Calibration")}}},
    "ResultSummary": {"type": "object", "properties": {
        "id": {"type": "integer"}, "run_id": {"type": "integer"}, "is_current": {"type": "boolean"},
        "method": {"type": "string"}, "main": {"type": "string"}, "value": {"type": "number"},
        "standard_uncertainty": {"type": "number"}, "expanded_uncertainty": {"type": "number"},
        "coverage_factor": {"type": "number"}, "unit": {"type": "string"},
        "created_at": {"type": "string", "format": "date-time"}}},
    "Result": {"allOf": [_ref("ResultSummary"), {"type": "object", "properties": {
        "outputs": {"type": "object", "additionalProperties": _ref("Quantity")},
        "dof_eff": {"type": ["number", "null"]},
        "periods": {"type": "object"}, "budget": {"type": "array", "items": {"type": "object"}},
        "warnings": {"type": "array", "items": {"type": "string"}},
        "comparison": {"type": ["object", "null"]}, "cautions": {"type": "array", "items": {"type": "object"}},
        "construction": {"type": "object"}, "properties": {"type": "object"},
        "monte_carlo": {"type": ["object", "null"]}, "record": {"type": "object"},
        "software_version": {"type": "string"}, "created_by": _ref("Ref")}}]},
    "RunSummary": {"type": "object", "properties": {
        "id": {"type": "integer"}, "kind": {"type": "string"}, "title": {"type": "string"},
        "operator": {"type": "string"}, "author": _ref("Ref"), "group": _ref("Ref"), "bench": {"type": "string"},
        "performed_on": {"type": "string"}, "created_at": {"type": "string", "format": "date-time"},
        "calorimeter": _ref("Ref"), "points": {"type": "integer"}, "locked": {"type": "boolean"},
        "current_result": {"oneOf": [_ref("ResultSummary"), {"type": "null"}]}, "url": {"type": "string"}}},
    "Run": {"allOf": [_ref("RunSummary"), {"type": "object", "properties": {
        "notes": {"type": "string"}, "run_file_name": {"type": "string"}, "readings_name": {"type": "string"},
        "calibration": {"oneOf": [_ref("Calibration"), {"type": "null"}]}, "locked_by": _ref("Ref"),
        "locked_at": {"type": ["string", "null"], "format": "date-time"},
        "inputs": {"type": "array", "items": {"type": "object"}},
        "results": {"type": "array", "items": _ref("ResultSummary")}}}]},
    "AuditEntry": {"type": "object", "properties": {
        "id": {"type": "integer"}, "at": {"type": "string", "format": "date-time"},
        "person": {"type": ["string", "null"]}, "entity": {"type": "string"}, "entity_id": {"type": "integer"},
        "field": {"type": "string"}, "old": {"type": ["string", "null"]}, "new": {"type": ["string", "null"]}}},
}


def _page_of(name: str) -> dict[str, Any]:
    return {"type": "object", "properties": {"items": {"type": "array", "items": _ref(name)},
                                             "page": {"type": "integer"}, "per_page": {"type": "integer"},
                                             "total": {"type": "integer"}, "pages": {"type": "integer"}}}


def _list_of(schema: dict[str, Any]) -> dict[str, Any]:
    return {"type": "object", "properties": {"items": {"type": "array", "items": schema}}}


def _body(props: dict[str, Any], required: list[str] | None = None) -> dict[str, Any]:
    schema: dict[str, Any] = {"type": "object", "properties": props}
    if required:
        schema["required"] = required
    return {"required": True, "content": {"application/json": {"schema": schema}}}


_RUN_ID = [_id("run_id")]
_CAL_ID = [_id("calorimeter_id")]
_UPLOAD = {"required": True, "content": {
    "multipart/form-data": {"schema": {"type": "object", "required": ["run_file", "readings"], "properties": {
        "run_file": {"type": "string", "format": "binary", "description": "the run file (TOML), as for the CLI"},
        "readings": {"type": "string", "format": "binary", "description": "the readings (CSV)"},
        "calorimeter_id": {"type": "integer"}, "group_id": {"type": "integer"},
        "method": {"type": "string"}, "fore_start": {"type": "number"}, "fore_end": {"type": "number"},
        "after_start": {"type": "number"}, "after_end": {"type": "number"},
        "monte_carlo": {"type": "integer"}, "seed": {"type": "integer"}}}},
    "application/json": {"schema": {"type": "object", "required": ["run_toml", "readings_csv"], "properties": {
        "run_toml": {"type": "string"}, "run_file_name": {"type": "string"}, "readings_csv": {"type": "string"},
        "readings_name": {"type": "string"}, "calorimeter_id": {"type": "integer"}, "group_id": {"type": "integer"},
        **_OPTIONS_PROPS}}},
}}

PATHS: dict[str, Any] = {
    "/api/openapi.json": {"get": _op("This document", {"description": "OpenAPI 3.1 document"}, public=True)},
    "/api/me": {"get": _op("Who is calling", _json(_ref("Person"), "The caller"), 401)},
    "/api/methods": {"get": _op("Corrected-ΔT methods", _json(_list_of({"type": "object"}), "Methods"), 401)},
    "/api/runs": {
        "get": _op("List the runs you may see, newest first", _json(_page_of("RunSummary"), "A page of runs"),
                   400, 401, params=_PAGE_PARAMS + [
                       {"name": "kind", "in": "query", "schema": {"type": "string"}},
                       {"name": "calorimeter_id", "in": "query", "schema": {"type": "integer"}},
                       {"name": "group_id", "in": "query", "schema": {"type": "integer"}}]),
        "post": _op("Record and analyse a run from its run file and readings", _json(_ref("Run"), "The new run"),
                    400, 401, 403, 409, 413, body=_UPLOAD, status="201"),
    },
    "/api/runs/{run_id}": {
        "get": _op("A run with its inputs and results", _json(_ref("Run"), "The run"), 401, 404, params=_RUN_ID),
        "patch": _op("Change a run's details (audited)", _json(_ref("Run"), "The run"), 400, 401, 403, 404, 409,
                     params=_RUN_ID, body=_body({k: {"type": "string"} for k in
                                                 ("title", "operator", "bench", "performed_on", "notes")}
                                                | {"group_id": {"type": ["integer", "null"]}})),
    },
    "/api/runs/{run_id}/analyses": {
        "post": _op("Analyse again (the old result is kept)", _json(_ref("Result"), "The new result"),
                    400, 401, 403, 404, 409, params=_RUN_ID, status="201",
                    body={"required": False, "content": {"application/json": {"schema": {
                        "type": "object", "properties": _OPTIONS_PROPS}}}}),
    },
    "/api/runs/{run_id}/results": {
        "get": _op("A run's results, oldest first", _json(_list_of(_ref("ResultSummary")), "Results"),
                   401, 404, params=_RUN_ID)},
    "/api/runs/{run_id}/lock": {
        "post": _op("Lock (sign) a run: its author or a coordinator", _json(_ref("Run"), "The locked run"),
                    401, 403, 404, 409, params=_RUN_ID)},
    "/api/runs/{run_id}/audit": {
        "get": _op("The changes made to a run", _json(_list_of(_ref("AuditEntry")), "Audit entries"),
                   401, 404, params=_RUN_ID)},
    "/api/runs/{run_id}/series": {
        "get": _op("The parsed readings", _json({"type": "object", "properties": {
            "time_s": {"type": "array", "items": {"type": "number"}},
            "temperature_K": {"type": "array", "items": {"type": "number"}}}}, "Series"), 401, 404,
            params=_RUN_ID)},
    "/api/runs/{run_id}/files/{which}": {
        "get": _op("The run file or the readings exactly as uploaded",
                   {"description": "The file", "content": {"application/toml": {"schema": {"type": "string"}},
                                                            "text/csv": {"schema": {"type": "string"}}}},
                   400, 401, 404, params=_RUN_ID + [{"name": "which", "in": "path", "required": True,
                                                     "schema": {"type": "string", "enum": ["run-file", "readings"]}}])},
    "/api/results/{result_id}": {
        "get": _op("A result with every output, budget and provenance", _json(_ref("Result"), "The result"),
                   401, 404, params=[_id("result_id")])},
    "/api/calorimeters": {
        "get": _op("List the calorimeters", _json(_page_of("Calorimeter"), "A page of calorimeters"), 400, 401,
                   params=_PAGE_PARAMS),
        "post": _op("Add a calorimeter (coordinators)", _json(_ref("Calorimeter"), "The new calorimeter"),
                    400, 401, 403, 409, status="201", body=_body({
                        "name": {"type": "string"}, "parts": {"type": "string"}, "location": {"type": "string"},
                        "heat_capacity": {"type": "string", "description": "e.g. \"18.6 ± 2.0 J/K\" (u standard)"}},
                        ["name"])),
    },
    "/api/calorimeters/{calorimeter_id}": {
        "get": _op("A calorimeter with its heat-capacity history", _json(_ref("Calorimeter"), "The calorimeter"),
                   401, 404, params=_CAL_ID),
        "patch": _op("Change name, parts, location or calibration interval in days, null for the notebook's "
                     "default (coordinators; audited)",
                     _json(_ref("Calorimeter"), "The calorimeter"), 400, 401, 403, 404, 409, params=_CAL_ID,
                     body=_body({**{k: {"type": "string"} for k in ("name", "parts", "location")},
                                 "calibration_interval_days": {"type": ["integer", "null"], "minimum": 1,
                                                               "maximum": 3650}})),
    },
    "/api/calorimeters/{calorimeter_id}/calibrations": {
        "get": _op("A calorimeter's heat-capacity history", _json(_list_of(_ref("Calibration")), "History"),
                   401, 404, params=_CAL_ID),
        "post": _op("Enter a heat capacity measured elsewhere (coordinators)",
                    _json(_ref("Calibration"), "The new value"), 400, 401, 403, 404, params=_CAL_ID, status="201",
                    body=_body({"heat_capacity": {"type": "string"}, "note": {"type": "string"}}, ["heat_capacity"])),
    },
    "/api/groups": {
        "get": _op("List the groups", _json(_list_of(_ref("Group")), "Groups"), 401),
        "post": _op("Add a group (coordinators)", _json(_ref("Group"), "The new group"), 400, 401, 403, 409,
                    status="201", body=_body({"name": {"type": "string"}, "course_id": {"type": "integer"}}, ["name"])),
    },
    "/api/courses": {
        "get": _op("List the courses", _json(_list_of(_ref("Course")), "Courses"), 401),
        "post": _op("Add a course (coordinators)", _json(_ref("Course"), "The new course"), 400, 401, 403, 409,
                    status="201", body=_body({"name": {"type": "string"}, "term": {"type": "string"}}, ["name"])),
    },
}


def document() -> dict[str, Any]:
    """Return the OpenAPI document."""
    error = {"description": "", "content": {"application/json": {"schema": _ref("Error")}}}
    texts = {400: "Bad input; the message names the field", 401: "No valid token (or session, for reads)",
             403: "Not allowed for your role", 404: "Not found, or not yours to see",
             409: "Exists already, or the run is locked", 413: "Upload too large"}
    return {
        "openapi": "3.1.0",
        "info": {"title": "cupcal notebook API", "version": __version__,
                 "description": "Runs, results and calorimeters of the cupcal notebook. Send "
                                "`Authorization: Bearer <token>`; tokens are made on the API tokens page."},
        "servers": [{"url": "/"}],
        "security": [{"bearer": []}],
        "paths": PATHS,
        "components": {
            "schemas": SCHEMAS,
            "securitySchemes": {"bearer": {"type": "http", "scheme": "bearer"}},
            "responses": {f"E{c}": {**error, "description": t} for c, t in texts.items()},
        },
    }


@bp.get("/openapi.json")
def openapi():  # type: ignore[no-untyped-def]
    """Return the OpenAPI document (no token needed)."""
    return jsonify(document())
