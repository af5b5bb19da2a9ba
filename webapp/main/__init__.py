"""The home page: recent runs and calorimeters due for calibration."""

from __future__ import annotations

from flask import Blueprint

bp = Blueprint("main", __name__)

from webapp.main import views  # noqa: E402,F401  (registers the routes)
