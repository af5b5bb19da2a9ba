"""Who may set a cup's heat capacity in force, how repeat calibrations are pooled, overdue cups, and
withdrawing a calibration with the re-analysis of the runs that used it."""

from __future__ import annotations

import datetime as dt
import io
import re
from typing import Any

import sqlalchemy as sa

from tests.webapp.conftest import approve_proposals, csrf_token, demo_files, sign_in, upload, without_heat_capacity
from webapp.models import Calibration

TODAY = dt.date.today().isoformat()


def _enter(client: Any, lab: Any, value: str, day: str = TODAY, who: str = "tech", **extra: Any) -> Any:
    return client.post(
        f"/api/calorimeters/{lab.calorimeter_id}/calibrations",
        headers=lab.auth(who),
        json={"heat_capacity": value, "measured_on": day, **extra},
    )


def _in_force(client: Any, lab: Any) -> dict[str, Any]:
    return client.get(f"/api/calorimeters/{lab.calorimeter_id}", headers=lab.auth("tech")).get_json()[
        "current_calibration"
    ]


def test_a_students_calibration_is_a_proposal_until_staff_approve_it(client: Any, lab: Any) -> None:
    assert _enter(client, lab, "18.67 ± 0.50 J/K").status_code == 201
    r = upload(client, lab.auth("a1"), "cal-electrical-01", monte_carlo=0)
    assert r.status_code == 201
    history = client.get(f"/api/calorimeters/{lab.calorimeter_id}/calibrations", headers=lab.auth("a1")).get_json()
    proposed = [c for c in history["items"] if c["status"] == "proposed"]
    assert len(proposed) == 1 and proposed[0]["measured_on"] == "2025-03-11"  # the run's [info] date
    assert _in_force(client, lab)["heat_capacity"]["value"] == 18.67  # unchanged
    # a student cannot approve; staff see it on the calorimeter page with an approve button
    assert client.post(f"/api/calibrations/{proposed[0]['id']}/approve", headers=lab.auth("a2")).status_code == 403
    sign_in(client, "tech@lab.example")
    page = client.get(f"/calorimeters/{lab.calorimeter_id}").get_data(as_text=True)
    assert f"Approve #{proposed[0]['id']}" in page and "proposed" in page


def test_a_typo_that_moves_the_value_far_needs_an_explicit_confirmation(client: Any, lab: Any, session: Any) -> None:
    assert _enter(client, lab, "18.67 ± 0.50 J/K").status_code == 201
    before = session.scalar(sa.select(sa.func.count()).select_from(Calibration))
    r = _enter(client, lab, "886.9 ± 20 J/K")  # 15 V typed for 5 V (issue 12)
    assert r.status_code == 409 and r.get_json()["field"] == "confirm" and "confirm" in r.get_json()["error"]
    assert session.scalar(sa.select(sa.func.count()).select_from(Calibration)) == before  # nothing saved
    assert _in_force(client, lab)["heat_capacity"]["value"] == 18.67
    r = _enter(client, lab, "30.0 ± 0.5 J/K", confirm=True, restart=True)  # the cup really was changed
    assert r.status_code == 201 and _in_force(client, lab)["heat_capacity"]["value"] == 30.0


def test_repeat_calibrations_are_pooled_and_the_odd_one_left_out(client: Any, lab: Any) -> None:
    for day, value in (("2026-11-02", "26.1"), ("2026-11-09", "25.6"), ("2026-11-16", "25.9")):
        assert _enter(client, lab, f"{value} ± 0.3 J/K", day).status_code == 201
    # 27.6 lies far from the pooled 25.87 ± 0.17: it is saved only once confirmed, and then left out
    assert _enter(client, lab, "27.6 ± 0.3 J/K", "2026-11-23").status_code == 409
    assert _enter(client, lab, "27.6 ± 0.3 J/K", "2026-11-23", confirm=True).status_code == 201
    current = _in_force(client, lab)
    assert len(current["pool"]["members"]) == 3 and len(current["pool"]["excluded"]) == 1
    # the weighted mean of equal uncertainties is the plain mean (25.867 J/K), u = 0.3/√3
    assert abs(current["heat_capacity"]["value"] - (26.1 + 25.6 + 25.9) / 3) < 1e-9
    assert abs(current["heat_capacity"]["standard_uncertainty"] - 0.3 / 3**0.5) < 1e-9
    assert current["measured_on"] == "2026-11-16"  # the newest member
    sign_in(client, "tech@lab.example")
    page = client.get(f"/calorimeters/{lab.calorimeter_id}").get_data(as_text=True)
    assert "weighted mean of" in page and "Birge ratio" in page and "left out as inconsistent" in page


