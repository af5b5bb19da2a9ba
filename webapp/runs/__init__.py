"""Run pages: the list, a new run (form or upload, preview, save), a run's page with its results."""

from __future__ import annotations

from webapp.runs import (
    create_views,  # noqa: F401  (registers the routes)
    views,  # noqa: F401  (registers the routes)
)
from webapp.runs.blueprint import bp

__all__ = ["bp"]
