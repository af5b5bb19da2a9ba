"""Run pages: the list, a new run (form or upload, preview, save), a run's page with its results."""

from __future__ import annotations

from flask import Blueprint

bp = Blueprint("runs", __name__, url_prefix="/runs")

from webapp.runs import new  # noqa: E402,F401  (registers the routes)
from webapp.runs import views  # noqa: E402,F401  (registers the routes)
