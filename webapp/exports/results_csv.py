"""The results of some runs as CSV: a header, then one row per result of each run, oldest first.

Text that a spreadsheet would run as a formula is neutralised (:mod:`webapp.exports.cells`);
numbers are written exactly. The caller has checked that the actor may see every run.
"""

from __future__ import annotations

import csv
import io
from collections.abc import Iterable
from typing import Any

from calc.refdata.comparison import verdict
from webapp.exports.cells import csv_cell
from webapp.exports.document import iso
from webapp.models import Run
from webapp.quantities import result_value

CSV_COLUMNS = (
    "run",
    "result",
    "current",
    "title",
    "kind",
    "method",
    "measurement",
    "value",
    "standard_uncertainty",
    "expanded_uncertainty",
    "coverage_factor",
    "unit",
    "corrected_delta_t_K",
    "corrected_delta_t_K_u",
    "heat_J",
    "heat_J_u",
    "En",
    "warnings",
    "author",
    "recorded_at",
    "analyzed_at",
    "calibration_id",
    "locked",
    "software_version",
)


def result_rows(run: Run) -> Iterable[list[Any]]:
    """Yield one CSV row per result of ``run``, oldest first (text neutralised against formulas)."""
    for r in run.results:
        main = result_value(r, r.main) or (None, None, "")
        dt_ = result_value(r, "corrected_delta_t") or (None, None, "")
        heat = result_value(r, "heat") or (None, None, "")
        vd = verdict(r.comparison)
        en = vd.En if vd is not None else None
        yield [
            run.id,
            r.id,
            "yes" if r.is_current else "no",
            run.title,
            run.kind,
            r.method,
            r.main,
            main[0],
            main[1],
            r.expanded_uncertainty,
            r.coverage_factor,
            main[2],
            dt_[0],
            dt_[1],
            heat[0],
            heat[1],
            en,
            "; ".join(str(w) for w in (r.warnings or [])),
            run.author.name,
            iso(run.created_at),
            iso(r.created_at),
            run.calibration_id,
            "yes" if run.locked else "no",
            r.software_version,
        ]


def export_csv(runs: Iterable[Run]) -> str:
    """Return CSV text: a header, then one row per result of each run."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\r\n")
    w.writerow(CSV_COLUMNS)
    for run in runs:
        for row in result_rows(run):
            w.writerow([csv_cell(v) for v in row])
    return buf.getvalue()
