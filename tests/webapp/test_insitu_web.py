"""The dissolution-with-calibration kind in the notebook: form, upload, run page and plot.

Truth from the simulator (calc.simulation.insitu); the check value is its ΔH (energy balance, common
practice, no source).
"""

from __future__ import annotations

import io
import re
import tomllib
from pathlib import Path
from typing import Any

import sqlalchemy as sa

from calc.simulation.insitu import simulate_dissolution_with_calibration
from calc.simulation.simulator import write_run
from tests.webapp.conftest import sign_in
from tests.webapp.page_helpers import carried, post_form
from webapp.models import Result

_MEASURED = re.compile(r"^\s*(?P<v>[^±\s]+)\s*(?:±\s*(?P<u>\S+)\s*)?(?P<unit>.*?)\s*$")


def simulated(tmp_path: Path) -> tuple[Path, Any]:
    sim = simulate_dissolution_with_calibration(21, noise=0.003, resolution=0.001)
    return write_run(sim, tmp_path, "insitu"), sim


def form_fields(toml_path: Path) -> dict[str, str]:
    """Return what a person types into the form for a run file (value, ± u and unit apart)."""
    data = tomllib.loads(toml_path.read_text())
    form: dict[str, str] = {}
    for section, table in data.items():
        items = table.items() if isinstance(table, dict) else [(None, table)]
        for field, value in items:
            key = f"{section}.{field}" if field else section
            if key in ("calorimeter.name", "readings", "kind"):
                continue
            m = _MEASURED.match(str(value))
            if field in ("formula", "title", "notes") or key == "thermometer.resolution" or m is None:
                if key == "thermometer.resolution":
                    form.update({key: str(value).split()[0], key + ".unit": "K"})
                else:
                    form[key] = str(value)
                continue
            form.update({key: m["v"], key + ".u": m["u"] or "", key + ".unit": m["unit"]})
    return form


def test_form_preview_and_save(client: Any, session: Any, lab: Any, tmp_path: Path) -> None:
    path, sim = simulated(tmp_path)
    sign_in(client, "a1@lab.example")
    assert "Dissolution with in-situ calibration" in client.get("/runs/new").get_data(as_text=True)
    csv = (tmp_path / "insitu.csv").read_bytes()
    fields = form_fields(path)
    preview = post_form(client, "dissolution-with-calibration", fields, csv=csv, csv_name="insitu.csv")
    html = preview.get_data(as_text=True)
    assert preview.status_code == 200 and 'value="save"' in html, html[:3000]
    extra = carried(html, "readings_packed", "readings_name")
    r = post_form(client, "dissolution-with-calibration", fields, csv=None, action="save", extra=extra)
    assert r.status_code in (302, 303), r.get_data(as_text=True)[:2000]
    result = session.scalar(sa.select(Result).order_by(Result.id.desc()))
    assert abs(result.molar_enthalpy_kj_mol - sim.truth.molar_enthalpy_kJ_mol) <= result.expanded_uncertainty
    page = client.get(r.headers["Location"])
    html = page.get_data(as_text=True)
    assert page.status_code == 200 and "ΔH" in html and "C of cup + solution (from the heater in the log)" in html
    link = re.search(r'<img src="([^"]+)"', html)
    assert link and client.get(link.group(1)).status_code == 200


def test_upload_without_heater_start_is_refused_with_the_field(client: Any, lab: Any, tmp_path: Path) -> None:
    path, _ = simulated(tmp_path)
    text = re.sub(r"(?m)^start = .*\n", "", path.read_text())
    r = client.post(
        "/api/runs",
        headers=lab.auth("a1"),
        content_type="multipart/form-data",
        data={
            "run_file": (io.BytesIO(text.encode()), "insitu.toml"),
            "readings": (io.BytesIO((tmp_path / "insitu.csv").read_bytes()), "insitu.csv"),
            "monte_carlo": "0",
        },
    )
    assert r.status_code == 400 and r.get_json()["field"] == "heater.start"
    assert "\n" not in r.get_json()["error"]
