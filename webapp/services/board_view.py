"""What part of a dashboard a page shows: search, flag filter and pages of groups.

A section of 80 groups is a long table; the page shows the rows of at most
:data:`GROUPS_PER_PAGE` groups at a time, whole groups only, in the dashboard's sort order.
"""

from __future__ import annotations

import dataclasses
from typing import Any

from webapp.services.errors import Invalid

GROUPS_PER_PAGE = 50
MAX_QUERY_LENGTH = 200


@dataclasses.dataclass(frozen=True)
class BoardPage:
    """The rows shown, the page number (from 1), the number of pages and the filter in force."""

    rows: list[Any]
    page: int
    pages: int
    groups: int
    matched: int
    query: str
    flag: str


def _matches(row: Any, words: list[str], flag: str) -> bool:
    if flag == "any" and not row.flags:
        return False
    if flag == "none" and row.flags:
        return False
    if flag not in ("", "any", "none") and flag not in row.flags:
        return False
    text = " ".join(str(x) for x in (row.run_id, row.title, row.section, row.group, row.bench, row.measurement)).lower()
    return all(w in text for w in words)


def board_page(
    rows: list[Any],
    *,
    query: str = "",
    flag: str = "",
    page: int = 1,
    flags: dict[str, str] | None = None,
    per_page: int = GROUPS_PER_PAGE,
) -> BoardPage:
    """Return the rows that match ``query`` (all words) and ``flag``, the ``page``-th set of groups."""
    query = (query or "").strip()
    if len(query) > MAX_QUERY_LENGTH:
        raise Invalid(f"the search is {len(query)} characters long (at most {MAX_QUERY_LENGTH})", field="q")
    if flag and flag not in ("any", "none") and flag not in (flags or {}):
        raise Invalid(f"unknown flag {flag!r}", field="flag")
    words = query.lower().split()
    kept = [r for r in rows if _matches(r, words, flag)]
    order = list(dict.fromkeys(f"{r.section}\x00{r.group}" for r in kept))
    pages = max(1, -(-len(order) // per_page))
    if page < 1 or page > pages:
        raise Invalid(f"page {page} does not exist (1 to {pages})", field="page")
    shown = set(order[(page - 1) * per_page : page * per_page])
    return BoardPage(
        [r for r in kept if f"{r.section}\x00{r.group}" in shown], page, pages, len(order), len(kept), query, flag
    )
