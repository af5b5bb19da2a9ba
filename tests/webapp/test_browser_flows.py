"""Whole days in headless Chromium, one test per role: the coordinator's and the student's.

Same setup as test_browser.py (Debian's Chromium and chromedriver, nothing downloaded; skipped with
a hint unless ``CUPCAL_REQUIRE_BROWSER=1``), on a server of its own filled with the invented demo
lab. The checks are what a person sees on the pages and gets in the exports.
"""

from __future__ import annotations

import csv
import io
import re
import zipfile
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest

from tests.webapp.browser_support import (
    _click,
    _shot,
    _wait,
    browser,  # noqa: F401  (the Chromium fixture, on this module's server)
    demo_lab_served,
)
from tests.webapp.conftest import DEMO

COORDINATOR = "odile.brackwater@ternhollow.example"  # invented demo people
STUDENT = "lucan.ferreira-holt@ternhollow.example"


@pytest.fixture(scope="module")
def lab_server(tmp_path_factory: pytest.TempPathFactory) -> Iterator[tuple[str, Any]]:
    """Serve the notebook with the demo lab on 127.0.0.1; yield its URL and the app."""
    with demo_lab_served(tmp_path_factory.mktemp("flows"), "browser flows", monte_carlo_trials=0) as served:
        yield served


@pytest.fixture(scope="module")
def server(lab_server: tuple[str, Any]) -> str:
    """The URL of this module's server (the name the Chromium fixture asks for)."""
    return lab_server[0]


def _by(css: str) -> tuple[str, str]:
    from selenium.webdriver.common.by import By

    return By.CSS_SELECTOR, css


def _fill(d: Any, css: str, text: str) -> None:
    box = d.find_element(*_by(css))
    box.clear()
    box.send_keys(text)


def _flash(d: Any) -> str:
    return " ".join(e.text for e in d.find_elements(*_by(".flash")))


def _sign_in(d: Any, server: str, email: str, password: str = "tern-hollow-demo") -> None:
    d.delete_all_cookies()
    d.get(server + "/auth/login")
    _fill(d, "#email", email)
    _fill(d, "#password", password)
    _click(d, "main form button[type=submit]")


def _fetch_text(d: Any, url: str, form_css: str | None = None, extra: dict[str, str] | None = None) -> str:
    """GET ``url`` (or POST the form ``form_css`` plus ``extra``) from the page, as the browser would."""
    return d.execute_async_script(
        "const [url, css, extra, done] = arguments;"
        "let opts = {};"
        "if (css) { const body = new FormData(document.querySelector(css));"
        "  for (const k in extra) body.set(k, extra[k]); opts = {method: 'POST', body}; }"
        "fetch(url, opts).then(r => r.text()).then(done, e => done('ERROR ' + e));",
        url,
        form_css,
        extra or {},
    )


def _class_zip(folder: Path) -> Path:
    """Three demo class runs renamed to this flow's groups: two of the roster's, one the roster lacks."""
    out = folder / "wren-runs.zip"
    plan = (("heron-a-kcl-1", "Wren 1"), ("heron-b-kcl-1", "Wren 2"), ("kestrel-a-kcl-1", "Wren 3"))
    with zipfile.ZipFile(out, "w") as z:
        for stem, group in plan:
            toml = (DEMO / "class" / f"{stem}.toml").read_text(encoding="utf-8")
            toml = re.sub(r'(?m)^group = ".*"$', f'group = "{group}"', toml)
            toml = toml.replace('title = "', 'title = "Wren practical: ', 1)
            z.writestr(f"{stem}.toml", toml)
            z.write(DEMO / "class" / f"{stem}.csv", f"{stem}.csv")
    return out


