"""A tiny stand-in for the notebook's live-run API (tests and benchmarks of ``cupcal record``).

It follows the contract the notebook implements: ``POST /api/live-runs`` (idempotent on
``client_key``), ``POST /api/live-runs/<id>/readings`` (seq consecutive from 0, seq ≤ last_seq
ignored, at most 1000 per post, times strictly increasing, 409 once the run is not recording),
``POST /api/live-runs/<id>/finish`` and ``GET /api/live-runs/<id>``,
JSON bodies, ``Authorization: Bearer <token>``. It records when each reading arrived, and can be
told to answer 503 (``down = True``) to play a network fault.
"""

from __future__ import annotations

import json
import re
import threading
import time
from dataclasses import dataclass, field
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer
from typing import Any

TOKEN = "live-token-for-tests"


@dataclass
class LiveRun:
    id: int
    client_key: str
    run_file: str
    target_u: float | None
    readings: list[list[float]] = field(default_factory=list)
    arrived: dict[int, float] = field(default_factory=dict)  # seq → time.monotonic() at arrival
    state: str = "recording"
    csv: str | None = None

    @property
    def last_seq(self) -> int:
        return len(self.readings) - 1


class FakeNotebook:
    """Serve the live-run API on 127.0.0.1 in a thread; use as a context manager."""

    def __init__(self, token: str = TOKEN) -> None:
        self.token = token
        self.runs: dict[int, LiveRun] = {}
        self.down = False
        self.requests: list[tuple[str, str, int]] = []  # method, path, status
        self.lock = threading.Lock()
        self.server = ThreadingHTTPServer(("127.0.0.1", 0), _handler(self))
        self.server.daemon_threads = True
        self.thread = threading.Thread(target=self.server.serve_forever, daemon=True)

    @property
    def url(self) -> str:
        return f"http://127.0.0.1:{self.server.server_address[1]}"

    def __enter__(self) -> FakeNotebook:
        self.thread.start()
        return self

    def __exit__(self, *exc: object) -> None:
        self.server.shutdown()
        self.server.server_close()

    def handle(self, method: str, path: str, headers: Any, body: bytes) -> tuple[int, dict[str, Any]]:
        if self.down:
            return 503, {"error": "the notebook is down (test)"}
        if headers.get("Authorization") != f"Bearer {self.token}":
            return 401, {"error": "missing or wrong token", "field": "Authorization"}
        try:
            data = json.loads(body or b"{}") if method == "POST" else {}
        except ValueError:
            return 400, {"error": "the body is not JSON", "field": "body"}
        with self.lock:
            if method == "POST" and path == "/api/live-runs":
                return self._create(data)
            match = re.fullmatch(r"/api/live-runs/(\d+)(/readings|/finish)?", path)
            if match is None or int(match.group(1)) not in self.runs:
                return 404, {"error": f"no live run at {path}", "field": "id"}
            run = self.runs[int(match.group(1))]
            if method == "GET" and match.group(2) is None:
                return 200, {
                    "id": run.id,
                    "state": run.state,
                    "last_seq": run.last_seq,
                    "n_readings": len(run.readings),
                    "advice": None,
                    "run_id": None,
                }
            if method == "POST" and match.group(2) == "/readings":
                if run.state != "recording":
                    return 409, {
                        "error": f"live run {run.id} is {run.state}; it takes no more readings",
                        "field": "state",
                    }
                return self._readings(run, data)
            if method == "POST" and match.group(2) == "/finish":
                run.state, run.csv = "finished", data.get("readings_csv")
                return 200, {"run_id": 1000 + run.id, "run_url": f"/runs/{1000 + run.id}"}
        return 405, {"error": f"{method} not allowed on {path}"}

    def _create(self, data: dict[str, Any]) -> tuple[int, dict[str, Any]]:
        key, text = data.get("client_key"), data.get("run_file")
        if not isinstance(key, str) or not key or not isinstance(text, str):
            return 400, {"error": "client_key and run_file are required strings", "field": "client_key"}
        for run in self.runs.values():
            if run.client_key == key:
                return 200, {"id": run.id, "page_url": f"/live/{run.id}", "last_seq": run.last_seq, "state": run.state}
        run = LiveRun(len(self.runs) + 1, key, text, data.get("target_u"))
        self.runs[run.id] = run
        return 201, {"id": run.id, "page_url": f"/live/{run.id}", "last_seq": run.last_seq, "state": run.state}

    def _readings(self, run: LiveRun, data: dict[str, Any]) -> tuple[int, dict[str, Any]]:
        rows = data.get("readings")
        if not isinstance(rows, list):
            return 400, {"error": "readings must be a list of [seq, time_s, temperature_c]", "field": "readings"}
        if len(rows) > 1000:
            return 413, {"error": f"{len(rows)} readings in one post; at most 1000", "field": "readings"}
        stored, now = 0, time.monotonic()
        last_t = run.readings[-1][1] if run.readings else None
        for seq, t, c in rows:
            if seq <= run.last_seq:
                continue
            if last_t is not None and t <= last_t:  # the notebook takes strictly increasing times
                return 400, {"error": f"expected a time after {last_t!r} s, got {t!r}", "field": "readings"}
            last_t = t
            if seq != run.last_seq + 1:
                return 409, {
                    "error": f"seq {seq} after last_seq {run.last_seq}; expected consecutive seq",
                    "field": "readings",
                }
            run.readings.append([seq, t, c])
            run.arrived[seq] = now
            stored += 1
        return 200, {"stored": stored, "last_seq": run.last_seq}


def _handler(notebook: FakeNotebook) -> type[BaseHTTPRequestHandler]:
    class Handler(BaseHTTPRequestHandler):
        def _answer(self, method: str) -> None:
            length = int(self.headers.get("Content-Length") or 0)
            status, payload = notebook.handle(method, self.path, self.headers, self.rfile.read(length))
            notebook.requests.append((method, self.path, status))
            body = json.dumps(payload).encode()
            self.send_response(status)
            self.send_header("Content-Type", "application/json")
            self.send_header("Content-Length", str(len(body)))
            self.end_headers()
            try:
                self.wfile.write(body)
            except (ConnectionResetError, BrokenPipeError):  # the recorder was killed mid-request (the tests do)
                pass

        def do_POST(self) -> None:  # noqa: N802 - http.server's name
            self._answer("POST")

        def do_GET(self) -> None:  # noqa: N802
            self._answer("GET")

        def log_message(self, *args: Any) -> None:  # quiet
            pass

    return Handler
