"""Embeddable result cards (``/embed/runs/<id>``) and their oEmbed 1.0 endpoint (``/oembed``).

A card may be read with a signed, expiring link (``?link=…``, issued by
``POST /api/runs/<id>/embed-link``) or an API token (``Authorization: Bearer`` only: a token in a
URL would end up in logs); a signed-in browser session also works. Only these routes may be framed, by the
origins of ``EMBED_FRAME_ANCESTORS`` (a CSP ``frame-ancestors`` value; default ``'self'``).
"""

from __future__ import annotations

from flask import Blueprint
from flask import Response
from flask import current_app

bp = Blueprint("embed", __name__)


@bp.after_request
def _frame_policy(response: Response) -> Response:
    ancestors = current_app.config.get("EMBED_FRAME_ANCESTORS") or "'self'"
    response.headers["Content-Security-Policy"] = (
        "default-src 'none'; img-src 'self' data:; style-src 'unsafe-inline'; "
        f"frame-ancestors {ancestors}")
    response.headers["X-Content-Type-Options"] = "nosniff"
    response.headers["Referrer-Policy"] = "no-referrer"
    response.headers["Cache-Control"] = "private, no-store"
    return response


from webapp.embed import views  # noqa: E402,F401  (registers the routes)
