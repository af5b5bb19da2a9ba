"""Control charts of check-standard runs per calorimeter, and calibration due dates.

A check standard is one measurement repeated on a calorimeter: a kind with its reference
(``dissolution · KCl dissolution, infinite dilution``) or a calibration kind (its C_cal). The
chart is :func:`calc.statistics.control_charts.control_chart` of the current results of the runs that count
(:func:`webapp.services.review.included_in_statistics`: not withdrawn, not excluded) in time order,
with limits from the first ``baseline`` points after a robust start sets gross errors aside; the due date is :func:`calc.statistics.control_charts.calibration_status`
from the calorimeter's last calibration and its interval (the calorimeter's own, else
``CALIBRATION_DUE_DAYS``).
"""

from __future__ import annotations

import dataclasses
import datetime as dt
from collections import defaultdict
from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from calc.errors import InputError
from calc.statistics.control_charts import RULES, ControlChart, calibration_status, control_chart
from webapp.models import Calibration, Calorimeter, Person, Result, Run
from webapp.services.access import require_coordinator, visible_runs_clause
from webapp.services.audit import record_change
from webapp.services.calorimeters import get_calorimeter
from webapp.services.checks import flag_text, flagged_checks
from webapp.services.dashboard_rows import measurement_name
from webapp.services.errors import Invalid
from webapp.services.review import included_in_statistics, with_review

DEFAULT_BASELINE = 20
#: the chart of the calorimeter's own heat capacity (its approved calibrations, in the order measured)
HEAT_CAPACITY = "heat capacity of this calorimeter (its calibrations)"


@dataclasses.dataclass
class ControlView:
    """A calorimeter's check standards, the chart of the one chosen, and its calibration status."""

    calorimeter: Calorimeter
    standards: dict[str, int]
    standard: str | None
    unit: str
    points: list[dict[str, Any]]
    chart: Any | None
    baseline: int
    message: str
    calibration: dict[str, Any]
    #: points of this standard left out of the baseline: their result carries a warning check
    left_out: list[dict[str, Any]] = dataclasses.field(default_factory=list)


def calibration_info(
    session: so.Session, calorimeter: Calorimeter, default_days: int, today: dt.date | None = None
) -> dict[str, Any]:
    """Return the last calibration date, the interval, the due date and whether it is overdue."""
    from webapp.services.in_force import current_calibration

    current = current_calibration(session, calorimeter.id)
    last = current.taken_at if current is not None else None  # when the value in force was measured
    days = calorimeter.calibration_interval_days or int(default_days)
    if last is None:
        return {
            "last": None,
            "interval_days": days,
            "due": None,
            "overdue": True,
            "days_left": None,
            "message": "never calibrated: calibrate before use",
        }
    st = calibration_status(last, days, today or dt.datetime.now(dt.UTC).date())
    msg = (
        f"overdue since {st.due.isoformat()}"
        if st.overdue
        else f"due on {st.due.isoformat()} ({st.days_left} day(s) left)"
    )
    return {
        "last": st.last_calibration.isoformat(),
        "interval_days": days,
        "due": st.due.isoformat(),
        "overdue": st.overdue,
        "days_left": st.days_left,
        "message": msg,
    }


def set_interval(session: so.Session, actor: Person, calorimeter: Calorimeter, days: int | None) -> Calorimeter:
    """Set a calorimeter's calibration interval in days (None: the notebook default), audited, and commit."""
    require_coordinator(actor, "manage calorimeters")
    if days is not None and (isinstance(days, bool) or not isinstance(days, int) or not 1 <= days <= 3650):
        raise Invalid("expected a whole number of days from 1 to 3650", field="calibration_interval_days")
    if calorimeter.calibration_interval_days != days:
        record_change(
            session,
            actor,
            "calorimeter",
            calorimeter.id,
            "calibration_interval_days",
            calorimeter.calibration_interval_days,
            days,
        )
        calorimeter.calibration_interval_days = days
    session.commit()
    return calorimeter


def control_view(
    session: so.Session,
    viewer: Person,
    calorimeter_id: int,
    *,
    standard: str | None = None,
    baseline: int | None = None,
    default_days: int = 30,
    today: dt.date | None = None,
) -> ControlView:
    """Return the control chart of one check standard of a calorimeter (default: the one with most runs).

    Only the runs ``viewer`` may see are charted (staff: every run; a student: their group's), as
    on the calorimeter page.
    """
    cal = get_calorimeter(session, calorimeter_id)
    series = _run_series(session, viewer, cal)
    own = _heat_capacities(session, cal.id)
    standards = {k: len(v) for k, v in sorted(series.items(), key=lambda kv: -len(kv[1]))}
    if own:
        series[HEAT_CAPACITY] = own
        standards = {HEAT_CAPACITY: len(own), **standards}
    info = calibration_info(session, cal, default_days, today)
    if standard is not None and standard not in series:
        raise Invalid(f"calorimeter {cal.name!r} has no runs of {standard!r}", field="standard")
    if standard is None and standards:
        # its own heat capacity once there are two calibrations to chart, else the standard with most runs
        standard = HEAT_CAPACITY if len(own) >= 2 else next((k for k in standards if k != HEAT_CAPACITY), None)
        standard = standard or next(iter(standards))
    if standard is None:
        return ControlView(cal, standards, None, "", [], None, 0, "no runs with results on this calorimeter yet", info)
    points = series[standard]
    n = len(points)
    if baseline is not None and (isinstance(baseline, bool) or not 2 <= baseline <= max(n, 2)):
        raise Invalid(f"expected a baseline of 2 to {max(n, 2)} points", field="baseline")
    base = baseline if baseline is not None else min(DEFAULT_BASELINE, n)
    chart, message = _chart(points, base)
    return ControlView(
        cal,
        standards,
        standard,
        points[0]["unit"] if points else "",
        points,
        chart,
        base,
        message,
        info,
        [p for p in points[:base] if p["flagged"]],
    )


