"""The run page: plot, result, budget, comparison and cautions; re-analysis, lock, access; the plot cache.

Every test that uses ``app`` runs on SQLite and PostgreSQL. Checked values come from the
API's view of the same stored result and from calc's data (GHS statements, reference values).
"""

from __future__ import annotations

import re
import threading
from typing import Any

import pytest
import sqlalchemy as sa

from tests.webapp.conftest import csrf_token, sign_in, upload
from tests.webapp.page_helpers import counts
from webapp.models import Result
from webapp.plot_cache import PlotCache, plot_cache

# ---------------------------------------------------------------- the run page


@pytest.fixture
def neut_run(client: Any, lab: Any) -> int:
    r = upload(client, lab.auth("a1"), "neut-hcl-naoh-01", monte_carlo=2000, seed=7)
    assert r.status_code == 201, r.get_json()
    return int(r.get_json()["id"])


def test_run_page_shows_plot_result_budget_comparison_and_cautions(client: Any, lab: Any, neut_run: int) -> None:
    sign_in(client, "a1@lab.example")
    html = client.get(f"/runs/{neut_run}").get_data(as_text=True)
    res = client.get(f"/api/runs/{neut_run}", headers=lab.auth("a1")).get_json()["current_result"]
    detail = client.get(f"/api/results/{res['id']}", headers=lab.auth("a1")).get_json()
    # the temperature–time plot (run_plot_svg) with its drift lines and ΔT construction, and the
    # budget bar chart (budget_plot_svg): pictures of this result, with alternative text
    images = re.findall(r'<img src="([^"]+)"[^>]*alt="([^"]+)"', html)
    assert [src for src, _alt in images] == [
        f"/runs/{neut_run}/results/{res['id']}/plot.svg",
        f"/runs/{neut_run}/results/{res['id']}/budget.svg",
    ]
    assert "661 readings" in images[0][1] and "corrected ΔT" in images[0][1]
    assert "acid concentration" in images[1][1]  # the largest share, named in the text
    plot = client.get(images[0][0])
    assert plot.status_code == 200 and plot.mimetype == "image/svg+xml"
    svg = plot.get_data(as_text=True)
    assert svg.startswith("<svg") or "<svg" in svg[:500]
    assert "Temperature log: Neutralization of HCl by NaOH" in svg and "time / s" in svg and "temperature / °C" in svg
    assert "cc-curve-" not in svg  # ids made unique per picture
    assert "nosniff" in plot.headers["X-Content-Type-Options"] and "immutable" in plot.headers["Cache-Control"]
    assert "default-src 'none'" in plot.headers["Content-Security-Policy"]
    budget = client.get(images[1][0]).get_data(as_text=True)
    assert "Uncertainty budget" in budget and "share of the variance" in budget
    assert client.get(f"/runs/{neut_run}/results/{res['id']}/other.svg").status_code == 404
    # the result: ΔH ± U with k, and the standard uncertainties of every output
    from calc.report import format_value

    assert format_value(res["value"], res["expanded_uncertainty"], "kJ/mol") in html
    assert f"k = {res['coverage_factor']:.2f}" in html
    assert format_value(res["value"], res["standard_uncertainty"], "kJ/mol") in html
    # the budget as a bar chart and a table naming every input
    assert "Uncertainty budget" in html
    for line in detail["budget"]:
        assert f'<code class="hint">{line["input"]}</code>' in html
    # the comparison: reference value, source, difference, E_n, the not-like-for-like notes
    cmp = detail["comparison"]
    assert cmp["reference"]["name"] in html and "Wagman" in html  # NBS tables (1982)
    from calc import formatting

    unit = cmp["reference"]["unit"]
    assert f"{cmp['En']:+.2f}" in html
    # the difference carries its unit and is rounded like U (no bare "difference 0.726")
    assert formatting.like(cmp["difference"], cmp["U_measured"], unit, signed=True) in html
    assert unit in formatting.like(cmp["difference"], cmp["U_measured"], unit, signed=True)
    for note in cmp["notes"]:
        assert note.replace("'", "&#39;") in html
    # the cautions, first on the page: NaOH is H314 (GHS/CLP harmonised classification, from memory)
    cautions = html.index("Safety cautions")
    assert cautions < html.index("plot.svg")
    assert "H314: Causes severe skin burns and eye damage" in html and "GHS05 (corrosion)" in html
    assert "Wear eye protection" in html and "safety data sheet" in html
    # the Monte Carlo check recorded with the result
    assert "Monte Carlo check" in html and "2000 trials" in html


