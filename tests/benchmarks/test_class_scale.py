"""A whole class at once: import of 900 runs, dashboard and CSV export of 900 runs (SQLite).

Figures to reach (issue "A whole class at once"): import of 900 runs (300 groups × 3) ≤ 30 s with
peak memory ≤ 400 MB (RSS, psutil); dashboard for 900 runs ≤ 300 ms server time; CSV export
≤ 1 s. Bulk import analyses without Monte Carlo (monte_carlo_trials=0). The runs are simulated
(calc.simulation.simulator, invented data) into a temporary folder before the clock starts.
"""

from __future__ import annotations

import time
from typing import Any

import pytest

from tests.benchmarks.classroom import COORDINATOR, class_notebook, simulate_class
from tests.benchmarks.webapp_bench import PeakRSS, print_timing, signed_in_client
from webapp.db import get_engine
from webapp.services.imports import files_from_folder, import_files

GROUPS, REPEATS = 300, 3


@pytest.fixture(scope="module")
def classroom(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Any]:
    d = tmp_path_factory.mktemp("class-scale")
    runs = d / "runs"
    t0 = time.perf_counter()
    simulate_class(runs, GROUPS, REPEATS, 2024, resolutions=(0.001, 0.01))
    print(f"\nsimulated {GROUPS * REPEATS} runs in {time.perf_counter() - t0:.1f} s (not timed below)")
    app, s, coord, section_id = class_notebook(d / "class.sqlite3", GROUPS)
    yield {"app": app, "session": s, "coord": coord, "runs": runs, "section_id": section_id}
    s.close()
    get_engine(app).dispose()


def test_import_900_runs(classroom: dict[str, Any]) -> None:
    files = files_from_folder(classroom["runs"])
    with PeakRSS() as mem:
        t0 = time.perf_counter()
        report = import_files(classroom["session"], classroom["coord"], classroom["section_id"], files)
        elapsed = time.perf_counter() - t0
    print(
        f"import of {report.count('stored')} runs: {elapsed:.1f} s ({1000 * elapsed / max(report.count('stored'), 1):.1f} ms/run), "
        f"peak RSS {mem.peak / 2**20:.0f} MB (targets ≤ 30 s, ≤ 400 MB); {report.summary}"
    )
    assert report.count("stored") + report.count("error") == GROUPS * REPEATS
    t0 = time.perf_counter()
    again = import_files(classroom["session"], classroom["coord"], classroom["section_id"], files)
    print(f"re-import (nothing changes): {time.perf_counter() - t0:.1f} s; {again.summary}")
    assert again.count("stored") == 0


def test_dashboard_and_export_of_900_runs(classroom: dict[str, Any]) -> None:
    client = signed_in_client(classroom["app"], *COORDINATOR)
    sid = classroom["section_id"]
    t0 = time.perf_counter()
    r = client.get(f"/classes/sections/{sid}/dashboard")
    print(f"dashboard page, first request (plot drawn, not yet cached): {1000 * (time.perf_counter() - t0):.0f} ms")
    assert r.status_code == 200 and "page 1 of 6" in r.get_data(as_text=True)  # 300 groups, 50 a page
    print_timing(
        "dashboard page, 900 runs, re-sorted (plot from its cache; table, statistics, feedback, group series)",
        lambda: client.get(f"/classes/sections/{sid}/dashboard?sort=value&dir=desc"),
        10,
        "target ≤ 300 ms",
    )
    print_timing("dashboard JSON, 900 runs", lambda: client.get(f"/api/sections/{sid}/dashboard"), 10)
    print_timing("CSV export, 900 runs", lambda: client.get(f"/classes/sections/{sid}/export.csv"), 10, "target ≤ 1 s")
    print_timing("xlsx export, 900 runs", lambda: client.get(f"/classes/sections/{sid}/export.xlsx"), 5)
