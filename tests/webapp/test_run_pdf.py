"""The printable run report as PDF (``GET /api/runs/<id>/export/pdf``, rendered by xhtml2pdf).

The PDF is read back with ``pypdf`` (PyPI, a general-purpose PDF reader, installed with
xhtml2pdf), independently of the library that wrote it: it must parse, and its text must
carry the result as the JSON export states it, the method, the plot and the safety line.
"""

from __future__ import annotations

import io
import json
import re
from typing import Any

from pypdf import PdfReader

from tests.webapp.conftest import upload
from webapp.templating import pm


def _record(client: Any, lab: Any, name: str = "diss-kcl-01", who: str = "a1", **kw: Any) -> int:
    r = upload(client, lab.auth(who), name, **kw)
    assert r.status_code == 201, r.get_json()
    return int(r.get_json()["id"])


def _pdf_text(reader: PdfReader) -> str:
    text = "\n".join(page.extract_text() or "" for page in reader.pages)
    return re.sub(r"\s+", " ", text)


def test_pdf_report_carries_result_method_plot_and_cautions(client: Any, lab: Any) -> None:
    run_id = _record(client, lab, method="equal-area", fore_start=0, fore_end=160)  # not the default
    r = client.get(f"/api/runs/{run_id}/export/pdf", headers=lab.auth("a1"))
    assert r.status_code == 200, r.get_data(as_text=True)[:300]
    assert r.mimetype == "application/pdf"
    assert r.headers["Content-Disposition"] == f'attachment; filename="cupcal-run-{run_id}.pdf"'
    assert r.data.startswith(b"%PDF-")  # ISO 32000-1, 7.5.2: the file header

    reader = PdfReader(io.BytesIO(r.data), strict=True)
    assert 1 <= len(reader.pages) <= 10
    text = _pdf_text(reader)

    doc = json.loads(client.get(f"/api/runs/{run_id}/export/json", headers=lab.auth("a1")).data)
    res = doc["result"]
    assert res["main"] == "molar_enthalpy" and res["unit"] == "kJ/mol"
    headline = pm(res["value"], res["expanded_uncertainty"], res["unit"])
    assert f"ΔH = {headline}" in text  # the Greek letter survives: the font has it
    # the stored value, read back as a number from the PDF's headline
    m = re.search(r"ΔH = (-?[0-9.]+) ± ([0-9.]+) kJ/mol", text)
    assert m is not None
    assert abs(float(m.group(1)) - res["value"]) <= float(m.group(2))
    assert res["options"]["method"] == "equal-area"
    assert "equal-area; fore 0.0–160.0 s" in text  # the method row of the outputs table
    assert "Uncertainty budget" in text and "Provenance" in text
    assert "Wear eye protection." in text and "supplier's safety data sheet" in text
    for c in res["cautions"]:
        if c["substance"] != "general" and c["hazard_statements"]:
            assert c["hazard_statements"][0][:20] in text
    assert "Print" not in text.split("Run ")[0]  # the screen-only print button is left out

    images = [img for page in reader.pages for img in page.images]
    assert images, "the run plot is embedded as an image"
    assert images[0].image.width >= 600  # matplotlib's PNG at 150 dpi, 7.5 in wide


def test_pdf_report_access_is_that_of_the_run(client: Any, lab: Any) -> None:
    run_id = _record(client, lab)
    # another group's student, and no credentials at all
    assert client.get(f"/api/runs/{run_id}/export/pdf", headers=lab.auth("b1")).status_code == 404
    assert client.get(f"/api/runs/{run_id}/export/pdf").status_code == 401
    # a classmate and the coordinator may
    for who in ("a2", "coord"):
        r = client.get(f"/api/runs/{run_id}/export/pdf", headers=lab.auth(who))
        assert r.status_code == 200 and r.data.startswith(b"%PDF-"), who
