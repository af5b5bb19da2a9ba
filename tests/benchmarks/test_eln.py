"""Figures of the .eln archive: exact round trip of the demo lab, a 900-run section, hostile archives.

Targets (issue "Exchange runs with other lab notebooks in the open .eln archive format"):
- the demo lab (as ``cupcal load-demo`` makes it: 100,000 Monte Carlo trials per run) exported and
  imported into an empty notebook comes back exactly (runs, files byte for byte, results number
  for number, audit fields);
- a section of 900 runs (300 groups × 3, simulated with calc.simulation.simulator, invented data, imported
  as in tests/benchmarks/test_class_scale.py) exports in ≤ 10 s and imports in ≤ 30 s, with peak
  memory (RSS, psutil) ≤ 400 MB for each;
- at least 10 hostile archives, each refused with a message of its own and nothing stored.
"""

from __future__ import annotations

import os
import time
from pathlib import Path
from typing import Any

import pytest

from tests.benchmarks.classroom import class_notebook, simulate_class
from tests.benchmarks.webapp_bench import FAST, PeakRSS
from tests.webapp.eln_helpers import HOSTILE, counts, demo_source, dispose, snapshot
from webapp import create_app
from webapp.db import new_session
from webapp.migrate import upgrade
from webapp.services import eln
from webapp.services.eln_import import import_eln
from webapp.services.errors import Invalid
from webapp.services.imports import files_from_folder, import_files
from webapp.services.people import create_person

GROUPS, REPEATS = 300, 3


def _met(ok: bool) -> str:
    return "met" if ok else "MISSED"


def _notebook(path: Path, email: str = "coord@bench.example") -> tuple[Any, Any, Any]:
    url = f"sqlite:///{path}"
    upgrade(url)
    app = create_app({"DATABASE_URL": url, "SECRET_KEY": "bench", "MONTE_CARLO_TRIALS": 0, "PASSWORD_METHOD": FAST})
    s = new_session(app)
    coord = create_person(
        s, email=email, name="Coordinator", role="coordinator", password="benchmark password", password_method=FAST
    )
    return app, s, coord


def test_round_trip_of_the_demo_lab(tmp_path: Path) -> None:
    src_app, data = demo_source(tmp_path, monte_carlo_trials=100_000)
    s = new_session(src_app)
    want = snapshot(s)
    s.close()
    app, session, me = _notebook(tmp_path / "empty.sqlite3", "someone.new@bench.example")
    t0 = time.perf_counter()
    report = import_eln(session, me, data, source="cupcal-notebook.eln", password_method=FAST)
    elapsed = time.perf_counter() - t0
    session.expire_all()
    got = snapshot(session)
    same_files = sum(
        a["files"] == b["files"] and a["files_bytes"] == b["files_bytes"] for a, b in zip(want["runs"], got["runs"])
    )
    same_results = sum(
        a["result"] == b["result"] and a["earlier_results"] == b["earlier_results"]
        for a, b in zip(want["runs"], got["runs"])
    )
    print(
        f"\ndemo lab round trip: archive {len(data) / 1024:.0f} KiB, import {elapsed:.2f} s; runs "
        f"{len(got['runs'])}/{len(want['runs'])}, files byte for byte {same_files}/{len(want['runs'])}, results "
        f"number for number {same_results}/{len(want['runs'])}, calorimeters equal: "
        f"{got['calorimeters'] == want['calorimeters']}, everything equal: {got == want}; {report.summary}"
    )
    assert got == want
    session.close()
    dispose(app)
    dispose(src_app)


@pytest.fixture(scope="module")
def section(tmp_path_factory: pytest.TempPathFactory) -> Any:
    d = tmp_path_factory.mktemp("eln-scale")
    simulate_class(d / "runs", GROUPS, REPEATS, 2025, resolutions=(0.001, 0.01))
    app, s, coord, section_id = class_notebook(d / "class.sqlite3", GROUPS)
    report = import_files(s, coord, section_id, files_from_folder(d / "runs"))
    assert report.count("stored") + report.count("error") == GROUPS * REPEATS
    yield {
        "dir": d,
        "app": app,
        "session": s,
        "coord": coord,
        "section_id": section_id,
        "stored": report.count("stored"),
    }
    s.close()
    dispose(app)


def test_a_section_of_900_runs(section: Any) -> None:
    s, app = section["session"], section["app"]
    s.expire_all()
    with app.app_context(), PeakRSS() as mem:
        t0, c0 = time.perf_counter(), time.process_time()
        name, data = eln.export_section(s, section["coord"], section["section_id"], eln.report_renderer())
        export_s, export_cpu = time.perf_counter() - t0, time.process_time() - c0
    print(
        f"\n(load average {os.getloadavg()[0]:.1f} on {os.cpu_count()} CPUs)\nexport of a section of "
        f"{section['stored']} runs: {export_s:.1f} s ({export_cpu:.1f} s CPU), archive {len(data) / 2**20:.1f} MiB, "
        f"peak RSS {mem.peak / 2**20:.0f} MB (targets ≤ 10 s, ≤ 400 MB): {_met(export_s <= 10)}"
    )
    target, ts, me = _notebook(section["dir"] / "empty.sqlite3", "new@bench.example")
    with PeakRSS() as mem2:
        t0, c0 = time.perf_counter(), time.process_time()
        report = import_eln(ts, me, data, source=name, password_method=FAST)
        import_s, import_cpu = time.perf_counter() - t0, time.process_time() - c0
    print(
        f"import of it into an empty notebook: {import_s:.1f} s ({import_cpu:.1f} s CPU; "
        f"{1000 * import_s / section['stored']:.1f} ms/run), peak RSS {mem2.peak / 2**20:.0f} MB (targets ≤ 30 s, "
        f"≤ 400 MB): {_met(import_s <= 30)}; {report.summary}"
    )
    print(
        f"(load average {os.getloadavg()[0]:.1f}: a loaded machine stretches the wall times; the CPU times do not "
        "count the waits)"
    )
    assert report.count("error") == 0 and counts(ts)[0] == section["stored"]
    assert max(mem.peak, mem2.peak) <= 400 * 2**20
    ts.close()
    dispose(target)


def test_hostile_archives(tmp_path: Path) -> None:
    app, session, me = _notebook(tmp_path / "hostile.sqlite3")
    messages = {}
    before = counts(session)
    for case, (make, expected) in sorted(HOSTILE.items()):
        with pytest.raises(Invalid) as err:
            import_eln(session, me, make(), source="a.eln", password_method=FAST)
        assert expected in err.value.message
        messages[case] = err.value.message
    print(
        f"\n{len(HOSTILE)} hostile archives, {len(set(messages.values()))} distinct messages, stored after: "
        f"{counts(session) == before and 'nothing' or 'SOMETHING'}"
    )
    for case, m in messages.items():
        print(f"  {case}: {m}")
    assert len(set(messages.values())) == len(HOSTILE) >= 10 and counts(session) == before
    session.close()
    dispose(app)
