"""The client side of the load test (tests/benchmarks/load_test.py): plain HTTP clients, one process each.

Standard library only, so that a client process stays small and cheap next to the server on a
2-core machine. Each client signs in (session cookie for the pages), then loops: create one run
(multipart ``POST /api/runs`` with its API token), read its page, its plot and the API (list and
one run), until the runs are all created and the duration has passed. Every request is recorded:
kind, status, latency, start time, and what went wrong.
"""

from __future__ import annotations

import http.client
import json
import random
import re
import resource
import time
import uuid
from dataclasses import dataclass, field
from typing import Any
from urllib.parse import urlencode

#: the status each kind of request must get; any other status (or a connection error) is an error
EXPECTED = {"create": 201, "page": 200, "plot": 200, "api-list": 200, "api-read": 200, "ping": 200}
KINDS = ("create", "page", "plot", "api-list", "api-read", "ping")
BODY_EXCERPT = 300


@dataclass
class ClientPlan:
    """What one client process does (picklable: it is sent to the process)."""

    index: int
    port: int
    email: str
    password: str
    token: str
    tag: str  # unique per load-test invocation: makes every upload distinguishable
    demo: list[tuple[str, str, bytes]]  # (name, run file text, readings bytes), uploaded in turn
    duration_s: float
    max_seconds: float
    ping_only: bool = False


@dataclass
class ClientReport:
    """What a client process sends back."""

    index: int
    records: list[tuple[str, int, float, float, str]] = field(default_factory=list)  # kind, status, ms, t, note
    created: list[tuple[int, str, int]] = field(default_factory=list)  # seq, title, run id
    cpu_s: float = 0.0
    failure: str = ""  # sign-in failed or the client crashed (the run fails)


class Http:
    """One connection per request (gunicorn's sync workers close it after each response)."""

    def __init__(self, port: int) -> None:
        self.port = port
        self.cookie = ""

    def request(
        self, method: str, path: str, body: bytes | None = None, headers: dict[str, str] | None = None
    ) -> tuple[int, bytes, dict[str, str]]:
        hdrs = dict(headers or {})
        if self.cookie:
            hdrs["Cookie"] = self.cookie
        conn = http.client.HTTPConnection("127.0.0.1", self.port, timeout=120)
        try:
            conn.request(method, path, body=body, headers=hdrs)
            resp = conn.getresponse()
            data = resp.read()
            out = {k.lower(): v for k, v in resp.getheaders()}
            cookie = resp.getheader("Set-Cookie")
            if cookie and cookie.startswith("session="):
                self.cookie = cookie.split(";", 1)[0]
            return resp.status, data, out
        finally:
            conn.close()


def multipart(fields: dict[str, tuple[str, bytes]]) -> tuple[bytes, str]:
    """Return a multipart/form-data body of file fields ``name -> (file name, bytes)`` and its type."""
    boundary = "cupcal-load-" + uuid.uuid4().hex
    parts = []
    for name, (filename, data) in fields.items():
        parts.append(
            f'--{boundary}\r\nContent-Disposition: form-data; name="{name}"; filename="{filename}"\r\n'
            f"Content-Type: application/octet-stream\r\n\r\n".encode("ascii")
            + data
            + b"\r\n"
        )
    parts.append(f"--{boundary}--\r\n".encode("ascii"))
    return b"".join(parts), f"multipart/form-data; boundary={boundary}"


def unique_upload(demo: tuple[str, str, bytes], seq: int, tag: str) -> tuple[str, str, bytes]:
    """Return (title, run file, readings) of upload ``seq``: a unique title and shifted temperatures.

    The readings are offset by a whole number of hundredths of a kelvin (−0.20 … +0.20 K), so
    the temperature difference the analysis measures is unchanged but no two uploads are alike.
    """
    name, toml, csv = demo
    title = f"load {tag} #{seq:05d}"
    text, n = re.subn(r'(?m)^title = ".*"$', f'title = "{title}"', toml, count=1)
    if n != 1:
        raise ValueError(f"{name}.toml has no [info] title line")
    offset = (seq % 41 - 20) / 100
    lines = csv.decode("utf-8").splitlines()
    rows = [lines[0]]
    for line in lines[1:]:
        t, temp = line.split(",")
        rows.append(f"{t},{float(temp) + offset:.2f}")
    return title, text, ("\n".join(rows) + "\n").encode("utf-8")


def sign_in(http: Http, email: str, password: str) -> None:
    """Sign in through the form (CSRF token and session cookie); raise RuntimeError when it fails."""
    status, body, _ = http.request("GET", "/auth/login")
    m = re.search(rb'name="csrf_token" type="hidden" value="([^"]+)"', body)
    if status != 200 or not m:
        raise RuntimeError(f"GET /auth/login: status {status}, no CSRF token")
    form = urlencode({"email": email, "password": password, "csrf_token": m.group(1).decode()}).encode()
    status, body, _ = http.request("POST", "/auth/login", form, {"Content-Type": "application/x-www-form-urlencoded"})
    if status != 302:
        raise RuntimeError(f"POST /auth/login: status {status}: {body[:BODY_EXCERPT]!r}")


