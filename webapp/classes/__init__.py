"""Class pages: courses, sections, rosters, benches, the class dashboard, exports, series, control charts."""

from __future__ import annotations

from flask import Blueprint

bp = Blueprint("classes", __name__)

from webapp.classes import views  # noqa: E402,F401  (registers the routes)
