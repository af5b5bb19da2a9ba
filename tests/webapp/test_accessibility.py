"""Accessibility in a real browser: axe-core (WCAG 2.1 A and AA rules) on every page type, signed in as
each role, at 1280 and at 320 CSS px; reflow without sideways scrolling at 320 px; focus on the error
summary; printing a run on at most two pages.

axe-core is the npm registry package, vendored unchanged in ``tests/vendor/axe-core/`` (see its
README) and injected from that file: nothing is loaded from a network. The browser is Debian's
headless Chromium (``tests/webapp/browser_support.py``).
"""

from __future__ import annotations

import base64
import hashlib
import io
import json
from pathlib import Path
from typing import Any

import pytest

from tests.webapp.browser_support import (
    _sign_in,
    browser,  # noqa: F401  (fixture)
    server,  # noqa: F401  (fixture)
)

AXE = Path(__file__).resolve().parents[1] / "vendor" / "axe-core" / "axe.min.js"
AXE_SHA256 = "880970c081707360e64f34cea25ff91892f5bc95675b0776925b9709dd8a68bb"  # axe-core 4.10.3 from npm
AXE_TAGS = ["wcag2a", "wcag2aa", "wcag21a", "wcag21aa"]
ROLES = {
    "coordinator": "odile.brackwater@ternhollow.example",  # invented demo people
    "technician": "kasper.lindqvist-mayo@ternhollow.example",
    "student": "tomas.vesterby-quail@ternhollow.example",
}
WIDTHS = (1280, 320)
SECTION = "Heron (accessibility check)"

pytestmark = pytest.mark.slow


def PREPARE_DEMO(session: Any) -> None:  # noqa: N802 - looked up by browser_support.server
    """Put the demo's groups in one section and give the KCl runs a lot, so those pages have content."""
    import sqlalchemy as sa

    from webapp.models import Course, Group, Person, Run
    from webapp.services.classes import create_section

    coordinator = session.scalars(sa.select(Person).where(Person.role == "coordinator")).first()
    course = session.scalars(sa.select(Course)).first()
    section = create_section(session, coordinator, course_id=course.id, name=SECTION)
    for group in session.scalars(sa.select(Group)):
        group.section_id = section.id
    for run in session.scalars(sa.select(Run).where(Run.kind == "dissolution")):
        run.sample = "LOT-K7"
    session.commit()
    _live_run(session)


def _live_run(session: Any) -> None:
    """A live run of the demo student, part recorded, so the live page, the list and the room view have content."""
    import sqlalchemy as sa

    from tests.webapp.browser_support import STUDENT
    from tests.webapp.live_helpers import batch, demo_rows, live_run_file
    from webapp.models import Person
    from webapp.services.live import LiveCreate, add_readings, create_live_run

    student = session.scalar(sa.select(Person).where(Person.email == STUDENT))
    live, _new = create_live_run(session, student, LiveCreate(run_file=live_run_file(), client_key="axe-live"))
    add_readings(session, student, live.id, batch(demo_rows(), 0, 200))


def _axe_source() -> str:
    data = AXE.read_bytes()
    assert hashlib.sha256(data).hexdigest() == AXE_SHA256, "tests/vendor/axe-core/axe.min.js changed"
    return data.decode("utf-8")


def _set_width(d: Any, width: int) -> None:
    d.execute_cdp_cmd(
        "Emulation.setDeviceMetricsOverride", {"width": width, "height": 900, "deviceScaleFactor": 1, "mobile": False}
    )


def _audit(d: Any, axe: str) -> list[dict[str, Any]]:
    if not d.execute_script("return !!window.axe"):
        d.execute_script(axe)
    result = d.execute_async_script(
        "const done = arguments[arguments.length - 1];"
        "axe.run(document, {runOnly: {type: 'tag', values: arguments[0]}, resultTypes: ['violations']})"
        ".then(r => done(JSON.stringify(r.violations)), e => done(JSON.stringify([{id: 'axe-error', impact: 'x',"
        " help: String(e), nodes: []}])));",
        AXE_TAGS,
    )
    return json.loads(result)


def _first_link(d: Any, server: str, page: str, prefix: str) -> str | None:
    d.get(server + page)
    return d.execute_script(
        "const a = [...document.querySelectorAll('main a')].map(a => a.getAttribute('href'))"
        ".find(h => h && new RegExp(arguments[0]).test(h)); return a || null;",
        prefix,
    )


