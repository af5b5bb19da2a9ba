"""Read-only operations the pages need: previews of uploads and the data of a page.

Nothing here writes: :func:`preview_run` analyses an upload exactly as
:func:`webapp.services.runs.record_run` will (the same calorimeter lookup, the same
calibration supplied, the same parse and analysis) and returns the unsaved result.
"""

from __future__ import annotations

import dataclasses
from collections import defaultdict
from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from calc.analysis import Analysis
from webapp.models import Calibration, Calorimeter, Group, Person, Result, Run
from webapp.services.access import can_edit_run, can_lock_run, can_view_run, visible_runs_clause
from webapp.services.audit import audit_trail
from webapp.services.calorimeters import calibration_history, calorimeters_query, current_calibration, get_calorimeter
from webapp.services.errors import NotFound
from webapp.services.run_upload import RunUpload, analyze_upload
from webapp.services.runs import get_run, runs_query


@dataclasses.dataclass
class Preview:
    """An analyzed upload that is not stored: calc's analysis and the result row it would give."""

    analysis: Analysis
    result: Result  # transient: never added to a session
    calorimeter: Calorimeter | None
    calibration: Calibration | None
    measured_on: str = ""  # the run file's [info] date


def preview_run(session: so.Session, upload: RunUpload) -> Preview:
    """Analyze an upload as :func:`~webapp.services.runs.record_run` would, without storing anything.

    :raise Invalid: for any problem with the files or the options (calc's message and field)
    """
    done = analyze_upload(session, upload)
    return Preview(
        done.analysis, done.result(), done.calorimeter, done.calibration, str(done.spec.get("info", "date") or "")
    )


@dataclasses.dataclass
class CalorimeterChoice:
    """A calorimeter with the heat capacity in force (None: not calibrated)."""

    calorimeter: Calorimeter
    current: Calibration | None


def calorimeter_choices(session: so.Session) -> list[CalorimeterChoice]:
    """Return every calorimeter by name with the calibration in force."""
    return [
        CalorimeterChoice(cal, current_calibration(session, cal.id)) for cal in session.scalars(calorimeters_query())
    ]


def group_choices(session: so.Session, actor: Person) -> list[Group]:
    """Return the groups ``actor`` may record runs for (a student: their own group only)."""
    if actor.role == "student":
        return [actor.group] if actor.group is not None else []
    return list(session.scalars(sa.select(Group).order_by(Group.name)))


@dataclasses.dataclass
class RunPage:
    """What the run page shows: the run, the result shown, every result, the audit trail, rights."""

    run: Run
    result: Result | None
    results: list[Result]
    audit: list[Any]
    may_edit: bool
    may_lock: bool


def run_page(session: so.Session, actor: Person, run_id: int, result_id: int | None = None) -> RunPage:
    """Return the data of a run's page; ``result_id`` picks an earlier result (default: the current one).

    :raise NotFound: for a run ``actor`` may not see, or a result of another run
    """
    run = get_run(session, actor, run_id)
    results = list(session.scalars(sa.select(Result).where(Result.run_id == run.id).order_by(Result.id)))
    if result_id is None:
        current = [r for r in results if r.is_current]
        shown = current[-1] if current else None
    else:
        shown = next((r for r in results if r.id == result_id), None)
        if shown is None:
            raise NotFound(f"run {run.id} has no result with id {result_id}")
    return RunPage(
        run=run,
        result=shown,
        results=results,
        audit=list(session.scalars(audit_trail("run", run.id))),
        may_edit=can_edit_run(actor, run) and not run.locked,
        may_lock=can_lock_run(actor, run) and not run.locked,
    )


def result_of(session: so.Session, actor: Person, run_id: int, result_id: int) -> tuple[Run, Result]:
    """Return a run ``actor`` may see and one of its results.

    :raise NotFound: for a run ``actor`` may not see, or a result of another run
    """
    run = get_run(session, actor, run_id)
    result = session.get(Result, result_id)
    if result is None or result.run_id != run.id:
        raise NotFound(f"run {run.id} has no result with id {result_id}")
    return run, result


@dataclasses.dataclass
class CalibrationRow:
    """One calibration of a calorimeter: where it came from and the runs whose C_cal it supplied."""

    calibration: Calibration
    result: Result | None
    source_visible: bool  # whether the person may open the calibration run
    runs: list[Run]


@dataclasses.dataclass
class CalorimeterPage:
    """What the calorimeter page shows."""

    calorimeter: Calorimeter
    history: list[Calibration]  # oldest first
    current: Calibration | None
    rows: list[CalibrationRow]  # newest first
    latest_runs: list[tuple[Run, Result | None]]  # the newest runs on it the person may see
    members: dict[int, Calibration] = dataclasses.field(default_factory=dict)  # behind the value in force


def calorimeter_page(
    session: so.Session, actor: Person, calorimeter_id: int, *, latest_runs: int = 20
) -> CalorimeterPage:
    """Return a calorimeter with its calibrations and, for each, the runs ``actor`` may see that used it
    (directly, or through a pooled value that held it)."""
    from webapp.services.in_force import current_calibration, members_of

    cal = get_calorimeter(session, calorimeter_id)
    history = list(session.scalars(calibration_history(cal.id).options(so.joinedload(Calibration.result))))
    ids = [c.id for c in history]
    used: dict[int, list[Run]] = defaultdict(list)
    if ids:
        q = (
            sa.select(Run)
            .where(Run.calibration_id.in_(ids), visible_runs_clause(actor))
            .options(so.joinedload(Run.results))
            .order_by(Run.id)
        )
        for run in session.scalars(q).unique():
            used[run.calibration_id or 0].append(run)
    via_pool: dict[int, list[Run]] = defaultdict(list)
    for c in history:
        if c.pool:
            for member in members_of(c):
                via_pool[member].extend(used[c.id])
    rows = []
    for c in reversed(history):
        if c.pool:
            continue  # a pooled value is shown as the value in force, with its members
        source = c.result.run if c.result is not None else None
        runs = sorted({r.id: r for r in used[c.id] + via_pool[c.id]}.values(), key=lambda r: r.id)
        rows.append(CalibrationRow(c, c.result, source is not None and can_view_run(actor, source), runs))
    latest = [
        (run, res)
        for run, res in session.execute(runs_query(actor, calorimeter_id=cal.id).limit(latest_runs)).unique().all()
    ]
    current = current_calibration(session, cal.id)
    members = {c.id: c for c in history if current is not None and c.id in members_of(current)}
    return CalorimeterPage(cal, [c for c in history if not c.pool], current, rows, latest, members)