def run_client(
    plan: ClientPlan, counter: Any, runs_total: int, ready: Any, start: Any, t0_shared: Any, out: Any
) -> None:
    """The body of one client process: sign in, say ready, wait for the start, loop, put a ClientReport on ``out``.

    ``counter`` (a shared integer) hands out the sequence numbers of the runs to create, so
    the clients together create exactly ``runs_total`` runs.
    """
    report = ClientReport(plan.index)
    http = Http(plan.port)
    rng = random.Random(plan.index)
    try:
        if not plan.ping_only:
            sign_in(http, plan.email, plan.password)
    except Exception as exc:  # noqa: BLE001 - reported, the run fails
        report.failure = f"{type(exc).__name__}: {exc}"
    ready.put(plan.index)
    start.wait()
    t0 = t0_shared.value
    auth = {"Authorization": f"Bearer {plan.token}"}
    mine: list[tuple[int, int]] = []  # (run id, result id) of my runs

    def call(
        kind: str, method: str, path: str, body: bytes | None = None, headers: dict[str, str] | None = None
    ) -> bytes | None:
        began = time.time()
        try:
            status, data, _ = http.request(method, path, body, headers)
            note = "" if status == EXPECTED[kind] else f"{method} {path}: {data[:BODY_EXCERPT]!r}"
        except (OSError, http.client.HTTPException) as exc:
            status, data, note = 0, b"", f"{method} {path}: {type(exc).__name__}: {exc}"
        report.records.append((kind, status, 1000 * (time.time() - began), began - t0, note))
        return data if not note else None

    try:
        while not report.failure:
            elapsed = time.time() - t0
            if elapsed > plan.max_seconds:
                break
            if plan.ping_only:
                if elapsed >= plan.duration_s:
                    break
                call("ping", "GET", "/ping")
                continue
            with counter.get_lock():
                seq = counter.value if counter.value < runs_total else None
                if seq is not None:
                    counter.value += 1
            if seq is None and elapsed >= plan.duration_s:
                break
            target = None
            if seq is not None:
                title, toml, csv = unique_upload(plan.demo[seq % len(plan.demo)], seq, plan.tag)
                name = plan.demo[seq % len(plan.demo)][0]
                body, ctype = multipart(
                    {"run_file": (f"{name}.toml", toml.encode("utf-8")), "readings": (f"{name}.csv", csv)}
                )
                data = call("create", "POST", "/api/runs", body, {**auth, "Content-Type": ctype})
                if data is not None:
                    run = json.loads(data)
                    report.created.append((seq, title, int(run["id"])))
                    target = (int(run["id"]), int(run["current_result"]["id"]))
                    mine.append(target)
            if not mine:
                if seq is None:
                    break  # nothing of mine to read and nothing left to create
                continue
            target = target or rng.choice(mine)
            call("page", "GET", f"/runs/{target[0]}")
            call("plot", "GET", f"/runs/{target[0]}/results/{target[1]}/plot.svg")
            call("api-list", "GET", "/api/runs", headers=auth)
            call("api-read", "GET", f"/api/runs/{rng.choice(mine)[0]}", headers=auth)
    except Exception as exc:  # noqa: BLE001 - a crashed client fails the run, with the reason
        report.failure = f"client crashed: {type(exc).__name__}: {exc}"
    usage = resource.getrusage(resource.RUSAGE_SELF)
    report.cpu_s = usage.ru_utime + usage.ru_stime
    out.put(report)


# ----------------------------------------------------------------- statistics


def percentile(sorted_values: list[float], q: float) -> float:
    """Return the ``q`` quantile (0–1) of sorted values, interpolated linearly between ranks."""
    if not sorted_values:
        return float("nan")
    pos = q * (len(sorted_values) - 1)
    lo = int(pos)
    hi = min(lo + 1, len(sorted_values) - 1)
    return sorted_values[lo] + (sorted_values[hi] - sorted_values[lo]) * (pos - lo)


def summarize(records: list[tuple[str, int, float, float, str]], wall_s: float) -> dict[str, dict[str, float]]:
    """Return count, errors, p50/p95/p99/max latency (ms) and throughput (req/s) per kind and overall."""
    rows: dict[str, dict[str, float]] = {}
    groups = {k: [r for r in records if r[0] == k] for k in KINDS}
    groups["overall"] = list(records)
    for kind, recs in groups.items():
        if not recs:
            continue
        ms = sorted(r[2] for r in recs)
        rows[kind] = {
            "count": len(recs),
            "errors": sum(1 for r in recs if r[4]),
            "p50_ms": percentile(ms, 0.50),
            "p95_ms": percentile(ms, 0.95),
            "p99_ms": percentile(ms, 0.99),
            "max_ms": ms[-1],
            "req_per_s": len(recs) / wall_s,
        }
    return rows


def table(rows: dict[str, dict[str, float]]) -> str:
    """Return the rows of :func:`summarize` as a text table."""
    head = (
        f"{'kind':<10} {'count':>7} {'errors':>6} {'p50 ms':>8} {'p95 ms':>8} {'p99 ms':>8} {'max ms':>8} {'req/s':>8}"
    )
    out = [head, "-" * len(head)]
    for kind, r in rows.items():
        out.append(
            f"{kind:<10} {r['count']:>7} {r['errors']:>6} {r['p50_ms']:>8.1f} {r['p95_ms']:>8.1f} "
            f"{r['p99_ms']:>8.1f} {r['max_ms']:>8.1f} {r['req_per_s']:>8.1f}"
        )
    return "\n".join(out)
