"""New runs: the form of each kind, the upload of a run file and readings, preview and save.

Every test runs on SQLite and PostgreSQL (the ``app`` fixture). The form is checked against
calc's own run-file schema and parser: the fields it shows are those of
``calc.io.runfile.SCHEMA``, and the run file it stores parses back with
``calc.io.runfile.parse_run`` to the same values as the demo file the command line reads,
giving the same result as ``calc.analysis.analyze_run`` on that file.
"""

from __future__ import annotations

import io
import re
import tomllib
from typing import Any

import pytest
import sqlalchemy as sa

from calc.analysis import analyze_run
from calc.io.quantities import Measured
from calc.io.runfile import REQUIRED_SECTIONS, SCHEMA, parse_run
from tests.webapp.conftest import DEMO, csrf_token, demo_files, sign_in, without_heat_capacity
from tests.webapp.page_helpers import carried, counts, field_row, form_from_demo, post_form
from webapp.models import Run
from webapp.plot_cache import plot_cache

# ---------------------------------------------------------------- the form of each kind


def test_the_form_of_each_kind_has_the_fields_of_the_run_file_schema(client: Any, lab: Any) -> None:
    sign_in(client, "a1@lab.example")
    assert "Dissolution" in client.get("/runs/new").get_data(as_text=True)
    for kind, schema in SCHEMA.items():
        html = client.get(f"/runs/new/{kind}").get_data(as_text=True)
        names = set(re.findall(r'name="([^"]+)"', html))
        assert "readings" in names and "calorimeter_id" in names and "csrf_token" in names
        for section, fields in schema.items():
            for field, (ftype, _unit, _required) in fields.items():
                dotted = f"{section}.{field}"
                if dotted == "calorimeter.name":
                    continue  # the calorimeter select
                if dotted == "calorimeter.heat_capacity" and "calorimeter" not in REQUIRED_SECTIONS[kind]:
                    assert dotted not in names, (kind, dotted)  # a calibration run measures it
                    continue
                assert dotted in names, (kind, dotted)
                if ftype == "q":
                    assert {dotted + ".u", dotted + ".unit"} <= names, (kind, dotted)
        for top in ("mixing_time", "method", "fore_period.start", "after_period.end"):
            assert top in names, (kind, top)
        # every control has a label (WCAG 1.3.1): a <label for> naming its id
        labelled = set(re.findall(r'<label[^>]*for="([^"]+)"', html))
        controls = re.findall(r'<(?:input|select|textarea)\b(?![^>]*type="hidden")[^>]*\bid="([^"]+)"', html)
        assert controls and set(controls) <= labelled, (kind, set(controls) - labelled)
        # no other kind's sections
        others = {s for k, sch in SCHEMA.items() if k != kind for s in sch} - set(schema)
        assert not any(n.split(".")[0] in others for n in names), kind
    # default units are the schema's (temperatures in °C, as thermometers show them)
    html = client.get("/runs/new/neutralization").get_data(as_text=True)
    assert 'name="acid.volume.unit" list="f-acid-volume-units"\n         value="mL"' in html
    assert re.search(r'name="base.temperature.unit"[^>]*value="degC"', html)
    assert client.get("/runs/new/no-such-kind").status_code == 404


# ---------------------------------------------------------------- errors next to the field


def test_a_bad_value_shows_its_error_next_to_the_field_and_saves_nothing(client: Any, lab: Any, session: Any) -> None:
    sign_in(client, "a1@lab.example")
    _toml, csv = demo_files("diss-kcl-01")
    before = counts(session)
    fields = form_from_demo("diss-kcl-01", lab.calorimeter_id)
    bad = {**fields, "water.volume": "a hundred", "solute.mass.unit": "mL", "thermometer.resolution": ""}
    for action in ("preview", "save"):
        r = post_form(client, "dissolution", bad, csv=csv, action=action)
        assert r.status_code == 400
        html = r.get_data(as_text=True)
        row = field_row(html, "f-water-volume")
        assert 'class="field-error" id="f-water-volume-error"' in row
        assert "does not start with a number" in row
        assert 'aria-invalid="true"' in row
        assert "expected a mass like" in field_row(html, "f-solute-mass")  # calc's message, at its field
        assert "(a volume)" in field_row(html, "f-solute-mass")
        assert "required" in field_row(html, "f-thermometer-resolution")
        assert "f-solute-formula-error" not in html  # a good field shows no error
        assert "Nothing was saved: 3 problems" in html  # the summary, with links to the fields
        assert 'href="#f-water-volume"' in html
        assert counts(session) == before
    # the CSV sent is kept for the next try, so it need not be chosen again
    assert "diss-kcl-01.csv" in html or "run.csv" in html
    assert 'name="readings_packed"' in html