def _pages(d: Any, server: str, role: str) -> list[str]:
    run = _first_link(d, server, "/runs/", r"^/runs/\d+$")
    cup = _first_link(d, server, "/calorimeters/", r"^/calorimeters/\d+$")
    board = _first_link(d, server, "/classes/", r"^/classes/sections/\d+/dashboard")
    section = board.rsplit("/", 1)[0] if board else None
    pages = [
        "/",
        "/runs/",
        "/runs/?q=KCl&sort=title&dir=asc",
        "/runs/samples",
        "/runs/new",
        "/runs/new/dissolution",
        "/runs/upload",
        "/calorimeters/",
        "/classes/",
        "/plan",
        "/plan?kind=mixing-calibration",
        "/plan?kind=dissolution&go=1&formula=KCl&mass=lots&water_volume=100+g",  # the error summary
        "/plan?kind=dissolution&go=1",
        "/auth/tokens",
        "/auth/password",
        "/runs/new/dissolution-with-calibration",
        "/runs/987654",
    ]  # the last: the error page
    pages += [p for p in (run, cup, f"{cup}/control" if cup else None, section, board) if p]
    live = _first_link(d, server, "/live/", r"^/live/\d+$")
    pages += ["/live/"] + [p for p in (live, section and f"{section}/live") if p]
    if role != "student":
        course = _first_link(d, server, "/classes/", r"^/classes/courses/\d+/dashboard")
        pages += [p for p in (course, section and section.replace("/classes/sections/", "/imports/sections/")) if p]
        pages += ["/imports/eln"] + ([f"{section}/marking"] if section else [])
    if role == "coordinator" and run:
        pages.append(f"{run}/lock")
    if role == "coordinator" and section:
        pages.append(section.replace("/classes/sections/", "/auth/sections/") + "/accounts")
    return pages


@pytest.mark.parametrize("role", list(ROLES))
def test_every_page_passes_axe_and_reflows_at_320_px(browser: Any, server: str, role: str) -> None:  # noqa: F811
    d = browser
    axe = _axe_source()
    d.delete_all_cookies()
    _set_width(d, 1280)
    _sign_in(d, server, ROLES[role])
    pages = _pages(d, server, role)
    assert len(pages) >= 18, pages
    problems: list[str] = []
    for width in WIDTHS:
        _set_width(d, width)
        for page in pages:
            d.get(server + page)
            for v in _audit(d, axe):
                where = "; ".join(
                    n.get("target", [""])[0] if isinstance(n.get("target", [""])[0], str) else str(n.get("target"))
                    for n in v.get("nodes", [])[:3]
                )
                problems.append(f"{width}px {page}: [{v.get('impact')}] {v['id']}: {v.get('help')} at {where}")
            wide = d.execute_script("return document.documentElement.scrollWidth - window.innerWidth")
            if wide > 1:
                problems.append(f"{width}px {page}: the page scrolls sideways by {wide} px")
    _set_width(d, 1280)
    assert not problems, "\n".join(problems)


def test_focus_goes_to_the_error_summary_and_the_skip_link_comes_first(browser: Any, server: str) -> None:  # noqa: F811
    from selenium.webdriver.common.by import By
    from selenium.webdriver.common.keys import Keys

    d = browser
    d.delete_all_cookies()
    axe = _axe_source()
    # signed out: the sign-in page passes at both widths; and axe does find a planted fault
    for width in WIDTHS:
        _set_width(d, width)
        d.get(server + "/auth/login")
        assert _audit(d, axe) == []
        assert d.execute_script("return document.documentElement.scrollWidth - window.innerWidth") <= 1
    d.execute_script("const i = document.createElement('img'); i.src = '/static/none.png'; document.body.append(i);")
    assert "image-alt" in {v["id"] for v in _audit(d, axe)}
    _set_width(d, 1280)
    _sign_in(d, server, ROLES["technician"])
    d.get(server + "/plan?kind=electrical-calibration&go=1&water_volume=lots&heater_voltage=five")
    assert d.switch_to.active_element.get_attribute("id") == "error-summary"
    assert "2 problems" in d.find_element(By.ID, "error-summary").text
    d.get(server + "/runs/")
    d.find_element(By.TAG_NAME, "body").send_keys(Keys.TAB)
    first = d.switch_to.active_element
    assert first.get_attribute("class") == "skip-link" and first.is_displayed()
    # the focus ring is drawn in a colour with at least 3:1 against the page
    assert "179, 92, 0" in first.value_of_css_property("outline-color")


def _pdf_pages(d: Any) -> tuple[int, str]:
    from pypdf import PdfReader
    from selenium.webdriver.common.print_page_options import PrintOptions

    options = PrintOptions()
    options.page_width, options.page_height = 21.0, 29.7  # A4, in cm
    reader = PdfReader(io.BytesIO(base64.b64decode(d.print_page(options))))
    return len(reader.pages), " ".join(p.extract_text() or "" for p in reader.pages)


def test_a_run_prints_on_two_pages_and_a_dashboard_as_its_table(browser: Any, server: str) -> None:  # noqa: F811
    d = browser
    d.delete_all_cookies()
    _set_width(d, 1280)
    _sign_in(d, server, ROLES["coordinator"])
    counts = {}
    for run in (
        d.execute_script(
            "return [...document.querySelectorAll('main a')].map(a => a.getAttribute('href'))"
            ".filter(h => /^\\/runs\\/\\d+$/.test(h))"
        )
        or []
    ):
        d.get(server + run)
        n, text = _pdf_pages(d)
        counts[run] = n
        assert "Sign out" not in text and "Analyze again" not in text  # no menu, no forms
        assert "Uncertainty budget" in text and "Wear eye protection" in text
    assert counts and max(counts.values()) <= 2, sorted(counts.items(), key=lambda kv: -kv[1])
    board = _first_link(d, server, "/classes/", r"^/classes/sections/\d+/dashboard")
    d.get(server + board)
    n, text = _pdf_pages(d)
    assert "Runs" in text and "Statistics" in text and "Search" not in text and "Feedback per group" not in text
