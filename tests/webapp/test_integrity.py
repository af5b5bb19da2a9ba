"""`cupcal db check`: a sound database passes; each kind of damage is found and named (SQLite, PostgreSQL).

The damage is made by hand with SQL the notebook itself never runs (foreign keys switched off,
counts edited), to show that the check cannot pass a broken database.
"""

from __future__ import annotations

import shutil
from pathlib import Path
from typing import Any

import pytest
import sqlalchemy as sa

from tests.webapp.class_fixtures import make_class, simulated_run
from tests.webapp.conftest import upload
from tests.webapp.fault_helpers import cupcal
from webapp.db import get_engine
from webapp.models import Person
from webapp.services.imports import files_from_folder, import_files
from webapp.services.integrity import check_database


@pytest.fixture
def stored(app: Any, client: Any, lab: Any, session: Any, tmp_path: Path) -> dict[str, int]:
    """Two runs uploaded and one imported in bulk (with a content hash); return their ids."""
    ids = {}
    for name in ("diss-kcl-01", "neut-hcl-naoh-01"):
        r = upload(client, lab.auth("a1"), name, calorimeter_id=lab.spare_calorimeter_id)
        assert r.status_code == 201, r.get_json()
        ids[name] = r.get_json()["id"]
    cl = make_class(session, lab.ids["coord"])
    simulated_run(tmp_path / "bulk", "M01-run1", 11)
    report = import_files(
        session, session.get(Person, lab.ids["coord"]), cl.section_id, files_from_folder(tmp_path / "bulk")
    )
    ids["imported"] = report.items[0].run_id
    return ids


def _damage(app: Any, *statements: str) -> None:
    engine = get_engine(app)
    with engine.begin() as conn:
        if engine.dialect.name == "sqlite":
            conn.exec_driver_sql("PRAGMA foreign_keys=OFF")
        else:
            conn.exec_driver_sql("SET session_replication_role = replica")  # no foreign-key triggers
        for sql in statements:
            conn.exec_driver_sql(sql)
        if engine.dialect.name == "sqlite":
            conn.exec_driver_sql("PRAGMA foreign_keys=ON")


def test_a_sound_database_passes_and_says_what_was_checked(app: Any, stored: dict[str, int]) -> None:
    report = check_database(get_engine(app))
    assert report.ok, report.summary()
    assert report.runs == 3 and report.results == 3
    text = report.summary()
    assert "foreign keys" in text and "every run complete" in text and "content hashes of 1 imported runs" in text
    if get_engine(app).dialect.name == "sqlite":
        assert "SQLite integrity_check" in text
    else:
        assert "amcheck extension is not installed" in text


def test_every_kind_of_damage_is_found(app: Any, stored: dict[str, int]) -> None:
    kcl, hcl, imp = stored["diss-kcl-01"], stored["neut-hcl-naoh-01"], stored["imported"]
    _damage(
        app,
        f"UPDATE runs SET points = points + 1 WHERE id = {kcl}",
        f"UPDATE results SET is_current = false WHERE run_id = {hcl}",
        f"UPDATE runs SET readings_raw = readings_raw || readings_raw WHERE id = {imp}",
        f"UPDATE run_inputs SET run_id = 9999 WHERE id = (SELECT min(id) FROM run_inputs WHERE run_id = {kcl})",
    )
    report = check_database(get_engine(app))
    assert not report.ok
    problems = "\n".join(report.problems)
    assert f"run {kcl} is incomplete" in problems
    assert f"run {hcl} has 0 current results" in problems
    assert f"run {imp}: its files do not match the content hash" in problems
    assert "run_inputs row" in problems and "run_id = 9999 names no row of runs" in problems
    assert len(report.problems) == 4


def test_two_current_results_are_found(app: Any, stored: dict[str, int]) -> None:
    kcl = stored["diss-kcl-01"]
    _damage(
        app,
        "INSERT INTO results (run_id, is_current, method, main, fore_start_s, fore_end_s, after_start_s, "
        "after_end_s, mixing_time_s, mixing_time_s_std, mixing_time_detected, periods_given, "
        "corrected_delta_t_k, corrected_delta_t_k_std, heat_j, heat_j_std, expanded_uncertainty, "
        "coverage_factor, budget, warnings, cautions, construction, properties, record, software_version, "
        f"created_at) SELECT run_id, is_current, method, main, fore_start_s, fore_end_s, after_start_s, "
        "after_end_s, mixing_time_s, mixing_time_s_std, mixing_time_detected, periods_given, "
        "corrected_delta_t_k, corrected_delta_t_k_std, heat_j, heat_j_std, expanded_uncertainty, "
        "coverage_factor, budget, warnings, cautions, construction, properties, record, software_version, "
        f"created_at FROM results WHERE run_id = {kcl}",
    )
    report = check_database(get_engine(app))
    assert [p for p in report.problems] == [f"run {kcl} has 2 current results (expected exactly 1)"]


@pytest.mark.parametrize("database_url", ["postgresql"], indirect=True)
def test_postgres_index_structure_is_checked_with_amcheck(app: Any, stored: dict[str, int]) -> None:
    engine = get_engine(app)
    with engine.begin() as conn:
        conn.exec_driver_sql("CREATE EXTENSION IF NOT EXISTS amcheck")
    try:
        report = check_database(engine)
        assert report.ok, report.summary()
        assert any("amcheck bt_index_check" in c for c in report.checks), report.checks
    finally:
        with engine.begin() as conn:
            conn.exec_driver_sql("DROP EXTENSION amcheck")


def test_the_command_reports_damage_and_an_unreadable_file(app: Any, stored: dict[str, int], tmp_path: Path) -> None:
    url = app.config["DATABASE_URL"]
    kcl = stored["diss-kcl-01"]
    _damage(app, f"UPDATE runs SET points = points + 1 WHERE id = {kcl}")
    get_engine(app).dispose()
    done = cupcal(url, "db", "check")
    assert done.returncode == 2 and f"problem: run {kcl} is incomplete" in done.stdout, done.stdout + done.stderr
    if get_engine(app).dialect.name != "sqlite":
        return
    broken = tmp_path / "broken.sqlite3"
    shutil.copyfile(sa.make_url(url).database, broken)
    with broken.open("r+b") as fh:  # overwrite pages in the middle of the file
        fh.seek(4096 * 4)
        fh.write(b"\xff" * 8192)
    done = cupcal(f"sqlite:///{broken}", "db", "check")
    assert done.returncode == 2 and "Traceback" not in done.stderr, done.stderr
    assert "PROBLEMS FOUND" in done.stdout or "cannot be read" in done.stderr, done.stdout + done.stderr
