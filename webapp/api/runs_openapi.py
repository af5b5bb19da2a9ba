"""The API document's entries for runs and results: their schemas and their paths."""

from __future__ import annotations

from typing import Any

from webapp.api.openapi_build import IF_MATCH as _IF_MATCH
from webapp.api.openapi_build import OPTIONS_PROPS as _OPTIONS_PROPS
from webapp.api.openapi_build import PAGE_PARAMS as _PAGE_PARAMS
from webapp.api.openapi_build import json_response as _json
from webapp.api.openapi_build import list_of as _list_of
from webapp.api.openapi_build import operation as _op
from webapp.api.openapi_build import page_of as _page_of
from webapp.api.openapi_build import path_param as _id
from webapp.api.openapi_build import read as _read
from webapp.api.openapi_build import request_body as _body
from webapp.api.openapi_build import schema_ref as _ref

RUN_SCHEMAS: dict[str, Any] = {
    "ResultSummary": {
        "type": "object",
        "properties": {
            "id": {"type": "integer"},
            "run_id": {"type": "integer"},
            "is_current": {"type": "boolean"},
            "method": {"type": "string"},
            "main": {"type": "string"},
            "value": {"type": "number"},
            "standard_uncertainty": {"type": "number"},
            "expanded_uncertainty": {"type": "number"},
            "coverage_factor": {"type": "number"},
            "unit": {"type": "string"},
            "created_at": {"type": "string", "format": "date-time"},
        },
    },
    "Result": {
        "allOf": [
            _ref("ResultSummary"),
            {
                "type": "object",
                "properties": {
                    "outputs": {"type": "object", "additionalProperties": _ref("Quantity")},
                    "dof_eff": {"type": ["number", "null"]},
                    "periods": {"type": "object"},
                    "budget": {"type": "array", "items": {"type": "object"}},
                    "warnings": {"type": "array", "items": {"type": "string"}},
                    "checks": {
                        "type": ["array", "null"],
                        "description": "plausibility checks (null: analyzed before they existed)",
                        "items": {
                            "type": "object",
                            "properties": {
                                "code": {"type": "string"},
                                "severity": {"type": "string", "enum": ["info", "warning"]},
                                "message": {"type": "string"},
                                "value": {"type": ["number", "null"]},
                            },
                        },
                    },
                    "comparison": {"type": ["object", "null"]},
                    "verdict": {"type": ["object", "null"]},
                    "cautions": {"type": "array", "items": {"type": "object"}},
                    "construction": {"type": "object"},
                    "properties": {"type": "object"},
                    "monte_carlo": {"type": ["object", "null"]},
                    "record": {"type": "object"},
                    "software_version": {"type": "string"},
                    "created_by": _ref("Ref"),
                },
            },
        ]
    },
    "RunSummary": {
        "type": "object",
        "properties": {
            "id": {"type": "integer"},
            "kind": {"type": "string"},
            "title": {"type": "string"},
            "operator": {"type": "string"},
            "author": _ref("Ref"),
            "group": _ref("Ref"),
            "bench": {"type": "string"},
            "performed_on": {"type": "string"},
            "created_at": {"type": "string", "format": "date-time"},
            "calorimeter": _ref("Ref"),
            "points": {"type": "integer"},
            "locked": {"type": "boolean"},
            "version": {"type": "integer", "description": "the ETag; send it as If-Match to change the run"},
            "current_result": {"oneOf": [_ref("ResultSummary"), {"type": "null"}]},
            "url": {"type": "string"},
        },
    },
    "Run": {
        "allOf": [
            _ref("RunSummary"),
            {
                "type": "object",
                "properties": {
                    "notes": {"type": "string"},
                    "run_file_name": {"type": "string"},
                    "readings_name": {"type": "string"},
                    "calibration": {"oneOf": [_ref("Calibration"), {"type": "null"}]},
                    "locked_by": _ref("Ref"),
                    "locked_at": {"type": ["string", "null"], "format": "date-time"},
                    "locked_result_id": {"type": ["integer", "null"], "description": "the result the lock signed"},
                    "locked_hash": {"type": ["string", "null"], "description": "SHA-256 of what the lock signed"},
                    "inputs": {"type": "array", "items": {"type": "object"}},
                    "results": {"type": "array", "items": _ref("ResultSummary")},
                    "review": {
                        "type": "object",
                        "description": "withdrawn, excluded, accepted (with reasons), a mark set by hand",
                    },
                },
            },
        ]
    },
    "AuditEntry": {
        "type": "object",
        "properties": {
            "id": {"type": "integer"},
            "at": {"type": "string", "format": "date-time"},
            "person": {"type": ["string", "null"]},
            "entity": {"type": "string"},
            "entity_id": {"type": "integer"},
            "field": {"type": "string"},
            "old": {"type": ["string", "null"]},
            "new": {"type": ["string", "null"]},
        },
    },
}

