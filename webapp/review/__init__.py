"""Review pages: withdraw, exclude and accept runs; comments; marks and marking schemes."""

from __future__ import annotations

from flask import Blueprint

bp = Blueprint("review", __name__)

from webapp.review import views  # noqa: E402,F401  (registers the routes)
