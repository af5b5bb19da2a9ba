"""The JSON API under ``/api/``: runs, results, calorimeters, groups and courses.

Writes take API tokens only (``Authorization: Bearer <token>``), so the API needs no
CSRF token; reads also accept a signed-in browser session. Every error is
``{"error": "...", "field": "..."}`` with a 4xx status. The OpenAPI 3 document is
at ``/api/openapi.json``.
"""

from __future__ import annotations

from webapp.api import (
    calorimeters,  # noqa: F401  (registers the routes)
    classes,  # noqa: F401
    classes_openapi,  # noqa: F401  (documents the classes routes)
    eln,  # noqa: F401
    exchange,  # noqa: F401
    live,  # noqa: F401
    openapi,  # noqa: F401
    query_check,  # noqa: F401  (refuses undocumented query parameters)
    review,  # noqa: F401
    runs,  # noqa: F401
)
from webapp.api.blueprint import bp

__all__ = ["bp"]
