"""Error responses: JSON ``{"error": "..."}`` under ``/api/``, a plain page elsewhere.

No request ends in a traceback: service errors carry their own status and message,
HTTP errors keep theirs, and anything unexpected is logged and answered with a 500.
"""

from __future__ import annotations

from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so
from flask import Flask, Response, current_app, flash, jsonify, render_template, request
from flask_wtf.csrf import CSRFError
from werkzeug.exceptions import HTTPException, RequestEntityTooLarge

from calc.errors import CupcalError
from calc.limits import LimitExceeded
from webapp.services.errors import ServiceError, Stale, storage_error


def flash_refusal(exc: ServiceError, prefix: str = "") -> None:
    """Tell a page's user why a service refused (``prefix`` first), on the page they go back to; nothing is stored.

    A 403 or 404 is raised on instead: the error page, which names nothing the person may not see.
    """
    from webapp.db import get_session

    get_session().rollback()
    if exc.status in (403, 404):
        raise exc
    flash(prefix + exc.message, "error")


def wants_json() -> bool:
    """Return whether the request is an API request."""
    return request.path.startswith("/api/")


def json_error(status: int, message: str, field: str | None = None) -> tuple[Response, int]:
    """Return the JSON error response."""
    body: dict[str, Any] = {"error": message}
    if field:
        body["field"] = field
    return jsonify(body), status


def _page_error(status: int, title: str, message: str) -> tuple[str, int]:
    return render_template("error.html", status=status, title=title, message=message), status


def _too_large_message() -> str:
    # the limit of this request: a run upload's (MAX_CONTENT_LENGTH) or a bulk import's
    # (IMPORT_MAX_UPLOAD_BYTES), which its view sets before reading the body
    limit = request.max_content_length or 0
    return (
        f"the upload is larger than the limit of {limit // 1024} KiB for this request "
        "(all its files together); nothing was read or saved"
    )


def _roll_back_request_session() -> None:
    """Roll back the request's failed transaction, so the error page can still read (the person
    signed in, say) instead of failing again on the same session."""
    from flask import g

    session = g.get("db_session")
    if session is not None:
        try:
            session.rollback()
        except sa.exc.SQLAlchemyError:  # the connection itself is gone; the page reads nothing more
            pass


def _service_error(exc: ServiceError):  # type: ignore[no-untyped-def]
    _roll_back_request_session()
    if wants_json():
        response, status = json_error(exc.status, exc.message, exc.field)
        current = getattr(exc, "current", None)
        if current:
            response = jsonify({**response.get_json(), "current": current})
        return response, status
    if isinstance(exc, Stale):
        return _page_error(exc.status, "Changed by someone else", exc.message)
    return _page_error(exc.status, "That did not work", exc.message)


def _stale_row(exc: so.exc.StaleDataError):  # type: ignore[no-untyped-def]
    return _service_error(
        Stale(
            "it was changed by someone else while this request ran; nothing was "
            "saved. Reload it, then make your change again"
        )
    )


def _calc_error(exc: CupcalError):  # type: ignore[no-untyped-def]
    # a limit of calc.limits passed (413) or other bad input that calc found (400)
    status = 413 if isinstance(exc, LimitExceeded) else 400
    field = getattr(exc, "field", None)
    _roll_back_request_session()
    if wants_json():
        return json_error(status, str(exc), field)
    return _page_error(status, "Too large" if status == 413 else "That did not work", str(exc))


def _csrf_error(exc: CSRFError):  # type: ignore[no-untyped-def]
    return _page_error(400, "The form has expired", "Reload the page and send the form again.")


def _too_large(exc: RequestEntityTooLarge):  # type: ignore[no-untyped-def]
    if wants_json():
        return json_error(413, _too_large_message(), "upload")
    return _page_error(413, "Upload too large", _too_large_message())


def _http_error(exc: HTTPException):  # type: ignore[no-untyped-def]
    status = exc.code or 500
    if wants_json():
        response, status = json_error(status, exc.description or exc.name)
    else:
        page, status = _page_error(status, exc.name, exc.description or "")
        response = Response(page, status=status, mimetype="text/html")
    for name, value in exc.get_headers():  # e.g. Allow of a 405 (RFC 9110, 15.5.6)
        if name.lower() != "content-type":
            response.headers[name] = value
    return response, status


def _storage_error(exc: sa.exc.DBAPIError):  # type: ignore[no-untyped-def]
    _roll_back_request_session()
    failure = storage_error(exc)
    if failure is None:  # not an operational failure after all
        return _unexpected(exc)
    current_app.logger.error("database failure on %s %s: %s", request.method, request.path, failure.message)
    if wants_json():
        return json_error(failure.status, failure.message)
    return _page_error(failure.status, "Not saved", failure.message)


def _unexpected(exc: Exception):  # type: ignore[no-untyped-def]
    current_app.logger.exception("unexpected error on %s %s", request.method, request.path)
    _roll_back_request_session()
    if wants_json():
        return json_error(500, "internal error; the request was not carried out")
    return _page_error(500, "Internal error", "The request was not carried out.")


#: every handler with the errors it answers (Flask picks the most specific class, whatever the order)
HANDLERS = (
    (ServiceError, _service_error),
    (so.exc.StaleDataError, _stale_row),
    (CupcalError, _calc_error),
    (CSRFError, _csrf_error),
    (RequestEntityTooLarge, _too_large),
    (HTTPException, _http_error),
    (sa.exc.InterfaceError, _storage_error),
    (sa.exc.OperationalError, _storage_error),
    (Exception, _unexpected),
)


def init_app(app: Flask) -> None:
    """Register the error handlers."""
    for kind, handler in HANDLERS:
        app.register_error_handler(kind, handler)
