"""Run pages: the list, a run's page with its results, lock and re-analysis."""

from __future__ import annotations

from flask import Blueprint

bp = Blueprint("runs", __name__, url_prefix="/runs")

from webapp.runs import views  # noqa: E402,F401  (registers the routes)
