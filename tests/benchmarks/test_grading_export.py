"""Grading export of a section of 80 groups × 3 runs, with comments, marks and one excluded run (SQLite).

Figure to reach (issue "The teaching lab's day"): grading export ≤ 1 s. Also timed: the section
dashboard with the review columns and comments, and the run page with its review panel. The runs are
simulated (calc.simulation.simulator, invented data) before the clock starts; bulk import analyses without Monte
Carlo. Run with ``python -m pytest -q -s tests/benchmarks/test_grading_export.py -p no:cacheprovider
-o addopts=""``.
"""

from __future__ import annotations

from typing import Any

import pytest
import sqlalchemy as sa

from tests.benchmarks.classroom import simulate_class
from tests.benchmarks.webapp_bench import print_timing, signed_in_client
from webapp import create_app
from webapp.db import get_engine, new_session
from webapp.migrate import upgrade

GROUPS, REPEATS = 80, 3
FAST = "scrypt:1024:8:1"


@pytest.fixture(scope="module")
def section(tmp_path_factory: pytest.TempPathFactory) -> Any:
    from webapp.models import Group, Run, Section
    from webapp.services.classes import import_roster
    from webapp.services.comments import add_group_comment, add_run_comment
    from webapp.services.imports import files_from_folder, import_files
    from webapp.services.marks import set_mark, set_scheme
    from webapp.services.people import create_person
    from webapp.services.review import review_run

    d = tmp_path_factory.mktemp("grading")
    simulate_class(d / "runs", GROUPS, REPEATS, 2026)
    url = f"sqlite:///{d / 'grading.sqlite3'}"
    upgrade(url)
    app = create_app({"DATABASE_URL": url, "SECRET_KEY": "bench", "MONTE_CARLO_TRIALS": 0, "PASSWORD_METHOD": FAST})
    s = new_session(app)
    coord = create_person(
        s,
        email="coord@bench.example",
        name="Coordinator",
        role="coordinator",
        password="benchmark password",
        password_method=FAST,
    )
    roster = "course,section,group,name,email,role\n" + "".join(
        f"Grading Course,S1,G{g:03d},Student {g} {m},s{g}-{m}@bench.example,student\n"
        for g in range(GROUPS)
        for m in ("a", "b")
    )
    import_roster(s, coord, roster, password_method=FAST)
    sid = s.scalar(sa.select(Section.id))
    assert import_files(s, coord, sid, files_from_folder(d / "runs")).count("stored") == GROUPS * REPEATS
    set_scheme(s, coord, sid, en="1=6, 2=3, *=0", relative="2%=4, 5%=2, *=0")
    runs = list(s.scalars(sa.select(Run.id).order_by(Run.id)))
    for gid in s.scalars(sa.select(Group.id).where(Group.section_id == sid)):
        add_group_comment(s, coord, gid, "Invented comment for the benchmark.")
    for rid in runs[::3]:
        add_run_comment(s, coord, rid, "Invented run comment.")
    review_run(s, coord, runs[5], "exclude", "benchmark exclusion")
    set_mark(s, coord, runs[7], 9.0, "benchmark override")
    client = signed_in_client(app, "coord@bench.example", "benchmark password")
    yield {"client": client, "section_id": sid, "run_id": runs[7]}
    s.close()
    get_engine(app).dispose()


def test_grading_export_dashboard_and_run_page(section: Any) -> None:
    c, sid = section["client"], section["section_id"]
    n = GROUPS * REPEATS
    print()
    csv_p95 = print_timing(
        f"grading CSV, {n} runs", lambda: c.get(f"/classes/sections/{sid}/export.csv"), 15, "target ≤ 1 s"
    )
    print_timing(f"grading xlsx, {n} runs", lambda: c.get(f"/classes/sections/{sid}/export.xlsx"), 8, "target ≤ 1 s")
    print_timing(
        f"dashboard page, {n} runs with review columns and comments",
        lambda: c.get(f"/classes/sections/{sid}/dashboard?sort=value"),
        10,
    )
    print_timing("run page with its review panel", lambda: c.get(f"/runs/{section['run_id']}"), 10)
    r = c.get(f"/classes/sections/{sid}/export.csv")
    assert r.status_code == 200 and r.get_data(as_text=True).count("\r\n") > n
    assert csv_p95 < 5000  # a guard against a pathological slowdown; the figure is the printed line
