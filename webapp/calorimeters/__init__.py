"""Calorimeter pages: the list and a calorimeter's heat-capacity history."""

from __future__ import annotations

from webapp.calorimeters.blueprint import bp
from webapp.calorimeters import views  # noqa: F401  (registers the routes)

__all__ = ['bp']
