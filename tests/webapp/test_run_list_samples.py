"""The runs list's search, filters and sort; replicates grouped by sample (lot) with honest statistics."""

from __future__ import annotations

import re
from typing import Any

import pytest
from scipy import stats as sps

from tests.webapp.conftest import demo_files, sign_in, upload


def _with_sample(name: str, sample: str, title: str, mass: str | None = None) -> str:
    toml, _ = demo_files(name)
    toml = toml.replace("[info]", f'[info]\nsample = "{sample}"', 1)
    toml = re.sub(r'title = "[^"]*"', f'title = "{title}"', toml, count=1)
    if mass:
        toml = re.sub(r'(\[solute\][^\[]*?mass = )"[^"]*"', rf'\1"{mass}"', toml, count=1, flags=re.S)
    return toml


@pytest.fixture
def lots(client: Any, lab: Any) -> dict[str, int]:
    ids = {}
    for title, sample, mass in (
        ("Lot A first", "LOT-A7", None),
        ("Lot A second", "LOT-A7", "3.7311 ± 0.0002 g"),
        ("Lot A third", "LOT-A7", "3.7250 ± 0.0002 g"),
        ("Lot B only", "LOT-B2", None),
    ):
        r = upload(
            client, lab.auth("a1"), "diss-kcl-01", toml=_with_sample("diss-kcl-01", sample, title, mass), monte_carlo=0
        )
        assert r.status_code == 201, r.get_data(as_text=True)
        ids[title] = r.get_json()["id"]
    return ids


def test_runs_list_searches_filters_and_sorts(client: Any, lab: Any, lots: dict[str, int]) -> None:
    sign_in(client, "a1@lab.example")
    html = client.get("/runs/?q=second").get_data(as_text=True)
    assert "Lot A second" in html and "Lot A first" not in html
    html = client.get("/runs/?sample=LOT-B2").get_data(as_text=True)
    assert "Lot B only" in html and "Lot A" not in html
    html = client.get("/runs/?sort=title&dir=asc").get_data(as_text=True)
    order = [t for t in re.findall(r">(Lot [AB] \w+)</a>", html)]
    assert order == sorted(order) and len(order) == 4
    assert "Lot A" not in client.get("/runs/?kind=neutralization").get_data(as_text=True)
    # flags: every run here has a result and is open; the warnings filter is a valid query on both databases
    assert "No runs match" in client.get("/runs/?flag=no-result").get_data(as_text=True)
    assert "No runs match" in client.get("/runs/?flag=signed").get_data(as_text=True)
    assert client.get("/runs/?flag=open").get_data(as_text=True).count("Lot A") == 3
    with_warnings = client.get("/runs/?flag=warnings&sort=cup")
    assert with_warnings.status_code == 200
    for bad in ("kind=bogus", "sort=bogus", "flag=bogus", "q=" + "x" * 201):
        r = client.get(f"/runs/?{bad}")
        assert r.status_code == 400, bad
    # the run page shows the sample, linked to its series
    page = client.get(f"/runs/{lots['Lot A first']}").get_data(as_text=True)
    assert "Sample (lot)" in page and "LOT-A7" in page


def test_samples_page_gives_mean_t_interval_and_dof(client: Any, lab: Any, lots: dict[str, int]) -> None:
    sign_in(client, "a1@lab.example")
    api = [
        client.get(f"/api/runs/{lots[t]}", headers=lab.auth("a1")).get_json()
        for t in ("Lot A first", "Lot A second", "Lot A third")
    ]
    values = [d["result"]["value"] if "result" in d else d["current_result"]["value"] for d in api]
    html = client.get("/runs/samples").get_data(as_text=True)
    row = html.split("LOT-A7</a>")[1].split("</tr>")[0]
    # the Student-t interval of three values, computed here with scipy (reference library)
    n = len(values)
    mean = sum(values) / n
    sd = (sum((v - mean) ** 2 for v in values) / (n - 1)) ** 0.5
    half = sps.t.ppf(0.975, n - 1) * sd / n**0.5
    low, high = (float(x.replace("−", "-")) for x in re.search(r"([−\d.]+) to ([−\d.]+) kJ/mol", row).groups())
    assert low == pytest.approx(mean - half, abs=2e-3) and high == pytest.approx(mean + half, abs=2e-3)
    assert "ν = 2" in row and "kJ/mol" in row
    assert not re.search(r"\d\.\d{7,}", html)  # no raw floats
    # one run of lot B: no statistics, said plainly
    assert "at least two" in html.split("LOT-B2</a>")[1].split("</tr>")[0]
    assert client.get("/runs/samples?sample=" + "x" * 201).status_code == 400


def test_a_96000_character_title_is_refused_with_its_field(client: Any, lab: Any) -> None:
    toml, _ = demo_files("diss-kcl-01")
    toml = re.sub(r'title = "[^"]*"', 'title = "' + "T" * 96000 + '"', toml, count=1)
    r = upload(client, lab.auth("a1"), "diss-kcl-01", toml=toml, monte_carlo=0)
    body = r.get_json()
    assert r.status_code == 400 and body["field"] == "info.title", body
    assert "96,000 characters" in body["error"] and "300" in body["error"]
