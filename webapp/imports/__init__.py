"""Bulk import page: a zip or a folder of a section's run files and logs, with a report per file."""

from __future__ import annotations

from webapp.imports.blueprint import bp
from webapp.imports import views  # noqa: F401  (registers the routes)

__all__ = ['bp']