def _run_series(session: so.Session, viewer: Person, cal: Calorimeter) -> dict[str, list[dict[str, Any]]]:
    """Return the runs on ``cal`` that ``viewer`` may see and that count, as points by what they measured."""
    rows = session.execute(
        with_review(
            sa.select(
                Run.id,
                Run.kind,
                Run.created_at,
                Run.title,
                Result.main,
                Result.molar_enthalpy_kj_mol,
                Result.calorimeter_heat_capacity_j_k,
                Result.comparison,
                Result.checks,
            ).join(Result, sa.and_(Result.run_id == Run.id, Result.is_current.is_(True)))
        )
        .where(Run.calorimeter_id == cal.id, visible_runs_clause(viewer), included_in_statistics())
        .order_by(Run.created_at, Run.id)
    ).all()
    series: dict[str, list[dict[str, Any]]] = defaultdict(list)
    for rid, kind, created, title, main, h, c, comp, checks in rows:
        v = h if main == "molar_enthalpy" else c
        if v is not None:
            series[measurement_name(kind, comp)].append(
                {
                    "run_id": rid,
                    "at": created.strftime("%Y-%m-%d %H:%M"),
                    "title": title,
                    "value": v,
                    "unit": "kJ/mol" if main == "molar_enthalpy" else "J/K",
                    "flagged": flag_text(checks) if flagged_checks(checks) else "",
                }
            )
    return series


def _chart(points: list[dict[str, Any]], base: int) -> tuple[ControlChart | None, str]:
    """Return the chart of ``points`` on their first ``base`` (or why there is none); mark each point."""
    n = len(points)
    chart, message = None, ""
    # the baseline is the first `base` points, less those a plausibility check warns about
    in_base = [p["value"] for p in points[:base] if not p["flagged"]]
    if n < 2:
        message = "at least 2 runs are needed for a chart"
    elif len(in_base) < 2:
        message = "fewer than 2 baseline points are left once runs with plausibility warnings are left out"
    else:
        try:
            chart = control_chart([p["value"] for p in points], baseline=in_base)
        except InputError as exc:
            message = str(exc)
    if chart is not None:
        by_index: dict[int, list[str]] = defaultdict(list)
        for v in chart.violations:
            by_index[v.index].append(v.message)
        aside = set(chart.limits.set_aside)
        for i, p in enumerate(points):
            p["violations"] = by_index.get(i, [])
            p["baseline"] = i < base and i not in aside and not p["flagged"]
            p["set_aside"] = i in aside
    return chart, message


def _heat_capacities(session: so.Session, calorimeter_id: int) -> list[dict[str, Any]]:
    """Return the approved measured heat capacities of a calorimeter as chart points, in the order measured."""
    cals = session.scalars(
        sa.select(Calibration)
        .where(
            Calibration.calorimeter_id == calorimeter_id, Calibration.status == "approved", Calibration.pool.is_(None)
        )
        .order_by(Calibration.taken_at, Calibration.id)
    ).all()
    return [
        {
            "run_id": c.result.run_id if c.result is not None else None,
            "calibration_id": c.id,
            "at": c.taken_at.strftime("%Y-%m-%d"),
            "title": f"calibration #{c.id}: {c.note}",
            "value": c.heat_capacity_j_k,
            "unit": "J/K",
            "flagged": "",
        }
        for c in cals
    ]


def control_json(view: ControlView) -> dict[str, Any]:
    """Return a control view as JSON-ready data."""
    ch = view.chart
    lim = ch.limits if ch is not None else None
    return {
        "calorimeter_id": view.calorimeter.id,
        "standard": view.standard,
        "standards": view.standards,
        "unit": view.unit,
        "baseline": view.baseline,
        "message": view.message,
        "calibration": view.calibration,
        "limits": None
        if lim is None
        else {
            k: getattr(lim, k)
            for k in (
                "centre",
                "sigma",
                "mr_bar",
                "mr_ucl",
                "n_baseline",
                "lower_3s",
                "lower_2s",
                "lower_1s",
                "upper_1s",
                "upper_2s",
                "upper_3s",
            )
        }
        | {"warnings": list(lim.warnings)},
        "points": view.points,
        "violations": []
        if ch is None
        else [
            {"index": v.index, "run_id": view.points[v.index]["run_id"], "rule": v.rule, "message": v.message}
            for v in ch.violations
        ],
        "rules": RULES,
    }
