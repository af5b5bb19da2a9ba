"""The planning page: predict a run's ΔT and u(ΔH) before anyone pours (calc.plan)."""

from __future__ import annotations

from flask import Blueprint

bp = Blueprint("planning", __name__)

from webapp.planning import views  # noqa: E402,F401  (registers the routes)
