"""Bulk import: report per file with exact errors, idempotent re-import, no half-stored run, unsafe zips."""

from __future__ import annotations

import io
import zipfile
from pathlib import Path
from typing import Any

import pytest
import sqlalchemy as sa
from click.testing import CliRunner

from tests.webapp.class_fixtures import make_class, simulated_run, zip_folder
from tests.webapp.race_trials import all_past_the_check
from webapp.models import Person, Result, Run, RunInput
from webapp.services.errors import Invalid
from webapp.services.imports import Limits, files_from_folder, files_from_zip, import_files


def _counts(session: Any) -> tuple[int, int, int]:
    return tuple(session.scalar(sa.select(sa.func.count()).select_from(m)) for m in (Run, Result, RunInput))


def _folder(tmp_path: Path) -> Path:
    d = tmp_path / "section"
    simulated_run(d, "M01-run1", 1)
    simulated_run(d, "M02-run1", 2)
    simulated_run(d / "sub", "anon", 3)  # group from the mapping
    bad = simulated_run(d, "M03-bad", 4)
    bad.write_text(bad.read_text(encoding="utf-8").replace("[water]\n", '[water]\ncolour = "blue"\n'), encoding="utf-8")
    (d / "notes.txt").write_text("not a run", encoding="utf-8")
    return d


def test_report_lists_every_file_and_reimport_changes_nothing(session: Any, lab: Any, tmp_path: Path) -> None:
    cl = make_class(session, lab.ids["coord"])
    coord = session.get(Person, lab.ids["coord"])
    files = files_from_folder(_folder(tmp_path))
    report = import_files(session, coord, cl.section_id, files, mapping="file,group\nanon.toml,M04\n")
    by = {i.file: i for i in report.items}
    assert by["M01-run1.toml"].outcome == "stored" and by["M01-run1.toml"].group == "M01"
    assert by["sub/anon.toml"].outcome == "stored" and by["sub/anon.toml"].group == "M04"
    assert by["M03-bad.toml"].outcome == "error"
    assert "M03-bad.toml" in by["M03-bad.toml"].message and "water.colour" in by["M03-bad.toml"].message
    assert by["notes.txt"].outcome == "ignored"
    assert report.count("stored") == 3
    before = _counts(session)
    again = import_files(session, coord, cl.section_id, files, mapping="file,group\nanon.toml,M04\n")
    assert again.count("stored") == 0 and again.count("unchanged") == 3
    assert _counts(session) == before
    run = session.get(Run, by["M01-run1.toml"].run_id)
    assert run.content_hash and len(run.content_hash) == 64
    assert run.current_result.monte_carlo is None  # bulk import: no Monte Carlo


def test_unknown_group_and_missing_readings_are_reported(session: Any, lab: Any, tmp_path: Path) -> None:
    cl = make_class(session, lab.ids["coord"])
    d = tmp_path / "x"
    simulated_run(d, "T01-run1", 5)  # T01 is in the other section
    simulated_run(d, "M01-lost", 6)
    (d / "M01-lost.csv").unlink()
    report = import_files(session, session.get(Person, lab.ids["coord"]), cl.section_id, files_from_folder(d))
    msgs = {i.file: i.message for i in report.items}
    assert "cannot tell its group" in msgs["T01-run1.toml"]
    assert msgs["M01-lost.toml"] == "M01-lost.toml, field 'readings': 'M01-lost.csv' is not among the imported files"


def test_a_crash_mid_import_leaves_no_half_stored_run(session: Any, lab: Any, tmp_path: Path, app: Any) -> None:
    cl = make_class(session, lab.ids["coord"])
    files = files_from_folder(_folder(tmp_path))
    flushed = {"n": 0}

    def crash(sess: Any, _ctx: Any) -> None:
        if any(isinstance(o, Run) for o in sess.new):
            flushed["n"] += 1
            if flushed["n"] == 2:
                raise RuntimeError("power cut")

    # raise after the second run's rows are flushed but before its commit
    sa.event.listen(session, "after_flush", crash)
    with pytest.raises(RuntimeError, match="power cut"):
        import_files(
            session, session.get(Person, lab.ids["coord"]), cl.section_id, files, mapping="file,group\nanon.toml,M04\n"
        )
    sa.event.remove(session, "after_flush", crash)
    from webapp.db import new_session

    fresh = new_session(app)
    try:
        runs, results, inputs = _counts(fresh)
        assert runs == 1 and results == 1
        assert (
            fresh.scalar(
                sa.select(sa.func.count()).select_from(RunInput).where(RunInput.run_id.not_in(sa.select(Run.id)))
            )
            == 0
        )
        assert inputs > 0
    finally:
        fresh.close()


