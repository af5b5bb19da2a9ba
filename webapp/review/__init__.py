"""Review pages: withdraw, exclude and accept runs; comments; marks and marking schemes."""

from __future__ import annotations

from webapp.review.blueprint import bp
from webapp.review import views  # noqa: F401  (registers the routes)

__all__ = ["bp"]