def test_coordinator_day(browser: Any, server: str, tmp_path: Path) -> None:  # noqa: F811
    d = browser
    _sign_in(d, server, COORDINATOR)
    # course → section
    d.get(server + "/classes/")
    _fill(d, "form[action$='/classes/courses'] input[name=name]", "Wren practical")
    _click(d, "form[action$='/classes/courses'] button[type=submit]")
    assert "Course added" in _flash(d)
    li = next(e for e in d.find_elements(*_by("main li")) if e.text.startswith("Wren practical"))
    li.find_element(*_by("input[name=name]")).send_keys("Wednesday")
    old = d.find_element(*_by("html"))
    li.find_element(*_by("button[type=submit]")).click()
    from selenium.webdriver.support import expected_conditions as ec
    from selenium.webdriver.support.ui import WebDriverWait

    WebDriverWait(d, 20).until(ec.staleness_of(old))
    assert "Section added" in _flash(d)
    # roster
    roster = tmp_path / "roster.csv"
    roster.write_text(
        "course,section,group,name,email,role\n"
        "Wren practical,Wednesday,Wren 1,Ilse Gartmoor,ilse@wren.example,student\n"
        "Wren practical,Wednesday,Wren 2,Jory Pennacott,jory@wren.example,student\n",
        encoding="utf-8",
    )
    d.find_element(*_by("form[action$='/classes/roster'] input[type=file]")).send_keys(str(roster))
    _click(d, "form[action$='/classes/roster'] button[type=submit]")
    assert "Imported: 2 new people" in d.find_element(*_by("main")).text
    d.get(server + "/classes/")
    d.find_element(*_by("main")).find_element("link text", "Wednesday").click()
    _wait(d, "footer")
    section_url = d.current_url
    section_id = int(section_url.rstrip("/").rsplit("/", 1)[1])
    # sign-in links: CSV for a mail merge, then the printable page
    d.find_element("link text", "Accounts and sign-in links").click()
    _wait(d, "footer")
    text = _fetch_text(
        d, f"/auth/sections/{section_id}/sign-in-links", "form[action$='/sign-in-links']", {"format": "csv"}
    )
    rows = list(csv.DictReader(io.StringIO(text)))
    assert sorted(r["email"] for r in rows) == ["ilse@wren.example", "jory@wren.example"]
    assert all("/auth/link/" in r["link"] for r in rows)
    _click(d, "button[value=html]")
    links = [e.text for e in d.find_elements(*_by("code.link"))]
    assert len(links) == 2 and all("/auth/link/" in x for x in links)
    _shot(d, "flow-sign-in-links")
    # import with groups from the files: Wren 3 is not in the roster, so tick "create the groups"
    d.get(section_url)
    d.find_element("link text", "Import runs").click()
    _wait(d, "#import-form")
    d.find_element(*_by("#archive")).send_keys(str(_class_zip(tmp_path)))
    d.find_element(*_by("#create_groups")).click()
    d.find_element(*_by("#import-form button[type=submit]")).click()
    WebDriverWait(d, 60).until(lambda drv: "stored, " in drv.find_element(*_by("body")).text)
    assert "3 stored" in d.find_element(*_by("body")).text
    assert "group &#39;Wren 3&#39; created" in d.page_source or "group 'Wren 3' created" in d.page_source
    _shot(d, "flow-import")
    # dashboard
    d.get(f"{server}/classes/sections/{section_id}/dashboard")
    table = d.find_element(*_by("table.runs")).text
    assert "Wren 1" in table and "Wren 3" in table
    run_link = d.find_element(*_by("table.runs tbody tr td a"))
    run_id = int(run_link.get_attribute("href").rstrip("/").split("/")[-1])
    # exclude a run, with a reason
    d.get(f"{server}/runs/{run_id}")
    _fill(d, "#reason-exclude", "the stirrer stopped half way (lab notes)")
    _click(d, "#do-exclude")
    assert "excluded from the statistics" in _flash(d)
    assert "Excluded from the statistics and marks" in d.find_element(*_by("#review")).text
    # comment on the run and on a group
    _fill(d, "#comment-body", "Good fore period; the stirrer note explains the exclusion.")
    _click(d, "#comments form button[type=submit]")
    assert "Comment saved" in _flash(d)
    d.get(f"{server}/classes/sections/{section_id}/dashboard")
    box = next(e for e in d.find_elements(*_by("textarea[id^=group-comment-]")))
    box.find_element("xpath", "./ancestor::details/summary").click()  # each group's feedback opens on a click
    box.send_keys("Wren groups: weigh by difference next week.")
    _click(d, f"#{box.get_attribute('id')} ~ button")
    assert "Comment saved" in _flash(d)
    assert "weigh by difference next week" in d.page_source
    # marks: the section's scheme, then one mark set by hand with a reason
    d.get(f"{server}/classes/sections/{section_id}/marking")
    _fill(d, "#en-bands", "1=6, 2=3, *=0")
    _fill(d, "#relative-bands", "2%=4, 5%=2, *=0")
    _click(d, "main form button[type=submit]")
    assert "Marking scheme saved" in _flash(d)
    d.get(f"{server}/classes/sections/{section_id}/dashboard")
    ids = [
        int(a.get_attribute("href").rstrip("/").split("/")[-1])
        for a in d.find_elements(*_by("table.runs tbody tr td:first-child a"))
    ]
    marked = next(i for i in ids if i != run_id)
    d.get(f"{server}/runs/{marked}")
    assert re.search(r"Mark: \d+ points \(scheme", d.find_element(*_by("#mark")).text)
    _fill(d, "#mark-points", "9")
    _fill(d, "#mark-reason", "careful notebook")
    _click(d, "form[action$='/mark'] button[type=submit]")
    assert (
        "Mark saved" in _flash(d) and "9 points (set by hand: careful notebook)" in d.find_element(*_by("#mark")).text
    )
    # export for grading
    d.get(f"{server}/classes/sections/{section_id}/dashboard")
    text = _fetch_text(d, f"/classes/sections/{section_id}/export.csv")
    rows = list(csv.reader(io.StringIO(text)))
    header = rows[0]
    runs = {int(r[0]): dict(zip(header, r)) for r in rows[1 : rows.index([])]}
    assert runs[marked]["mark"] == "9.0" and runs[marked]["mark_source"] == "set by hand"
    assert runs[run_id]["counts"].startswith("no (excluded") and runs[run_id]["mark"] == ""
    assert (
        "Ilse Gartmoor" in runs[run_id]["names"]
        or "Jory Pennacott" in runs[run_id]["names"]
        or runs[run_id]["group"] == "Wren 3"
    )
    assert "Good fore period" in runs[run_id]["comments"]
    assert re.fullmatch(r"\d+\.\d+ ± \d\.\d+ kJ/mol", runs[marked]["result"]), runs[marked]["result"]
    assert runs[marked]["judged_against"] == "reference at the run's conditions"
    _shot(d, "flow-dashboard")


