"""The notebook in a real browser: headless Chromium from Debian (``chromium`` and
``chromium-driver``), driven by Selenium with the driver's path given, so no tool ever
downloads a browser or a driver.

The app is served from the test on 127.0.0.1 and a free port, on a temporary SQLite
database built through the migrations and filled with the invented demo lab. Without the
browser the tests skip with a message saying what to install, unless
``CUPCAL_REQUIRE_BROWSER=1`` (set by ``.ci/run``), when they fail. Set
``CUPCAL_SCREENSHOTS=<dir>`` to keep a screenshot of each page visited.
"""

from __future__ import annotations

import re
from pathlib import Path
from typing import Any

import pytest

from tests.webapp.browser_support import (
    STUDENT,
    _click,
    _image_drawn,
    _shot,
    _sign_in,
    browser,  # noqa: F401  (fixture)
    server,  # noqa: F401  (fixture)
)
from tests.webapp.conftest import DEMO

# ---------------------------------------------------------------- scenarios


def test_upload_preview_save_reanalyze_and_lock(browser: Any, server: str) -> None:
    from selenium.webdriver.common.by import By
    from selenium.webdriver.support.ui import Select

    d = browser
    _sign_in(d, server, STUDENT)
    _shot(d, "home")

    # upload the run file and readings of a demo run, as the command line reads them
    d.get(server + "/runs/upload")
    d.find_element(By.ID, "f-run_file").send_keys(str(DEMO / "diss-kcl-01.toml"))
    d.find_element(By.ID, "f-readings").send_keys(str(DEMO / "diss-kcl-01.csv"))
    _click(d, "#run-form button[value=preview]")
    preview = d.find_element(By.ID, "preview")
    assert "Preview (not saved yet)" in preview.text
    plot = preview.find_element(By.CSS_SELECTOR, "figure.preview-plot svg")
    assert plot.size["width"] > 300 and plot.size["height"] > 150  # drawn, not an empty box
    assert "Preview of the temperature readings" in plot.get_attribute("innerHTML")
    assert "Fore period" in preview.text and "Mixing time" in preview.text
    headline = preview.find_element(By.CSS_SELECTOR, ".headline").text
    # KCl dissolves endothermically: ΔsolH° = +17.2 kJ/mol at infinite dilution (CRC Handbook, from memory),
    # about +18 kJ/mol at this run's 0.5 mol/kg and 22 °C
    assert re.search(r"ΔH = 1[78]\.\d+ ± 0\.\d+ kJ/mol", headline), headline
    _shot(d, "upload-preview")

    # save: the run page shows the plot, the result and the cautions
    _click(d, "button.save")
    assert re.search(r"/runs/\d+$", d.current_url), d.current_url
    run_path = d.current_url[len(server) :]
    assert "saved" in d.find_element(By.CSS_SELECTOR, ".flash").text
    assert _image_drawn(d, "/plot.svg") and _image_drawn(d, "/budget.svg")
    first = d.find_element(By.CSS_SELECTOR, ".headline").text
    assert "ΔH = " in first and "k = " in first
    assert "Wear eye protection" in d.find_element(By.CSS_SELECTOR, "aside.cautions").text
    assert "Comparison with a reference value" in d.page_source
    _shot(d, "run-page")

    # change the method and analyze again: the new result is shown, the old one listed
    Select(d.find_element(By.ID, "method")).select_by_value("equal-area")
    _click(d, "form.reanalyze button[type=submit]")
    assert "the earlier result is kept" in d.find_element(By.CSS_SELECTOR, ".flash").text
    rows = d.find_elements(By.CSS_SELECTOR, "table.results tbody tr")
    assert len(rows) == 2
    assert "equal-area" in rows[0].text and "current" in rows[0].text
    assert "regnault-pfaundler" in rows[1].text and "earlier" in rows[1].text
    assert d.find_element(By.CSS_SELECTOR, ".headline").text != first
    assert _image_drawn(d, "/plot.svg")
    _shot(d, "run-reanalyzed")

    # lock (sign) it: a confirmation step first, then the edit forms are gone and a direct POST is refused
    _click(d, "form.lock button[type=submit]")
    assert "cannot be undone" in d.find_element(By.CSS_SELECTOR, ".confirm").text
    _click(d, "form.lock-confirm button[type=submit]")
    assert "locked" in d.find_element(By.CSS_SELECTOR, ".flash").text
    assert d.find_elements(By.CSS_SELECTOR, "form.reanalyze") == []
    assert d.find_elements(By.CSS_SELECTOR, "form.lock") == []
    status = d.execute_async_script(
        "const done = arguments[arguments.length - 1];"
        "const body = new FormData();"
        "body.append('csrf_token', document.querySelector('input[name=csrf_token]').value);"
        "body.append('method', 'naive');"
        "fetch(arguments[0] + '/reanalyze', {method: 'POST', body}).then(r => done(r.status), e => done(String(e)));",
        run_path,
    )
    assert status == 409
    d.refresh()
    assert len(d.find_elements(By.CSS_SELECTOR, "table.results tbody tr")) == 2
    _shot(d, "run-locked")


