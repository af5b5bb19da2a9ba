"""The API document's entries for classes: sections, benches, rosters, imports, dashboards, series, control, plan."""

from __future__ import annotations

from webapp.api.classes import PLAN_KIND_TEXTS, PLAN_NUMBERS, PLAN_TEXTS
from webapp.api.openapi import register
from webapp.api.openapi_build import import_report as _report
from webapp.api.openapi_build import json_response as _json
from webapp.api.openapi_build import list_of as _list_of
from webapp.api.openapi_build import operation as _op
from webapp.api.openapi_build import path_param as _id
from webapp.api.openapi_build import read as _read
from webapp.api.openapi_build import request_body as _body
from webapp.api.openapi_build import schema_ref as _ref

_OBJ = {"type": "object"}
_NUM = {"type": ["number", "null"]}
register(
    schemas={
        "Bench": {
            "type": "object",
            "properties": {
                "id": {"type": "integer"},
                "name": {"type": "string"},
                "section_id": {"type": "integer"},
                "calorimeter_id": {"type": ["integer", "null"]},
                "thermometer": {"type": "string"},
                "thermometer_resolution_K": _NUM,
            },
        },
        "Section": {
            "type": "object",
            "properties": {
                "id": {"type": "integer"},
                "name": {"type": "string"},
                "course_id": {"type": "integer"},
                "course": {"type": "string"},
                "groups": {"type": "array", "items": _ref("Ref")},
                "benches": {"type": "array", "items": _ref("Bench")},
            },
        },
        "ImportReport": _report(
            ["stored", "unchanged", "error", "ignored"], {"type": "object", "additionalProperties": {"type": "integer"}}
        ),
        "Dashboard": {
            "type": "object",
            "properties": {
                "title": {"type": "string"},
                "sort": {"type": "string"},
                "descending": {"type": "boolean"},
                "flag_counts": {"type": "object", "additionalProperties": {"type": "integer"}},
                "statistics": {"type": "array", "items": _OBJ},
                "feedback": {"type": "object"},
                "rows": {"type": "array", "items": _OBJ},
                "series": {"type": "array", "items": _ref("SeriesSummary")},
            },
        },
        "SeriesSummary": {
            "type": "object",
            "properties": {
                "id": {"type": "integer"},
                "name": {"type": "string"},
                "group": {"type": "string"},
                "unit": {"type": "string"},
                "run_ids": {"type": "array", "items": {"type": "integer"}},
                "values": {"type": "array", "items": {"type": "number"}},
                "n": {"type": "integer"},
                "mean": {"type": "number"},
                "sd": {"type": "number"},
                "u_mean": {"type": "number"},
                "dof": {"type": "integer"},
                "t95": {"type": "number"},
                "ci95": {"type": "array", "items": {"type": "number"}},
                "type_b_u": {"type": "number"},
                "type_b_dof": _NUM,
                "u_combined": {"type": "number"},
                "dof_eff": _NUM,
                "k": {"type": "number"},
                "U": {"type": "number"},
            },
        },
        "ControlChart": {
            "type": "object",
            "properties": {
                "calorimeter_id": {"type": "integer"},
                "standard": {"type": ["string", "null"]},
                "standards": _OBJ,
                "unit": {"type": "string"},
                "baseline": {"type": "integer"},
                "message": {"type": "string"},
                "calibration": _OBJ,
                "limits": {"type": ["object", "null"]},
                "points": {"type": "array", "items": _OBJ},
                "violations": {"type": "array", "items": _OBJ},
                "rules": _OBJ,
            },
        },
    }
)
_SORT = [
    {"name": "sort", "in": "query", "schema": {"type": "string"}},
    {"name": "dir", "in": "query", "schema": {"type": "string", "enum": ["asc", "desc"]}},
]
_SEC = [_id("section_id")]
register(
    {
        "/api/sections": {
            "get": _op("List the sections you may see", _json(_list_of(_ref("Section")), "Sections"), (401,)),
            "post": _op(
                "Add a section to a course (coordinators)",
                _json(_ref("Section"), "The new section"),
                (400, 401, 403, 404, 409),
                status="201",
                body=_body({"course_id": {"type": "integer"}, "name": {"type": "string"}}, ["course_id", "name"]),
            ),
        },
        "/api/sections/{section_id}/benches": {
            "post": _op(
                "Add a bench: calorimeter and thermometer (coordinators)",
                _json(_ref("Bench"), "The new bench"),
                (400, 401, 403, 404, 409),
                params=_SEC,
                status="201",
                body=_body(
                    {
                        "name": {"type": "string"},
                        "calorimeter_id": {"type": "integer"},
                        "thermometer": {"type": "string"},
                        "thermometer_resolution": {"type": ["string", "number"], "description": 'e.g. "0.01 K"'},
                    },
                    ["name"],
                ),
            ),
        },
        "/api/rosters": {
            "post": _op(
                "Import a roster CSV (coordinators; all rows or none)",
                _json(_OBJ, "People, courses, sections and groups created"),
                (400, 401, 403),
                status="201",
                body={
                    "required": True,
                    "content": {
                        "text/csv": {
                            "schema": {"type": "string", "description": "course,section,group,name,email,role"}
                        },
                        "multipart/form-data": {
                            "schema": {
                                "type": "object",
                                "properties": {"roster": {"type": "string", "format": "binary"}},
                            }
                        },
                    },
                },
            ),
        },
        "/api/sections/{section_id}/imports": {
            "post": _op(
                "Import a zip of run files and logs into a section; a report per file",
                _json(_ref("ImportReport"), "The report"),
                (400, 401, 403, 404, 413),
                params=_SEC,
                body={
                    "required": True,
                    "content": {
                        "multipart/form-data": {
                            "schema": {
                                "type": "object",
                                "required": ["archive"],
                                "properties": {
                                    "archive": {"type": "string", "format": "binary"},
                                    "mapping": {
                                        "type": "string",
                                        "format": "binary",
                                        "description": "CSV: file, group[, bench]",
                                    },
                                    "create_groups": {
                                        "type": "string",
                                        "enum": ["true", "false"],
                                        "description": "create the groups [info] group names",
                                    },
                                },
                            }
                        }
                    },
                },
            ),
        },
        "/api/sections/{section_id}/dashboard": {
            "get": _op(
                "The class dashboard of a section (flags, statistics, feedback, series)",
                _json(_ref("Dashboard"), "The dashboard"),
                (400, 401, 404),
                params=_SEC + _SORT,
            )
        },
        "/api/courses/{course_id}/dashboard": {
            "get": _op(
                "The class dashboard of a course (coordinators, technicians)",
                _json(_ref("Dashboard"), "The dashboard"),
                (400, 401, 403, 404),
                params=[_id("course_id")] + _SORT,
            )
        },
        "/api/series": {
            "post": _op(
                "Store a named series of repeat runs (coordinators)",
                _json(_ref("SeriesSummary"), "The series"),
                (400, 401, 403),
                status="201",
                body=_body(
                    {
                        "name": {"type": "string"},
                        "run_ids": {"type": "array", "items": {"type": "integer"}},
                        "notes": {"type": "string"},
                    },
                    ["name", "run_ids"],
                ),
            )
        },
        "/api/series/{series_id}": {
            "get": _read("A series with its statistics", _ref("SeriesSummary"), "The series", [_id("series_id")])
        },
        "/api/calorimeters/{calorimeter_id}/control": {
            "get": _op(
                "Control chart of a check standard and the calibration due date",
                _json(_ref("ControlChart"), "The chart"),
                (400, 401, 404),
                params=[
                    _id("calorimeter_id"),
                    {"name": "standard", "in": "query", "schema": {"type": "string"}},
                    {"name": "baseline", "in": "query", "schema": {"type": "integer", "minimum": 2}},
                ],
            )
        },
        "/api/plan": {
            "post": _op(
                "Plan a run: predicted ΔT, u(ΔH), budget by equipment, suggestion, cautions",
                _json(_OBJ, "The plan"),
                (400, 401),
                body=_body(
                    {
                        "kind": {
                            "type": "string",
                            "enum": [
                                "dissolution",
                                "neutralization",
                                "electrical-calibration",
                                "mixing-calibration",
                                "reaction",
                            ],
                        },
                        **{k: {"type": "number"} for k in PLAN_NUMBERS},
                        **{k: {"type": "string"} for k in PLAN_TEXTS + PLAN_KIND_TEXTS},
                        "coefficient": {"type": "integer", "minimum": 1},
                    },
                    ["kind", "thermometer_resolution", "calorimeter_heat_capacity"],
                ),
            )
        },
    }
)
