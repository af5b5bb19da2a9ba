"""Exports for grading: CSV with formula injection neutralised, .xlsx readable by openpyxl."""

from __future__ import annotations

import csv
import io
from pathlib import Path
from typing import Any

from openpyxl import load_workbook

from tests.webapp.class_fixtures import build_section
from webapp.exports.cells import neutralise
from webapp.models import Run


def test_neutralise_formula_cells() -> None:
    # OWASP "CSV injection": text starting with = + - @ is prefixed by an apostrophe
    for text in ("=1+1", "+SUM(A1)", "-2+3", "@cmd", "\t=x"):
        assert neutralise(text) == "'" + text
    assert neutralise("M01") == "M01" and neutralise(-17.2) == -17.2


def test_csv_and_xlsx_exports(client: Any, session: Any, lab: Any, tmp_path: Path) -> None:
    cl, ids = build_section(session, lab, tmp_path)
    run = session.get(Run, ids["M01-run1.toml"])
    run.title = '=HYPERLINK("http://example.invalid","x")'
    session.commit()
    r = client.get(f"/classes/sections/{cl.section_id}/export.csv", headers=lab.auth("coord"))
    assert r.status_code == 302  # pages need a browser session; sign in
    from tests.webapp.conftest import sign_in

    sign_in(client, "coord@lab.example")
    r = client.get(f"/classes/sections/{cl.section_id}/export.csv")
    assert r.status_code == 200 and r.mimetype == "text/csv"
    rows = list(csv.reader(io.StringIO(r.get_data(as_text=True))))
    header = rows[0]
    runs = rows[1 : rows.index([])]
    assert len(runs) == 8
    titles = [row[header.index("title")] for row in runs]
    assert "'" + run.title in titles and run.title not in titles
    far = next(row for row in runs if row[0] == str(ids["M04-far.toml"]))
    assert "outlier" in far[header.index("flags")].split()
    stats_header = rows[rows.index([]) + 1]
    assert stats_header[:6] == ["measurement", "unit", "results", "groups", "mean", "sd"] and "s_R" in stats_header
    r = client.get(f"/classes/sections/{cl.section_id}/export.xlsx")
    assert r.status_code == 200
    wb = load_workbook(io.BytesIO(r.data))
    sheet = list(wb["runs"].iter_rows(values_only=True))
    assert len(sheet) == 9 and sheet[0][0] == "run"
    assert any(row[5] == "'" + run.title for row in sheet[1:])
    assert isinstance(sheet[1][8], float)
    assert list(wb["statistics"].iter_rows(values_only=True))[1][2] == 8
    assert client.get(f"/classes/sections/{cl.section_id}/export.pdf").status_code == 400


def test_students_cannot_export(client: Any, session: Any, lab: Any, tmp_path: Path) -> None:
    cl, _ids = build_section(session, lab, tmp_path)
    from tests.webapp.conftest import sign_in

    sign_in(client, "ada@lab.example", "unknown")  # roster accounts have random passwords
    sign_in(client, "a1@lab.example")
    assert client.get(f"/classes/sections/{cl.section_id}/export.csv").status_code == 403