def test_the_form_shows_errors_at_their_fields_then_previews(browser: Any, server: str) -> None:
    from selenium.webdriver.common.by import By
    from selenium.webdriver.support.ui import Select

    d = browser
    d.delete_all_cookies()
    _sign_in(d, server, "kasper.lindqvist-mayo@ternhollow.example")  # invented demo technician
    d.get(server + "/runs/new/dissolution")
    values = {
        "f-water-volume": "one hundred",
        "f-water-volume-u": "0.10",
        "f-thermometer-resolution": "0.01",
        "f-solute-formula": "KCl",
        "f-solute-mass": "3.72760",
        "f-solute-mass-u": "0.00020",
        "f-mixing-time": "240",
        "f-info-title": "Browser check",
    }
    for html_id, value in values.items():
        box = d.find_element(By.ID, html_id)
        box.clear()
        box.send_keys(value)
    cups = Select(d.find_element(By.ID, "f-calorimeter-name"))
    cups.select_by_visible_text(next(o.text for o in cups.options if o.text.startswith("Cup TH-07")))
    d.find_element(By.ID, "f-readings").send_keys(str(DEMO / "diss-kcl-01.csv"))
    _click(d, "#run-form button[value=preview]")
    error = d.find_element(By.ID, "f-water-volume-error")
    assert error.is_displayed() and "does not start with a number" in error.text
    row = d.find_element(By.ID, "f-water-volume-row")
    assert error.location["y"] - row.location["y"] < row.size["height"]  # inside the field's own row
    assert d.find_element(By.ID, "f-water-volume").get_attribute("aria-invalid") == "true"
    assert "Nothing was saved" in d.find_element(By.ID, "error-summary").text
    _shot(d, "form-error")
    # fix it; the readings sent before are kept, so the file need not be chosen again
    box = d.find_element(By.ID, "f-water-volume")
    box.clear()
    box.send_keys("100.00")
    _click(d, "#run-form button[value=preview]")
    assert d.find_elements(By.CLASS_NAME, "field-error") == []
    assert "Preview (not saved yet)" in d.find_element(By.ID, "preview").text
    # C_cal from the cup's value in force: the demo's two calibrations, pooled
    assert re.search(r"weighted mean of calibrations #\d+, #\d+", d.find_element(By.ID, "preview").text)
    _shot(d, "form-preview")


def test_download_a_section_archive_and_import_another_notebooks(browser: Any, server: str, tmp_path: Path) -> None:
    from selenium.webdriver.common.by import By

    from tests.webapp.eln_helpers import crate, file_entity, zip_of

    d = browser
    d.delete_all_cookies()
    _sign_in(d, server, "odile.brackwater@ternhollow.example")  # invented demo coordinator
    d.get(server + "/runs/")
    link = d.find_element(By.PARTIAL_LINK_TEXT, "(.eln archive)")
    # the download, fetched by the page itself with the browser's session: a zip with one root folder
    head = d.execute_async_script(
        "const done = arguments[arguments.length - 1];"
        "fetch(arguments[0]).then(r => r.arrayBuffer().then(b => done([r.status, r.headers.get('content-type'),"
        " String.fromCharCode(...new Uint8Array(b).slice(0, 2))])));",
        link.get_attribute("href"),
    )
    assert head == [200, "application/vnd.eln+zip", "PK"]
    toml = (DEMO / "diss-kcl-01.toml").read_bytes().replace(b'title = "', b'title = "From elsewhere: ', 1)
    csv = (DEMO / "diss-kcl-01.csv").read_bytes()
    files = {"exp/run.toml": toml, "exp/diss-kcl-01.csv": csv, "exp/photo.txt": b"a photo caption"}
    meta = crate([file_entity(p, b) for p, b in files.items()], ["exp/"])
    archive = tmp_path / "elsewhere.eln"
    archive.write_bytes(
        zip_of([("elsewhere/ro-crate-metadata.json", meta)] + [(f"elsewhere/{p}", b) for p, b in files.items()])
    )
    _click(d, "a[href$='/imports/eln']")
    d.find_element(By.CSS_SELECTOR, "input[type=file][name=archive]").send_keys(str(archive))
    _click(d, "#eln-form button[type=submit]")
    _shot(d, "eln-import-report")
    status = d.find_element(By.CSS_SELECTOR, "p[role=status]").text
    assert status.startswith("1 stored"), status
    assert "photo.txt" in d.find_element(By.TAG_NAME, "table").text
    _click(d, "table a[href*='/runs/']")
    assert "From elsewhere" in d.find_element(By.TAG_NAME, "main").text


def test_a_missing_browser_skips_with_what_to_install_or_fails_under_ci(monkeypatch: pytest.MonkeyPatch) -> None:
    import tests.webapp.browser_support as here

    monkeypatch.setattr(here, "CHROMIUM", Path("/nonexistent/chromium"))
    reason = here._unavailable()
    assert reason is not None and "apt-get install chromium chromium-driver" in reason
    monkeypatch.delenv("CUPCAL_REQUIRE_BROWSER", raising=False)
    with pytest.raises(pytest.skip.Exception, match="apt-get install chromium"):
        here._skip_or_fail(reason)
    monkeypatch.setenv("CUPCAL_REQUIRE_BROWSER", "1")
    with pytest.raises(pytest.fail.Exception, match="CUPCAL_REQUIRE_BROWSER=1"):
        here._skip_or_fail(reason)
