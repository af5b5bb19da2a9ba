"""Security headers on every response, and the session cookie's flags.

Every response gets a Content-Security-Policy with no inline script (:data:`CSP`), unless
the view set its own (the ``/embed/`` cards with their configurable ``frame-ancestors``,
the SVG plots, the printable report); ``X-Content-Type-Options: nosniff``; a
``Referrer-Policy``; and ``X-Frame-Options: DENY`` except on the embed routes, which may be
framed by ``EMBED_FRAME_ANCESTORS``. Inline *styles* stay allowed: the SVG plots drawn into
pages carry ``style`` attributes.

The session cookie is always HttpOnly and SameSite=Lax; it is Secure (sent over HTTPS only)
when ``CUPCAL_HTTPS`` is on (config, or the environment variable ``CUPCAL_HTTPS=1``), which
also sends ``Strict-Transport-Security``. It is off by default so that ``cupcal serve`` on
plain http://127.0.0.1 keeps working; turn it on whenever the notebook is served over HTTPS.
"""

from __future__ import annotations

from flask import Flask, Response, request

#: the policy of every page, API answer and static file that sets none of its own
CSP = (
    "default-src 'self'; script-src 'self'; style-src 'self' 'unsafe-inline'; object-src 'none'; "
    "base-uri 'self'; form-action 'self'; frame-ancestors 'none'"
)
REFERRER_POLICY = "same-origin"
HSTS = "max-age=31536000"
#: blueprints whose routes may be framed (their own CSP names who may frame them)
FRAMEABLE_BLUEPRINTS = frozenset({"embed"})


def https_flag(value: object) -> bool:
    """Return whether a ``CUPCAL_HTTPS`` setting (bool, or text such as "1", "true", "yes") is on."""
    if isinstance(value, str):
        return value.strip().lower() in ("1", "true", "yes", "on")
    return bool(value)


def configure_cookies(app: Flask) -> None:
    """Set the session cookie's flags from the configuration (HttpOnly, SameSite=Lax; Secure under HTTPS)."""
    app.config["SESSION_COOKIE_HTTPONLY"] = True
    if not app.config.get("SESSION_COOKIE_SAMESITE"):
        app.config["SESSION_COOKIE_SAMESITE"] = "Lax"
    if https_flag(app.config.get("CUPCAL_HTTPS")):
        app.config["SESSION_COOKIE_SECURE"] = True
        app.config["REMEMBER_COOKIE_SECURE"] = True
        app.config["PREFERRED_URL_SCHEME"] = "https"


def init_app(app: Flask) -> None:
    """Configure the cookies and add the security headers to every response of ``app``."""
    configure_cookies(app)
    https = https_flag(app.config.get("CUPCAL_HTTPS"))

    @app.after_request
    def _security_headers(response: Response) -> Response:
        headers = response.headers
        headers.setdefault("Content-Security-Policy", CSP)
        headers.setdefault("X-Content-Type-Options", "nosniff")
        headers.setdefault("Referrer-Policy", REFERRER_POLICY)
        if request.blueprint not in FRAMEABLE_BLUEPRINTS:
            headers["X-Frame-Options"] = "DENY"
        if https:
            headers.setdefault("Strict-Transport-Security", HSTS)
        return response