def test_an_error_found_by_calc_is_shown_next_to_its_field(client: Any, lab: Any, session: Any) -> None:
    sign_in(client, "a1@lab.example")
    _toml, csv = demo_files("diss-kcl-01")
    fields = form_from_demo("diss-kcl-01")
    r = post_form(client, "dissolution", {**fields, "solute.formula": "KQz"}, csv=csv)
    assert r.status_code == 400
    assert "KQz" in field_row(r.get_data(as_text=True), "f-solute-formula")
    # no calorimeter chosen and no heat capacity: said at the heat-capacity field
    r = post_form(client, "dissolution", {**fields, "calorimeter.heat_capacity": ""}, csv=csv)
    assert r.status_code == 400
    assert "choose a calorimeter" in field_row(r.get_data(as_text=True), "f-calorimeter-heat-capacity")
    # a readings file that is not a log: said at the readings field
    r = post_form(client, "dissolution", fields, csv=b"this is not,a log\n1,2,3\n")
    assert r.status_code == 400
    html = r.get_data(as_text=True)
    assert 'id="f-readings-error"' in html
    # no file at all
    r = post_form(client, "dissolution", fields, csv=None)
    assert r.status_code == 400 and "choose the CSV file" in r.get_data(as_text=True)
    assert counts(session) == (0, 0)


@pytest.mark.parametrize("junk", ["-1e999 ± nan", "\u00b1", "x" * 1000, "1 ± -2 mL", '" ]\n[info]\ntitle = "', "0"])
def test_junk_in_every_field_is_refused_without_a_server_error(client: Any, lab: Any, session: Any, junk: str) -> None:
    sign_in(client, "tech@lab.example")
    _toml, csv = demo_files("diss-kcl-01")
    for kind in SCHEMA:
        html = client.get(f"/runs/new/{kind}").get_data(as_text=True)
        names = set(re.findall(r'name="([^"]+)"', html)) - {"csrf_token", "readings", "action", "previewed"}
        fields = {n: junk for n in names}
        r = post_form(client, kind, fields, csv=csv)
        assert r.status_code == 400, (kind, junk, r.status_code)
        assert "Nothing was saved" in r.get_data(as_text=True)
    assert counts(session) == (0, 0)


def test_an_upload_over_the_size_limit_gets_a_page_saying_so(client: Any, lab: Any, session: Any) -> None:
    sign_in(client, "a1@lab.example")
    big = b"time_s,temperature_C\n" + b"0.0,21.00\n" * 40_000  # 400 kB > the tests' 256 KiB limit
    r = post_form(client, "dissolution", form_from_demo("diss-kcl-01"), csv=big)
    assert r.status_code == 413 and "Upload too large" in r.get_data(as_text=True)
    assert counts(session) == (0, 0)


# ---------------------------------------------------------------- preview and save


def test_preview_shows_plot_periods_and_result_and_saves_nothing(client: Any, lab: Any, session: Any) -> None:
    sign_in(client, "a1@lab.example")
    _toml, csv = demo_files("diss-kcl-01")
    r = post_form(
        client, "dissolution", form_from_demo("diss-kcl-01", lab.calorimeter_id), csv=csv, csv_name="diss-kcl-01.csv"
    )
    assert r.status_code == 200
    html = r.get_data(as_text=True)
    assert "Preview (not saved yet)" in html
    assert "<svg" in html and "Preview of the temperature readings" in html  # preview_plot_svg's title
    assert "Periods found" in html and "Mixing time" in html
    # the result calc gives for the same file (the command line's analysis)
    a = analyze_run(DEMO / "diss-kcl-01.toml")
    v, u, _unit = a.value("molar_enthalpy")
    from calc.report import format_value

    assert format_value(v, u, "kJ/mol") in html
    assert "KCl (potassium chloride)" in html  # its cautions
    assert 'value="save"' in html
    assert counts(session) == (0, 0)


