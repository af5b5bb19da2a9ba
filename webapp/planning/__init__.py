"""The planning page: predict a run's ΔT and u(ΔH) before anyone pours (calc.plan)."""

from __future__ import annotations

from webapp.planning import views  # noqa: F401  (registers the routes)
from webapp.planning.blueprint import bp

__all__ = ["bp"]
