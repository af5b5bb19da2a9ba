"""Bulk import page: a zip or a folder of a section's run files and logs, with a report per file."""

from __future__ import annotations

from flask import Blueprint

bp = Blueprint("imports", __name__, url_prefix="/imports")

from webapp.imports import views  # noqa: E402,F401  (registers the routes)
from webapp.imports import eln_views  # noqa: E402,F401
