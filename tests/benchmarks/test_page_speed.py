"""Server time of the run page for a 2,000-point log, cold (first view) and warm (plots cached).

Figure to reach (issue "The notebook"): run page ≤ 150 ms server time for a 2,000-point log.
The page is HTML with two pictures of the result (``plot.svg``: readings, drift model and
corrected ΔT; ``budget.svg``: the budget bars), which the browser fetches from the app. The
pictures are drawn on first request and kept per result id (webapp.plot_cache); saving or
re-analysing a run from its page draws them at once, so a person's first view is warm.
"Cold" here clears the cache before every sample (as after a restart).

Timed with the Flask test client (in-process: server time, no network), SQLite.
"""

from __future__ import annotations

import io
import re
import statistics
import time
from collections.abc import Callable
from typing import Any

import numpy as np
import pytest

from calc.simulate import simulate_dissolution
from calc.simulate import write_run
from webapp import create_app
from webapp.db import get_engine
from webapp.db import new_session
from webapp.migrate import upgrade
from webapp.plot_cache import plot_cache
from webapp.services.people import create_person
from webapp.services.people import issue_token

PASSWORD = "benchmark password"
TARGET_MS = 150.0


def _time(fn: Callable[[], Any], n: int, before: Callable[[], None] | None = None) -> tuple[float, float]:
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


@pytest.fixture(scope="module")
def bench(tmp_path_factory: pytest.TempPathFactory) -> Any:
    d = tmp_path_factory.mktemp("page-speed")
    url = f"sqlite:///{d / 'bench.sqlite3'}"
    upgrade(url)
    app = create_app({"DATABASE_URL": url, "SECRET_KEY": "bench", "MONTE_CARLO_TRIALS": 0})
    s = new_session(app)
    person = create_person(s, email="bench@lab.example", name="Bench", role="coordinator", password=PASSWORD,
                           password_method="scrypt:1024:8:1")
    token = issue_token(s, person, "bench")[1]
    s.close()
    sim = simulate_dissolution(np.random.default_rng(11), fore_s=400.0, after_s=1600.0, dt=1.0)
    path = write_run(sim, d, "long")
    client = app.test_client()
    r = client.post("/api/runs", headers={"Authorization": f"Bearer {token}"}, content_type="multipart/form-data",
                    data={"run_file": (io.BytesIO(path.read_bytes()), "long.toml"),
                          "readings": (io.BytesIO(path.with_suffix(".csv").read_bytes()), "long.csv")})
    assert r.status_code == 201, r.get_json()
    page = client.get("/auth/login").get_data(as_text=True)
    csrf = re.search(r'name="csrf_token" type="hidden" value="([^"]+)"', page).group(1)
    client.post("/auth/login", data={"email": "bench@lab.example", "password": PASSWORD, "csrf_token": csrf})
    yield {"app": app, "client": client, "run": r.get_json()}
    get_engine(app).dispose()


def test_run_page_of_a_2000_point_log_cold_and_warm(bench: Any) -> None:
    app, client, run = bench["app"], bench["client"], bench["run"]
    assert run["points"] >= 2000
    html = client.get(f"/runs/{run['id']}").get_data(as_text=True)
    images = re.findall(r'<img src="([^"]+\.svg)"', html)
    assert len(images) == 2

    def page() -> None:
        assert client.get(f"/runs/{run['id']}").status_code == 200

    def pictures() -> None:
        for src in images:
            assert client.get(src).status_code == 200

    def page_and_pictures() -> None:
        page()
        pictures()

    clear = plot_cache(app).clear
    rows = {
        "page HTML, cold": _time(page, 15, clear),
        "page HTML, warm": _time(page, 30),
        "its two SVG plots, cold": _time(pictures, 10, clear),
        "its two SVG plots, warm": _time(pictures, 30),
        "page + plots, cold (first view after a restart)": _time(page_and_pictures, 10, clear),
        "page + plots, warm (cached; also the first view after a save)": _time(page_and_pictures, 30),
    }
    print(f"\nrun page, {run['points']} readings (target ≤ {TARGET_MS:.0f} ms server time):")
    for name, (med, p95) in rows.items():
        print(f"  {name:<64} median {med:6.1f} ms   p95 {p95:6.1f} ms")
    assert rows["page HTML, cold"][0] <= TARGET_MS
    assert rows["page + plots, cold (first view after a restart)"][0] <= TARGET_MS
    assert rows["page + plots, warm (cached; also the first view after a save)"][0] <= TARGET_MS
