"""Exports for grading: one row per run with its flags, and the section statistics (CSV, .xlsx).

Cells that a spreadsheet would run as a formula (text starting with ``=``, ``+``, ``-``, ``@``,
a tab or a carriage return) get a leading apostrophe (OWASP "CSV injection"); numbers are
written as numbers.
"""

from __future__ import annotations

import csv
import io
from collections.abc import Iterator
from typing import Any

from webapp.services.dashboard import FLAGS
from webapp.services.dashboard import Dashboard

COLUMNS = ("run", "section", "group", "bench", "title", "kind", "measurement", "value", "standard_uncertainty",
           "expanded_uncertainty", "unit", "delta_t_K", "resolution_K", "En", "flags", "flag_details",
           "largest_budget_input", "largest_budget_share")
STATS_COLUMNS = ("measurement", "unit", "results", "groups", "mean", "sd", "s_r", "s_L", "s_R", "r", "R",
                 "reference", "note")
_DANGEROUS = ("=", "+", "-", "@", "\t", "\r")


def neutralise(value: Any) -> Any:
    """Return ``value`` safe for a spreadsheet: text that starts like a formula gets a leading apostrophe."""
    if isinstance(value, str) and value.startswith(_DANGEROUS):
        return "'" + value
    return value


def run_rows(board: Dashboard) -> Iterator[list[Any]]:
    """Yield one row per run (numbers as numbers, text neutralised), in the dashboard's order."""
    for r in board.rows:
        yield [r.run_id, neutralise(r.section), neutralise(r.group), neutralise(r.bench), neutralise(r.title),
               r.kind, neutralise(r.measurement), r.value, r.u, r.U, r.unit, r.delta_t, r.resolution, r.en,
               " ".join(r.flags), neutralise("; ".join(f"{k}: {v}" for k, v in r.notes.items())),
               neutralise(r.top_label or r.top_input), round(r.top_share, 4) if r.top_input else None]


def stats_rows(board: Dashboard) -> Iterator[list[Any]]:
    """Yield one row per measurement with its statistics."""
    for s in board.stats:
        yield [neutralise(s.measurement), s.unit, s.n, s.groups, s.mean, s.sd, s.s_r, s.s_L, s.s_R, s.r, s.R,
               s.reference, neutralise(s.note)]


def export_csv(board: Dashboard) -> str:
    """Return the runs, then a blank line and the statistics, as CSV text."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\r\n")
    w.writerow(COLUMNS)
    for row in run_rows(board):
        w.writerow(["" if v is None else (repr(v) if isinstance(v, float) else v) for v in row])
    w.writerow([])
    w.writerow(STATS_COLUMNS)
    for row in stats_rows(board):
        w.writerow(["" if v is None else (repr(v) if isinstance(v, float) else v) for v in row])
    return buf.getvalue()


def export_xlsx(board: Dashboard) -> bytes:
    """Return a workbook (openpyxl) with the sheets ``runs``, ``statistics`` and ``flags``."""
    from openpyxl import Workbook

    wb = Workbook(write_only=True)
    runs = wb.create_sheet("runs")
    runs.append(list(COLUMNS))
    for row in run_rows(board):
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
