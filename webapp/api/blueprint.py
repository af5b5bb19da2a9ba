"""The ``api`` blueprint object, its hooks and what the routes share; the routes live beside it."""

from __future__ import annotations

from flask import Blueprint, g, request
from flask_login import current_user

from webapp.db import get_session
from webapp.error_handlers import json_error
from webapp.services.errors import Forbidden
from webapp.services.tokens import token_for_secret

bp = Blueprint("api", __name__, url_prefix="/api")

_PUBLIC = {"api.openapi"}
_SAFE = {"GET", "HEAD", "OPTIONS"}
#: the endpoints a token with the scope "live" may call (webapp/api/live.py), and nothing else
LIVE_ENDPOINTS = frozenset(
    {"api.create_live_run", "api.live_readings", "api.get_live_run", "api.finish_live_run", "api.live_target"}
)


@bp.before_request
def _authenticate():  # type: ignore[no-untyped-def]
    """Find who is calling: a bearer token, or (for reads) the browser session."""
    if request.endpoint in _PUBLIC:
        return None
    header = request.headers.get("Authorization", "")
    if header:
        scheme, _, secret = header.partition(" ")
        if scheme.lower() != "bearer" or not secret.strip():
            return _challenge("expected the header Authorization: Bearer <token>")
        token = token_for_secret(get_session(), secret.strip())
        if token is None:
            return _challenge("the API token is unknown or revoked")
        if token.scope == "live":
            if request.endpoint not in LIVE_ENDPOINTS:
                raise Forbidden(
                    "this API token may only record live runs (scope 'live'); use a 'read' or "
                    "'write' token for anything else",
                    field="scope",
                )
        elif request.method not in _SAFE and token.scope != "write":
            raise Forbidden("this API token is read-only; make a token with the scope 'write'")
        g.api_person = token.person
        g.api_token = token
        return None
    if request.method in _SAFE and current_user.is_authenticated:
        g.api_person = current_user._get_current_object()
        return None
    return _challenge("send an API token: Authorization: Bearer <token> (create one on the API tokens page)")


def _challenge(message: str):  # type: ignore[no-untyped-def]
    response, status = json_error(401, message)
    response.headers["WWW-Authenticate"] = "Bearer"
    return response, status
