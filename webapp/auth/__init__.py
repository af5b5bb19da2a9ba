"""Signing in and out (sessions), CSRF protection, and the page for API tokens."""

from __future__ import annotations

from webapp.auth import (
    accounts,  # noqa: F401  (registers the account routes)
    views,  # noqa: F401  (registers the routes)
)
from webapp.auth.blueprint import bp, csrf, init_app, login_manager

__all__ = ["bp", "login_manager", "csrf", "init_app"]
