"""Shared pieces of the notebook's benchmarks: a timer and an app holding one long run."""

from __future__ import annotations

import io
import re
import statistics
import threading
import time
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any

import numpy as np
import psutil

from calc.simulation.simulator import simulate_dissolution, write_run
from webapp import create_app
from webapp.db import get_engine, new_session
from webapp.migrate import upgrade
from webapp.services.people import create_person, issue_token

PASSWORD = "benchmark password"
FAST = "scrypt:1024:8:1"  # a quick password hash for benchmark accounts


class PeakRSS:
    """Sample this process's resident memory every 20 ms in a thread; ``peak`` in bytes."""

    def __init__(self) -> None:
        self.proc = psutil.Process()
        self.peak = self.proc.memory_info().rss
        self._stop = threading.Event()
        self._t = threading.Thread(target=self._run, daemon=True)

    def _run(self) -> None:
        while not self._stop.is_set():
            self.peak = max(self.peak, self.proc.memory_info().rss)
            time.sleep(0.02)

    def __enter__(self) -> PeakRSS:
        self._t.start()
        return self

    def __exit__(self, *exc: Any) -> None:
        self._stop.set()
        self._t.join()
        self.peak = max(self.peak, self.proc.memory_info().rss)


def time_ms(fn: Callable[[], Any], n: int, before: Callable[[], None] | None = None) -> tuple[float, float]:
    """Return the median and the 95th percentile of ``n`` timings of ``fn`` in ms (``before`` untimed)."""
    if before:
        before()
    fn()  # warm-up: imports, caches, first query plans
    samples = []
    for _ in range(n):
        if before:
            before()
        t0 = time.perf_counter()
        fn()
        samples.append(1000 * (time.perf_counter() - t0))
    samples.sort()
    return statistics.median(samples), samples[int(0.95 * (len(samples) - 1))]


def print_timing(what: str, fn: Callable[[], Any], n: int, target: str | None = None) -> float:
    """Time ``fn`` as ``time_ms`` does, print ``what: median … ms, p95 … ms (target)`` and return the p95 in ms."""
    med, p95 = time_ms(fn, n)
    print(f"{what}: median {med:.0f} ms, p95 {p95:.0f} ms" + (f" ({target})" if target else ""))
    return p95


def signed_in_client(app: Any, email: str, password: str) -> Any:
    """Return a test client of ``app`` signed in through the sign-in page's form."""
    client = app.test_client()
    page = client.get("/auth/login").get_data(as_text=True)
    csrf = re.search(r'name="csrf_token" type="hidden" value="([^"]+)"', page).group(1)
    client.post("/auth/login", data={"email": email, "password": password, "csrf_token": csrf})
    return client


def app_with_a_long_run(d: Path) -> Iterator[dict[str, Any]]:
    """Yield an app on a fresh SQLite file with one 2,000-point run and a signed-in coordinator client."""
    url = f"sqlite:///{d / 'bench.sqlite3'}"
    upgrade(url)
    app = create_app({"DATABASE_URL": url, "SECRET_KEY": "bench", "MONTE_CARLO_TRIALS": 0})
    s = new_session(app)
    coord = create_person(
        s,
        email="bench@lab.example",
        name="Bench",
        role="coordinator",
        password=PASSWORD,
        password_method="scrypt:1024:8:1",
    )
    token = issue_token(s, coord, "bench")[1]
    s.close()
    sim = simulate_dissolution(np.random.default_rng(11), fore_s=400.0, after_s=1600.0, dt=1.0)
    path = write_run(sim, d, "long")
    client = app.test_client()
    r = client.post(
        "/api/runs",
        headers={"Authorization": f"Bearer {token}"},
        content_type="multipart/form-data",
        data={
            "run_file": (io.BytesIO(path.read_bytes()), "long.toml"),
            "readings": (io.BytesIO(path.with_suffix(".csv").read_bytes()), "long.csv"),
        },
    )
    assert r.status_code == 201, r.get_json()
    page = client.get("/auth/login").get_data(as_text=True)
    csrf = re.search(r'name="csrf_token" type="hidden" value="([^"]+)"', page).group(1)
    client.post("/auth/login", data={"email": "bench@lab.example", "password": PASSWORD, "csrf_token": csrf})
    yield {"app": app, "client": client, "run": r.get_json(), "token": token}
    get_engine(app).dispose()