def test_save_stores_the_run_file_built_from_the_fields(client: Any, lab: Any, session: Any) -> None:
    sign_in(client, "a1@lab.example")
    _toml, csv = demo_files("diss-kcl-01")
    fields = form_from_demo("diss-kcl-01", lab.calorimeter_id)
    preview = post_form(client, "dissolution", fields, csv=csv, csv_name="diss-kcl-01.csv").get_data(as_text=True)
    # save without sending the file again: the preview carries it
    extra = carried(preview, "readings_packed", "readings_name")
    r = post_form(client, "dissolution", fields, csv=None, action="save", extra=extra)
    assert r.status_code == 302, r.get_data(as_text=True)[:2000]
    run_id = int(r.headers["Location"].rsplit("/", 1)[-1])
    assert counts(session) == (1, 1)
    run = session.get(Run, run_id)
    assert run.readings_raw == csv and run.readings_name == "diss-kcl-01.csv"
    assert run.run_file_name == "diss-kcl-01.toml" and run.calorimeter_id == lab.calorimeter_id
    stored = parse_run(run.run_toml, source="stored")
    demo = parse_run((DEMO / "diss-kcl-01.toml").read_text(encoding="utf-8"), source="demo")
    assert stored.kind == demo.kind and stored.raw["readings"] == "diss-kcl-01.csv"
    for section, values in demo.sections.items():
        for field, value in values.items():
            got = stored.sections[section][field]
            if isinstance(value, Measured):
                assert (got.value, got.u, got.unit) == (value.value, value.u, value.unit), (section, field)
            else:
                assert got == value, (section, field)
    assert stored.mixing_time.value == demo.mixing_time.value
    # the same result as the command line's analysis of the demo file
    a = analyze_run(DEMO / "diss-kcl-01.toml")
    res = run.current_result
    assert res.molar_enthalpy_kj_mol == pytest.approx(a.gum.values["molar_enthalpy"], rel=1e-12)
    assert res.expanded_uncertainty == pytest.approx(a.gum.expanded_uncertainty, rel=1e-12)
    # the page opens with its plots already drawn
    assert ("run", res.id) in plot_cache(client.application)._items


def test_save_stores_only_what_was_previewed(client: Any, lab: Any, session: Any) -> None:
    sign_in(client, "a1@lab.example")
    _toml, csv = demo_files("diss-kcl-01")
    fields = form_from_demo("diss-kcl-01", lab.calorimeter_id)
    preview = post_form(client, "dissolution", fields, csv=csv).get_data(as_text=True)
    changed = {**fields, "solute.mass": "3.80000"}
    r = post_form(client, "dissolution", changed, csv=csv, action="save", extra=carried(preview))
    assert r.status_code == 200
    assert "The entries changed after the last preview" in r.get_data(as_text=True)
    r = post_form(client, "dissolution", fields, csv=csv, action="save")  # no preview at all
    assert r.status_code == 200 and "Nothing was previewed yet" in r.get_data(as_text=True)
    assert counts(session) == (0, 0)


def test_the_calibration_in_force_supplies_a_blank_heat_capacity(client: Any, lab: Any, session: Any) -> None:
    sign_in(client, "a1@lab.example")
    _toml, csv = demo_files("diss-kcl-01")
    fields = {**form_from_demo("diss-kcl-01", lab.spare_calorimeter_id), "calorimeter.heat_capacity": ""}
    html = post_form(client, "dissolution", fields, csv=csv).get_data(as_text=True)
    assert "21.0 ± 3.0 J/K" in html and "Spare cup" in html  # the lab's hand-entered value, used
    r = post_form(client, "dissolution", fields, csv=csv, action="save", extra=carried(html))
    assert r.status_code == 302
    run = session.scalars(sa.select(Run)).one()
    assert run.calibration is not None and run.calibration.heat_capacity_j_k == 21.0
    assert not re.search(r"(?m)^heat_capacity", run.run_toml) and 'name = "Spare cup"' in run.run_toml
    # a calorimeter with no calibration yet cannot supply one
    r = post_form(client, "dissolution", {**fields, "calorimeter_id": str(lab.calorimeter_id)}, csv=csv)
    assert r.status_code == 400
    assert "has no heat capacity yet" in field_row(r.get_data(as_text=True), "f-calorimeter-heat-capacity")


@pytest.mark.parametrize("name", ["neut-hcl-naoh-01", "react-mg-hcl-01", "cal-mixing-01"])
def test_other_kinds_preview_from_their_forms(client: Any, lab: Any, name: str) -> None:
    sign_in(client, "tech@lab.example")
    toml, csv = demo_files(name)
    kind = tomllib.loads(toml)["kind"]
    r = post_form(client, kind, form_from_demo(name, lab.calorimeter_id), csv=csv)
    html = r.get_data(as_text=True)
    assert r.status_code == 200, re.findall(r'class="field-error"[^>]*>([^<]*)', html)
    assert "Preview (not saved yet)" in html
    a = analyze_run(DEMO / f"{name}.toml")
    key = a.main
    from calc.report import format_value

    v, u, unit = a.value(key)
    assert format_value(v, u, unit) in html


