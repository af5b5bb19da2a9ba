"""Running cupcal inside a host application, and trusting a reverse proxy's identity header.

:func:`mount` serves a cupcal app under a URL prefix of a host WSGI app (werkzeug's
``DispatcherMiddleware``): requests under the prefix go to cupcal with ``SCRIPT_NAME`` set,
so every URL cupcal makes carries the prefix. cupcal keeps its own session cookie
(``cupcal_session``, path = the prefix) so it never clashes with the host's.

:func:`init_proxy_user` lets a request carrying the header named by
``TRUST_PROXY_USER_HEADER`` (e.g. ``X-Remote-User``) act as the active person with that
e-mail address. Off by default (None); see webapp/README.md for the risks.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from typing import Any

from flask import Flask, current_app
from werkzeug.middleware.dispatcher import DispatcherMiddleware


def mount(
    host_app: Any, prefix: str, config: Mapping[str, Any] | None, create_app: Callable[[Mapping[str, Any]], Flask]
) -> Flask:
    """Serve a new cupcal app under ``prefix`` of ``host_app`` (a Flask app or any WSGI app); return it.

    :param prefix: the URL prefix, starting with "/" and not ending with one
    :param config: settings for ``create_app``
    :param create_app: the app factory (:func:`webapp.create_app`, passed in so that this module does not
        import the package that imports it)
    """
    if not prefix.startswith("/") or prefix.endswith("/") or len(prefix) < 2:
        raise ValueError(f"expected a prefix like '/cupcal', got {prefix!r}")
    settings = {"SESSION_COOKIE_NAME": "cupcal_session", "SESSION_COOKIE_PATH": prefix, **(config or {})}
    app = create_app(settings)
    if isinstance(host_app, Flask):
        host_app.wsgi_app = DispatcherMiddleware(host_app.wsgi_app, {prefix: app})  # type: ignore[method-assign]
    else:
        raise TypeError(
            "expected a Flask app; for another WSGI app use "
            "DispatcherMiddleware(host, {prefix: create_app(...)}) yourself"
        )
    return app


def _person_from_header(request: Any) -> Any:
    header = current_app.config.get("TRUST_PROXY_USER_HEADER")
    if not header:
        return None
    email = (request.headers.get(header) or "").strip().lower()
    if not email:
        return None
    import sqlalchemy as sa

    from webapp.db import get_session
    from webapp.models import Person

    person = get_session().scalar(sa.select(Person).where(Person.email == email))
    return person if person is not None and person.active else None


def init_proxy_user() -> None:
    """Register the header check with Flask-Login (it runs only when the header is configured)."""
    from webapp.auth.blueprint import login_manager

    login_manager.request_loader(_person_from_header)
