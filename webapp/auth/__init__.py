"""Signing in and out (sessions), CSRF protection, and the page for API tokens."""

from __future__ import annotations

from webapp.auth.blueprint import bp, login_manager, csrf, init_app
from webapp.auth import views  # noqa: F401  (registers the routes)
from webapp.auth import accounts  # noqa: F401  (registers the account routes)

__all__ = ['bp', 'login_manager', 'csrf', 'init_app']
