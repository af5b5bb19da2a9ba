"""Embeddable result cards (``/embed/runs/<id>``) and their oEmbed 1.0 endpoint (``/oembed``).

A card may be read with a signed, expiring link (``?link=…``, issued by
``POST /api/runs/<id>/embed-link``) or an API token (``Authorization: Bearer`` only: a token in a
URL would end up in logs); a signed-in browser session also works. Only these routes may be framed, by the
origins of ``EMBED_FRAME_ANCESTORS`` (a CSP ``frame-ancestors`` value; default ``'self'``).
"""

from __future__ import annotations

from webapp.embed import views  # noqa: F401  (registers the routes)
from webapp.embed.blueprint import bp

__all__ = ["bp"]
