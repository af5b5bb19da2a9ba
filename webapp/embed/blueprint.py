"""The ``embed`` blueprint object, its hooks and what the routes share; the routes live beside it."""

from __future__ import annotations

from flask import Blueprint, Response, current_app

bp = Blueprint("embed", __name__)


@bp.after_request
def _frame_policy(response: Response) -> Response:
    ancestors = current_app.config.get("EMBED_FRAME_ANCESTORS") or "'self'"
    response.headers["Content-Security-Policy"] = (
        f"default-src 'none'; img-src 'self' data:; style-src 'unsafe-inline'; frame-ancestors {ancestors}"
    )
    response.headers["X-Content-Type-Options"] = "nosniff"
    response.headers["Referrer-Policy"] = "no-referrer"
    response.headers["Cache-Control"] = "private, no-store"
    return response
