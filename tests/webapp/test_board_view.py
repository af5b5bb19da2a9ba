"""The dashboard as a compact table: search, flag filter, pages of whole groups, sort on the header."""

from __future__ import annotations

import re
from pathlib import Path
from types import SimpleNamespace
from typing import Any

import pytest

from tests.webapp.class_fixtures import build_section
from tests.webapp.conftest import sign_in
from webapp.services.board_view import board_page
from webapp.services.errors import Invalid

FLAGS = {"En": "|En| > 1", "drift": "large drift"}


def _row(i: int, group: str, flags: list[str] | None = None) -> SimpleNamespace:
    return SimpleNamespace(
        run_id=i, title=f"run {i}", section="S1", group=group, bench="", measurement="KCl", flags=flags or []
    )


def test_pages_hold_whole_groups_in_order() -> None:
    rows = [_row(3 * g + k, f"G{g:03d}") for g in range(80) for k in range(3)]  # 80 groups × 3 runs
    first = board_page(rows, flags=FLAGS)
    second = board_page(rows, page=2, flags=FLAGS)
    assert (first.pages, first.groups, len(first.rows), len(second.rows)) == (2, 80, 150, 90)
    assert {r.group for r in first.rows}.isdisjoint({r.group for r in second.rows})
    assert [r.run_id for r in first.rows + second.rows] == [r.run_id for r in rows]
    with pytest.raises(Invalid) as exc:
        board_page(rows, page=3, flags=FLAGS)
    assert exc.value.field == "page"


def test_search_and_flag_filter() -> None:
    rows = [_row(1, "Otter", ["En"]), _row(2, "Heron"), _row(3, "Otter", ["drift"]), _row(4, "Heron", ["En"])]
    assert [r.run_id for r in board_page(rows, query="otter", flags=FLAGS).rows] == [1, 3]
    assert [r.run_id for r in board_page(rows, flag="En", flags=FLAGS).rows] == [1, 4]
    assert [r.run_id for r in board_page(rows, flag="none", flags=FLAGS).rows] == [2]
    assert [r.run_id for r in board_page(rows, query="heron", flag="any", flags=FLAGS).rows] == [4]
    for bad in ({"flag": "bogus"}, {"query": "x" * 201}):
        with pytest.raises(Invalid):
            board_page(rows, flags=FLAGS, **bad)


def test_dashboard_page_is_a_sortable_filterable_table(client: Any, session: Any, lab: Any, tmp_path: Path) -> None:
    cl, ids = build_section(session, lab, tmp_path)
    sign_in(client, "coord@lab.example")
    url = f"/classes/sections/{cl.section_id}/dashboard"
    html = client.get(f"{url}?sort=value&dir=desc").get_data(as_text=True)
    # aria-sort sits on the header cell, never on the link
    assert re.search(r'<th scope="col" aria-sort="descending">\s*<a ', html)
    assert not re.search(r"<a [^>]*aria-sort", html)
    # details behind a click; flag explanations are text, not a hover title
    assert "<details" in html and 'title="' not in html.split('<table class="runs')[1].split("</table>")[0]
    assert "Grubbs outlier" in html
    # filters: a flag and a search both narrow the table
    far = ids["M04-far.toml"]
    flagged = client.get(f"{url}?flag=outlier").get_data(as_text=True)
    assert f'/runs/{far}"' in flagged and f'/runs/{ids["M01-run1.toml"]}"' not in flagged
    searched = client.get(f"{url}?q=M02").get_data(as_text=True)
    table = searched.split('<table class="runs')[1].split("</table>")[0]
    assert "M02" in table and "M03" not in table
    r = client.get(f"{url}?flag=bogus")
    assert r.status_code == 400 and "unknown flag" in r.get_data(as_text=True)
    # numbers through the formatter: the result carries ± U and a unit, no raw floats
    assert re.search(r"\d+\.\d+ ± \d+\.\d+ kJ/mol", table)
    assert not re.search(r"\d\.\d{7,}", html)