def _zip(entries: dict[str, bytes]) -> bytes:
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED) as zf:
        for name, data in entries.items():
            zf.writestr(name, data)
    return buf.getvalue()


@pytest.mark.parametrize("name", ["../evil.toml", "a/../../evil.toml", "/etc/evil.toml", "C:/evil.toml"])
def test_unsafe_paths_are_refused(name: str) -> None:
    with pytest.raises(Invalid, match="refused"):
        files_from_zip(_zip({"ok.toml": b"x", name: b"x"}))


def test_zip_bombs_and_too_many_files_are_refused() -> None:
    bomb = _zip({"big.csv": b"0" * (2 * 1024 * 1024)})  # compresses to a few kB
    assert len(bomb) < 20_000
    with pytest.raises(Invalid, match="zip bomb"):
        files_from_zip(bomb, Limits(max_total_bytes=1024 * 1024))
    with pytest.raises(Invalid, match="at most 3 per import"):
        files_from_zip(_zip({f"f{i}.csv": b"1" for i in range(4)}), Limits(max_files=3))
    with pytest.raises(Invalid, match="not a zip archive"):
        files_from_zip(b"plain text")


def test_import_over_the_api_and_the_web_page(client: Any, lab: Any, session: Any, tmp_path: Path) -> None:
    cl = make_class(session, lab.ids["coord"])
    archive = zip_folder(_folder(tmp_path))
    data = {
        "archive": (io.BytesIO(archive), "section.zip"),
        "mapping": (io.BytesIO(b"file,group\nanon.toml,M04\n"), "map.csv"),
    }
    r = client.post(
        f"/api/sections/{cl.section_id}/imports",
        data=data,
        headers=lab.auth("coord"),
        content_type="multipart/form-data",
    )
    assert r.status_code == 200, r.get_json()
    assert r.get_json()["counts"] == {"stored": 3, "unchanged": 0, "error": 1, "ignored": 1}
    r = client.post(
        f"/api/sections/{cl.section_id}/imports",
        data={"archive": (io.BytesIO(archive), "s.zip")},
        headers=lab.auth("a1"),
        content_type="multipart/form-data",
    )
    assert r.status_code == 403
    bad = _zip({"../x.toml": b"x"})
    r = client.post(
        f"/api/sections/{cl.section_id}/imports",
        data={"archive": (io.BytesIO(bad), "s.zip")},
        headers=lab.auth("coord"),
        content_type="multipart/form-data",
    )
    assert r.status_code == 400 and "leads out of the archive" in r.get_json()["error"]
    from tests.webapp.conftest import csrf_token, sign_in

    sign_in(client, "coord@lab.example")
    page = client.get(f"/imports/sections/{cl.section_id}")
    assert page.status_code == 200
    r = client.post(
        f"/imports/sections/{cl.section_id}",
        content_type="multipart/form-data",
        data={"csrf_token": csrf_token(page.get_data(as_text=True)), "archive": (io.BytesIO(archive), "section.zip")},
    )
    html = r.get_data(as_text=True)
    assert r.status_code == 200 and "3 unchanged (already stored)" in html and "M03-bad.toml" in html


