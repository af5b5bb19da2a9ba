"""Calorimeter pages: the list and a calorimeter's heat-capacity history."""

from __future__ import annotations

from webapp.calorimeters import views  # noqa: F401  (registers the routes)
from webapp.calorimeters.blueprint import bp

__all__ = ["bp"]
