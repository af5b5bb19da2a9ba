"""Plausibility checks in the notebook: stored with each result, shown as text, kept out of statistics.

Check values:
- KCl dissolves to about 34–35 g per 100 g of water near 20 °C (CRC Handbook, aqueous solubility
  table, from memory): 37.28 g in 100 mL is above it.
- A Dewar flask's heat capacity of about 100–200 J/K (common practice, no source).
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import sqlalchemy as sa

from calc.simulation.simulator import simulate_electrical_calibration, write_run
from tests.webapp.class_fixtures import make_class, simulated_run
from tests.webapp.conftest import demo_files, sign_in, upload
from webapp.models import Person, Result, Run
from webapp.services.checks import run_flagged
from webapp.services.dashboard import section_dashboard
from webapp.services.imports import files_from_folder, import_files


def typo_toml() -> str:
    toml, _ = demo_files("diss-kcl-01")
    return toml.replace('mass = "3.72760 ± 0.00020 g"', 'mass = "37.2760 ± 0.00020 g"')


def test_typo_run_is_stored_with_its_checks_and_marked(client: Any, session: Any, lab: Any) -> None:
    r = upload(client, lab.auth("a1"), "diss-kcl-01", toml=typo_toml(), monte_carlo=0)
    assert r.status_code == 201, r.get_json()
    run_id = r.get_json()["id"]
    result = session.scalar(sa.select(Result).where(Result.run_id == run_id))
    codes = {c["code"]: c for c in result.checks}
    assert codes["solubility"]["severity"] == "warning" and codes["solubility"]["value"] > 100
    assert run_flagged(result)
    api = client.get(f"/api/results/{result.id}", headers=lab.auth("a1")).get_json()
    assert {c["code"] for c in api["checks"]} == set(codes)
    ok = upload(client, lab.auth("a1"), "diss-kcl-01", monte_carlo=0).get_json()["id"]
    assert not run_flagged(session.scalar(sa.select(Result).where(Result.run_id == ok)))
    sign_in(client, "a1@lab.example")
    page = client.get(f"/runs/{run_id}").get_data(as_text=True)
    assert "check warning" in page and "Plausibility checks" in page and "of its solubility" in page
    listing = client.get("/runs/").get_data(as_text=True)
    assert listing.count("check warning") == 1 and "of its solubility" in listing  # as text, not a tooltip


def test_flagged_run_is_left_out_of_section_statistics(session: Any, lab: Any, tmp_path: Path) -> None:
    cl = make_class(session, lab.ids["coord"])
    d = tmp_path / "sec"
    for i, g in enumerate(["M01", "M01", "M02", "M02"]):
        simulated_run(d, f"{g}-ok{i}", 700 + i)
    bad = simulated_run(d, "M03-typo", 710)
    bad.write_text(bad.read_text().replace('mass = "3.7', 'mass = "37.'))
    coord = session.get(Person, lab.ids["coord"])
    report = import_files(session, coord, cl.section_id, files_from_folder(d))
    assert report.count("stored") == 5, report.as_dict()
    board = section_dashboard(session, coord, cl.section_id)
    typo = next(r for r in board.rows if r.group == "M03")
    assert not typo.included and "check" in typo.flags and "solubility" in typo.notes["check"]
    kept = [r.value for r in board.rows if r.included]
    st = board.stats[0]
    assert st.n == 4 and abs(st.mean - sum(kept) / 4) < 1e-12
    assert board.flag_counts["check"] == 1


def test_dashboard_page_explains_the_mark_in_text(client: Any, session: Any, lab: Any, tmp_path: Path) -> None:
    cl = make_class(session, lab.ids["coord"])
    d = tmp_path / "sec2"
    simulated_run(d, "M01-ok", 720)
    bad = simulated_run(d, "M02-typo", 721)
    bad.write_text(bad.read_text().replace('mass = "3.7', 'mass = "37.'))
    import_files(session, session.get(Person, lab.ids["coord"]), cl.section_id, files_from_folder(d))
    sign_in(client, "coord@lab.example")
    html = client.get(f"/classes/sections/{cl.section_id}/dashboard").get_data(as_text=True)
    assert "Left out of the statistics:" in html and "of its solubility" in html


def _calibration_files(tmp_path: Path, c_cal: float) -> tuple[str, bytes]:
    sim = simulate_electrical_calibration(
        31, c_cal=c_cal, voltage_V=6.0, current_A=2.0, duration_s=200.0, calorimeter_name="Dewar D-2"
    )
    path = write_run(sim, tmp_path, "dewar")
    return path.read_text(), (tmp_path / "dewar.csv").read_bytes()


def test_calorimeter_type_sets_the_plausible_range(client: Any, session: Any, lab: Any, tmp_path: Path) -> None:
    h = lab.auth("coord")
    bad = client.post("/api/calorimeters", json={"name": "Dewar D-2", "vessel_type": "thermos"}, headers=h)
    assert bad.status_code == 400 and "vessel_type" in bad.get_json()["error"]
    made = client.post("/api/calorimeters", json={"name": "Dewar D-2", "vessel_type": "dewar"}, headers=h)
    assert made.status_code == 201 and made.get_json()["vessel_type"] == "dewar"
    toml, csv = _calibration_files(tmp_path, 133.0)
    r = upload(client, h, "dewar", toml=toml, csv=csv, monte_carlo=0)
    assert r.status_code == 201, r.get_json()
    result = session.scalar(sa.select(Result).where(Result.run_id == r.get_json()["id"]))
    assert abs(result.calorimeter_heat_capacity_j_k - 133.0) < 3 * result.calorimeter_heat_capacity_j_k_std
    assert "calorimeter_heat_capacity" not in {c["code"] for c in result.checks}
    # the same calibration on a foam-cup calorimeter is implausible
    changed = client.patch(
        f"/api/calorimeters/{made.get_json()['id']}", json={"vessel_type": "foam-cups"}, headers={**h, "If-Match": "*"}
    )
    assert changed.status_code == 200, changed.get_json()
    r = upload(client, h, "dewar", toml=toml, csv=csv, monte_carlo=0)
    result = session.scalar(sa.select(Result).where(Result.run_id == r.get_json()["id"]))
    assert "calorimeter_heat_capacity" in {c["code"] for c in result.checks}


def test_export_with_several_channels_needs_a_column(client: Any, lab: Any) -> None:
    toml, csv = demo_files("diss-kcl-01")
    rows = csv.decode().splitlines()[1:]
    export = (
        "##LOGGER bench 2 (invented)\nTime Tamb Tcup\ns degC degC\n"
        + "\n".join(f"{t} 22.00 {y}" for t, y in (row.split(",") for row in rows))
        + "\n"
    )
    r = upload(client, lab.auth("a1"), "diss-kcl-01", csv=export.encode(), monte_carlo=0)
    assert r.status_code == 400
    body = r.get_json()
    assert body["field"] == "temperature_column" and "\n" not in body["error"] and "Tcup" in body["error"]
    r = upload(
        client,
        lab.auth("a1"),
        "diss-kcl-01",
        toml='temperature_column = "Tcup"\n' + toml,
        csv=export.encode(),
        monte_carlo=0,
    )
    assert r.status_code == 201, r.get_json()
    plain = upload(client, lab.auth("a1"), "diss-kcl-01", monte_carlo=0).get_json()
    assert r.get_json()["current_result"]["value"] == plain["current_result"]["value"]


def test_runs_analyzed_before_the_checks_are_not_flagged(session: Any, client: Any, lab: Any) -> None:
    r = upload(client, lab.auth("a1"), "diss-kcl-01", monte_carlo=0)
    result = session.scalar(sa.select(Result).where(Result.run_id == r.get_json()["id"]))
    result.checks = None
    session.commit()
    assert not run_flagged(result) and not run_flagged(None)
    assert session.scalar(sa.select(sa.func.count()).select_from(Run)) == 1
