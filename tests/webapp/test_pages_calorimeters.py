"""The calorimeter pages: the heat-capacity history plotted with its uncertainties, the table of
calibrations with their runs, and the coordinators' forms. SQLite and PostgreSQL (``app``)."""

from __future__ import annotations

import re
from typing import Any

import sqlalchemy as sa

from tests.webapp.conftest import approve_proposals, csrf_token, demo_files, sign_in, upload, without_heat_capacity
from webapp.models import AuditEntry, Calibration, Calorimeter


def test_history_plot_table_and_the_runs_of_each_calibration(client: Any, lab: Any, session: Any) -> None:
    # a calibration run on the cup, then a group-A run and a group-B run that use its value
    cal_run = upload(client, lab.auth("a1"), "cal-electrical-01", monte_carlo=0).get_json()
    toml, _csv = demo_files("diss-kcl-01")
    # a student's calibration is only a proposal: no run can use it yet
    refused = upload(client, lab.auth("a1"), "diss-kcl-01", toml=without_heat_capacity(toml), monte_carlo=0)
    assert refused.status_code == 400 and "no heat capacity yet" in refused.get_json()["error"]
    assert len(approve_proposals(client, lab)) == 1  # a technician approves it
    used_a = upload(client, lab.auth("a1"), "diss-kcl-01", toml=without_heat_capacity(toml), monte_carlo=0)
    used_b = upload(client, lab.auth("b1"), "diss-kcl-01", toml=without_heat_capacity(toml), monte_carlo=0)
    assert used_a.status_code == used_b.status_code == 201
    used_a, used_b = used_a.get_json(), used_b.get_json()
    assert used_a["calibration"]["result_id"] == cal_run["current_result"]["id"]

    sign_in(client, "a1@lab.example")
    html = client.get(f"/calorimeters/{lab.calorimeter_id}").get_data(as_text=True)
    src = re.search(r'<img src="(/calorimeters/\d+/history\.svg\?v=[^"]+)"[^>]*alt="([^"]+)"', html)
    assert src and "1 calibration, each" in src.group(2) and "value in force" in src.group(2)
    r = client.get(src.group(1).replace("&amp;", "&"))
    assert r.status_code == 200 and r.mimetype == "image/svg+xml" and "immutable" in r.headers["Cache-Control"]
    svg = r.get_data(as_text=True)
    # calibration_history_svg: labelled axes with units, the uncertainty kind named in the legend
    assert "Calorimeter heat capacity history" in svg and "heat capacity / (J/K)" in svg
    assert "standard uncertainty" in svg
    # the table: the value ± u, U (k) of the calibration run, a link to it, and the runs that used it
    c = cal_run["current_result"]
    from calc.report import format_value

    assert format_value(c["value"], c["standard_uncertainty"], "J/K") in html
    assert f"/runs/{cal_run['id']}?result={c['id']}" in html
    table = html[html.index('class="calibrations"') :]
    assert f'href="/runs/{used_a["id"]}"' in table
    assert f'href="/runs/{used_b["id"]}"' not in table  # another group's run: not shown to a1
    # a student manages nothing here
    assert "/edit" not in html and "heat-capacity" not in html
    token = csrf_token(html)
    assert (
        client.post(
            f"/calorimeters/{lab.calorimeter_id}/edit", data={"csrf_token": token, "edit-name": "Mine now"}
        ).status_code
        == 403
    )
    assert (
        client.post(
            f"/calorimeters/{lab.calorimeter_id}/heat-capacity",
            data={"csrf_token": token, "hc-heat_capacity": "1 ± 1 J/K"},
        ).status_code
        == 403
    )
    assert client.post("/calorimeters/", data={"csrf_token": token, "new-name": "Cup X"}).status_code == 403
    # the coordinator sees both runs that used the calibration
    client.post("/auth/logout", data={"csrf_token": token})
    sign_in(client, "coord@lab.example")
    table = client.get(f"/calorimeters/{lab.calorimeter_id}").get_data(as_text=True)
    table = table[table.index('class="calibrations"') :]
    assert f'href="/runs/{used_a["id"]}"' in table and f'href="/runs/{used_b["id"]}"' in table


def test_a_calorimeter_never_calibrated_says_so(client: Any, lab: Any) -> None:
    sign_in(client, "tech@lab.example")
    html = client.get(f"/calorimeters/{lab.calorimeter_id}").get_data(as_text=True)
    assert "not calibrated yet" in html and "No calibrations yet." in html
    src = re.search(r'<img src="([^"]+history\.svg[^"]*)"', html).group(1).replace("&amp;", "&")
    assert "no calibrations recorded yet" in client.get(src).get_data(as_text=True)
    assert client.get(f"/calorimeters/{lab.calorimeter_id}/history.svg").headers["Cache-Control"] == "no-store"
    assert client.get("/calorimeters/9999/history.svg").status_code == 404


def _send(client: Any, path: str, token: str, prefix: str, **fields: str) -> Any:
    """POST one of the calorimeter forms: its fields are named ``<prefix>-<field>``, beside the CSRF token."""
    return client.post(path, data={"csrf_token": token, **{f"{prefix}-{k}": v for k, v in fields.items()}})


