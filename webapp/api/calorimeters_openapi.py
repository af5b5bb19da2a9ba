"""The API document's entries for calorimeters and calibrations: their schemas and their paths."""

from __future__ import annotations

from typing import Any

from calc.io.runfile import CALORIMETER_TYPES
from webapp.api.openapi_build import IF_MATCH as _IF_MATCH
from webapp.api.openapi_build import PAGE_PARAMS as _PAGE_PARAMS
from webapp.api.openapi_build import json_response as _json
from webapp.api.openapi_build import list_of as _list_of
from webapp.api.openapi_build import operation as _op
from webapp.api.openapi_build import page_of as _page_of
from webapp.api.openapi_build import path_param as _id
from webapp.api.openapi_build import read as _read
from webapp.api.openapi_build import request_body as _body
from webapp.api.openapi_build import schema_ref as _ref

CALORIMETER_SCHEMAS: dict[str, Any] = {
    "Calibration": {
        "type": "object",
        "properties": {
            "id": {"type": "integer"},
            "calorimeter_id": {"type": "integer"},
            "heat_capacity": _ref("Quantity"),
            "taken_at": {"type": "string", "format": "date-time"},
            "result_id": {"type": ["integer", "null"]},
            "run_id": {"type": ["integer", "null"]},
            "note": {"type": "string"},
            "measured_on": {"type": "string", "format": "date", "description": "the date it was measured"},
            "status": {"type": "string", "enum": ["approved", "proposed", "withdrawn"]},
            "approved_by": _ref("Ref"),
            "approved_at": {"type": ["string", "null"], "format": "date-time"},
            "withdrawn_at": {"type": ["string", "null"], "format": "date-time"},
            "withdrawn_reason": {"type": ["string", "null"]},
            "in_force_since": {"type": ["string", "null"], "format": "date-time"},
            "restart": {"type": "boolean"},
            "pool": {
                "type": ["object", "null"],
                "description": "a pooled value: members, excluded, chi2, dof, birge, limit (see the notebook guide)",
            },
        },
    },
    "Calorimeter": {
        "type": "object",
        "properties": {
            "id": {"type": "integer"},
            "name": {"type": "string"},
            "parts": {"type": "string"},
            "location": {"type": "string"},
            "created_at": {"type": "string", "format": "date-time"},
            "vessel_type": {"type": "string", "enum": list(CALORIMETER_TYPES)},
            "calibration_interval_days": {"type": ["integer", "null"]},
            "version": {"type": "integer", "description": "the ETag; send it as If-Match to change the calorimeter"},
            "current_calibration": {"oneOf": [_ref("Calibration"), {"type": "null"}]},
            "calibrations": {"type": "array", "items": _ref("Calibration")},
        },
    },
}

_CAL_ID = [_id("calorimeter_id")]

CALORIMETER_PATHS: dict[str, Any] = {
    "/api/calorimeters": {
        "get": _op(
            "List the calorimeters",
            _json(_page_of("Calorimeter"), "A page of calorimeters"),
            (400, 401),
            params=_PAGE_PARAMS,
        ),
        "post": _op(
            "Add a calorimeter (coordinators)",
            _json(_ref("Calorimeter"), "The new calorimeter"),
            (400, 401, 403, 409),
            status="201",
            body=_body(
                {
                    "name": {"type": "string"},
                    "parts": {"type": "string"},
                    "location": {"type": "string"},
                    "vessel_type": {"type": "string", "enum": list(CALORIMETER_TYPES)},
                    "heat_capacity": {"type": "string", "description": 'e.g. "18.6 ± 2.0 J/K" (u standard)'},
                },
                ["name"],
            ),
        ),
    },
    "/api/calorimeters/{calorimeter_id}": {
        "get": _read("A calorimeter with its heat-capacity history", _ref("Calorimeter"), "The calorimeter", _CAL_ID),
        "patch": _op(
            "Change name, parts, location or calibration interval in days, null for the notebook's "
            "default (coordinators; audited). Needs If-Match or `version` as a run's PATCH does",
            _json(_ref("Calorimeter"), "The calorimeter"),
            (400, 401, 403, 404, 409, 428),
            params=_CAL_ID + [_IF_MATCH],
            body=_body(
                {
                    **{k: {"type": "string"} for k in ("name", "parts", "location")},
                    "vessel_type": {"type": "string", "enum": list(CALORIMETER_TYPES)},
                    "calibration_interval_days": {"type": ["integer", "null"], "minimum": 1, "maximum": 3650},
                    "version": {"type": "integer"},
                }
            ),
        ),
    },
    "/api/calorimeters/{calorimeter_id}/calibrations": {
        "get": _read("A calorimeter's heat-capacity history", _list_of(_ref("Calibration")), "History", _CAL_ID),
        "post": _op(
            "Record a heat capacity measured elsewhere, with its date (technicians, coordinators). "
            "A value more than k·u from the value in force needs `confirm: true` (409 otherwise); "
            "`restart: true` says the cup itself changed",
            _json(_ref("Calibration"), "The new value"),
            (400, 401, 403, 404, 409),
            params=_CAL_ID,
            status="201",
            body=_body(
                {
                    "heat_capacity": {"type": "string"},
                    "measured_on": {"type": "string", "format": "date"},
                    "note": {"type": "string"},
                    "confirm": {"type": "boolean"},
                    "restart": {"type": "boolean"},
                },
                ["heat_capacity", "measured_on"],
            ),
        ),
    },
    "/api/calibrations/{calibration_id}/approve": {
        "post": _op(
            "Approve a proposed calibration (technicians, coordinators): it joins the value in force",
            _json(_ref("Calibration"), "The calibration"),
            (400, 401, 403, 404, 409),
            params=[_id("calibration_id")],
            body=_body({"confirm": {"type": "boolean"}, "restart": {"type": "boolean"}}, optional=True),
        )
    },
    "/api/calibrations/{calibration_id}/withdraw": {
        "post": _op(
            "Withdraw a calibration with a reason (technicians, coordinators); lists the runs that used it",
            _json(
                {
                    "allOf": [
                        _ref("Calibration"),
                        {
                            "type": "object",
                            "properties": {"runs_using": {"type": "array", "items": {"type": "integer"}}},
                        },
                    ]
                },
                "The calibration",
            ),
            (400, 401, 403, 404, 409),
            params=[_id("calibration_id")],
            body=_body({"reason": {"type": "string"}}, ["reason"]),
        )
    },
    "/api/calibrations/{calibration_id}/runs": {
        "get": _read(
            "The runs whose C_cal came from this calibration or a pooled value that held it",
            _list_of({"type": "object"}),
            "Runs",
            [_id("calibration_id")],
        )
    },
    "/api/calibrations/{calibration_id}/reanalyze-runs": {
        "post": _op(
            "Re-analyze, with the value in force, every unsigned run that used this calibration",
            _json(
                {
                    "type": "object",
                    "properties": {
                        "calibration": {"oneOf": [_ref("Calibration"), {"type": "null"}]},
                        "reanalyzed": {"type": "array", "items": {"type": "integer"}},
                        "locked": {"type": "array", "items": {"type": "integer"}},
                        "failed": {"type": "array", "items": {"type": "object"}},
                    },
                },
                "What was done",
            ),
            (400, 401, 403, 404),
            params=[_id("calibration_id")],
        )
    },
}