_RUN_ID = [_id("run_id")]
_UPLOAD = {
    "required": True,
    "content": {
        "multipart/form-data": {
            "schema": {
                "type": "object",
                "required": ["run_file", "readings"],
                "properties": {
                    "run_file": {
                        "type": "string",
                        "format": "binary",
                        "description": "the run file (TOML), as for the CLI",
                    },
                    "readings": {"type": "string", "format": "binary", "description": "the readings (CSV)"},
                    "calorimeter_id": {"type": "integer"},
                    "group_id": {"type": "integer"},
                    "method": {"type": "string"},
                    "fore_start": {"type": "number"},
                    "fore_end": {"type": "number"},
                    "after_start": {"type": "number"},
                    "after_end": {"type": "number"},
                    "monte_carlo": {"type": "integer"},
                    "seed": {"type": "integer"},
                },
            }
        },
        "application/json": {
            "schema": {
                "type": "object",
                "required": ["run_toml", "readings_csv"],
                "properties": {
                    "run_toml": {"type": "string"},
                    "run_file_name": {"type": "string"},
                    "readings_csv": {"type": "string"},
                    "readings_name": {"type": "string"},
                    "calorimeter_id": {"type": "integer"},
                    "group_id": {"type": "integer"},
                    **_OPTIONS_PROPS,
                },
            }
        },
    },
}

RUN_PATHS: dict[str, Any] = {
    "/api/runs": {
        "get": _op(
            "List the runs you may see, newest first",
            _json(_page_of("RunSummary"), "A page of runs"),
            (400, 401),
            params=_PAGE_PARAMS
            + [
                {"name": "kind", "in": "query", "schema": {"type": "string"}},
                {"name": "calorimeter_id", "in": "query", "schema": {"type": "integer"}},
                {"name": "group_id", "in": "query", "schema": {"type": "integer"}},
            ],
        ),
        "post": _op(
            "Record and analyze a run from its run file and readings",
            _json(_ref("Run"), "The new run"),
            (400, 401, 403, 409, 413),
            body=_UPLOAD,
            status="201",
        ),
    },
    "/api/runs/{run_id}": {
        "get": _read("A run with its inputs and results", _ref("Run"), "The run", _RUN_ID),
        "patch": _op(
            "Change a run's details (audited). Say which version you change: If-Match with the ETag "
            "(or `version` in the body; If-Match: * overwrites on purpose). A stale version gets 409 "
            "with `current`; none at all gets 428",
            _json(_ref("Run"), "The run"),
            (400, 401, 403, 404, 409, 428),
            params=_RUN_ID + [_IF_MATCH],
            body=_body(
                {k: {"type": "string"} for k in ("title", "operator", "bench", "performed_on", "notes")}
                | {"group_id": {"type": ["integer", "null"]}, "version": {"type": "integer"}}
            ),
        ),
    },
    "/api/runs/{run_id}/analyses": {
        "post": _op(
            "Analyze again (the old result is kept); with If-Match (or `version`) only that version",
            _json(_ref("Result"), "The new result"),
            (400, 401, 403, 404, 409),
            params=_RUN_ID + [_IF_MATCH],
            status="201",
            body=_body({**_OPTIONS_PROPS, "version": {"type": "integer"}}, optional=True),
        ),
    },
    "/api/runs/{run_id}/results": {
        "get": _read("A run's results, oldest first", _list_of(_ref("ResultSummary")), "Results", _RUN_ID)
    },
    "/api/runs/{run_id}/lock": {
        "post": _op(
            "Lock (sign) a run: its author or a coordinator. The answer names the result and the content "
            "hash it signed; with If-Match (or `version`) only that version is signed (409 otherwise)",
            _json(_ref("Run"), "The locked run"),
            (400, 401, 403, 404, 409),
            params=_RUN_ID + [_IF_MATCH],
            body=_body({"version": {"type": "integer"}}, optional=True),
        )
    },
    "/api/runs/{run_id}/audit": {
        "get": _read("The changes made to a run", _list_of(_ref("AuditEntry")), "Audit entries", _RUN_ID)
    },
    "/api/runs/{run_id}/series": {
        "get": _read(
            "The parsed readings",
            {
                "type": "object",
                "properties": {
                    "time_s": {"type": "array", "items": {"type": "number"}},
                    "temperature_K": {"type": "array", "items": {"type": "number"}},
                },
            },
            "Series",
            _RUN_ID,
        )
    },
    "/api/runs/{run_id}/files/{which}": {
        "get": _op(
            "The run file or the readings exactly as uploaded",
            {
                "description": "The file",
                "content": {
                    "application/toml": {"schema": {"type": "string"}},
                    "text/csv": {"schema": {"type": "string"}},
                },
            },
            (400, 401, 404),
            params=_RUN_ID + [_id("which", {"type": "string", "enum": ["run-file", "readings"]})],
        )
    },
    "/api/results/{result_id}": {
        "get": _read(
            "A result with every output, budget and provenance", _ref("Result"), "The result", [_id("result_id")]
        )
    },
}
