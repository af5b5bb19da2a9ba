"""The database lifecycle: one engine per app, one session per request.

The engine is made by :func:`init_app` and kept in ``app.extensions``; the session
is opened on first use in a request (:func:`get_session`), cached on ``g`` and
closed in teardown, rolled back when the request failed. One ``connect`` listener
sets the SQLite pragmas (WAL, foreign keys, busy timeout). The session factory carries the
session hooks: :mod:`webapp.db.locked_runs` (a signed run cannot change) and
:mod:`webapp.db.webhook_queue` (locking a run queues its webhook deliveries).
"""

from __future__ import annotations

from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so
from flask import Flask, current_app, g

_EXT = "cupcal_db"


def normalize_url(url: str) -> str:
    """Return ``url`` with the psycopg 3 driver named for plain PostgreSQL URLs.

    ``postgres://`` and ``postgresql://`` (as hosting services write them) become
    ``postgresql+psycopg://``; other URLs are returned unchanged.
    """
    for prefix in ("postgres://", "postgresql://"):
        if url.startswith(prefix):
            return "postgresql+psycopg://" + url[len(prefix) :]
    return url


def make_engine(url: str, *, busy_timeout_ms: int = 5000, echo: bool = False) -> sa.Engine:
    """Create an engine for ``url``; SQLite connections get WAL, foreign keys and a busy timeout."""
    url = normalize_url(url)
    engine = sa.create_engine(url, echo=echo)
    if engine.dialect.name == "sqlite":

        @sa.event.listens_for(engine, "connect")
        def _sqlite_pragmas(dbapi_conn: Any, _record: Any) -> None:
            cur = dbapi_conn.cursor()
            cur.execute("PRAGMA foreign_keys=ON")
            cur.execute(f"PRAGMA busy_timeout={int(busy_timeout_ms)}")
            if ":memory:" not in url and url.rstrip("/") != "sqlite:":
                cur.execute("PRAGMA journal_mode=WAL")
            cur.close()

    return engine


def init_app(app: Flask) -> None:
    """Create the app's engine and session factory and register the teardown."""
    engine = make_engine(app.config["DATABASE_URL"], busy_timeout_ms=app.config["SQLITE_BUSY_TIMEOUT_MS"])
    factory = so.sessionmaker(bind=engine)
    from webapp.db import locked_runs, webhook_queue

    locked_runs.install(factory)  # signed runs stay immutable whatever path writes
    webhook_queue.install(factory)  # queue webhook deliveries when a run is locked
    app.extensions[_EXT] = {"engine": engine, "sessionmaker": factory}
    app.teardown_appcontext(close_session)


def get_engine(app: Flask | None = None) -> sa.Engine:
    """Return the engine of ``app`` (default: the current app)."""
    return (app or current_app).extensions[_EXT]["engine"]


def new_session(app: Flask | None = None) -> so.Session:
    """Return a new session of ``app`` (for commands and tests; requests use :func:`get_session`)."""
    return (app or current_app).extensions[_EXT]["sessionmaker"]()


def get_session() -> so.Session:
    """Return the request's session.

    The session is unique for each request and will be reused if this is called again.
    """
    if "db_session" not in g:
        g.db_session = new_session()
    return g.db_session


def close_session(exc: BaseException | None = None) -> None:
    """Close the request's session, rolling back first when the request failed."""
    session = g.pop("db_session", None)
    if session is None:
        return
    try:
        if exc is not None:
            session.rollback()
    finally:
        session.close()
