"""The API refuses a query parameter its OpenAPI document does not list for the call, naming it."""

from __future__ import annotations

import re

from flask import request

from webapp.api.blueprint import bp
from webapp.api.openapi import PATHS
from webapp.error_handlers import json_error

_RULE_PARAM = re.compile(r"<(?:[a-z]+:)?([A-Za-z_][A-Za-z0-9_]*)>")


@bp.before_request
def _known_query_only():  # type: ignore[no-untyped-def]
    """Refuse (400) a query parameter that the OpenAPI document does not list for this call, naming it.

    A misspelt ``per_pgae`` would otherwise be ignored silently and the caller would read the wrong page.
    """
    if request.url_rule is None or not request.args:
        return None
    known = _documented_query(_RULE_PARAM.sub(r"{\1}", request.url_rule.rule), request.method.lower())
    if known is None:
        return None
    unknown = sorted(k for k in request.args if k not in known)
    if not unknown:
        return None
    takes = ", ".join(sorted(known)) or "no query parameters"
    return json_error(400, f"unknown query parameter {unknown[0]!r}; this call takes: {takes}", field=unknown[0])


def _documented_query(path: str, method: str) -> frozenset[str] | None:
    """Return the query parameters the OpenAPI document lists for ``method path`` (None: not documented)."""
    op = PATHS.get(path, {}).get("head" if method == "head" else method) or (
        PATHS.get(path, {}).get("get") if method == "head" else None
    )
    if op is None:
        return None
    return frozenset(p["name"] for p in op.get("parameters", []) if p.get("in") == "query")
