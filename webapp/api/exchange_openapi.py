"""OpenAPI entries of :mod:`webapp.api.exchange` (merged into the document's paths)."""

from __future__ import annotations

from typing import Any

from webapp.api.openapi import register
from webapp.api.openapi_build import import_report as _report
from webapp.api.openapi_build import json_response as _json
from webapp.api.openapi_build import list_of as _list_of
from webapp.api.openapi_build import operation as _op
from webapp.api.openapi_build import path_param as _id
from webapp.api.openapi_build import request_body as _body
from webapp.api.openapi_build import schema_ref as _ref

_RUN_ID = [_id("run_id")]
_HOOK_ID = [_id("webhook_id")]
_FILE = {
    "application/json": {"schema": {"type": "object"}},
    "text/csv": {"schema": {"type": "string"}},
    "text/html": {"schema": {"type": "string"}},
    "application/pdf": {"schema": {"type": "string", "format": "binary"}},
    "application/zip": {"schema": {"type": "string", "format": "binary"}},
    "application/vnd.eln+zip": {"schema": {"type": "string", "format": "binary"}},
}
_HOOK = {
    "type": "object",
    "properties": {
        "id": {"type": "integer"},
        "url": {"type": "string"},
        "active": {"type": "boolean"},
        "created_at": {"type": "string", "format": "date-time"},
        "secret": {"type": "string", "description": "only when created"},
    },
}
_DELIVERY = {
    "type": "object",
    "properties": {
        "id": {"type": "integer"},
        "webhook_id": {"type": "integer"},
        "event": {"type": "string"},
        "run_id": {"type": ["integer", "null"]},
        "status": {"type": "string", "enum": ["pending", "delivered", "failed"]},
        "attempts": {"type": "integer"},
        "last_status_code": {"type": ["integer", "null"]},
        "last_error": {"type": "string"},
        "last_attempt_at": {"type": ["string", "null"], "format": "date-time"},
        "next_attempt_at": {"type": ["string", "null"], "format": "date-time"},
        "created_at": {"type": "string", "format": "date-time"},
    },
}
_TOKEN = {
    "type": "object",
    "properties": {
        "id": {"type": "integer"},
        "label": {"type": "string"},
        "prefix": {"type": "string"},
        "scope": {"type": "string", "enum": ["read", "write", "live"]},
        "created_at": {"type": "string", "format": "date-time"},
        "last_used_at": {"type": ["string", "null"], "format": "date-time"},
        "revoked_at": {"type": ["string", "null"], "format": "date-time"},
    },
}

