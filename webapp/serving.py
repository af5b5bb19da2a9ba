"""Serving the notebook with several worker processes (gunicorn), for a lab rather than one desk.

:func:`serve_app` runs gunicorn's arbiter in this process with the app already made: the
database engine's connections are dropped before the workers are forked, and each worker
drops any it inherited, so no two processes share a database connection. Where gunicorn
cannot run (it needs a Unix-like system), :func:`serve_app` falls back to Werkzeug's threaded
server and says so.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

from flask import Flask

#: threads per gunicorn worker (the gthread worker class): open event streams plus ordinary requests
GTHREAD_THREADS = 32


def serve_app(app: Flask, host: str, port: int, workers: int, say: Callable[[str], None]) -> None:
    """Serve ``app`` on ``host:port`` with ``workers`` processes (1: Werkzeug's threaded server)."""
    from webapp.db import get_engine

    get_engine(app).dispose()  # no connection made here may cross into a worker
    if workers > 1:
        try:
            from gunicorn.app.base import BaseApplication
        except ImportError:  # gunicorn needs fcntl (not on Windows)
            say("gunicorn is not available on this system; serving with one process")
        else:
            _gunicorn(BaseApplication, app, host, port, workers).run()
            return
    app.run(host=host, port=port, debug=False, use_reloader=False, threaded=True)


def _gunicorn(base: type, app: Flask, host: str, port: int, workers: int) -> Any:
    from webapp.db import get_engine

    def post_fork(_server: Any, _worker: Any) -> None:
        get_engine(app).dispose(close=False)  # leave the parent's connections alone, open new ones

    # threads: a live run's event stream holds one thread for up to a minute (webapp/live/stream.py);
    # a sync worker would serve nothing else meanwhile
    options = {
        "bind": f"{host}:{port}",
        "workers": workers,
        "post_fork": post_fork,
        "worker_class": "gthread",
        "threads": GTHREAD_THREADS,
        "timeout": 120,
        "accesslog": "-",
        "errorlog": "-",
    }

    class Notebook(base):  # type: ignore[misc,valid-type]
        def load_config(self) -> None:
            for key, value in options.items():
                self.cfg.set(key, value)

        def load(self) -> Flask:
            return app

    return Notebook()


def port_problem(host: str, port: int) -> str | None:
    """Return why the notebook cannot listen on ``host:port`` (busy, no such address), or None."""
    import errno
    import socket

    try:
        infos = socket.getaddrinfo(host, port, type=socket.SOCK_STREAM)
    except socket.gaierror as exc:
        return f"cannot listen on {host}:{port}: unknown address ({exc.strerror})"
    family, kind, proto, _name, address = infos[0]
    with socket.socket(family, kind, proto) as probe:
        probe.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)  # as the servers themselves bind
        try:
            probe.bind(address)
        except OSError as exc:
            if exc.errno == errno.EADDRINUSE:
                return (
                    f"port {port} on {host} is already in use (another cupcal or another program); "
                    f"choose another with --port, e.g. cupcal serve --port {port + 1} (make run PORT={port + 1})"
                )
            return f"cannot listen on {host}:{port}: {exc.strerror or exc}"
    return None
