"""Exports for grading: one row per run with its people, result, verdict, flags, mark and feedback,
and the section statistics (CSV, .xlsx).

Numbers are rounded by the GUM rule: the expanded uncertainty U to two significant digits and the
value to the same decimal place (``result`` gives both as text with the unit); E_n to two decimals.
Statistics are rounded the same way against their standard deviation.

Cells that a spreadsheet would run as a formula (text starting with ``=``, ``+``, ``-``, ``@``,
a tab or a carriage return) get a leading apostrophe (:mod:`webapp.exports.cells`); numbers are
written as numbers.
"""

from __future__ import annotations

import csv
import dataclasses
import io
import math
from collections.abc import Iterator
from typing import Any

from webapp.exports.cells import neutralise
from webapp.services.dashboard import FLAGS, Dashboard

COLUMNS = (
    "run",
    "section",
    "group",
    "names",
    "bench",
    "title",
    "kind",
    "measurement",
    "value",
    "expanded_uncertainty",
    "unit",
    "result",
    "En",
    "judged_against",
    "flags",
    "flag_details",
    "counts",
    "mark",
    "mark_source",
    "mark_detail",
    "feedback",
    "comments",
)
STATS_COLUMNS = (
    "measurement",
    "unit",
    "results",
    "groups",
    "mean",
    "sd",
    "s_r",
    "s_L",
    "s_R",
    "r",
    "R",
    "reference",
    "note",
)


def gum_round(value: float | None, U: float | None) -> tuple[float | None, float | None, int]:
    """Return value and U rounded by the GUM rule (U to two significant digits) and the decimals used."""
    if value is None or U is None or not math.isfinite(U) or U <= 0 or not math.isfinite(value):
        return value, U, 4
    d = 1 - math.floor(math.log10(U))
    # rounding U can carry it to three digits (0.0996 → 0.100): round once more at the new magnitude
    if round(U, d) >= 10 ** (2 - d):
        d -= 1
    return (round(value, d) if d > 0 else float(round(value, d))), (round(U, d) if d > 0 else float(round(U, d))), d


def _text_result(value: float | None, U: float | None, unit: str) -> str:
    v, u, d = gum_round(value, U)
    if v is None or u is None:
        return ""
    return f"{v:.{max(d, 0)}f} ± {u:.{max(d, 0)}f} {unit}"


@dataclasses.dataclass
class GradingExtras:
    """What the grading export adds to the dashboard: the people of each group and the comments."""

    names: dict[int, list[str]] = dataclasses.field(default_factory=dict)
    run_comments: dict[int, list[str]] = dataclasses.field(default_factory=dict)
    group_comments: dict[int, list[str]] = dataclasses.field(default_factory=dict)


def grading_extras(session: Any, board: Dashboard) -> GradingExtras:
    """Return the names and comments the grading export needs, in three queries."""
    import sqlalchemy as sa

    from webapp.models import Comment, Person

    group_ids = {r.group_id for r in board.rows if r.group_id is not None}
    run_ids = {r.run_id for r in board.rows}
    out = GradingExtras()
    if group_ids:
        for gid, name in session.execute(
            sa.select(Person.group_id, Person.name)
            .where(Person.group_id.in_(group_ids), Person.role == "student")
            .order_by(Person.name)
        ):
            out.names.setdefault(gid, []).append(name)
        for c in session.scalars(sa.select(Comment).where(Comment.group_id.in_(group_ids)).order_by(Comment.id)):
            out.group_comments.setdefault(c.group_id, []).append(c.body)
    if run_ids:
        for c in session.scalars(sa.select(Comment).where(Comment.run_id.in_(run_ids)).order_by(Comment.id)):
            out.run_comments.setdefault(c.run_id, []).append(c.body)
    return out


def run_rows(board: Dashboard, extras: GradingExtras | None = None) -> Iterator[list[Any]]:
    """Yield one row per run (numbers as numbers, text neutralised), in the dashboard's order."""
    extras = extras or GradingExtras()
    shared = " ".join(board.common_feedback)
    for r in board.rows:
        value, U, _d = gum_round(r.value, r.U)
        mark = r.mark
        own = " ".join(board.feedback.get(r.group, []))
        comments = extras.run_comments.get(r.run_id, []) + extras.group_comments.get(r.group_id or -1, [])
        yield [
            r.run_id,
            neutralise(r.section),
            neutralise(r.group),
            neutralise("; ".join(extras.names.get(r.group_id or -1, []))),
            neutralise(r.bench),
            neutralise(r.title),
            r.kind,
            neutralise(r.measurement),
            value,
            U,
            r.unit,
            _text_result(r.value, r.U, r.unit),
            round(r.en, 2) if r.en is not None else None,
            r.verdict.label if r.verdict is not None else "",
            " ".join(r.flags),
            neutralise("; ".join(f"{k}: {v}" for k, v in r.notes.items())),
            "yes"
            if r.included
            else f"no ({r.status or 'excluded'}{': ' + r.status_reason if r.status_reason else ''})",
            mark.points if mark is not None else None,
            mark.source if mark is not None else "",
            neutralise(mark.detail) if mark is not None else "",
            neutralise(" ".join(x for x in (shared, own) if x)),
            neutralise(" | ".join(comments)),
        ]


def stats_rows(board: Dashboard) -> Iterator[list[Any]]:
    """Yield one row per measurement with its statistics (rounded against their SD)."""
    for s in board.stats:
        d = gum_round(s.mean, s.sd)[2] + 1 if s.sd else 4

        def r(x: float | None) -> float | None:
            return None if x is None else round(x, d)  # noqa: B023 (called within this iteration)

        yield [
            neutralise(s.measurement),
            s.unit,
            s.n,
            s.groups,
            r(s.mean),
            r(s.sd),
            r(s.s_r),
            r(s.s_L),
            r(s.s_R),
            r(s.r),
            r(s.R),
            r(s.reference),
            neutralise(s.note),
        ]


def grading_csv(board: Dashboard, extras: GradingExtras | None = None) -> str:
    """Return the runs, then a blank line and the statistics, as CSV text."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\r\n")
    w.writerow(COLUMNS)
    for row in run_rows(board, extras):
        w.writerow(["" if v is None else (repr(v) if isinstance(v, float) else v) for v in row])
    w.writerow([])
    w.writerow(STATS_COLUMNS)
    for row in stats_rows(board):
        w.writerow(["" if v is None else (repr(v) if isinstance(v, float) else v) for v in row])
    return buf.getvalue()


def grading_xlsx(board: Dashboard, extras: GradingExtras | None = None) -> bytes:
    """Return a workbook (openpyxl) with the sheets ``runs``, ``statistics`` and ``flags``."""
    from openpyxl import Workbook

    wb = Workbook(write_only=True)
    runs = wb.create_sheet("runs")
    runs.append(list(COLUMNS))
    for row in run_rows(board, extras):
        runs.append(row)
    stats = wb.create_sheet("statistics")
    stats.append(list(STATS_COLUMNS))
    for row in stats_rows(board):
        stats.append(row)
    flags = wb.create_sheet("flags")
    flags.append(["flag", "meaning", "runs"])
    for key, meaning in FLAGS.items():
        flags.append([key, meaning, board.flag_counts.get(key, 0)])
    out = io.BytesIO()
    wb.save(out)
    return out.getvalue()
