"""The technician's day in headless Chromium, one test: calibrations → pooled value → overdue warning →
control chart → withdraw a bad calibration → re-analyze the runs that used it.

Served like tests/webapp/test_browser.py (its fixtures: the invented demo lab on a migrated SQLite
file, Debian's Chromium and chromedriver, nothing downloaded).
"""

from __future__ import annotations

import datetime as dt
import re
from pathlib import Path
from typing import Any

from tests.webapp.browser_support import (
    _click,
    _sign_in,
    browser,  # noqa: F401 - the fixtures, module-scoped here too
    server,  # noqa: F401
)
from tests.webapp.conftest import DEMO

TECHNICIAN = "kasper.lindqvist-mayo@ternhollow.example"  # invented demo person
CUP = "Cup TH-07 (two nested foam cups, lid)"


def _run_file(tmp: Path, name: str) -> Path:
    """A demo dissolution without its own heat capacity, measured today, so the cup's value is used."""
    text = (DEMO / "diss-kcl-01.toml").read_text("utf-8")
    text = re.sub(r"(?m)^heat_capacity = .*\n", "", text)
    text = re.sub(r'(?m)^date = ".*"$', f'date = "{dt.date.today().isoformat()}"', text)
    text = re.sub(r'(?m)^title = ".*"$', f'title = "{name}"', text)
    path = tmp / f"{name}.toml"
    path.write_text(text, "utf-8")
    return path


def _upload(d: Any, server: str, toml: Path) -> str:
    from selenium.webdriver.common.by import By

    d.get(server + "/runs/upload")
    d.find_element(By.ID, "f-run_file").send_keys(str(toml))
    d.find_element(By.ID, "f-readings").send_keys(str(DEMO / "diss-kcl-01.csv"))
    _click(d, "#run-form button[value=preview]")
    return d.find_element(By.ID, "preview").text


def test_technician_pools_sees_overdue_charts_withdraws_and_reanalyses(
    browser: Any,
    server: str,  # noqa: F811
    tmp_path: Path,
) -> None:
    from selenium.webdriver.common.by import By

    d = browser
    _sign_in(d, server, TECHNICIAN)
    # 1. calibrations and the pooled value: the demo's two calibration runs, approved by the technician
    d.get(server + "/calorimeters/")
    d.find_element(By.LINK_TEXT, CUP).click()
    facts = d.find_element(By.CSS_SELECTOR, "table.facts").text
    assert "weighted mean of 2 consistent calibrations" in facts and "Birge ratio" in facts
    assert "overdue since 2025-04-10" in facts  # measured 2025-03-11, every 30 days
    cup_url = d.current_url

    # 2. a run measured today on the overdue cup: warned on the preview and on the run page
    preview = _upload(d, server, _run_file(tmp_path, "KCl on an overdue cup"))
    assert "Overdue:" in preview and "due again on 2025-04-10" in preview
    _click(d, "button.save")
    page = d.find_element(By.TAG_NAME, "main").text
    assert "Overdue:" in page and "from the pooled value" in page
    overdue_run = d.current_url

    # 3. the control chart plots the cup's own heat capacity, run axis in whole numbers
    d.get(cup_url + "/control")
    chart = d.find_element(By.TAG_NAME, "main")
    assert "heat capacity of this calorimeter" in chart.text and "2025-03-11" in chart.text
    svg = chart.find_element(By.CSS_SELECTOR, "figure svg").get_attribute("innerHTML")
    texts = re.findall(r"<text[^>]*>([^<]*)</text>", svg)
    ticks = texts[: texts.index("calibration, in the order measured")]
    assert ticks and all(t.isdigit() for t in ticks)

    # 4. a heat capacity typed with a slip (28.6 for 18.6): refused until confirmed, then in force
    d.get(cup_url)
    d.find_element(By.ID, "hc-heat_capacity").send_keys("28.6 ± 0.5 J/K")
    d.find_element(By.ID, "hc-measured_on").send_keys(dt.date.today().isoformat())
    d.find_element(By.ID, "hc-note").send_keys("typed from the bench sheet")
    _click(d, "section[aria-labelledby=enter-title] button[type=submit]")
    assert "confirm" in d.find_element(By.ID, "hc-confirm-error").text  # said beside the box to tick
    d.find_element(By.ID, "hc-confirm").click()
    d.find_element(By.ID, "hc-restart").click()
    _click(d, "section[aria-labelledby=enter-title] button[type=submit]")
    assert re.search(r"in force 28\.60? ± 0\.50? J/K", d.find_element(By.CSS_SELECTOR, "table.facts").text)
    _upload(d, server, _run_file(tmp_path, "KCl with the slipped value"))
    _click(d, "button.save")
    bad_run = d.current_url
    assert "28.6" in d.find_element(By.TAG_NAME, "main").text

    # 5. withdraw the bad calibration: the runs that used it are listed
    d.get(cup_url)
    row = d.find_element(By.XPATH, "//table[@class='calibrations']//tr[.//td[starts-with(normalize-space(.), '28.6')]]")
    cid = row.get_attribute("id").split("-")[1]
    row.find_element(By.ID, f"reason-{cid}").send_keys("18.6 typed as 28.6")
    _click(d, f"#calibration-{cid} button[type=submit]")
    flash = d.find_element(By.CSS_SELECTOR, ".flash").text
    run_id = bad_run.rsplit("/", 1)[1]
    assert f"Calibration #{cid} withdrawn" in flash and f"#{run_id}" in flash
    assert "weighted mean of 2" in d.find_element(By.CSS_SELECTOR, "table.facts").text  # back to the pool

    # 6. re-analyze the runs that used it, in one action, with the value now in force
    _click(d, f"#calibration-{cid} form[action$=reanalyze-runs] button")
    assert f"Re-analyzed 1 run(s) with the value in force (#{run_id})" in d.find_element(By.CSS_SELECTOR, ".flash").text
    d.get(bad_run)
    used = d.find_element(By.XPATH, "//table[contains(@class, 'facts')]//tr[th[.='Calorimeter']]").text
    assert "from the pooled value" in used and "28.6" not in used
    d.get(overdue_run)  # the first run never used the slipped value: untouched
    assert "Overdue:" in d.find_element(By.TAG_NAME, "main").text
