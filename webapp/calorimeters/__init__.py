"""Calorimeter pages: the list and a calorimeter's heat-capacity history."""

from __future__ import annotations

from flask import Blueprint

bp = Blueprint("calorimeters", __name__, url_prefix="/calorimeters")

from webapp.calorimeters import views  # noqa: E402,F401  (registers the routes)
