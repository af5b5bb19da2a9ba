"""One verdict on every surface: a KCl run judged against the reference at its own conditions.

The demo KCl run (21.8 °C, about 0.5 mol/kg) is judged against the infinite-dilution value carried
to its temperature (Kirchhoff) and molality (φ_L); the value as published (17.22 kJ/mol at infinite
dilution, NBS tables 1982 via the CRC handbook, from memory) is context. The run page, the API,
the JSON and CSV exports, the result card, the section dashboard (page, API, grading CSV) and the
command line must all give the same E_n and the same word.
"""

from __future__ import annotations

import csv
import io
import json
from typing import Any

import pytest
from click.testing import CliRunner

from tests.webapp.conftest import DEMO, sign_in, upload


def _put_group_in_section(session: Any, group_id: int) -> int:
    from webapp.models import Course, Group, Section

    course = Course(name="Verdict course")
    section = Section(course=course, name="Monday")
    session.add_all([course, section])
    session.flush()
    session.get(Group, group_id).section_id = section.id
    session.commit()
    return section.id


def test_the_same_verdict_on_every_surface(app: Any, client: Any, session: Any, lab: Any) -> None:
    from calc.cli.commands import cli

    section_id = _put_group_in_section(session, lab.groups["A"])
    r = upload(client, lab.auth("a1"), "diss-kcl-01", title="KCl verdict")
    assert r.status_code == 201, r.get_data(as_text=True)
    run_id = r.get_json()["id"]
    rid = client.get(f"/api/runs/{run_id}", headers=lab.auth("a1")).get_json()["current_result"]["id"]
    v = client.get(f"/api/results/{rid}", headers=lab.auth("a1")).get_json()["verdict"]
    assert v["basis"] == "conditions" and v["judged_against"] == "reference at the run's conditions"
    en, word = f"{v['En']:+.2f}", ("satisfactory" if v["satisfactory"] else "not satisfactory")
    ctx = v["context"]
    assert ctx["state"] == "infinite dilution" and ctx["reference_as_published"] == pytest.approx(17.22)
    # the published E_n differs (the issue's +3.67): it must not be shown as a verdict anywhere
    assert abs(ctx["En"] - v["En"]) > 1

    # the command line, on the same files
    text = CliRunner().invoke(cli, ["analyze", "--monte-carlo", "0", str(DEMO / "diss-kcl-01.toml")]).output
    assert "verdict against the reference at the run's conditions" in text and f"E_n = {en} ({word}" in text
    js = CliRunner().invoke(cli, ["analyze", "--json", str(DEMO / "diss-kcl-01.toml")]).output
    assert f"{json.loads(js)['comparison']['En']:+.2f}" == en

    # the run page: the verdict row, and the published E_n only as context
    sign_in(client, "a1@lab.example")
    html = client.get(f"/runs/{run_id}").get_data(as_text=True)
    assert (
        f"E<sub>n</sub> = {en}</span>:" in html
        and f'<span class="{"ok" if v["satisfactory"] else "bad"}">{word}' in html
    )
    assert "Context only, no verdict" in html
    assert html.count('class="bad">not satisfactory') == (0 if v["satisfactory"] else 1)

    # the exports of the run
    doc = json.loads(client.get(f"/api/runs/{run_id}/export/json").get_data(as_text=True))
    assert f"{doc['result']['verdict']['En']:+.2f}" == en
    rows = list(csv.DictReader(io.StringIO(client.get(f"/api/runs/{run_id}/export/csv").get_data(as_text=True))))
    assert f"{float(rows[-1]['En']):+.2f}" == en
    report = client.get(f"/api/runs/{run_id}/export/html").get_data(as_text=True)
    assert f"E<sub>n</sub> = {en} ({word}" in report

    # the result card
    card = client.get(f"/embed/runs/{run_id}").get_data(as_text=True)
    assert f"E<sub>n</sub> = {en}, {word}" in card and "against the reference at the run&#39;s conditions" in card
    assert ("|En| &gt; 1" in card) == (not v["satisfactory"])

    # the dashboard of the section: API, page and grading export
    client = app.test_client()
    sign_in(client, "coord@lab.example")
    board = client.get(f"/api/sections/{section_id}/dashboard", headers=lab.auth("coord")).get_json()
    row = next(x for x in board["rows"] if x["run_id"] == run_id)
    assert f"{row['en']:+.2f}" == en and ("En" in row["flags"]) == (not v["satisfactory"])
    page = client.get(f"/classes/sections/{section_id}/dashboard").get_data(as_text=True)
    assert en in page and "reference at the runs&#39; conditions (mean)" in page
    grading = list(
        csv.DictReader(io.StringIO(client.get(f"/classes/sections/{section_id}/export.csv").get_data(as_text=True)))
    )
    g = next(x for x in grading if x["run"] == str(run_id))
    assert f"{float(g['En']):+.2f}" == en
