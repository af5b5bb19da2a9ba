"""The JSON API under ``/api/``: runs, results, calorimeters, groups and courses.

Writes take API tokens only (``Authorization: Bearer <token>``), so the API needs no
CSRF token; reads also accept a signed-in browser session. Every error is
``{"error": "...", "field": "..."}`` with a 4xx status. The OpenAPI 3 document is
at ``/api/openapi.json``.
"""

from __future__ import annotations

from webapp.api.blueprint import bp
from webapp.api import calorimeters  # noqa: F401  (registers the routes)
from webapp.api import classes  # noqa: F401
from webapp.api import openapi  # noqa: F401
from webapp.api import runs  # noqa: F401
from webapp.api import exchange  # noqa: F401
from webapp.api import eln  # noqa: F401
from webapp.api import review  # noqa: F401
from webapp.api import live  # noqa: F401

__all__ = ['bp']
