"""The class dashboard: every run of a section (or a course) with flags, feedback and statistics.

Nothing is analyzed again: the flags come from what each analysis stored (its result's
warnings, comparison, budget and ΔT, the run's thermometer resolution and its calibration).
Results are compared within one *measurement*: the same kind and the same reference value
(e.g. "dissolution · KCl dissolution, infinite dilution").

The rows and their flags are :mod:`webapp.services.dashboard_rows`.
"""

from __future__ import annotations

import dataclasses
import math
from collections import Counter, defaultdict
from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from calc.errors import InputError
from calc.statistics.precision import iso5725
from webapp.models import Person, Section
from webapp.services.classes import get_course, get_section, require_staff
from webapp.services.dashboard_rows import Row, collect_rows
from webapp.services.errors import Invalid
from webapp.services.feedback import (
    FLAGS,
    group_feedback,  # noqa: F401  (part of this module's interface)
    split_feedback,
)

SORT_KEYS = ("group", "run", "value", "uncertainty", "en", "delta_t", "flags", "section")


@dataclasses.dataclass
class Stats:
    """Statistics of one measurement: mean, SD and the ISO 5725-2 precision between groups."""

    measurement: str
    unit: str
    n: int
    groups: int
    mean: float
    sd: float | None
    s_r: float | None = None
    s_L: float | None = None
    s_R: float | None = None
    r: float | None = None
    R: float | None = None
    note: str = ""
    reference: float | None = None
    reference_U: float | None = None
    #: what ``reference`` is: the mean of the runs' verdict references, and how they were judged
    reference_label: str = ""
    #: the value as published (context, no verdict) and its state ("infinite dilution")
    published: float | None = None
    published_state: str = ""


@dataclasses.dataclass
class Dashboard:
    """Rows (sorted), statistics per measurement, feedback per group, flag counts."""

    title: str
    rows: list[Row]
    stats: list[Stats]
    feedback: dict[str, list[str]]
    flag_counts: dict[str, int]
    sort: str
    descending: bool
    #: feedback that every group gets, said once above the groups' own
    common_feedback: list[str] = dataclasses.field(default_factory=list)


def statistics(rows: list[Row]) -> list[Stats]:
    """Return the statistics of each measurement (most results first), of the included runs only."""
    by: dict[str, list[Row]] = defaultdict(list)
    for r in rows:
        if r.value is not None and r.included:
            by[r.measurement].append(r)
    out: list[Stats] = []
    for meas, members in sorted(by.items(), key=lambda kv: -len(kv[1])):
        vals = [m.value for m in members]
        n = len(vals)
        mean = sum(vals) / n
        sd = math.sqrt(sum((v - mean) ** 2 for v in vals) / (n - 1)) if n > 1 else None
        cells: dict[tuple[Any, str], list[float]] = defaultdict(list)
        for m in members:
            cells[(m.section_id, m.group)].append(m.value)
        st = Stats(meas, members[0].unit, n, len(cells), mean, sd)
        judged = [m for m in members if m.verdict is not None]
        if judged:
            st.reference = sum(m.verdict.reference for m in judged) / len(judged)
            st.reference_U = sum(m.verdict.U_reference for m in judged) / len(judged)
            bases = {m.verdict.basis for m in judged}
            st.reference_label = (
                "reference at the runs' conditions (mean)"
                if bases == {"conditions"}
                else "reference as published"
                if bases == {"published"}
                else "reference at the runs' conditions where known, else as published (mean)"
            )
            st.published = judged[0].verdict.published
            st.published_state = judged[0].verdict.published_state
        try:
            p = iso5725(list(cells.values()))
            st.s_r, st.s_L, st.s_R, st.r, st.R = p.s_r, p.s_L, p.s_R, p.r, p.R
        except InputError as exc:
            st.note = f"no repeatability/reproducibility: {exc}"
        out.append(st)
    return out


def _sort_key(sort: str):  # type: ignore[no-untyped-def]
    def num(x: float | None) -> tuple[int, float]:
        return (1, 0.0) if x is None else (0, x)

    return {
        "group": lambda r: (r.group.lower(), r.run_id),
        "section": lambda r: (r.section.lower(), r.group.lower(), r.run_id),
        "run": lambda r: r.run_id,
        "value": lambda r: num(r.value),
        "uncertainty": lambda r: num(r.U),
        "en": lambda r: num(abs(r.en) if r.en is not None else None),
        "delta_t": lambda r: abs(r.delta_t),
        "flags": lambda r: (len(r.flags), r.run_id),
    }[sort]


def _build(title: str, rows: list[Row], sort: str, descending: bool) -> Dashboard:
    if sort not in SORT_KEYS:
        raise Invalid(f"unknown sort key {sort!r}; expected one of: {', '.join(SORT_KEYS)}", field="sort")
    rows.sort(key=_sort_key(sort), reverse=descending)
    counts = Counter(f for r in rows for f in r.flags)
    common, feedback = split_feedback(rows)
    return Dashboard(
        title, rows, statistics(rows), feedback, {f: counts.get(f, 0) for f in FLAGS}, sort, descending, common
    )


def section_dashboard(
    session: so.Session, actor: Person, section_id: int, *, sort: str = "group", descending: bool = False
) -> Dashboard:
    """Return the dashboard of a section (students: only their own section)."""
    section = get_section(session, actor, section_id)
    title = f"{section.course.name} · {section.name}"
    return _build(title, _for_viewer(actor, collect_rows(session, [section])), sort, descending)


def _for_viewer(actor: Person, rows: list[Row]) -> list[Row]:
    """Keep other groups' marks and review reasons from a student (they see only their own)."""
    if actor.role != "student":
        return rows
    for r in rows:
        if r.group_id != actor.group_id:
            r.mark, r.status_reason = None, ""
    return rows


def course_dashboard(
    session: so.Session, actor: Person, course_id: int, *, sort: str = "section", descending: bool = False
) -> Dashboard:
    """Return the dashboard of a whole course (coordinators and technicians); Grubbs stays per section."""
    require_staff(actor, "see a whole course's dashboard")
    course = get_course(session, course_id)
    sections = list(session.scalars(sa.select(Section).where(Section.course_id == course.id)))
    return _build(course.name, collect_rows(session, sections), sort, descending)