def test_cupcal_import_command(app: Any, lab: Any, session: Any, tmp_path: Path, monkeypatch: Any) -> None:
    from webapp import commands

    make_class(session, lab.ids["coord"])
    monkeypatch.setattr(commands, "command_app", lambda: app)
    folder = _folder(tmp_path)
    mapping = tmp_path / "map.csv"
    mapping.write_text("file,group\nanon.toml,M04\n", encoding="utf-8")
    runner = CliRunner()
    args = ["--section", "Thermo Lab/Mon AM", "--as", "coord@lab.example", "--mapping", str(mapping)]
    r = runner.invoke(commands.import_command, [str(folder), *args])
    assert r.exit_code == 2, r.output  # one file has an error
    assert "3 stored" in r.output and "error     M03-bad.toml" in r.output
    (folder / "M03-bad.toml").unlink()
    r = runner.invoke(commands.import_command, [str(folder), *args])
    assert r.exit_code == 0 and "0 stored, 3 unchanged" in r.output
    r = runner.invoke(commands.import_command, [str(folder), "--section", "Nope", "--as", "coord@lab.example"])
    assert r.exit_code == 2 and "no section 'Nope'" in r.output and "Traceback" not in r.output


def test_an_oversized_import_is_refused_before_it_is_read(
    app: Any, client: Any, lab: Any, session: Any, tmp_path: Path
) -> None:
    cl = make_class(session, lab.ids["coord"])
    app.config["IMPORT_MAX_UPLOAD_BYTES"] = 64 * 1024
    archive = zip_folder(_folder(tmp_path))
    padded = archive + b"\0" * (80 * 1024)  # over the limit whatever the zip's own size
    r = client.post(
        f"/api/sections/{cl.section_id}/imports",
        headers=lab.auth("coord"),
        data={"archive": (io.BytesIO(padded), "big.zip")},
        content_type="multipart/form-data",
    )
    assert r.status_code == 413, r.get_data(as_text=True)
    assert "larger than the limit of 64 KiB" in r.get_json()["error"]
    assert _counts(session) == (0, 0, 0)


def _with_group(path: Path, group: str) -> None:
    text = path.read_text(encoding="utf-8")
    if "[info]" in text:
        text = text.replace("[info]\n", f'[info]\ngroup = "{group}"\n', 1)
    else:
        text += f'\n[info]\ngroup = "{group}"\n'
    path.write_text(text, encoding="utf-8")


def test_missing_groups_are_created_from_info_group_when_asked(session: Any, lab: Any, tmp_path: Path) -> None:
    from webapp.models import AuditEntry, Group

    cl = make_class(session, lab.ids["coord"])
    coord = session.get(Person, lab.ids["coord"])
    d = tmp_path / "named"
    for stem, group in (("a", "N21"), ("b", "N21"), ("c", "N22"), ("d", "T01")):  # T01: another section's group
        _with_group(simulated_run(d, stem, 30 + ord(stem)), group)
    bad = simulated_run(d, "e", 40)
    _with_group(bad, "N23")
    bad.write_text(bad.read_text(encoding="utf-8").replace("[water]\n", '[water]\ncolour = "blue"\n'), encoding="utf-8")
    files = files_from_folder(d)
    refused = import_files(session, coord, cl.section_id, files)
    assert refused.count("stored") == 0 and "is not in section" in refused.items[0].message
    report = import_files(session, coord, cl.section_id, files, create_groups=True)
    by = {i.file: i for i in report.items}
    assert [by[f].group for f in ("a.toml", "b.toml", "c.toml")] == ["N21", "N21", "N22"]
    assert "group 'N21' created" in by["a.toml"].message and "created" not in by["b.toml"].message
    assert "belongs to another section" in by["d.toml"].message
    assert by["e.toml"].outcome == "error"  # its run failed, so its group was not kept either
    names = set(session.scalars(sa.select(Group.name).where(Group.section_id == cl.section_id)))
    assert {"N21", "N22"} <= names and "N23" not in names
    assert (
        session.scalar(
            sa.select(sa.func.count())
            .select_from(AuditEntry)
            .where(AuditEntry.entity == "group", AuditEntry.field == "created")
        )
        == 2
    )


# ----------------------------------------------------------------- issue 12: duplicates, totals, races


