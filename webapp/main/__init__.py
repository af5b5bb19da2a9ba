"""The home page: recent runs and calorimeters due for calibration."""

from __future__ import annotations

from webapp.main import views  # noqa: F401  (registers the routes)
from webapp.main.blueprint import bp

__all__ = ["bp"]