def test_reanalysis_adds_a_result_and_keeps_the_old_one(client: Any, lab: Any, neut_run: int, session: Any) -> None:
    sign_in(client, "a1@lab.example")
    html = client.get(f"/runs/{neut_run}").get_data(as_text=True)
    r = client.post(f"/runs/{neut_run}/reanalyze", data={"csrf_token": csrf_token(html), "method": "naive"})
    assert r.status_code == 302
    html = client.get(f"/runs/{neut_run}").get_data(as_text=True)
    ids = list(session.scalars(sa.select(Result.id).where(Result.run_id == neut_run).order_by(Result.id)))
    assert len(ids) == 2
    assert "the earlier result is kept" in html
    assert f"Result #{ids[1]}" in html and "naive" in html
    assert "biased" in html  # calc's warning about the naive method, under Warnings
    assert html.count("<strong>current</strong>") == 1 and "earlier" in html
    # the earlier result can still be shown, with its own plot
    old = client.get(f"/runs/{neut_run}?result={ids[0]}").get_data(as_text=True)
    assert f"Result #{ids[0]}" in old and "This is an earlier result" in old
    assert f"/results/{ids[0]}/plot.svg" in old and f"/results/{ids[1]}/plot.svg" not in old
    svg = client.get(f"/runs/{neut_run}/results/{ids[0]}/plot.svg").get_data(as_text=True)
    assert "regnault-pfaundler" in svg  # the earlier result's own method, not the current one's
    assert client.get(f"/runs/{neut_run}/results/{ids[0] + 1000}/plot.svg").status_code == 404
    assert client.get(f"/runs/{neut_run}?result=999999").status_code == 404
    # a bad period: 400 with the page, the message next to the period and the typed values kept
    # (a redirect would lose what was typed), nothing added
    r = client.post(
        f"/runs/{neut_run}/reanalyze",
        data={"csrf_token": csrf_token(html), "method": "naive", "after_start": "500", "after_end": "400"},
    )
    assert r.status_code == 400
    page = r.get_data(as_text=True)
    reanalyze_form = page[page.index('id="reanalyze"') :]
    assert "must end after it starts" in reanalyze_form
    assert 'value="500"' in reanalyze_form and 'value="400"' in reanalyze_form
    assert len(list(session.scalars(sa.select(Result.id).where(Result.run_id == neut_run)))) == 2


def test_a_locked_run_shows_no_forms_and_refuses_posts(client: Any, lab: Any, neut_run: int, session: Any) -> None:
    sign_in(client, "a1@lab.example")
    html = client.get(f"/runs/{neut_run}").get_data(as_text=True)
    token = csrf_token(html)
    assert f"/runs/{neut_run}/reanalyze" in html and f"/runs/{neut_run}/lock" in html
    assert client.post(f"/runs/{neut_run}/lock", data={"csrf_token": token}).status_code == 302
    html = client.get(f"/runs/{neut_run}").get_data(as_text=True)
    assert "signed by Student A1" in html
    assert f"/runs/{neut_run}/reanalyze" not in html and f"/runs/{neut_run}/lock" not in html
    assert "Analyze again" not in html
    r = client.post(f"/runs/{neut_run}/reanalyze", data={"csrf_token": token, "method": "naive"})
    assert r.status_code == 409 and "locked" in r.get_data(as_text=True)
    assert client.post(f"/runs/{neut_run}/lock", data={"csrf_token": token}).status_code == 409
    assert counts(session) == (1, 1)


