"""The OpenAPI 3.1 document of the API, maintained by hand.

A test checks that every route under ``/api/`` is documented here with its methods,
and that the document is valid OpenAPI (openapi-spec-validator).

One table per area, put together here in the document's order: :mod:`webapp.api.runs_openapi`,
:mod:`webapp.api.calorimeters_openapi`; other API modules :func:`register` theirs when imported
(classes, exchange, live, review). The builders are in :mod:`webapp.api.openapi_build`.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from flask import jsonify

from calc import __version__
from webapp.api.blueprint import bp
from webapp.api.calorimeters_openapi import CALORIMETER_PATHS, CALORIMETER_SCHEMAS
from webapp.api.openapi_build import QTY as _QTY
from webapp.api.openapi_build import json_response as _json
from webapp.api.openapi_build import list_of as _list_of
from webapp.api.openapi_build import operation as _op
from webapp.api.openapi_build import request_body as _body
from webapp.api.openapi_build import schema_ref as _ref
from webapp.api.runs_openapi import RUN_PATHS, RUN_SCHEMAS


def register(paths: Mapping[str, Any] | None = None, schemas: Mapping[str, Any] | None = None) -> None:
    """Add another API module's paths and component schemas to the document (at its import).

    :raise ValueError: for a path or schema that is documented already (a second entry would hide the first)
    """
    for table, new in ((PATHS, paths or {}), (SCHEMAS, schemas or {})):
        if twice := sorted(set(table) & set(new)):
            raise ValueError(f"OpenAPI entries documented twice: {', '.join(twice)}")
        table.update(new)


_BASE_SCHEMAS: dict[str, Any] = {
    "Error": {
        "type": "object",
        "required": ["error"],
        "properties": {
            "error": {"type": "string"},
            "field": {"type": "string"},
            "current": {"type": "object", "description": "with a stale write (409): the state stored now, by entity"},
        },
    },
    "Quantity": _QTY,
    "Ref": {"type": ["object", "null"], "properties": {"id": {"type": "integer"}, "name": {"type": "string"}}},
    "Person": {
        "type": "object",
        "properties": {
            "id": {"type": "integer"},
            "name": {"type": "string"},
            "email": {"type": "string"},
            "role": {"type": "string"},
            "group": _ref("Ref"),
        },
    },
    "Group": {
        "type": "object",
        "properties": {
            "id": {"type": "integer"},
            "name": {"type": "string"},
            "course_id": {"type": ["integer", "null"]},
        },
    },
    "Course": {
        "type": "object",
        "properties": {"id": {"type": "integer"}, "name": {"type": "string"}, "term": {"type": "string"}},
    },
}
SCHEMAS: dict[str, Any] = {**_BASE_SCHEMAS, **CALORIMETER_SCHEMAS, **RUN_SCHEMAS}

_BASE_PATHS: dict[str, Any] = {
    "/api/openapi.json": {"get": _op("This document", {"description": "OpenAPI 3.1 document"}, public=True)},
    "/api/me": {"get": _op("Who is calling", _json(_ref("Person"), "The caller"), (401,))},
    "/api/methods": {"get": _op("Corrected-ΔT methods", _json(_list_of({"type": "object"}), "Methods"), (401,))},
}
_GROUP_PATHS: dict[str, Any] = {
    "/api/groups": {
        "get": _op("List the groups", _json(_list_of(_ref("Group")), "Groups"), (401,)),
        "post": _op(
            "Add a group (coordinators)",
            _json(_ref("Group"), "The new group"),
            (400, 401, 403, 409),
            status="201",
            body=_body({"name": {"type": "string"}, "course_id": {"type": "integer"}}, ["name"]),
        ),
    },
    "/api/courses": {
        "get": _op("List the courses", _json(_list_of(_ref("Course")), "Courses"), (401,)),
        "post": _op(
            "Add a course (coordinators)",
            _json(_ref("Course"), "The new course"),
            (400, 401, 403, 409),
            status="201",
            body=_body({"name": {"type": "string"}, "term": {"type": "string"}}, ["name"]),
        ),
    },
}
PATHS: dict[str, Any] = {**_BASE_PATHS, **RUN_PATHS, **CALORIMETER_PATHS, **_GROUP_PATHS}


def document() -> dict[str, Any]:
    """Return the OpenAPI document."""
    error = {"description": "", "content": {"application/json": {"schema": _ref("Error")}}}
    texts = {
        400: "Bad input; the message names the field",
        401: "No valid token (or session, for reads)",
        403: "Not allowed for your role",
        404: "Not found, or not yours to see",
        409: "Exists already, the run is locked, or changed since the version you sent (`current` holds it "
        "now), or a large change needs `confirm`",
        413: "Upload too large",
        428: "A write that must name the version it changes (If-Match or `version`) did not",
    }
    return {
        "openapi": "3.1.0",
        "info": {
            "title": "cupcal notebook API",
            "version": __version__,
            "description": "Runs, results and calorimeters of the cupcal notebook. Send "
            "`Authorization: Bearer <token>`; tokens are made on the API tokens page.",
        },
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
