"""Server time of the run page for a 2,000-point log, cold (first view) and warm (plots cached).

Figure to reach (issue "The notebook"): run page ≤ 150 ms server time for a 2,000-point log.
The page is HTML with two pictures of the result (``plot.svg``: readings, drift model and
corrected ΔT; ``budget.svg``: the budget bars), which the browser fetches from the app. The
pictures are drawn on first request and kept per result id (webapp.plot_cache); saving or
re-analyzing a run from its page draws them at once, so a person's first view is warm.
"Cold" here clears the cache before every sample (as after a restart).

Timed with the Flask test client (in-process: server time, no network), SQLite.
"""

from __future__ import annotations

import re
from typing import Any

import pytest

from tests.benchmarks.webapp_bench import app_with_a_long_run, time_ms
from webapp.plot_cache import plot_cache

PASSWORD = "benchmark password"
TARGET_MS = 150.0


@pytest.fixture(scope="module")
def bench(tmp_path_factory: pytest.TempPathFactory) -> Any:
    yield from app_with_a_long_run(tmp_path_factory.mktemp("page-speed"))


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
        "page HTML, cold": time_ms(page, 15, clear),
        "page HTML, warm": time_ms(page, 30),
        "its two SVG plots, cold": time_ms(pictures, 10, clear),
        "its two SVG plots, warm": time_ms(pictures, 30),
        "page + plots, cold (first view after a restart)": time_ms(page_and_pictures, 10, clear),
        "page + plots, warm (cached; also the first view after a save)": time_ms(page_and_pictures, 30),
    }
    print(f"\nrun page, {run['points']} readings (target ≤ {TARGET_MS:.0f} ms server time):")
    for name, (med, p95) in rows.items():
        print(f"  {name:<64} median {med:6.1f} ms   p95 {p95:6.1f} ms")
    assert rows["page HTML, cold"][0] <= TARGET_MS
    assert rows["page + plots, cold (first view after a restart)"][0] <= TARGET_MS
    assert rows["page + plots, warm (cached; also the first view after a save)"][0] <= TARGET_MS
