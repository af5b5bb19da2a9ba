"""Shared set-up of the browser tests: Debian's headless Chromium and chromedriver through Selenium,
and the notebook served on 127.0.0.1 from a migrated SQLite file with the invented demo lab.

Nothing is downloaded: the driver's path is given, Selenium's statistics and downloads are off.
Without the browser the tests skip with what to install, unless ``CUPCAL_REQUIRE_BROWSER=1``.
"""

from __future__ import annotations

import contextlib
import os
import shutil
import tempfile
import threading
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any

import pytest

from tests.webapp.conftest import FAST_HASH

CHROMIUM = Path("/usr/bin/chromium")
CHROMEDRIVER = Path("/usr/bin/chromedriver")
INSTALL_HINT = (
    "headless Chromium is needed for the browser tests: install Debian's browser and its driver "
    "(apt-get install chromium chromium-driver)"
)
STUDENT = "tomas.vesterby-quail@ternhollow.example"  # invented demo person (group Heron A)
WAIT_S = 20


def _unavailable() -> str | None:
    missing = [str(p) for p in (CHROMIUM, CHROMEDRIVER) if not p.exists()]
    if missing:
        return f"{', '.join(missing)} not found; {INSTALL_HINT}"
    try:
        import selenium  # noqa: F401
    except ImportError:
        return "the selenium package is missing: install the test extras (pip install -e '.[test]')"
    return None


def _skip_or_fail(reason: str) -> None:
    if os.environ.get("CUPCAL_REQUIRE_BROWSER") == "1":
        pytest.fail(f"CUPCAL_REQUIRE_BROWSER=1 but: {reason}")
    pytest.skip(reason)


@contextlib.contextmanager
def demo_lab_served(
    folder: Path, secret_key: str, *, monte_carlo_trials: int, prepare: Callable[[Any], None] | None = None
) -> Iterator[tuple[str, Any]]:
    """Serve the notebook on 127.0.0.1 (a free port) from a migrated SQLite file in ``folder`` with the demo lab
    (and what ``prepare`` adds to it); yield its URL and the app. Without the browser: skip (or fail)."""
    reason = _unavailable()
    if reason:
        _skip_or_fail(reason)
    from werkzeug.serving import make_server

    from webapp import create_app
    from webapp.db import get_engine, new_session
    from webapp.migrate import upgrade
    from webapp.services.demo import load_demo

    url = f"sqlite:///{folder / 'notebook.sqlite3'}"
    upgrade(url)
    app = create_app(
        {
            "DATABASE_URL": url,
            "SECRET_KEY": secret_key,
            "PASSWORD_METHOD": FAST_HASH,
            "MONTE_CARLO_TRIALS": monte_carlo_trials,
        }
    )
    app.instance_path = str(folder / "instance")
    session = new_session(app)
    try:
        load_demo(session, password_method=FAST_HASH, monte_carlo_trials=0)
        if prepare is not None:
            prepare(session)
    finally:
        session.close()
    httpd = make_server("127.0.0.1", 0, app, threaded=True)
    thread = threading.Thread(target=httpd.serve_forever, daemon=True)
    thread.start()
    try:
        yield f"http://127.0.0.1:{httpd.server_port}", app
    finally:
        httpd.shutdown()
        thread.join(10)
        get_engine(app).dispose()


@pytest.fixture(scope="module")
def server(tmp_path_factory: pytest.TempPathFactory, request: pytest.FixtureRequest) -> Iterator[str]:
    """Serve the notebook on 127.0.0.1 (a free port) from a migrated SQLite file with the demo lab."""
    prepare = getattr(request.module, "PREPARE_DEMO", None)  # a test module may add to the demo lab
    with demo_lab_served(
        tmp_path_factory.mktemp("browser"), "browser tests", monte_carlo_trials=2000, prepare=prepare
    ) as (url, _app):
        yield url


@pytest.fixture(scope="module")
def browser(server: str) -> Iterator[Any]:
    """Start headless Chromium through Debian's chromedriver (nothing is downloaded)."""
    os.environ.setdefault("SE_AVOID_STATS", "true")  # Selenium's own usage statistics: off
    os.environ.setdefault("SE_OFFLINE", "true")  # and no download, should anything ask for one
    from selenium import webdriver
    from selenium.webdriver.chrome.service import Service

    profile = tempfile.mkdtemp(prefix="cupcal-chromium-")
    options = webdriver.ChromeOptions()
    options.binary_location = str(CHROMIUM)
    for arg in (
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-quic",
        "--no-first-run",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
        "--disable-dev-shm-usage",
        f"--user-data-dir={profile}",
        "--window-size=1280,1000",
    ):
        options.add_argument(arg)
    try:
        driver = webdriver.Chrome(service=Service(executable_path=str(CHROMEDRIVER)), options=options)
    except Exception as exc:  # noqa: BLE001 - a browser that cannot start is a missing browser
        shutil.rmtree(profile, ignore_errors=True)
        _skip_or_fail(f"Chromium did not start ({type(exc).__name__}: {str(exc).splitlines()[0]}); {INSTALL_HINT}")
    driver.set_page_load_timeout(WAIT_S)
    try:
        yield driver
    finally:
        driver.quit()
        shutil.rmtree(profile, ignore_errors=True)


# ---------------------------------------------------------------- helpers


def _shot(driver: Any, name: str) -> None:
    folder = os.environ.get("CUPCAL_SCREENSHOTS")
    if not folder:
        return
    Path(folder).mkdir(parents=True, exist_ok=True)
    height = driver.execute_script("return document.documentElement.scrollHeight")
    driver.set_window_size(1280, min(int(height) + 120, 9000))
    driver.save_screenshot(str(Path(folder) / f"{name}.png"))
    driver.set_window_size(1280, 1000)


def _wait(driver: Any, css: str) -> Any:
    from selenium.webdriver.common.by import By
    from selenium.webdriver.support import expected_conditions as ec
    from selenium.webdriver.support.ui import WebDriverWait

    return WebDriverWait(driver, WAIT_S).until(ec.presence_of_element_located((By.CSS_SELECTOR, css)))


def _click(driver: Any, css: str) -> None:
    """Click a button and wait for the page it leads to."""
    from selenium.webdriver.common.by import By
    from selenium.webdriver.support import expected_conditions as ec
    from selenium.webdriver.support.ui import WebDriverWait

    old = driver.find_element(By.TAG_NAME, "html")
    driver.find_element(By.CSS_SELECTOR, css).click()
    WebDriverWait(driver, WAIT_S).until(ec.staleness_of(old))
    _wait(driver, "footer")


def _image_drawn(driver: Any, src_part: str) -> bool:
    return bool(
        driver.execute_script(
            "const i = [...document.images].find(i => i.src.includes(arguments[0]));"
            "return !!i && i.complete && i.naturalWidth > 300;",
            src_part,
        )
    )


def _sign_in(driver: Any, server: str, email: str) -> None:
    from selenium.webdriver.common.by import By

    driver.get(server + "/")
    assert "/auth/login" in driver.current_url  # signed out: sent to the sign-in form
    driver.find_element(By.ID, "email").send_keys(email)
    driver.find_element(By.ID, "password").send_keys("tern-hollow-demo")
    _click(driver, "main form button[type=submit]")
    assert driver.find_element(By.TAG_NAME, "h1").text == "Notebook"
