"""The builders of the API document's entries, and the parameters and properties several areas share.

:mod:`webapp.api.openapi` puts the document together; the ``*_openapi`` modules write their entries with these.
"""

from __future__ import annotations

from typing import Any


def _ref(name: str) -> dict[str, str]:
    return {"$ref": f"#/components/schemas/{name}"}


def _json(schema: dict[str, Any], description: str) -> dict[str, Any]:
    return {"description": description, "content": {"application/json": {"schema": schema}}}


def _errors(*codes: int) -> dict[str, Any]:
    return {str(c): {"$ref": f"#/components/responses/E{c}"} for c in codes}


def _id(name: str, schema: dict[str, Any] | None = None) -> dict[str, Any]:
    return {"name": name, "in": "path", "required": True, "schema": schema or {"type": "integer"}}


def _op(
    summary: str,
    ok: dict[str, Any],
    codes: tuple[int, ...] = (),
    *,
    params: list[dict[str, Any]] | None = None,
    body: dict[str, Any] | None = None,
    status: str = "200",
    public: bool = False,
) -> dict[str, Any]:
    op: dict[str, Any] = {"summary": summary, "responses": {status: ok, **_errors(*codes)}}
    if params:
        op["parameters"] = params
    if body:
        op["requestBody"] = body
    if public:
        op["security"] = []
    return op


def _read(summary: str, schema: dict[str, Any], description: str, params: list[dict[str, Any]]) -> dict[str, Any]:
    """Return a read of one thing named by its path: 401 without a token, 404 when missing or not yours."""
    return _op(summary, _json(schema, description), (401, 404), params=params)


def _change(
    summary: str, schema: dict[str, Any], description: str, *, params: list[dict[str, Any]], body: dict[str, Any]
) -> dict[str, Any]:
    """Return a change to one thing named by its path: 400 for bad input, 401, 403 when not allowed, 404."""
    return _op(summary, _json(schema, description), (400, 401, 403, 404), params=params, body=body)


_IF_MATCH = {
    "name": "If-Match",
    "in": "header",
    "required": False,
    "schema": {"type": "string"},
    "description": 'the ETag (version) the change is based on, e.g. "3"',
}

_PAGE_PARAMS = [
    {"name": "page", "in": "query", "schema": {"type": "integer", "minimum": 1}},
    {"name": "per_page", "in": "query", "schema": {"type": "integer", "minimum": 1}},
]

_OPTIONS_PROPS: dict[str, Any] = {
    "method": {"type": "string", "description": "corrected-ΔT method (see /api/methods)"},
    "fore": {
        "type": "array",
        "items": {"type": "number"},
        "minItems": 2,
        "maxItems": 2,
        "description": "fore period [start, end] in s",
    },
    "after": {
        "type": "array",
        "items": {"type": "number"},
        "minItems": 2,
        "maxItems": 2,
        "description": "after period [start, end] in s",
    },
    "monte_carlo": {"type": "integer", "minimum": 0, "description": "Monte Carlo trials (JCGM 101); 0: none"},
    "seed": {"type": "integer", "minimum": 0},
    "mixing_time": {
        "oneOf": [{"type": "number"}, {"type": "array", "items": {"type": "number"}, "minItems": 2, "maxItems": 2}],
        "description": "mixing time in s, or [value, standard uncertainty] (default uncertainty 1 s); "
        "overrides the run file's, and is not detected from the log",
    },
}

_QTY = {
    "type": "object",
    "properties": {
        "value": {"type": ["number", "null"]},
        "standard_uncertainty": {"type": ["number", "null"]},
        "unit": {"type": "string"},
    },
}


def _page_of(name: str) -> dict[str, Any]:
    return {
        "type": "object",
        "properties": {
            "items": {"type": "array", "items": _ref(name)},
            "page": {"type": "integer"},
            "per_page": {"type": "integer"},
            "total": {"type": "integer"},
            "pages": {"type": "integer"},
        },
    }


def _report(outcomes: list[str], counts: dict[str, Any]) -> dict[str, Any]:
    """Return the schema of an import's report: a summary, ``counts`` by outcome, and one item per file."""
    item = {
        "type": "object",
        "properties": {
            "file": {"type": "string"},
            "outcome": {"type": "string", "enum": outcomes},
            "message": {"type": "string"},
            "run_id": {"type": ["integer", "null"]},
            "group": {"type": ["string", "null"]},
        },
    }
    return {
        "type": "object",
        "properties": {"summary": {"type": "string"}, "counts": counts, "items": {"type": "array", "items": item}},
    }


def _list_of(schema: dict[str, Any]) -> dict[str, Any]:
    return {"type": "object", "properties": {"items": {"type": "array", "items": schema}}}


def _body(props: dict[str, Any], required: list[str] | None = None, *, optional: bool = False) -> dict[str, Any]:
    """Return a JSON request body of these properties; with ``optional`` the call may send none."""
    schema: dict[str, Any] = {"type": "object", "properties": props}
    if required:
        schema["required"] = required
    return {"required": not optional, "content": {"application/json": {"schema": schema}}}


#: the builders by their public names (the modules that document an area import these)
schema_ref, json_response, path_param, operation, read, change, request_body, list_of, page_of, import_report = (
    _ref,
    _json,
    _id,
    _op,
    _read,
    _change,
    _body,
    _list_of,
    _page_of,
    _report,
)
#: shared parameters and properties
IF_MATCH, PAGE_PARAMS, OPTIONS_PROPS, QTY = _IF_MATCH, _PAGE_PARAMS, _OPTIONS_PROPS, _QTY
