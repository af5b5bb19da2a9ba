"""Series statistics equal calc.statistics.replicates'; control charts flag run rules as calc.statistics.control_charts; due dates."""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

import pytest

from calc.statistics.control_charts import control_chart
from calc.statistics.replicates import shared_type_b, summarize_series
from tests.webapp.class_fixtures import make_class, simulated_run
from webapp.models import Person, Run
from webapp.services.imports import files_from_folder, import_files
from webapp.services.series import budget_lines


def _import(session: Any, lab: Any, tmp_path: Path, specs: list[tuple[str, int, dict[str, Any]]]) -> dict[str, int]:
    cl = make_class(session, lab.ids["coord"])
    d = tmp_path / "runs"
    for stem, seed, kw in specs:
        simulated_run(d, stem, seed, **kw)
    report = import_files(session, session.get(Person, lab.ids["coord"]), cl.section_id, files_from_folder(d))
    assert report.count("stored") == len(specs), report.as_dict()
    return {i.file.removesuffix(".toml"): i.run_id for i in report.items}


def test_series_statistics_equal_calc_replicates(client: Any, session: Any, lab: Any, tmp_path: Path) -> None:
    ids = _import(session, lab, tmp_path, [(f"M01-r{i}", 400 + i, {}) for i in range(3)])
    run_ids = sorted(ids.values())
    r = client.post("/api/series", json={"name": "M01 KCl", "run_ids": run_ids}, headers=lab.auth("coord"))
    assert r.status_code == 201, r.get_json()
    got = client.get(r.headers["Location"], headers=lab.auth("coord")).get_json()
    runs = [session.get(Run, i) for i in run_ids]
    values = [x.current_result.molar_enthalpy_kj_mol for x in runs]
    ub, nub = shared_type_b(budget_lines(runs[0].current_result.budget))
    want = summarize_series(values, type_b_u=ub, type_b_dof=nub)
    assert ub > 0
    for key in ("mean", "sd", "u_mean", "t95", "u_combined", "k", "U"):
        assert math.isclose(got[key], getattr(want, key), rel_tol=1e-12), key
    assert got["ci95"] == pytest.approx(list(want.ci95))
    # a single run is not a series; students cannot make series
    assert (
        client.post("/api/series", json={"name": "x", "run_ids": run_ids[:1]}, headers=lab.auth("coord")).status_code
        == 400
    )
    assert (
        client.post("/api/series", json={"name": "x", "run_ids": "1,2"}, headers=lab.auth("coord")).status_code == 400
    )
    assert client.post("/api/series", json={"name": "x", "run_ids": run_ids}, headers=lab.auth("a1")).status_code == 403
    assert client.get("/api/series/999", headers=lab.auth("coord")).status_code == 404
    # the dashboard's per-group series is the same computation
    board = client.get(
        f"/api/sections/{session.get(Run, run_ids[0]).group.section_id}/dashboard", headers=lab.auth("coord")
    ).get_json()
    assert board["series"][0]["mean"] == pytest.approx(want.mean)


def test_control_chart_flags_and_calibration_due(client: Any, session: Any, lab: Any, tmp_path: Path) -> None:
    specs = [(f"M01-check{i:02d}", 500 + i, {"calorimeter_name": "Spare cup"}) for i in range(8)]
    specs.append(("M01-check99", 599, {"calorimeter_name": "Spare cup", "molar_enthalpy_kJ_mol": 21.0}))
    _import(session, lab, tmp_path, specs)
    r = client.get(f"/api/calorimeters/{lab.spare_calorimeter_id}/control?baseline=8", headers=lab.auth("tech"))
    assert r.status_code == 200, r.get_json()
    chart = r.get_json()
    values = [p["value"] for p in chart["points"]]
    want = control_chart(values, baseline=8)
    assert chart["limits"]["centre"] == pytest.approx(want.limits.centre)
    assert chart["limits"]["sigma"] == pytest.approx(want.limits.sigma)
    assert [(v["index"], v["rule"]) for v in chart["violations"]] == [(v.index, v.rule) for v in want.violations]
    assert (8, "beyond-3s") in [(v["index"], v["rule"]) for v in chart["violations"]]
    # the spare cup's heat capacity was entered today; default interval 30 days
    cal = chart["calibration"]
    assert cal["overdue"] is False and cal["interval_days"] == 30 and cal["days_left"] == 30
    assert (
        client.get(
            f"/api/calorimeters/{lab.spare_calorimeter_id}/control?baseline=1", headers=lab.auth("tech")
        ).status_code
        == 400
    )
    assert (
        client.get(
            f"/api/calorimeters/{lab.spare_calorimeter_id}/control?standard=nope", headers=lab.auth("tech")
        ).status_code
        == 400
    )
    never = client.get(f"/api/calorimeters/{lab.calorimeter_id}/control", headers=lab.auth("tech")).get_json()
    assert never["calibration"]["overdue"] is True and never["points"] == []
    from tests.webapp.conftest import sign_in

    sign_in(client, "tech@lab.example")
    page = client.get(f"/calorimeters/{lab.spare_calorimeter_id}/control?baseline=8")
    html = page.get_data(as_text=True)
    assert page.status_code == 200 and "<svg" in html and "beyond 3 s" in html


def test_calibration_interval_per_calorimeter(session: Any, lab: Any) -> None:
    import datetime as dt

    from webapp.models import Calorimeter
    from webapp.services.control import calibration_info, set_interval

    cal = session.get(Calorimeter, lab.spare_calorimeter_id)
    set_interval(session, session.get(Person, lab.ids["coord"]), cal, 7)
    info = calibration_info(session, cal, 30, today=dt.date.today() + dt.timedelta(days=8))
    assert info["interval_days"] == 7 and info["overdue"] is True


def test_calibration_interval_over_the_api(client: Any, lab: Any) -> None:
    url = f"/api/calorimeters/{lab.spare_calorimeter_id}"
    r = client.patch(
        url,
        headers={**lab.auth("coord"), "If-Match": "*"},
        json={"calibration_interval_days": 0, "location": "bench 9"},
    )
    assert r.status_code == 400 and r.get_json()["field"] == "calibration_interval_days"
    assert client.get(url, headers=lab.auth("coord")).get_json()["location"] != "bench 9"  # nothing stored
    r = client.patch(url, headers={**lab.auth("coord"), "If-Match": "*"}, json={"calibration_interval_days": 7})
    assert r.status_code == 200 and r.get_json()["calibration_interval_days"] == 7
    r = client.patch(
        url, headers={**lab.auth("coord"), "If-Match": "*"}, json={"location": "bench 9"}
    )  # not given: kept
    assert r.get_json()["calibration_interval_days"] == 7
    control = client.get(f"{url}/control", headers=lab.auth("coord")).get_json()
    assert control["calibration"]["interval_days"] == 7
    r = client.patch(url, headers={**lab.auth("coord"), "If-Match": "*"}, json={"calibration_interval_days": None})
    assert r.get_json()["calibration_interval_days"] is None
    r = client.patch(url, headers={**lab.auth("tech"), "If-Match": "*"}, json={"calibration_interval_days": 3})
    assert r.status_code == 403