def test_student_day(browser: Any, lab_server: tuple[str, Any]) -> None:  # noqa: F811
    import sqlalchemy as sa

    from webapp.db import new_session
    from webapp.models import Person
    from webapp.services.accounts import issue_links

    server, app = lab_server
    session = new_session(app)
    try:
        coord = session.scalar(sa.select(Person).where(Person.email == COORDINATOR))
        lucan = session.scalar(sa.select(Person).where(Person.email == STUDENT))
        secret = issue_links(session, coord, [lucan])[0].secret
    finally:
        session.close()
    d = browser
    d.delete_all_cookies()
    # first sign-in: the link, then a password of one's own
    d.get(f"{server}/auth/link/{secret}")
    assert "Lucan Ferreira-Holt" in d.find_element(*_by("main")).text
    _click(d, "main form button[type=submit]")
    assert d.current_url.endswith("/auth/password")
    _fill(d, "#password", "lucan's own words")
    _fill(d, "#confirm", "lucan's own words")
    _click(d, "main form button[type=submit]")
    assert "Your password is set" in _flash(d)
    _sign_in(d, server, STUDENT, "lucan's own words")
    assert d.find_element(*_by("h1")).text == "Notebook"
    # upload a run of the group's practical
    d.get(server + "/runs/upload")
    d.find_element(*_by("#f-run_file")).send_keys(str(DEMO / "class" / "kestrel-a-kcl-2.toml"))
    d.find_element(*_by("#f-readings")).send_keys(str(DEMO / "class" / "kestrel-a-kcl-2.csv"))
    _click(d, "#run-form button[value=preview]")
    _click(d, "button.save")
    assert re.search(r"/runs/\d+$", d.current_url)
    review = d.find_element(*_by("#review")).text
    assert re.search(r"Mark: \d+ points \(scheme: \|E_n\|", review), review
    assert "agree within their uncertainties" in review  # the group's comment from the coordinator
    verdict = d.find_element(*_by("table.comparison")).text
    assert "reference at the run's conditions" in verdict
    _shot(d, "flow-student-run")
    # the section's feedback: what every group is told once, then the group's own
    d.get(server + "/classes/")
    d.find_element("link text", "Thursday afternoon").click()
    _wait(d, "footer")
    d.find_element("link text", "Dashboard").click()
    _wait(d, "footer")
    text = d.find_element(*_by("main")).text
    assert "Feedback per group" in text and "Kestrel A" in text
    assert "agree within their uncertainties" in text
    assert "Export for grading" not in text and "Comment on" not in text  # staff-only parts are not shown
    _shot(d, "flow-student-feedback")
