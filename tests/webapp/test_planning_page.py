"""The planning page and POST /api/plan give calc.plan.plan_run's prediction; bad input is a 400, never a 500."""

from __future__ import annotations

from typing import Any

import pytest

from calc.plan import plan_run
from tests.webapp.conftest import sign_in

#: the equipment of every planned run here: the planning form's fields, and the same for POST /api/plan
FORM_EQUIPMENT = {"calorimeter": "20 ± 3 J/K", "resolution": "0.01", "noise": "0.005", "temperature": "22"}
API_EQUIPMENT = {"calorimeter_heat_capacity": "20 ± 3 J/K", "thermometer_resolution": 0.01}


def _plan_page(client: Any, kind: str, **fields: str) -> Any:
    """Submit the planning form for ``kind`` with FORM_EQUIPMENT and ``fields`` (which win)."""
    return client.get("/plan", query_string={"kind": kind, "go": "1", **FORM_EQUIPMENT, **fields})


def _plan_api(client: Any, lab: Any, kind: str, status: int = 200, **fields: Any) -> Any:
    """POST a ``kind`` plan with API_EQUIPMENT and ``fields`` (which win); check the status, return the JSON."""
    r = client.post("/api/plan", json={"kind": kind, **API_EQUIPMENT, **fields}, headers=lab.auth("b1"))
    assert r.status_code == status, (kind, fields, r.get_json())
    return r.get_json()


def test_planning_page_shows_the_plan(client: Any, lab: Any) -> None:
    sign_in(client, "a1@lab.example")
    assert client.get("/plan").status_code == 200
    amounts = {"formula": "KCl", "mass": "2.50 ± 0.01 g", "water_volume": "100.0 ± 0.5 mL"}  # the form's names
    r = _plan_page(client, "dissolution", **amounts)
    html = r.get_data(as_text=True)
    want = plan_run(
        "dissolution",
        **amounts,
        calorimeter_heat_capacity="20 ± 3 J/K",
        thermometer_resolution=0.01,
        thermometer_noise=0.005,
        temperature=295.15,  # 22 °C
    )
    assert r.status_code == 200
    assert want.limiting in html and "Cautions" in html and "eye protection" in html
    assert f"{100 * want.equipment[0].share:.1f} %" in html
    bad = _plan_page(client, "dissolution", formula="KCl", mass="lots", water_volume="100 mL")
    assert bad.status_code == 400 and "mass" in bad.get_data(as_text=True)


def test_plan_api(client: Any, lab: Any) -> None:
    inputs = {
        "acid": "HCl",
        "base": "NaOH",
        "acid_concentration": "1.00 ± 0.01 mol/L",
        "base_concentration": "1.00 ± 0.01 mol/L",
        "acid_volume": "50.0 ± 0.2 mL",
        "base_volume": "50.0 ± 0.2 mL",
    }
    out = _plan_api(client, lab, "neutralization", **inputs)
    want = plan_run("neutralization", **API_EQUIPMENT, **inputs)  # the library, given what the API was given
    assert out["predicted_delta_t"]["value"] == pytest.approx(want.predicted_delta_t)
    assert _plan_api(client, lab, "explosion", 400, **inputs)["error"]
    assert _plan_api(client, lab, "neutralization", 400, colour=1, **inputs)["error"]
    assert _plan_api(client, lab, "dissolution", 400)["error"]  # no amounts at all
    assert _plan_api(client, lab, "neutralization", 400, **{**inputs, "thermometer_resolution": "fine"})["error"]


def test_planning_page_shows_one_kind_and_every_error_under_its_label(client: Any, lab: Any) -> None:
    sign_in(client, "a1@lab.example")
    html = client.get("/plan?kind=electrical-calibration").get_data(as_text=True)
    assert "Heater voltage" in html and "Acid concentration" not in html and "Mass of solute" not in html
    # three bad fields: all three are listed at once, each under its label, none under an internal name
    r = _plan_page(
        client,
        "electrical-calibration",
        water_volume="100 g",
        heater_voltage="five",
        heater_current="1.000 A",
        heater_duration="120 s",
        temperature="99",
    )
    html = r.get_data(as_text=True)
    assert r.status_code == 400
    summary = html.split('id="error-summary"')[1].split("</div>")[0]
    assert "3 problems" in summary
    for label in ("Water in the cup", "Heater voltage", "Room temperature (°C)"):
        assert label in summary
    assert "heater_voltage:" not in summary and 'href="#plan-heater_voltage"' in summary
    assert html.count('class="field-error"') == 3
    # a 96,000-character entry is refused with its length, not parsed
    r = client.get("/plan", query_string={"kind": "dissolution", "go": "1", "formula": "K" * 96000})
    assert r.status_code in (400, 414)


@pytest.mark.parametrize(
    "kind,fields",
    [
        (
            "electrical-calibration",
            {
                "water_volume": "100.0 ± 0.1 mL",
                "heater_voltage": "5.00 ± 0.01 V",
                "heater_current": "1.000 ± 0.002 A",
                "heater_duration": "120.0 ± 0.2 s",
            },
        ),
        (
            "mixing-calibration",
            {"water_volume": "50.0 ± 0.1 mL", "warm_volume": "50.0 ± 0.1 mL", "warm_temperature": "45.0 ± 0.1 °C"},
        ),
        (
            "reaction",
            {"formula": "Mg", "mass": "0.1000 ± 0.0002 g", "water_volume": "100.0 ± 0.1 mL", "enthalpy": "-466"},
        ),
    ],
)
def test_planning_page_plans_every_kind(client: Any, lab: Any, kind: str, fields: dict[str, str]) -> None:
    sign_in(client, "a1@lab.example")
    r = _plan_page(client, kind, **fields)
    html = r.get_data(as_text=True)
    assert r.status_code == 200, html.split('id="error-summary"')[-1][:500]
    assert "Predicted ΔT" in html and " K</td>" in html


def test_plan_api_takes_the_calibration_kinds(client: Any, lab: Any) -> None:
    mixing = {"water_volume": "50.0 ± 0.1 mL", "warm_volume": "50.0 ± 0.1 mL", "warm_temperature": "45.0 ± 0.1 degC"}
    out = _plan_api(client, lab, "mixing-calibration", **mixing)
    assert out["molar_enthalpy"]["unit"] == "J/K" and out["predicted_delta_t"]["value"] > 5
    refused = _plan_api(client, lab, "mixing-calibration", 400, **{**mixing, "warm_temperature": "10 degC"})
    assert "warm" in refused["error"]
