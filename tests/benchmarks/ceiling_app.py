"""The ceiling of the load test's stack: a minimal Flask app with one endpoint returning a short text.

Served by the same gunicorn settings and hit by the same clients as the notebook
(tests/benchmarks/load_test.py --ceiling), it shows what the server, the loopback and the
clients alone allow on this machine.
"""

from __future__ import annotations

from flask import Flask


def create_app() -> Flask:
    """Return the app: ``GET /ping`` answers ``ok``."""
    app = Flask(__name__)

    @app.get("/ping")
    def ping() -> tuple[str, int, dict[str, str]]:
        return "ok\n", 200, {"Content-Type": "text/plain; charset=utf-8"}

    return app