def test_withdrawing_lists_the_runs_and_reanalyses_them_in_one_action(client: Any, lab: Any) -> None:
    good = _enter(client, lab, "18.6 ± 0.5 J/K", "2026-11-20").get_json()["id"]
    bad = _enter(client, lab, "19.1 ± 0.5 J/K", "2026-11-27").get_json()["id"]
    toml = without_heat_capacity(demo_files("diss-kcl-01")[0])
    runs = [upload(client, lab.auth("a1"), "diss-kcl-01", toml=toml, monte_carlo=0).get_json() for _ in range(3)]
    pooled = _in_force(client, lab)
    assert all(r["calibration"]["id"] == pooled["id"] for r in runs) and sorted(pooled["pool"]["members"]) == [
        good,
        bad,
    ]
    assert client.post(f"/api/runs/{runs[2]['id']}/lock", headers=lab.auth("a1")).status_code == 200
    r = client.post(f"/api/calibrations/{bad}/withdraw", headers=lab.auth("tech"), json={"reason": "wrong voltage"})
    assert r.status_code == 200 and r.get_json()["runs_using"] == [x["id"] for x in runs]
    assert _in_force(client, lab)["id"] == good
    r = client.post(f"/api/calibrations/{bad}/reanalyze-runs", headers=lab.auth("tech"))
    done = r.get_json()
    assert r.status_code == 200 and done["reanalyzed"] == [runs[0]["id"], runs[1]["id"]]
    assert done["locked"] == [runs[2]["id"]] and done["failed"] == []
    for x in runs[:2]:
        now = client.get(f"/api/runs/{x['id']}", headers=lab.auth("a1")).get_json()
        assert now["calibration"]["id"] == good and len(now["results"]) == 2
        supplied = [i for i in now["inputs"] if i["field"] == "calorimeter.heat_capacity"][0]
        assert supplied["value"] == 18.6 and supplied["origin"] == f"calibration #{good}"
    signed = client.get(f"/api/runs/{runs[2]['id']}", headers=lab.auth("a1")).get_json()
    assert signed["calibration"]["id"] == pooled["id"] and len(signed["results"]) == 1
    from webapp.db import get_engine
    from webapp.services.integrity import check_database

    assert check_database(get_engine(client.application)).ok


def test_a_run_on_an_overdue_cup_is_warned_on_preview_and_run_page(client: Any, lab: Any) -> None:
    assert _enter(client, lab, "18.6 ± 0.5 J/K", "2025-01-10").status_code == 201  # due 2025-02-09
    toml = without_heat_capacity(demo_files("diss-kcl-01")[0])  # [info] date = 2025-03-12
    sign_in(client, "a1@lab.example")
    token = csrf_token(client.get("/runs/upload").get_data(as_text=True))
    csv = demo_files("diss-kcl-01")[1]
    r = client.post(
        "/runs/upload",
        data={
            "csrf_token": token,
            "action": "preview",
            "calorimeter_id": str(lab.calorimeter_id),
            "run_file": (io.BytesIO(toml.encode()), "diss-kcl-01.toml"),
            "readings": (io.BytesIO(csv), "diss-kcl-01.csv"),
        },
        content_type="multipart/form-data",
    )
    html = r.get_data(as_text=True)
    assert r.status_code == 200 and "Overdue:" in html and "due again on 2025-02-09" in html
    run = upload(client, lab.auth("a1"), "diss-kcl-01", toml=toml, monte_carlo=0).get_json()
    page = client.get(f"/runs/{run['id']}").get_data(as_text=True)
    assert "Overdue:" in page and "measured 2025-01-10" in page
    # in time: a calibration measured the day before the run gives no warning
    assert _enter(client, lab, "18.7 ± 0.5 J/K", "2025-03-11", confirm=True).status_code == 201
    run = upload(client, lab.auth("a1"), "diss-kcl-01", toml=toml, monte_carlo=0).get_json()
    assert "Overdue:" not in client.get(f"/runs/{run['id']}").get_data(as_text=True)


def test_approve_in_the_demo_style(client: Any, lab: Any) -> None:
    upload(client, lab.auth("a1"), "cal-electrical-01", monte_carlo=0)
    assert len(approve_proposals(client, lab)) == 1
    assert _in_force(client, lab)["approved_by"]["name"] == "Technician T"


def test_the_control_chart_plots_the_cups_own_heat_capacity_by_default(client: Any, lab: Any) -> None:
    from webapp.services.control import HEAT_CAPACITY

    days = ("2026-10-05", "2026-10-12", "2026-10-19")
    for day, value in zip(days, ("18.4", "18.9", "18.6"), strict=True):
        assert _enter(client, lab, f"{value} ± 0.4 J/K", day).status_code == 201
    chart = client.get(f"/api/calorimeters/{lab.calorimeter_id}/control", headers=lab.auth("tech")).get_json()
    assert chart["standard"] == HEAT_CAPACITY and chart["unit"] == "J/K"
    assert [p["value"] for p in chart["points"]] == [18.4, 18.9, 18.6]
    assert [p["at"] for p in chart["points"]] == list(days)  # dates as measured, no time stamps
    sign_in(client, "tech@lab.example")
    html = client.get(f"/calorimeters/{lab.calorimeter_id}/control").get_data(as_text=True)
    assert "calibration, in the order measured" in html and "2026-10-12" in html
    texts = re.findall(r"<text[^>]*>([^<]*)</text>", html)
    ticks = texts[: texts.index("calibration, in the order measured")]  # the x tick labels come first
    assert ticks and all(t.isdigit() for t in ticks)  # whole calibrations: no 0.5, 1.5


def test_the_dashboard_flags_a_run_on_an_overdue_cup(client: Any, lab: Any, session: Any) -> None:
    from types import SimpleNamespace

    from webapp.services.dashboard import FLAGS
    from webapp.services.dashboard_rows import _overdue_flags

    toml = without_heat_capacity(demo_files("diss-kcl-01")[0])  # [info] date = 2025-03-12
    assert _enter(client, lab, "18.6 ± 0.5 J/K", "2025-01-10").status_code == 201  # due 2025-02-09
    late = upload(client, lab.auth("a1"), "diss-kcl-01", toml=toml, monte_carlo=0).get_json()["id"]
    assert _enter(client, lab, "18.7 ± 0.5 J/K", "2025-03-11", confirm=True).status_code == 201
    in_time = upload(client, lab.auth("a1"), "diss-kcl-01", toml=toml, monte_carlo=0).get_json()["id"]
    rows = [SimpleNamespace(run_id=i, flags=[], notes={}) for i in (late, in_time)]
    _overdue_flags(session, rows)  # type: ignore[arg-type]
    assert rows[0].flags == ["overdue"] and "due again on 2025-02-09" in rows[0].notes["overdue"]
    assert rows[1].flags == [] and "overdue" in FLAGS
