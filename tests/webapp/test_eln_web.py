"""The .eln archive from the pages, the API and the cupcal commands."""

from __future__ import annotations

import io
import zipfile
from pathlib import Path
from typing import Any

import pytest
import sqlalchemy as sa
from click.testing import CliRunner

from calc.cli.commands import cli
from tests.webapp.conftest import PASSWORD, sign_in, upload
from tests.webapp.eln_helpers import zip_of
from webapp.models import Run
from webapp.services.classes import create_section
from webapp.services.people import create_course, create_group


def _root(data: bytes) -> set[str]:
    with zipfile.ZipFile(io.BytesIO(data)) as z:
        return {n.split("/", 1)[0] for n in z.namelist()}


def test_api_exports_a_run_a_selection_and_the_notebook_and_imports_them(client: Any, lab: Any, session: Any) -> None:
    first = upload(client, lab.auth("a1"), "diss-kcl-01").get_json()["id"]
    second = upload(client, lab.auth("coord"), "diss-nh4no3-01").get_json()["id"]
    one = client.get(f"/api/runs/{first}/export/eln", headers=lab.auth("a1"))
    assert one.status_code == 200 and one.mimetype == "application/vnd.eln+zip"
    assert f'filename="cupcal-run-{first}.eln"' in one.headers["Content-Disposition"]
    assert _root(one.data) == {f"cupcal-run-{first}"}
    with zipfile.ZipFile(io.BytesIO(one.data)) as z:
        pdf = z.read(f"cupcal-run-{first}/run-{first}/report.pdf")
    assert pdf.startswith(b"%PDF-")
    both = client.get(f"/api/exports?format=eln&run_ids={first},{second}", headers=lab.auth("coord"))
    assert both.status_code == 200 and _root(both.data) == {"cupcal-runs-2"}
    # a student cannot export a run of another group
    assert client.get(f"/api/runs/{second}/export/eln", headers=lab.auth("b1")).status_code == 404
    whole = client.get("/api/notebook/export.eln", headers=lab.auth("coord"))
    assert whole.status_code == 200
    # the runs are here already: importing them changes nothing
    r = client.post(
        "/api/eln-imports",
        data={"archive": (io.BytesIO(whole.data), "cupcal-notebook.eln")},
        headers=lab.auth("coord"),
        content_type="multipart/form-data",
    )
    assert r.status_code == 200, r.get_json()
    assert r.get_json()["counts"]["unchanged"] == 2 and r.get_json()["counts"]["error"] == 0
    assert session.scalar(sa.select(sa.func.count()).select_from(Run)) == 2


def test_api_import_refuses_students_and_hostile_archives(client: Any, lab: Any) -> None:
    bad = zip_of([("a/x.txt", b"x"), ("b/y.txt", b"y")])
    r = client.post("/api/eln-imports", data=bad, headers={**lab.auth("a1"), "Content-Type": "application/vnd.eln+zip"})
    assert r.status_code == 403
    r = client.post(
        "/api/eln-imports?name=two.eln",
        data=bad,
        headers={**lab.auth("tech"), "Content-Type": "application/vnd.eln+zip"},
    )
    assert r.status_code == 400 and "2 folders at the root" in r.get_json()["error"]
    assert r.get_json()["field"] == "archive"
    r = client.post("/api/eln-imports", data=b"", headers={**lab.auth("tech"), "Content-Type": "application/zip"})
    assert r.status_code == 400


def _section(session: Any, lab: Any) -> int:
    from webapp.models import Person

    coord = session.get(Person, lab.ids["coord"])
    course = create_course(session, coord, name="Course E", term="t")
    section = create_section(session, coord, course_id=course.id, name="S-E")
    group = create_group(session, coord, name="G-E1", course_id=course.id)
    group.section_id = section.id
    session.commit()
    return section.id


