"""Server time of the notebook's pages (Flask test client, SQLite, no network).

Figures to reach (issue "The notebook"): run page ≤ 150 ms server time for a 2,000-point
log; list of 5,000 runs, paginated, ≤ 100 ms. The run page is timed as it is now, and
also with what the finished page adds (re-analysis of the stored files for the plot,
plus the run and budget SVGs from webapp.plots), so the budget left is visible.
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
import sqlalchemy as sa

from calc.simulate import simulate_dissolution
from calc.simulate import write_run
from webapp import create_app
from webapp.db import get_engine
from webapp.db import new_session
from webapp.migrate import upgrade
from webapp.models import Result
from webapp.models import Run
from webapp.services.people import create_person
from webapp.services.people import issue_token

PASSWORD = "benchmark password"
N_RUNS = 5000


def _time(fn: Callable[[], Any], n: int) -> tuple[float, float]:
    fn()  # warm-up: imports, caches, first query plans
    samples = []
    for _ in range(n):
        t0 = time.perf_counter()
        fn()
        samples.append(1000 * (time.perf_counter() - t0))
    samples.sort()
    return statistics.median(samples), samples[int(0.95 * (len(samples) - 1))]


@pytest.fixture(scope="module")
def bench(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Any]:
    d = tmp_path_factory.mktemp("webapp-bench")
    url = f"sqlite:///{d / 'bench.sqlite3'}"
    upgrade(url)
    app = create_app({"DATABASE_URL": url, "SECRET_KEY": "bench", "MONTE_CARLO_TRIALS": 0})
    s = new_session(app)
    coord = create_person(s, email="bench@lab.example", name="Bench", role="coordinator", password=PASSWORD,
                          password_method="scrypt:1024:8:1")
    token = issue_token(s, coord, "bench")[1]
    s.close()
    sim = simulate_dissolution(np.random.default_rng(11), fore_s=400.0, after_s=1600.0, dt=1.0)
    path = write_run(sim, d, "long")
    client = app.test_client()
    r = client.post("/api/runs", headers={"Authorization": f"Bearer {token}"}, content_type="multipart/form-data",
                    data={"run_file": (io.BytesIO(path.read_bytes()), "long.toml"),
                          "readings": (io.BytesIO(path.with_suffix(".csv").read_bytes()), "long.csv")})
    assert r.status_code == 201, r.get_json()
    run = r.get_json()
    page = client.get("/auth/login").get_data(as_text=True)
    csrf = re.search(r'name="csrf_token" type="hidden" value="([^"]+)"', page).group(1)
    client.post("/auth/login", data={"email": "bench@lab.example", "password": PASSWORD, "csrf_token": csrf})
    yield {"app": app, "client": client, "run": run, "token": token}
    get_engine(app).dispose()


def test_run_page_with_a_2000_point_log(bench: dict[str, Any]) -> None:
    client, run = bench["client"], bench["run"]
    assert run["points"] >= 2000
    med, p95 = _time(lambda: client.get(f"/runs/{run['id']}"), 30)
    print(f"\nrun page, {run['points']} readings: median {med:.1f} ms, p95 {p95:.1f} ms (target ≤ 150 ms)")

    from webapp import plots
    from webapp.services.runs import analysis_of

    app = bench["app"]

    def with_plots() -> None:
        s = new_session(app)
        try:
            stored = s.get(Run, run["id"])
            a = analysis_of(stored)
            plots.run_plot_svg(a)
            plots.budget_plot_svg(a.gum.budget, unit="kJ/mol")
        finally:
            s.close()

    pmed, pp95 = _time(with_plots, 15)
    print(f"what the finished page adds (re-analysis + run and budget SVG): median {pmed:.1f} ms, p95 {pp95:.1f} ms;"
          f" page total ≈ {med + pmed:.0f} ms")
    assert med <= 150


def _fill(app: Any, template_run_id: int, n: int) -> None:
    """Copy one stored run and its result ``n`` times (bulk insert, no analysis)."""
    s = new_session(app)
    try:
        run = s.get(Run, template_run_id)
        res = run.current_result
        cols = [c.key for c in sa.inspect(Run).column_attrs if c.key != "id"]
        rcols = [c.key for c in sa.inspect(Result).column_attrs if c.key not in ("id", "run_id")]
        base = {k: getattr(run, k) for k in cols}
        rbase = {k: getattr(res, k) for k in rcols}
        first = s.scalar(sa.select(sa.func.max(Run.id))) + 1
        s.execute(sa.insert(Run), [{**base, "id": first + i, "title": f"copy {i}"} for i in range(n)])
        s.execute(sa.insert(Result), [{**rbase, "run_id": first + i} for i in range(n)])
        s.commit()
    finally:
        s.close()


def test_list_of_5000_runs_paginated(bench: dict[str, Any]) -> None:
    app, client = bench["app"], bench["client"]
    _fill(app, bench["run"]["id"], N_RUNS - 1)
    h = {"Authorization": f"Bearer {bench['token']}"}
    assert client.get("/api/runs", headers=h).get_json()["total"] == N_RUNS
    pages = {
        "page /runs/ (first)": lambda: client.get("/runs/"),
        "page /runs/?page=50": lambda: client.get("/runs/?page=50"),
        "API /api/runs (first 50)": lambda: client.get("/api/runs", headers=h),
        "API /api/runs?page=100": lambda: client.get("/api/runs?page=100", headers=h),
    }
    worst = 0.0
    print()
    for name, fn in pages.items():
        med, p95 = _time(fn, 30)
        worst = max(worst, med)
        print(f"{name} of {N_RUNS} runs: median {med:.1f} ms, p95 {p95:.1f} ms (target ≤ 100 ms)")
    assert worst <= 100
