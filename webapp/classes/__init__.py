"""Class pages: courses, sections, rosters, benches, the class dashboard, exports, series, control charts."""

from __future__ import annotations

from webapp.classes.blueprint import bp
from webapp.classes import views  # noqa: F401  (registers the routes)

__all__ = ['bp']