def test_duplicate_entry_names_are_refused_one_report_line_each(session: Any, lab: Any, tmp_path: Path) -> None:
    cl = make_class(session, lab.ids["coord"])
    coord = session.get(Person, lab.ids["coord"])
    d = tmp_path / "dup"
    simulated_run(d, "M01-run1", 1)
    simulated_run(d, "M02-run1", 2)
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w") as zf:
        for p in sorted(d.iterdir()):
            zf.write(p, p.name)
        import warnings

        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # zipfile warns about a duplicate name: that is the attack
            zf.writestr("M01-run1.toml", "kind = 'dissolution'\n")  # a second M01-run1.toml
            zf.writestr("./M02-run1.csv", "time_s,temperature_C\n")  # the same name after normalising
    files = files_from_zip(buf.getvalue())
    assert files.duplicates == {"M01-run1.toml": 2, "M02-run1.csv": 2}
    report = import_files(session, coord, cl.section_id, files)
    by = {i.file: i for i in report.items}
    assert by["M01-run1.toml"].outcome == "error" and "2 entries" in by["M01-run1.toml"].message
    assert by["M02-run1.csv"].outcome == "error" and "2 entries" in by["M02-run1.csv"].message
    assert by["M02-run1.toml"].outcome == "error" and "more than once" in by["M02-run1.toml"].message
    assert [i.file for i in report.items].count("M01-run1.toml") == 1
    assert _counts(session)[0] == 0


def test_a_readings_file_shared_by_many_runs_counts_once_per_use(session: Any, lab: Any, tmp_path: Path) -> None:
    from calc import limits
    from calc.limits import LimitExceeded

    cl = make_class(session, lab.ids["coord"])
    coord = session.get(Person, lab.ids["coord"])
    d = tmp_path / "shared"
    simulated_run(d, "M01-run1", 1)
    toml = (d / "M01-run1.toml").read_text(encoding="utf-8")
    size = (d / "M01-run1.csv").stat().st_size
    for i in range(2, 12):
        (d / f"M01-run{i}.toml").write_text(toml.replace("title = ", f"# copy {i}\ntitle = "), encoding="utf-8")
    files = files_from_zip(zip_folder(d))
    with limits.use({"import_total_bytes": 5 * size}):  # 11 uses of the log: over; the zip holds it once
        with pytest.raises(LimitExceeded) as err:
            import_files(session, coord, cl.section_id, files)
    assert "import_total_bytes" in str(err.value)
    assert _counts(session)[0] == 0
    with limits.use({"import_files": 3}):
        with pytest.raises(LimitExceeded, match="import_files"):
            import_files(session, coord, cl.section_id, files)


def test_the_limit_answers_413_through_the_api(client: Any, lab: Any, session: Any, app: Any, tmp_path: Path) -> None:
    cl = make_class(session, lab.ids["coord"])
    d = tmp_path / "api"
    simulated_run(d, "M01-run1", 1)
    for i in range(2, 5):
        (d / f"M01-run{i}.toml").write_text(
            (d / "M01-run1.toml").read_text(encoding="utf-8") + f"\n# {i}\n", encoding="utf-8"
        )
    app.config["LIMITS"] = {"import_files": 2}
    r = client.post(
        f"/api/sections/{cl.section_id}/imports",
        headers=lab.auth("coord"),
        data={"archive": (io.BytesIO(zip_folder(d)), "runs.zip")},
        content_type="multipart/form-data",
    )
    assert r.status_code == 413 and "import_files" in r.get_json()["error"]


def test_identical_imports_at_the_same_time_both_answer_unchanged_or_stored(
    app: Any, lab: Any, session: Any, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    from webapp.db import new_session
    from webapp.services import import_store

    cl = make_class(session, lab.ids["coord"])
    d = tmp_path / "race"
    simulated_run(d, "M01-run1", 1)
    files = files_from_folder(d)

    def run() -> Any:
        s = new_session(app)
        try:
            return import_files(s, s.get(Person, lab.ids["coord"]), cl.section_id, files)
        finally:
            s.close()

    # both imports have looked for the content hash and found nothing before either records the run
    reports = all_past_the_check(monkeypatch, import_store, "record_run", [run, run])
    outcomes = sorted(r.items[0].outcome for r in reports)
    assert outcomes == ["stored", "unchanged"], [(i.outcome, i.message) for r in reports for i in r.items]
    assert _counts(session)[0] == 1
