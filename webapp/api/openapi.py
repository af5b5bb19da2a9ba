"""The OpenAPI 3.1 document of the API, maintained by hand.

A test checks that every route under ``/api/`` is documented here with its methods,
and that the document is valid OpenAPI (openapi-spec-validator).
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from flask import jsonify

from calc import __version__
from calc.io.runfile import CALORIMETER_TYPES
from webapp.api.blueprint import bp


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


def register(paths: Mapping[str, Any] | None = None, schemas: Mapping[str, Any] | None = None) -> None:
    """Add another API module's paths and component schemas to the document (at its import).

    :raise ValueError: for a path or schema that is documented already (a second entry would hide the first)
    """
    for table, new in ((PATHS, paths or {}), (SCHEMAS, schemas or {})):
        if twice := sorted(set(table) & set(new)):
            raise ValueError(f"OpenAPI entries documented twice: {', '.join(twice)}")
        table.update(new)


_IF_MATCH = {"name": "If-Match", "in": "header", "required": False, "schema": {"type": "string"},
             "description": "the ETag (version) the change is based on, e.g. \"3\""}

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
              "properties": {"error": {"type": "string"}, "field": {"type": "string"},
                             "current": {"type": "object", "description": "with a stale write (409): the state "
                                                                          "stored now, by entity"}}},
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
        "run_id": {"type": ["integer", "null"]}, "note": {"type": "string"},
        "measured_on": {"type": "string", "format": "date", "description": "the date it was measured"},
        "status": {"type": "string", "enum": ["approved", "proposed", "withdrawn"]},
        "approved_by": _ref("Ref"), "approved_at": {"type": ["string", "null"], "format": "date-time"},
        "withdrawn_at": {"type": ["string", "null"], "format": "date-time"},
        "withdrawn_reason": {"type": ["string", "null"]},
        "in_force_since": {"type": ["string", "null"], "format": "date-time"}, "restart": {"type": "boolean"},
        "pool": {"type": ["object", "null"], "description": "a pooled value: members, excluded, chi2, dof, birge, "
                                                            "limit (see the notebook guide)"}}},
    "Calorimeter": {"type": "object", "properties": {
        "id": {"type": "integer"}, "name": {"type": "string"}, "parts": {"type": "string"},
        "location": {"type": "string"}, "created_at": {"type": "string", "format": "date-time"},
        "vessel_type": {"type": "string", "enum": list(CALORIMETER_TYPES)},
        "calibration_interval_days": {"type": ["integer", "null"]},
        "version": {"type": "integer", "description": "the ETag; send it as If-Match to change the calorimeter"},
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
        "checks": {"type": ["array", "null"], "description": "plausibility checks (null: analyzed before they existed)",
                   "items": {"type": "object", "properties": {
                       "code": {"type": "string"}, "severity": {"type": "string", "enum": ["info", "warning"]},
                       "message": {"type": "string"}, "value": {"type": ["number", "null"]}}}},
        "comparison": {"type": ["object", "null"]}, "verdict": {"type": ["object", "null"]},
        "cautions": {"type": "array", "items": {"type": "object"}},
        "construction": {"type": "object"}, "properties": {"type": "object"},
        "monte_carlo": {"type": ["object", "null"]}, "record": {"type": "object"},
        "software_version": {"type": "string"}, "created_by": _ref("Ref")}}]},
    "RunSummary": {"type": "object", "properties": {
        "id": {"type": "integer"}, "kind": {"type": "string"}, "title": {"type": "string"},
        "operator": {"type": "string"}, "author": _ref("Ref"), "group": _ref("Ref"), "bench": {"type": "string"},
        "performed_on": {"type": "string"}, "created_at": {"type": "string", "format": "date-time"},
        "calorimeter": _ref("Ref"), "points": {"type": "integer"}, "locked": {"type": "boolean"},
        "version": {"type": "integer", "description": "the ETag; send it as If-Match to change the run"},
        "current_result": {"oneOf": [_ref("ResultSummary"), {"type": "null"}]}, "url": {"type": "string"}}},
    "Run": {"allOf": [_ref("RunSummary"), {"type": "object", "properties": {
        "notes": {"type": "string"}, "run_file_name": {"type": "string"}, "readings_name": {"type": "string"},
        "calibration": {"oneOf": [_ref("Calibration"), {"type": "null"}]}, "locked_by": _ref("Ref"),
        "locked_at": {"type": ["string", "null"], "format": "date-time"},
        "locked_result_id": {"type": ["integer", "null"], "description": "the result the lock signed"},
        "locked_hash": {"type": ["string", "null"], "description": "SHA-256 of what the lock signed"},
        "inputs": {"type": "array", "items": {"type": "object"}},
        "results": {"type": "array", "items": _ref("ResultSummary")},
        "review": {"type": "object", "description": "withdrawn, excluded, accepted (with reasons), a mark set by hand"}}}]},
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
        "post": _op("Record and analyze a run from its run file and readings", _json(_ref("Run"), "The new run"),
                    400, 401, 403, 409, 413, body=_UPLOAD, status="201"),
    },
    "/api/runs/{run_id}": {
        "get": _op("A run with its inputs and results", _json(_ref("Run"), "The run"), 401, 404, params=_RUN_ID),
        "patch": _op("Change a run's details (audited). Say which version you change: If-Match with the ETag "
                     "(or `version` in the body; If-Match: * overwrites on purpose). A stale version gets 409 "
                     "with `current`; none at all gets 428",
                     _json(_ref("Run"), "The run"), 400, 401, 403, 404, 409, 428,
                     params=_RUN_ID + [_IF_MATCH], body=_body({k: {"type": "string"} for k in
                                                               ("title", "operator", "bench", "performed_on", "notes")}
                                                              | {"group_id": {"type": ["integer", "null"]},
                                                                 "version": {"type": "integer"}})),
    },
    "/api/runs/{run_id}/analyses": {
        "post": _op("Analyze again (the old result is kept); with If-Match (or `version`) only that version",
                    _json(_ref("Result"), "The new result"),
                    400, 401, 403, 404, 409, params=_RUN_ID + [_IF_MATCH], status="201",
                    body={"required": False, "content": {"application/json": {"schema": {
                        "type": "object", "properties": {**_OPTIONS_PROPS, "version": {"type": "integer"}}}}}}),
    },
    "/api/runs/{run_id}/results": {
        "get": _op("A run's results, oldest first", _json(_list_of(_ref("ResultSummary")), "Results"),
                   401, 404, params=_RUN_ID)},
    "/api/runs/{run_id}/lock": {
        "post": _op("Lock (sign) a run: its author or a coordinator. The answer names the result and the content "
                    "hash it signed; with If-Match (or `version`) only that version is signed (409 otherwise)",
                    _json(_ref("Run"), "The locked run"), 400, 401, 403, 404, 409, params=_RUN_ID + [_IF_MATCH],
                    body={"required": False, "content": {"application/json": {"schema": {
                        "type": "object", "properties": {"version": {"type": "integer"}}}}}})},
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
                        "vessel_type": {"type": "string", "enum": list(CALORIMETER_TYPES)},
                        "heat_capacity": {"type": "string", "description": "e.g. \"18.6 ± 2.0 J/K\" (u standard)"}},
                        ["name"])),
    },
    "/api/calorimeters/{calorimeter_id}": {
        "get": _op("A calorimeter with its heat-capacity history", _json(_ref("Calorimeter"), "The calorimeter"),
                   401, 404, params=_CAL_ID),
        "patch": _op("Change name, parts, location or calibration interval in days, null for the notebook's "
                     "default (coordinators; audited). Needs If-Match or `version` as a run's PATCH does",
                     _json(_ref("Calorimeter"), "The calorimeter"), 400, 401, 403, 404, 409, 428,
                     params=_CAL_ID + [_IF_MATCH],
                     body=_body({**{k: {"type": "string"} for k in ("name", "parts", "location")},
                                 "vessel_type": {"type": "string", "enum": list(CALORIMETER_TYPES)},
                                 "calibration_interval_days": {"type": ["integer", "null"], "minimum": 1,
                                                               "maximum": 3650},
                                 "version": {"type": "integer"}})),
    },
    "/api/calorimeters/{calorimeter_id}/calibrations": {
        "get": _op("A calorimeter's heat-capacity history", _json(_list_of(_ref("Calibration")), "History"),
                   401, 404, params=_CAL_ID),
        "post": _op("Record a heat capacity measured elsewhere, with its date (technicians, coordinators). "
                    "A value more than k·u from the value in force needs `confirm: true` (409 otherwise); "
                    "`restart: true` says the cup itself changed",
                    _json(_ref("Calibration"), "The new value"), 400, 401, 403, 404, 409, params=_CAL_ID,
                    status="201",
                    body=_body({"heat_capacity": {"type": "string"}, "measured_on": {"type": "string", "format": "date"},
                                "note": {"type": "string"}, "confirm": {"type": "boolean"},
                                "restart": {"type": "boolean"}}, ["heat_capacity", "measured_on"])),
    },
    "/api/calibrations/{calibration_id}/approve": {
        "post": _op("Approve a proposed calibration (technicians, coordinators): it joins the value in force",
                    _json(_ref("Calibration"), "The calibration"), 400, 401, 403, 404, 409, params=[_id("calibration_id")],
                    body={"required": False, "content": {"application/json": {"schema": {
                        "type": "object", "properties": {"confirm": {"type": "boolean"},
                                                         "restart": {"type": "boolean"}}}}}})},
    "/api/calibrations/{calibration_id}/withdraw": {
        "post": _op("Withdraw a calibration with a reason (technicians, coordinators); lists the runs that used it",
                    _json({"allOf": [_ref("Calibration"), {"type": "object", "properties": {
                        "runs_using": {"type": "array", "items": {"type": "integer"}}}}]}, "The calibration"),
                    400, 401, 403, 404, 409, params=[_id("calibration_id")],
                    body=_body({"reason": {"type": "string"}}, ["reason"]))},
    "/api/calibrations/{calibration_id}/runs": {
        "get": _op("The runs whose C_cal came from this calibration or a pooled value that held it",
                   _json(_list_of({"type": "object"}), "Runs"), 401, 404, params=[_id("calibration_id")])},
    "/api/calibrations/{calibration_id}/reanalyze-runs": {
        "post": _op("Re-analyze, with the value in force, every unsigned run that used this calibration",
                    _json({"type": "object", "properties": {
                        "calibration": {"oneOf": [_ref("Calibration"), {"type": "null"}]},
                        "reanalyzed": {"type": "array", "items": {"type": "integer"}},
                        "locked": {"type": "array", "items": {"type": "integer"}},
                        "failed": {"type": "array", "items": {"type": "object"}}}}, "What was done"),
                    400, 401, 403, 404, params=[_id("calibration_id")])},
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
             409: "Exists already, the run is locked, or changed since the version you sent (`current` holds it "
                  "now), or a large change needs `confirm`", 413: "Upload too large",
             428: "A write that must name the version it changes (If-Match or `version`) did not"}
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


#: the builders of entries, public for the API modules that :func:`register` their own
schema_ref, json_response, path_param, operation, request_body, list_of = _ref, _json, _id, _op, _body, _list_of
