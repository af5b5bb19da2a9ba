"""Review pages: withdraw, exclude and accept runs; comments; marks and marking schemes."""

from __future__ import annotations

from webapp.review import views  # noqa: F401  (registers the routes)
from webapp.review.blueprint import bp

__all__ = ["bp"]
