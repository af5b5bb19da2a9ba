"""Class pages: courses, sections, rosters, benches, the class dashboard, exports, series, control charts."""

from __future__ import annotations

from webapp.classes import views  # noqa: F401  (registers the routes)
from webapp.classes.blueprint import bp

__all__ = ["bp"]