def test_pages_offer_the_downloads_and_the_import(client: Any, lab: Any, session: Any) -> None:
    run_id = upload(client, lab.auth("coord"), "diss-kcl-01").get_json()["id"]
    section_id = _section(session, lab)
    sign_in(client, "coord@lab.example", PASSWORD)
    page = client.get(f"/runs/{run_id}").get_data(as_text=True)
    assert f"/api/runs/{run_id}/export/eln" in page
    runs = client.get("/runs/").get_data(as_text=True)  # the selection form sends run_ids and format=eln
    assert 'action="/api/exports"' in runs and 'name="format" value="eln"' in runs and 'name="run_ids"' in runs
    chosen = client.get(f"/api/exports?format=eln&run_ids={run_id}")
    assert chosen.status_code == 200 and _root(chosen.data) == {f"cupcal-run-{run_id}"}
    page = client.get(f"/classes/sections/{section_id}").get_data(as_text=True)
    assert f"/api/sections/{section_id}/export.eln" in page and "/imports/eln" in page
    section = client.get(f"/api/sections/{section_id}/export.eln")  # the link, as the browser follows it
    assert section.status_code == 200 and _root(section.data) == {f"cupcal-section-{section_id}"}
    page = client.get(f"/calorimeters/{lab.spare_calorimeter_id}").get_data(as_text=True)
    assert f"/api/calorimeters/{lab.spare_calorimeter_id}/export.eln" in page
    cal = client.get(f"/api/calorimeters/{lab.spare_calorimeter_id}/export.eln")
    assert cal.status_code == 200
    form = client.get("/imports/eln")
    assert form.status_code == 200
    from tests.webapp.conftest import csrf_token

    token = csrf_token(form.get_data(as_text=True))
    ok = client.post(
        "/imports/eln",
        data={"csrf_token": token, "archive": (io.BytesIO(cal.data), "cal.eln")},
        content_type="multipart/form-data",
    )
    assert ok.status_code == 200 and "calorimeter.json" in ok.get_data(as_text=True)
    bad = client.post(
        "/imports/eln",
        data={"csrf_token": token, "archive": (io.BytesIO(b"nope"), "x.eln")},
        content_type="multipart/form-data",
    )
    assert bad.status_code == 400 and "not a zip archive" in bad.get_data(as_text=True)


def test_students_do_not_get_the_import_page(client: Any, lab: Any) -> None:
    sign_in(client, "a1@lab.example", PASSWORD)
    assert client.get("/imports/eln").status_code == 403


@pytest.fixture
def env(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> str:
    url = f"sqlite:///{tmp_path / 'cmd.sqlite3'}"
    monkeypatch.setenv("DATABASE_URL", url)
    monkeypatch.setenv("CUPCAL_SECRET_KEY", "cmd")
    monkeypatch.setattr(
        "webapp.DEFAULTS",
        {**__import__("webapp").DEFAULTS, "PASSWORD_METHOD": "scrypt:1024:8:1", "MONTE_CARLO_TRIALS": 500},
    )
    return url


def test_cupcal_export_and_import_commands(env: str, tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    runner = CliRunner()
    assert runner.invoke(cli, ["db", "upgrade"]).exit_code == 0
    assert runner.invoke(cli, ["load-demo"]).exit_code == 0
    me = "odile.brackwater@ternhollow.example"
    r = runner.invoke(cli, ["export", "--format", "eln", "--all", "--as", me, "-o", str(tmp_path)])
    assert r.exit_code == 0, r.output
    archive = tmp_path / "cupcal-notebook.eln"
    assert _root(archive.read_bytes()) == {"cupcal-notebook"}
    r = runner.invoke(
        cli,
        [
            "export",
            "--calorimeter",
            "Cup TH-07 (two nested foam cups, lid)",
            "--as",
            me,
            "-o",
            str(tmp_path / "cup.eln"),
        ],
    )
    assert r.exit_code == 0, r.output
    assert runner.invoke(cli, ["export", "--as", me]).exit_code == 2  # nothing chosen
    assert runner.invoke(cli, ["export", "--run", "999", "--as", me]).exit_code == 2
    with zipfile.ZipFile(archive) as z:
        runs = {n.split("/")[1] for n in z.namelist() if n.split("/")[1].startswith("run-")}
    r = runner.invoke(cli, ["import", str(archive), "--as", me])
    assert len(runs) == 14 and r.exit_code == 0 and f"{len(runs)} unchanged" in r.output, r.output
    (tmp_path / "bad.eln").write_bytes(zip_of([("a/x", b"1"), ("b/y", b"2")]))
    r = runner.invoke(cli, ["import", str(tmp_path / "bad.eln"), "--as", me])
    assert r.exit_code == 2 and "2 folders at the root" in r.output