EXCHANGE_PATHS: dict[str, Any] = {
    "/api/runs/{run_id}/export/{fmt}": {
        "get": _op(
            "Export a run: json (inputs, raw log, result, budget, provenance), csv (one row per result), "
            "html (printable report), pdf (the printable report as PDF), ro-crate (RO-Crate 1.1 zip) "
            "or eln (an .eln archive)",
            {"description": "The export", "content": _FILE},
            (400, 401, 404),
            params=_RUN_ID
            + [_id("fmt", {"type": "string", "enum": ["json", "csv", "html", "pdf", "ro-crate", "eln"]})],
        )
    },
    "/api/exports": {
        "get": _op(
            "Export a selection of runs: a zip (results.csv, and per run its JSON and RO-Crate), CSV or "
            "an .eln archive",
            {
                "description": "The export",
                "content": {k: _FILE[k] for k in ("text/csv", "application/zip", "application/vnd.eln+zip")},
            },
            (400, 401, 404),
            params=[
                {
                    "name": "run_ids",
                    "in": "query",
                    "required": True,
                    "schema": {"type": "string"},
                    "description": "run ids separated by commas",
                },
                {"name": "format", "in": "query", "schema": {"type": "string", "enum": ["zip", "csv", "eln"]}},
            ],
        )
    },
    "/api/packages": {
        "post": _op(
            "Import a run package (our JSON export or RO-Crate zip) as a new run; write scope",
            _json(_ref("Run"), "The new run"),
            (400, 401, 403, 409, 413),
            status="201",
            body={
                "required": True,
                "content": {
                    "application/json": {"schema": {"type": "object"}},
                    "application/zip": {"schema": {"type": "string", "format": "binary"}},
                    "multipart/form-data": {
                        "schema": {"type": "object", "properties": {"package": {"type": "string", "format": "binary"}}}
                    },
                },
            },
        )
    },
    "/api/runs/{run_id}/embed-link": {
        "post": _op(
            "Issue a signed, expiring link to the run's result card (with its oEmbed URL)",
            _json(
                {
                    "type": "object",
                    "properties": {
                        "url": {"type": "string"},
                        "oembed": {"type": "string"},
                        "max_age": {"type": "integer"},
                        "expires_at": {"type": "string", "format": "date-time"},
                    },
                },
                "The link",
            ),
            (401, 403, 404),
            params=_RUN_ID,
        )
    },
    "/api/tokens": {
        "get": _op(
            "Your API tokens with scope and last use (never the secrets)", _json(_list_of(_TOKEN), "Tokens"), (401,)
        )
    },
    "/api/webhooks": {
        "get": _op("The active webhooks (coordinators)", _json(_list_of(_HOOK), "Webhooks"), (401, 403)),
        "post": _op(
            "Add a webhook (coordinators); the signing secret is returned once",
            _json(_HOOK, "The new webhook"),
            (400, 401, 403),
            status="201",
            body=_body({"url": {"type": "string"}}, ["url"]),
        ),
    },
    "/api/webhooks/{webhook_id}": {
        "delete": _op(
            "Remove a webhook (coordinators); its delivery log is kept",
            {"description": "Removed"},
            (401, 403, 404),
            params=_HOOK_ID,
            status="204",
        )
    },
    "/api/webhooks/{webhook_id}/deliveries": {
        "get": _op(
            "A webhook's delivery log, newest first (coordinators)",
            _json(_list_of(_DELIVERY), "Deliveries"),
            (401, 403, 404),
            params=_HOOK_ID,
        )
    },
}

_ELN = {
    "description": "The .eln archive",
    "content": {"application/vnd.eln+zip": {"schema": {"type": "string", "format": "binary"}}},
}
_REPORT = _report(["stored", "unchanged", "used", "error", "ignored"], {"type": "object"})
EXCHANGE_PATHS.update(
    {
        "/api/sections/{section_id}/export.eln": {
            "get": _op(
                "A section's runs as an .eln archive (one experiment folder per run)",
                _ELN,
                (401, 403, 404),
                params=[_id("section_id")],
            )
        },
        "/api/calorimeters/{calorimeter_id}/export.eln": {
            "get": _op(
                "A calorimeter with its calibrations and calibration runs as an .eln archive",
                _ELN,
                (401, 404),
                params=[_id("calorimeter_id")],
            )
        },
        "/api/notebook/export.eln": {
            "get": _op("Every calorimeter and every run you may see as an .eln archive", _ELN, (401,))
        },
        "/api/eln-imports": {
            "post": _op(
                "Import an .eln archive (coordinators, technicians); a report of every file. A refused archive "
                "(400) stores nothing; write scope",
                _json(_REPORT, "The report"),
                (400, 401, 403, 413),
                params=[
                    {
                        "name": "name",
                        "in": "query",
                        "schema": {"type": "string"},
                        "description": "the archive's file name, for the report (default archive.eln)",
                    }
                ],
                body={
                    "required": True,
                    "content": {
                        "application/vnd.eln+zip": {"schema": {"type": "string", "format": "binary"}},
                        "multipart/form-data": {
                            "schema": {
                                "type": "object",
                                "properties": {"archive": {"type": "string", "format": "binary"}},
                            }
                        },
                    },
                },
            )
        },
    }
)

register(EXCHANGE_PATHS)