def test_students_cannot_open_another_groups_run_page(client: Any, lab: Any, neut_run: int) -> None:
    sign_in(client, "b1@lab.example")
    token = csrf_token(client.get("/runs/new/dissolution").get_data(as_text=True))
    assert client.get(f"/runs/{neut_run}").status_code == 404
    assert client.get(f"/runs/{neut_run}?result=1").status_code == 404
    assert client.post(f"/runs/{neut_run}/reanalyze", data={"csrf_token": token, "method": "naive"}).status_code == 404
    assert client.post(f"/runs/{neut_run}/lock", data={"csrf_token": token}).status_code == 404
    assert client.get(f"/runs/{neut_run}/readings").status_code == 404
    assert client.get(f"/runs/{neut_run}/results/1/plot.svg").status_code == 404
    assert client.get(f"/runs/{neut_run}/results/1/budget.svg").status_code == 404
    # a technician of the lab may (sees every run), a student of the same group too
    client.post("/auth/logout", data={"csrf_token": token})
    sign_in(client, "a2@lab.example")
    assert client.get(f"/runs/{neut_run}").status_code == 200


def test_the_run_page_plots_come_from_the_cache_once_drawn(client: Any, lab: Any, neut_run: int) -> None:
    sign_in(client, "a1@lab.example")
    cache = plot_cache(client.application)
    cache.clear()
    html = client.get(f"/runs/{neut_run}").get_data(as_text=True)
    srcs = re.findall(r'<img src="([^"]+\.svg)"', html)
    assert len(srcs) == 2
    first = [client.get(src).get_data(as_text=True) for src in srcs]
    assert len(cache) == 2 and cache.hits == 0
    second = [client.get(src).get_data(as_text=True) for src in srcs]
    assert cache.hits == 2 and first == second


def test_a_plot_that_cannot_be_drawn_says_why_and_is_not_kept(
    client: Any, lab: Any, neut_run: int, monkeypatch: pytest.MonkeyPatch
) -> None:
    import webapp.services.runs as runs_service
    from webapp.services.errors import Invalid

    def broken(*_args: Any, **_kwargs: Any) -> Any:
        raise Invalid("the stored readings cannot be read", field="readings")

    sign_in(client, "a1@lab.example")
    plot_cache(client.application).clear()
    monkeypatch.setattr(runs_service, "analysis_of", broken)
    src = re.search(r'<img src="([^"]+/plot\.svg)"', client.get(f"/runs/{neut_run}").get_data(as_text=True)).group(1)
    r = client.get(src)
    assert r.status_code == 200 and r.headers["Cache-Control"] == "no-store"
    assert "The plot could not be drawn: the stored readings cannot be read" in r.get_data(as_text=True)
    monkeypatch.undo()
    r = client.get(src)
    assert "immutable" in r.headers["Cache-Control"] and "Temperature log" in r.get_data(as_text=True)


# ---------------------------------------------------------------- the cache itself (no database)


def test_plot_cache_is_a_bounded_lru() -> None:
    cache = PlotCache(max_bytes=10)
    cache.put("a", "aaaa")
    cache.put("b", "bbbb")
    assert cache.get("a") == "aaaa"  # a is now the most recently used
    cache.put("c", "cccc")  # 12 > 10: the least recently used (b) goes
    assert cache.get("b") is None and cache.get("a") == "aaaa" and cache.get("c") == "cccc"
    assert cache.size == 8 and len(cache) == 2
    cache.put("big", "x" * 11)  # larger than the whole cache: not kept
    assert cache.get("big") is None and len(cache) == 2
    drawn = []
    assert cache.get_or_draw("d", lambda: drawn.append(1) or "dd") == "dd"
    assert cache.get_or_draw("d", lambda: drawn.append(1) or "dd") == "dd" and len(drawn) == 1

    many = PlotCache(max_bytes=1000)

    def worker(n: int) -> None:
        for i in range(300):
            many.put((n, i % 40), f"{n}-{i}" * 5)
            many.get((n, (i * 7) % 40))

    threads = [threading.Thread(target=worker, args=(n,)) for n in range(6)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert many.size <= 1000
    assert many.size == sum(len(v) for v in many._items.values())
