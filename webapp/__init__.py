"""cupcal's web notebook: runs, results and calorimeters in a database, pages and a JSON API.

:func:`create_app` is the only entry point; nothing (app, engine, session) exists at
module level.
"""

from __future__ import annotations

import os
import secrets
import tempfile
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from flask import Flask
from werkzeug.exceptions import NotFound

from webapp.models import MAX_ID

#: every setting with its default; the instance ``config.py``, then the environment
#: (``DATABASE_URL``, ``CUPCAL_SECRET_KEY``), then the mapping given to create_app override them.
#: The instance folder (``config.py``, ``secret_key``, the SQLite file) is ``CUPCAL_INSTANCE_PATH``
#: when set, else ``instance/`` beside the code
DEFAULTS: dict[str, Any] = {
    "SECRET_KEY": None,  # None: read or create ``secret_key`` in the instance folder
    "DATABASE_URL": None,  # None: SQLite file ``cupcal.sqlite3`` in the instance folder
    "SQLITE_BUSY_TIMEOUT_MS": 5000,
    "MAX_CONTENT_LENGTH": 4 * 1024 * 1024,  # uploads: run file + readings, bytes
    "CALIBRATION_DUE_DAYS": 30,  # a calorimeter is due when its last calibration is older
    "MONTE_CARLO_TRIALS": 100_000,  # JCGM 101 check made with every analysis (0: none)
    "PASSWORD_METHOD": "scrypt",  # werkzeug.security method for new passwords
    "API_PAGE_SIZE": 50,
    "API_MAX_PAGE_SIZE": 500,
    "PAGE_SIZE": 50,
    "SESSION_COOKIE_HTTPONLY": True,
    "SESSION_COOKIE_SAMESITE": "Lax",
    "CUPCAL_HTTPS": False,  # True (or env CUPCAL_HTTPS=1) behind HTTPS: Secure session cookie, HSTS (webapp/security.py)
    "EMBED_FRAME_ANCESTORS": "'self'",  # CSP frame-ancestors of the /embed/ routes only, e.g. "https://eln.example"
    "EMBED_LINK_MAX_AGE": 7 * 24 * 3600,  # seconds a signed card link stays valid
    "TRUST_PROXY_USER_HEADER": None,  # e.g. "X-Remote-User": only behind a proxy that strips it (README)
    # overrides of calc.limits (README, "Limits"), e.g. {"monte_carlo_trials": 20_000}; same keys as CUPCAL_LIMITS
    "LIMITS": {},
    "WEBHOOK_REQUIRE_HTTPS": None,  # None: required when CUPCAL_HTTPS is on (production); True/False to force
    "LIVE_STREAM_SECONDS": 50,  # a live page's event stream ends after this long; the browser reconnects
    # a live run is advised again once its newest reading is this many seconds (log clock) past the last
    # advised one (0: every batch); the advisor's cost grows with the log, and 30 benches share the server
    "LIVE_ADVICE_EVERY_S": 3.0,
    "WEBHOOK_ALLOW_PRIVATE": False,  # tests only: let a webhook reach a local receiver (never in production)
}


def create_app(config: Mapping[str, Any] | None = None) -> Flask:
    """Create and configure an instance of the notebook.

    :param config: settings that override all others (tests pass ``DATABASE_URL`` here)
    """
    folder = os.environ.get("CUPCAL_INSTANCE_PATH")  # e.g. /var/lib/cupcal; default: instance/ beside the code
    app = Flask(__name__, instance_relative_config=True, instance_path=os.path.abspath(folder) if folder else None)
    _load_settings(app, config)
    _check_limits(app)
    _register(app)
    return app


def _load_settings(app: Flask, config: Mapping[str, Any] | None) -> None:
    """Set ``app.config`` in order of precedence: DEFAULTS, ``config.py``, the environment, ``config``.

    What is still unset then is made: the SQLite file and the secret key, both in the instance folder.
    """
    app.config.from_mapping(DEFAULTS)
    app.config.from_pyfile("config.py", silent=True)
    if os.environ.get("DATABASE_URL"):
        app.config["DATABASE_URL"] = os.environ["DATABASE_URL"]
    if os.environ.get("CUPCAL_SECRET_KEY"):
        app.config["SECRET_KEY"] = os.environ["CUPCAL_SECRET_KEY"]
    if os.environ.get("CUPCAL_HTTPS"):
        app.config["CUPCAL_HTTPS"] = os.environ["CUPCAL_HTTPS"]
    if config is not None:
        app.config.from_mapping(config)
    if not app.config["DATABASE_URL"]:
        Path(app.instance_path).mkdir(parents=True, exist_ok=True)
        app.config["DATABASE_URL"] = "sqlite:///" + os.path.join(app.instance_path, "cupcal.sqlite3")
    if not app.config["SECRET_KEY"]:
        app.config["SECRET_KEY"] = _instance_secret(app)


