"""The ``auth`` blueprint object and what the routes share; the routes live beside it."""

from __future__ import annotations

from flask import Blueprint, Flask, redirect, request, url_for
from flask_login import LoginManager
from flask_wtf.csrf import CSRFProtect

bp = Blueprint("auth", __name__, url_prefix="/auth")
login_manager = LoginManager()
csrf = CSRFProtect()


def init_app(app: Flask) -> None:
    """Wire Flask-Login and CSRF protection into ``app``."""
    login_manager.init_app(app)
    csrf.init_app(app)


@login_manager.user_loader
def _load_person(person_id: str):  # type: ignore[no-untyped-def]
    from webapp.db import get_session
    from webapp.models import Person

    try:
        person = get_session().get(Person, int(person_id))
    except ValueError:
        return None
    return person if person is not None and person.active else None


@login_manager.unauthorized_handler
def _unauthorized():  # type: ignore[no-untyped-def]
    if request.path.startswith("/api/"):
        from webapp.error_handlers import json_error

        return json_error(401, "sign in, or send an API token: Authorization: Bearer <token>")
    return redirect(url_for("auth.login", next=request.full_path if request.query_string else request.path))