def test_coordinators_edit_and_errors_show_next_to_the_field(client: Any, lab: Any, session: Any) -> None:
    sign_in(client, "coord@lab.example")
    spare = f"/calorimeters/{lab.spare_calorimeter_id}"
    hc = f"{spare}/heat-capacity"
    page = client.get(spare).get_data(as_text=True)
    token = csrf_token(page)
    assert f"{spare}/edit" in page
    # a heat capacity in the wrong unit: calc's message beside the field, nothing recorded
    r = _send(client, hc, token, "hc", heat_capacity="18.6 ± 2.0 J", note="")
    assert r.status_code == 400
    html = r.get_data(as_text=True)
    assert 'id="hc-heat_capacity-error"' in html and "expected a heat capacity" in html
    n = session.scalar(
        sa.select(sa.func.count())
        .select_from(Calibration)
        .where(Calibration.calorimeter_id == lab.spare_calorimeter_id)
    )
    assert n == 1
    r = _send(client, hc, token, "hc", heat_capacity="19.4 ± 1.5 J/K", note="checked")
    assert r.status_code == 400 and 'id="hc-measured_on-error"' in r.get_data(as_text=True)  # typed: needs a date
    r = _send(client, hc, token, "hc", heat_capacity="19.4 ± 1.5 J/K", note="checked", measured_on="2026-11-02")
    assert r.status_code == 302
    html = client.get(spare).get_data(as_text=True)
    assert "19.4 ± 1.5 J/K" in html and "in force" in html
    # renaming to a name in use: said at the name field
    r = _send(
        client, f"{spare}/edit", token, "edit", name="Cup TH-07 (two nested foam cups, lid)", parts="", location=""
    )
    assert r.status_code == 409 and 'id="edit-name-error"' in r.get_data(as_text=True)
    version = session.get(Calorimeter, lab.spare_calorimeter_id).version
    edit = {"parts": "one cup", "version": str(version)}
    r = _send(client, f"{spare}/edit", token, "edit", name="Spare cup B", location="shelf 2", **edit)
    assert r.status_code == 302
    # the same form sent again with the version it was read at: someone else's change is not overwritten
    r = _send(client, f"{spare}/edit", token, "edit", name="Spare cup C", location="shelf 3", **edit)
    assert r.status_code == 409 and "changed by someone else" in r.get_data(as_text=True)
    session.expire_all()
    cal = session.get(Calorimeter, lab.spare_calorimeter_id)
    assert (cal.name, cal.parts, cal.location) == ("Spare cup B", "one cup", "shelf 2")
    # adding one from the list page, with an error first
    r = _send(client, "/calorimeters/", token, "new", name="", heat_capacity="")
    assert r.status_code == 400 and 'id="new-name-error"' in r.get_data(as_text=True)
    r = _send(
        client, "/calorimeters/", token, "new", name="Cup TH-11", heat_capacity="25 ± 2 J/K", measured_on="2026-12-01"
    )
    assert r.status_code == 302
    assert "Cup TH-11" in client.get("/calorimeters/").get_data(as_text=True)


def test_calorimeter_page_shows_due_date_and_links_the_control_chart(client: Any, lab: Any) -> None:
    sign_in(client, "tech@lab.example")
    html = client.get(f"/calorimeters/{lab.calorimeter_id}").get_data(as_text=True)
    assert "Calibration due" in html and "never calibrated" in html
    link = f"/calorimeters/{lab.calorimeter_id}/control"
    assert f'href="{link}"' in html
    assert client.get(link).status_code == 200
    upload(client, lab.auth("a1"), "cal-electrical-01", monte_carlo=0)
    approve_proposals(client, lab)
    html = client.get(f"/calorimeters/{lab.calorimeter_id}").get_data(as_text=True)
    # measured on the run's [info] date 2025-03-11, due CALIBRATION_DUE_DAYS (30) days later
    assert "overdue since 2025-04-10" in html


def test_coordinators_set_the_calibration_interval_on_the_page(client: Any, lab: Any, session: Any) -> None:
    sign_in(client, "coord@lab.example")
    url = f"/calorimeters/{lab.spare_calorimeter_id}"
    token = csrf_token(client.get(url).get_data(as_text=True))
    form = {"csrf_token": token, "edit-name": "Spare cup", "edit-parts": "", "edit-location": ""}
    r = client.post(f"{url}/edit", data=form | {"edit-calibration_interval_days": "0"})
    assert r.status_code == 400 and 'id="edit-calibration_interval_days-error"' in r.get_data(as_text=True)
    r = client.post(f"{url}/edit", data=form | {"edit-calibration_interval_days": "14"})
    assert r.status_code == 302
    html = client.get(url).get_data(as_text=True)
    assert "(every 14 days)" in html and 'value="14"' in html  # shown, and kept in the form
    session.expire_all()
    assert session.get(Calorimeter, lab.spare_calorimeter_id).calibration_interval_days == 14
    changes = session.scalars(
        sa.select(AuditEntry).where(AuditEntry.entity == "calorimeter", AuditEntry.field == "calibration_interval_days")
    ).all()
    assert [(c.old, c.new) for c in changes] == [(None, "14")]  # audited: who, when, old → new
    r = client.post(f"{url}/edit", data=form | {"edit-calibration_interval_days": ""})  # blank: the default
    assert r.status_code == 302 and "(every 30 days)" in client.get(url).get_data(as_text=True)
