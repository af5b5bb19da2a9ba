"""OpenAPI entries of :mod:`webapp.api.live` (merged into the document's paths)."""

from __future__ import annotations

from typing import Any

from webapp.api.openapi import register
from webapp.api.openapi_build import change as _change
from webapp.api.openapi_build import json_response as _json
from webapp.api.openapi_build import operation as _op
from webapp.api.openapi_build import path_param as _id
from webapp.api.openapi_build import request_body as _body

_LIVE_ID = [_id("live_id")]
_ADVICE = {
    "type": "object",
    "description": "the advisor's latest answer: phase, status (one plain line), "
    "seconds_more, estimate (provisional), periods, drift_lines, warnings",
}
_LIVE = {
    "type": "object",
    "properties": {
        "id": {"type": "integer"},
        "state": {"type": "string", "enum": ["recording", "finished", "abandoned"]},
        "last_seq": {"type": "integer", "description": "highest sequence number stored; -1: none yet"},
        "n_readings": {"type": "integer"},
        "advice": _ADVICE,
        "run_id": {"type": ["integer", "null"]},
        "page_url": {"type": "string"},
        "target_u": {"type": ["number", "null"]},
        "target_from": {"type": "string", "enum": ["run", "section", "default"]},
    },
}
_CREATED = {
    "type": "object",
    "properties": {
        "id": {"type": "integer"},
        "page_url": {"type": "string"},
        "last_seq": {"type": "integer"},
        "state": {"type": "string"},
    },
}
_TARGET = _body({"target_u": {"type": ["number", "null"], "exclusiveMinimum": 0}}, ["target_u"])

LIVE_PATHS: dict[str, Any] = {
    "/api/live-runs": {
        "post": _op(
            "Start a live run (scope live or write). Idempotent on client_key: the same key again answers "
            "200 with the same id and its last_seq, so a restarted recorder resumes",
            _json(_CREATED, "The live run (201 new, 200 resumed)"),
            (400, 401, 403, 409),
            status="201",
            body=_body(
                {
                    "run_file": {"type": "string", "description": "the run file (TOML), readings key optional"},
                    "client_key": {"type": "string", "maxLength": 64},
                    "target_u": {"type": ["number", "null"]},
                    "calorimeter_id": {"type": "integer"},
                    "group_id": {"type": "integer"},
                    "bench_id": {"type": "integer"},
                },
                ["run_file", "client_key"],
            ),
        )
    },
    "/api/live-runs/{live_id}": {
        "get": _op(
            "A live run: state, readings count, the latest advice",
            _json(_LIVE, "The live run"),
            (401, 403, 404),
            params=_LIVE_ID,
        )
    },
    "/api/live-runs/{live_id}/readings": {
        "post": _op(
            "Add readings [seq, time_s, temperature_c] (seq 0-based, consecutive; at most 1000 a request). "
            "Readings with seq ≤ last_seq are ignored, so a retry is harmless",
            _json(
                {"type": "object", "properties": {"stored": {"type": "integer"}, "last_seq": {"type": "integer"}}},
                "Stored",
            ),
            (400, 401, 403, 404, 409, 413),
            params=_LIVE_ID,
            body=_body(
                {
                    "readings": {
                        "type": "array",
                        "maxItems": 1000,
                        "items": {"type": "array", "minItems": 3, "maxItems": 3, "items": {"type": "number"}},
                    }
                },
                ["readings"],
            ),
        )
    },
    "/api/live-runs/{live_id}/finish": {
        "post": _op(
            "Finish: analyze and store the log as a run (the CSV sent is kept exactly; without one, a CSV "
            "of the stored readings). Sent again, it answers the same run",
            _json(
                {"type": "object", "properties": {"run_id": {"type": "integer"}, "run_url": {"type": "string"}}},
                "The run",
            ),
            (400, 401, 403, 404, 409),
            params=_LIVE_ID,
            body=_body({"readings_csv": {"type": "string"}}),
        )
    },
    "/api/live-runs/{live_id}/target": {
        "put": _change(
            "Set the live run's target U (null: the section's default, else the advisor's)",
            _LIVE,
            "The live run",
            params=_LIVE_ID,
            body=_TARGET,
        )
    },
    "/api/sections/{section_id}/live-target": {
        "put": _change(
            "Set a section's default target U for its live runs (coordinators; null clears it)",
            {
                "type": "object",
                "properties": {"section_id": {"type": "integer"}, "target_u": {"type": ["number", "null"]}},
            },
            "The section's target",
            params=[_id("section_id")],
            body=_TARGET,
        )
    },
}

register(LIVE_PATHS)
