"""Server-rendered pages: home, run list and page, calorimeters; no network assets."""

from __future__ import annotations

import re
from typing import Any

import pytest

from tests.webapp.conftest import csrf_token, sign_in, upload


@pytest.fixture
def runs(client: Any, lab: Any) -> dict[str, int]:
    ids = {}
    for name in ("cal-electrical-01", "diss-kcl-01"):
        r = upload(client, lab.auth("a1"), name, monte_carlo=0)
        assert r.status_code == 201
        ids[name] = r.get_json()["id"]
    return ids


def test_home_lists_recent_runs_and_calorimeters_due(client: Any, lab: Any, runs: dict[str, int]) -> None:
    sign_in(client, "a1@lab.example")
    html = client.get("/").get_data(as_text=True)
    assert "Enthalpy of solution of KCl" in html and "Heater calibration of cup TH-07" in html
    due = html.split("Calorimeters due for calibration")[1]
    # the student's calibration run is only a proposal, so the cup is still due; the spare has a fresh
    # hand-entered value
    assert "Cup TH-07" in due and "never" in due and "Spare cup" not in due


def test_home_shows_a_calorimeter_never_calibrated(client: Any, lab: Any) -> None:
    sign_in(client, "a1@lab.example")
    due = client.get("/").get_data(as_text=True).split("Calorimeters due for calibration")[1]
    assert "Cup TH-07" in due and "never" in due


def test_run_page_shows_the_result_numbers(client: Any, lab: Any, runs: dict[str, int]) -> None:
    sign_in(client, "a1@lab.example")
    run = client.get(f"/api/runs/{runs['diss-kcl-01']}", headers=lab.auth("a1")).get_json()
    res = client.get(f"/api/results/{run['current_result']['id']}", headers=lab.auth("a1")).get_json()
    html = client.get(f"/runs/{runs['diss-kcl-01']}").get_data(as_text=True)
    from calc.report import format_value

    h = res["outputs"]["molar_enthalpy"]
    assert format_value(h["value"], h["standard_uncertainty"], "kJ/mol") in html
    assert f"k = {res['coverage_factor']:.2f}" in html
    assert "KCl" in html and "eye protection" in html


def test_run_page_reanalyze_form(client: Any, lab: Any, runs: dict[str, int]) -> None:
    sign_in(client, "a1@lab.example")
    run_id = runs["diss-kcl-01"]
    token = csrf_token(client.get(f"/runs/{run_id}").get_data(as_text=True))
    r = client.post(
        f"/runs/{run_id}/reanalyze",
        data={"csrf_token": token, "method": "equal-area", "fore_start": "0", "fore_end": "200"},
    )
    assert r.status_code == 302
    html = client.get(f"/runs/{run_id}").get_data(as_text=True)
    assert "the earlier result is kept" in html and "equal-area" in html
    # a refusal answers 400 with the page: the message beside its field, and what was typed kept
    r = client.post(
        f"/runs/{run_id}/reanalyze",
        data={"csrf_token": token, "method": "equal-area", "fore_start": "0", "mixing_time": "181.5"},
    )
    assert r.status_code == 400
    html = r.get_data(as_text=True)
    assert "expected two times" in html  # the message from the service, shown on the page
    assert 'value="181.5"' in html
    r = client.post(f"/runs/{run_id}/reanalyze", data={"csrf_token": token, "method": "nope"})
    assert r.status_code == 400 and "Not a valid choice" in r.get_data(as_text=True)


def test_reanalyze_with_a_typed_mixing_time(client: Any, lab: Any, runs: dict[str, int]) -> None:
    sign_in(client, "a1@lab.example")
    run_id = runs["diss-kcl-01"]
    token = csrf_token(client.get(f"/runs/{run_id}").get_data(as_text=True))
    r = client.post(
        f"/runs/{run_id}/reanalyze", data={"csrf_token": token, "method": "regnault-pfaundler", "mixing_time": "1e9"}
    )
    assert r.status_code == 400
    html = r.get_data(as_text=True)
    assert "mixing_time 1e+09 s lies outside the log" in html and 'value="1e9"' in html
    r = client.post(
        f"/runs/{run_id}/reanalyze",
        data={"csrf_token": token, "method": "regnault-pfaundler", "mixing_time": "", "mixing_time_u": ""},
    )
    assert r.status_code == 302


def test_lists_downloads_and_calorimeter_page(client: Any, lab: Any, runs: dict[str, int]) -> None:
    sign_in(client, "coord@lab.example")
    assert client.get("/runs/").status_code == 200
    assert client.get("/runs/?page=99").status_code == 200
    assert client.get(f"/runs/{runs['diss-kcl-01']}/readings").get_data().startswith(b"time_s,temperature_C")
    assert client.get(f"/runs/{runs['diss-kcl-01']}/nothing").status_code == 404
    html = client.get("/calorimeters/").get_data(as_text=True)
    assert "Cup TH-07" in html and "Spare cup" in html
    html = client.get(f"/calorimeters/{lab.calorimeter_id}").get_data(as_text=True)
    assert "electrical-calibration run #" in html
    assert client.get("/calorimeters/9999").status_code == 404


def test_pages_load_nothing_from_the_network(client: Any, lab: Any, runs: dict[str, int]) -> None:
    sign_in(client, "coord@lab.example")
    for path in ("/", "/runs/", f"/runs/{runs['diss-kcl-01']}", "/calorimeters/", "/auth/tokens", "/auth/login"):
        html = client.get(path).get_data(as_text=True)
        for url in re.findall(r'(?:src|href)="([^"]+)"', html):
            assert url.startswith(("/", "#")), (path, url)  # same-origin paths, or a fragment (the skip link)
    css = client.get("/static/style.css")
    try:
        assert css.status_code == 200 and b"http" not in css.get_data()
    finally:
        css.close()


def test_error_pages_are_pages(client: Any, lab: Any) -> None:
    sign_in(client, "coord@lab.example")
    r = client.get("/runs/123456")
    assert r.status_code == 404 and "<html" in r.get_data(as_text=True)
    assert client.get("/no/such/page").status_code == 404