def _check_limits(app: Flask) -> None:
    """Check ``LIMITS`` against calc's limits (and MONTE_CARLO_TRIALS within them); a bad one stops the start."""
    from calc import limits as calc_limits

    try:
        app.config["LIMITS"] = calc_limits.checked(app.config.get("LIMITS") or {})
    except calc_limits.InputError as exc:
        raise RuntimeError(f"cupcal configuration: {exc}") from None
    trials = int(app.config["MONTE_CARLO_TRIALS"])
    if trials > {**calc_limits.DEFAULTS, **app.config["LIMITS"]}["monte_carlo_trials"]:
        raise RuntimeError("cupcal configuration: MONTE_CARLO_TRIALS is over the limit monte_carlo_trials")


def _register(app: Flask) -> None:
    """Register the request hooks, the extensions and every blueprint."""
    from calc import limits as calc_limits
    from webapp import auth, db, error_handlers, security, templating
    from webapp.api import bp as api_bp
    from webapp.calorimeters import bp as calorimeters_bp
    from webapp.classes import bp as classes_bp
    from webapp.embed import bp as embed_bp
    from webapp.imports import bp as imports_bp
    from webapp.live import bp as live_bp
    from webapp.main import bp as main_bp
    from webapp.mounting import init_proxy_user
    from webapp.planning import bp as planning_bp
    from webapp.review import bp as review_bp
    from webapp.runs import bp as runs_bp

    app.before_request(lambda: calc_limits.set_for_context(app.config["LIMITS"]))
    app.before_request(_no_nul_in_text)
    app.url_value_preprocessor(_ids_in_range)
    db.init_app(app)
    auth.init_app(app)
    templating.init_app(app)
    error_handlers.init_app(app)
    security.init_app(app)
    app.register_blueprint(auth.bp)
    blueprints = (
        main_bp,
        runs_bp,
        calorimeters_bp,
        api_bp,
        classes_bp,
        imports_bp,
        planning_bp,
        embed_bp,
        review_bp,
        live_bp,
    )
    for bp in blueprints:
        app.register_blueprint(bp)
    init_proxy_user()
    auth.csrf.exempt(api_bp)  # the API takes no cookie sessions for writes: tokens only


#: endpoints that take a bulk import, whose own size limit (IMPORT_MAX_UPLOAD_BYTES) must be set before
#: anything reads the body (the check below reads the form)
_IMPORT_ENDPOINTS = frozenset({"api.import_runs_route", "api.import_eln_route"})


def _no_nul_in_text() -> None:
    """Refuse NUL in query and form values before any view reads them (PostgreSQL cannot store it)."""
    from flask import current_app, request

    from webapp.imports.views import IMPORT_MAX_UPLOAD_BYTES
    from webapp.services.jsontext import refuse_nul_in_form

    if request.blueprint == "imports" or request.endpoint in _IMPORT_ENDPOINTS:
        request.max_content_length = int(current_app.config.get("IMPORT_MAX_UPLOAD_BYTES", IMPORT_MAX_UPLOAD_BYTES))
    refuse_nul_in_form(request.args)
    if request.mimetype in ("multipart/form-data", "application/x-www-form-urlencoded"):
        refuse_nul_in_form(request.form)


def _ids_in_range(_endpoint: str | None, values: dict[str, Any] | None) -> None:
    """``<int:…>`` in a route: a number beyond what an INTEGER column holds names nothing (404),
    rather than reaching the database (PostgreSQL refuses it with an error)."""
    if values and any(isinstance(v, int) and v > MAX_ID for v in values.values()):
        raise NotFound()


def _instance_secret(app: Flask) -> str:
    """Return the instance's secret key, creating it (mode 600) on first use.

    Several server processes may start at once: the key is written to a private temporary file
    and linked into place, so every process ends up reading the one key that won.
    """
    folder = Path(app.instance_path)
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / "secret_key"
    if not path.exists():
        fd, tmp = tempfile.mkstemp(dir=folder, prefix=".secret_key.")  # mode 600
        try:
            with os.fdopen(fd, "w", encoding="ascii") as fh:
                fh.write(secrets.token_hex(32))
            os.link(tmp, path)
        except FileExistsError:
            pass  # another process made it first
        finally:
            os.unlink(tmp)
    return path.read_text(encoding="ascii").strip()


def mount(host_app: Any, prefix: str = "/cupcal", config: Mapping[str, Any] | None = None) -> Flask:
    """Serve cupcal under ``prefix`` of a host Flask app (see :mod:`webapp.mounting`); return cupcal's app."""
    from webapp.mounting import mount as _mount

    return _mount(host_app, prefix, config, create_app)
