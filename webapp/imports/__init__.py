"""Bulk import page: a zip or a folder of a section's run files and logs, with a report per file."""

from __future__ import annotations

from webapp.imports import (
    eln_views,  # noqa: F401
    views,  # noqa: F401  (registers the routes)
)
from webapp.imports.blueprint import bp

__all__ = ["bp"]