def test_staff_choose_the_group_and_it_is_written_into_the_run_file(client: Any, lab: Any, session: Any) -> None:
    sign_in(client, "tech@lab.example")
    _toml, csv = demo_files("diss-kcl-01")
    fields = {
        **form_from_demo("diss-kcl-01", lab.calorimeter_id),
        "info.group": "Group B",
        "method": "equal-area",
        "fore_period.start": "0",
        "fore_period.end": "200",
    }
    html = post_form(client, "dissolution", fields, csv=csv).get_data(as_text=True)
    assert "equal-area" in html and "0–200 s" in html  # the method and fore period asked for
    r = post_form(client, "dissolution", fields, csv=csv, action="save", extra=carried(html))
    assert r.status_code == 302
    run = session.scalars(sa.select(Run)).one()
    assert run.group_id == lab.groups["B"]
    spec = parse_run(run.run_toml, source="stored")
    assert spec.get("info", "group") == "Group B" and spec.method == "equal-area"
    assert spec.fore_period == (0.0, 200.0)
    assert run.current_result.method == "equal-area" and run.current_result.fore_end_s == 200.0
    # a half-given period is refused at its field
    r = post_form(client, "dissolution", {**fields, "fore_period.end": ""}, csv=csv)
    assert r.status_code == 400 and "both the start and the end" in field_row(r.get_data(as_text=True), "f-fore-period")


# ---------------------------------------------------------------- uploading the files


def test_upload_files_preview_then_save_exactly_as_sent(client: Any, lab: Any, session: Any) -> None:
    sign_in(client, "a1@lab.example")
    toml, csv = demo_files("neut-hcl-naoh-01")
    token = csrf_token(client.get("/runs/upload").get_data(as_text=True))
    r = client.post(
        "/runs/upload",
        content_type="multipart/form-data",
        data={
            "csrf_token": token,
            "action": "preview",
            "run_file": (io.BytesIO(toml.encode()), "neut-hcl-naoh-01.toml"),
            "readings": (io.BytesIO(csv), "neut-hcl-naoh-01.csv"),
        },
    )
    html = r.get_data(as_text=True)
    assert r.status_code == 200 and "Preview of the temperature readings" in html
    assert "H314" in html  # NaOH: GHS H314 (EU CLP harmonised classification, from memory)
    assert counts(session) == (0, 0)
    packed = ("run_file_packed", "run_file_name", "readings_packed", "readings_name")
    data = {"csrf_token": token, "action": "save", **carried(html, *packed)}
    r = client.post("/runs/upload", data=data, content_type="multipart/form-data")
    assert r.status_code == 302
    run = session.scalars(sa.select(Run)).one()
    assert run.run_toml == toml and run.readings_raw == csv
    assert run.run_file_name == "neut-hcl-naoh-01.toml"


def test_upload_errors_are_shown_at_the_file_they_concern(client: Any, lab: Any, session: Any) -> None:
    sign_in(client, "a1@lab.example")
    toml, csv = demo_files("diss-kcl-01")
    token = csrf_token(client.get("/runs/upload").get_data(as_text=True))

    def send(run_text: str, readings: bytes) -> Any:
        return client.post(
            "/runs/upload",
            content_type="multipart/form-data",
            data={
                "csrf_token": token,
                "run_file": (io.BytesIO(run_text.encode()), "x.toml"),
                "readings": (io.BytesIO(readings), "x.csv"),
            },
        )

    r = send(toml.replace('kind = "dissolution"', 'kind = "dissolution'), csv)
    assert r.status_code == 400
    html = r.get_data(as_text=True)
    assert 'id="f-run_file-error"' in html and "line 1" in html  # TOML syntax: calc names the line
    r = send(toml.replace('volume = "100.00 ± 0.10 mL"', 'volume = "100.00 ± 0.10 g"'), csv)
    assert r.status_code == 400 and "water.volume" in r.get_data(as_text=True)
    r = send(toml, b"time_s,temperature_C\n0,abc\n")
    assert r.status_code == 400 and 'id="f-readings-error"' in r.get_data(as_text=True)
    r = send(without_heat_capacity(toml), csv)  # the cup named in the file has no calibration yet
    assert r.status_code == 400 and 'id="f-calorimeter_id-error"' in r.get_data(as_text=True)
    r = client.post("/runs/upload", data={"csrf_token": token}, content_type="multipart/form-data")
    assert r.status_code == 400 and "choose the run file" in r.get_data(as_text=True)
    r = client.post(
        "/runs/upload",
        content_type="multipart/form-data",
        data={
            "csrf_token": token,
            "run_file_packed": "not base64!",
            "run_file_name": "x.toml",
            "readings": (io.BytesIO(csv), "x.csv"),
        },
    )
    assert r.status_code == 400 and "damaged" in r.get_data(as_text=True)
    assert counts(session) == (0, 0)


def test_forms_need_their_csrf_token(client: Any, lab: Any, session: Any) -> None:
    sign_in(client, "a1@lab.example")
    _toml, csv = demo_files("diss-kcl-01")
    r = client.post(
        "/runs/new/dissolution",
        content_type="multipart/form-data",
        data={**form_from_demo("diss-kcl-01"), "action": "save", "readings": (io.BytesIO(csv), "x.csv")},
    )
    assert r.status_code == 400 and "The form has expired" in r.get_data(as_text=True)
    assert counts(session) == (0, 0)
