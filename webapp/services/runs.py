"""Runs: record an upload, re-analyze, edit, lock, and the queries that list them.

Each operation is one transaction: it checks everything, analyses with calc, adds
the rows and commits, or raises before anything is written (nothing half-saved).
"""

from __future__ import annotations

import dataclasses
from collections.abc import Mapping
from typing import Any, Generic, TypeVar

import sqlalchemy as sa
import sqlalchemy.orm as so

from calc.analysis import Analysis
from webapp.models import CALIBRATION_KINDS, Calibration, Calorimeter, Person, Result, Run, utcnow
from webapp.services.access import can_lock_run, can_view_run, require_editable, visible_runs_clause
from webapp.services.analysis import (
    AnalysisOptions,
    decode_readings,
    inputs_from_spec,
    parse_inputs,
    result_from_analysis,
    run_analysis,
)
from webapp.services.audit import record_change
from webapp.services.calorimeters import current_calibration
from webapp.services.concurrency import check_version, content_hash, locked_run, run_state
from webapp.services.errors import Conflict, Forbidden, Invalid, NotFound, RunLocked, Stale
from webapp.services.result_store import store_result
from webapp.services.run_upload import (
    RunUpload,
    analyze_upload,
    check_context,
    group_for,
    new_run,
    periods_given,
)

T = TypeVar("T")

#: details of a run that can be edited before it is locked (each change is audited)
EDITABLE_FIELDS = ("title", "operator", "bench", "performed_on", "notes", "group_id")
_LENGTHS = {"title": 300, "operator": 200, "bench": 120, "performed_on": 40}


@dataclasses.dataclass
class Page(Generic[T]):
    """One page of a query's rows."""

    items: list[T]
    total: int
    page: int
    per_page: int

    @property
    def pages(self) -> int:
        """Return the number of pages (at least 1)."""
        return max(1, -(-self.total // self.per_page))

    @property
    def has_next(self) -> bool:
        """Return whether a later page exists."""
        return self.page < self.pages


# ----------------------------------------------------------------- operations


def record_run(session: so.Session, actor: Person, upload: RunUpload) -> Run:
    """Store an uploaded run with its first result and commit; a calibration updates its calorimeter.

    :raise Invalid: for any problem with the files or the options (calc's message)
    :raise Forbidden: when a student records a run for another group
    """
    done = analyze_upload(session, upload)
    spec, calorimeter, calibration = done.spec, done.calorimeter, done.calibration
    group = group_for(session, actor, upload.group_id, spec.get("info", "group"))
    run = new_run(
        spec, done.readings, upload, done.run_name, done.readings_name, actor, group, calorimeter, calibration
    )
    run.inputs = inputs_from_spec(spec, calibration)
    result = done.result()
    result.run = run
    result.created_by = actor
    session.add_all([run, result])
    try:
        if calibration is not None:
            _still_in_force(session, calibration)
        if spec.kind in CALIBRATION_KINDS and calorimeter is not None:
            session.flush()
            from webapp.services.calibrations import calibration_from_result

            calibration_from_result(session, calorimeter, result, actor)
        session.commit()
    except sa.exc.IntegrityError:
        session.rollback()
        raise Conflict("the run could not be stored (it conflicts with stored data)") from None
    return run


def _still_in_force(session: so.Session, calibration: Calibration) -> None:
    """Check, in the writing transaction, that the value the run was analyzed with is still in force."""
    session.flush()  # SQLite's write transaction starts here; PostgreSQL locks the calorimeter's row next
    session.execute(sa.select(Calorimeter.id).where(Calorimeter.id == calibration.calorimeter_id).with_for_update())
    now = current_calibration(session, calibration.calorimeter_id)
    if now is None or now.id != calibration.id:
        session.rollback()
        raise Conflict(
            "the calorimeter's heat capacity in force changed while the run was analyzed; nothing was "
            "saved, send it again",
            field="calorimeter.heat_capacity",
        )


def reanalyze_run(
    session: so.Session, actor: Person, run: Run, options: AnalysisOptions, expected_version: int | None = None
) -> Result:
    """Analyze a stored run again (new method or periods), keep the old result, and commit.

    The run's recorded calibration supplies C_cal again, so the inputs are the same.
    A calibration run's new result is added to its calorimeter's history. The analysis runs
    first; then the run is read again under a row lock and the lock, the version and the
    calibration are checked again in the transaction that writes.
    """
    require_editable(actor, run)
    options = options.checked()
    calibration_id = run.calibration_id
    text = decode_readings(run.readings_raw, run.readings_name)
    spec, readings = parse_inputs(run.run_toml, run.run_file_name, text, run.readings_name, run.calibration)
    analysis = run_analysis(spec, readings, options, **check_context(run.calorimeter, run))
    run = locked_run(session, run.id)
    require_editable(actor, run)
    check_version("run", run, expected_version)
    if run.calibration_id != calibration_id:
        raise Stale(
            f"run {run.id}'s calibration changed while it was analyzed; nothing was saved, try again",
            current={"run": run_state(run)},
        )
    result = result_from_analysis(analysis, input_name=run.run_file_name, periods_given=periods_given(options))
    store_result(session, actor, run, result)
    if run.kind in CALIBRATION_KINDS and run.calorimeter is not None:
        from webapp.services.calibrations import calibration_from_result

        calibration_from_result(session, run.calorimeter, result, actor, reanalysis=True)
    session.commit()
    return result


def update_run(
    session: so.Session, actor: Person, run: Run, changes: Mapping[str, Any], expected_version: int | None = None
) -> Run:
    """Change a run's details (:data:`EDITABLE_FIELDS`), each change audited, and commit.

    The run is read again under a row lock; a locked run or an older ``expected_version`` is refused.
    """
    require_editable(actor, run)
    for key in changes:
        if key not in EDITABLE_FIELDS:
            raise Invalid(f"cannot be changed; editable fields: {', '.join(EDITABLE_FIELDS)}", field=key)
    run = locked_run(session, run.id)
    require_editable(actor, run)
    check_version("run", run, expected_version)
    for key, new in changes.items():
        if key == "group_id":
            group = group_for(session, actor, new, None, explicit=True)
            old_name = run.group.name if run.group else None
            if (group.id if group else None) != run.group_id:
                record_change(session, actor, "run", run.id, "group", old_name, group.name if group else None)
                run.group = group
            continue
        if not isinstance(new, str):
            raise Invalid("expected text", field=key)
        new = new.strip()
        limit = _LENGTHS.get(key)
        if limit and len(new) > limit:
            raise Invalid(f"at most {limit} characters", field=key)
        old = getattr(run, key)
        if old != new:
            record_change(session, actor, "run", run.id, key, old, new)
            setattr(run, key, new)
    session.commit()
    return run


def lock_run(session: so.Session, actor: Person, run: Run, expected_version: int | None = None) -> Run:
    """Sign a run (its author or a coordinator) and commit; it is immutable from then on.

    The run is read again under a row lock, so the lock signs what is stored: it records the
    current result's id and the :func:`~webapp.services.concurrency.content_hash` of the run.
    """
    if not can_view_run(actor, run):
        raise NotFound(f"no run with id {run.id}")
    run = locked_run(session, run.id)
    if not can_lock_run(actor, run):
        raise Forbidden("only the run's author or a coordinator may lock (sign) it")
    if run.locked:
        raise RunLocked(f"run {run.id} is locked (signed) already")
    check_version("run", run, expected_version)
    result = run.current_result
    signed = content_hash(run, result)  # read everything first: one flush then writes the lock whole
    record_change(session, actor, "run", run.id, "locked", False, True)
    run.locked_result_id = result.id if result is not None else None
    run.locked_hash = signed
    run.locked_by = actor
    run.locked_at = utcnow()
    run.locked = True
    session.commit()
    return run


def analysis_of(run: Run, result: Result | None = None) -> Analysis:
    """Return calc's full :class:`~calc.analysis.Analysis` behind a stored result (for plots).

    The stored files are analyzed again with the result's method, its periods when they
    were given, and the run's recorded calibration, without Monte Carlo: the numbers are
    those stored (the analysis is deterministic). Read-only: nothing is written.
    """
    result = result or run.current_result
    if result is None:
        raise NotFound(f"run {run.id} has no result")
    text = decode_readings(run.readings_raw, run.readings_name)
    spec, readings = parse_inputs(run.run_toml, run.run_file_name, text, run.readings_name, run.calibration)
    given = result.periods_given
    # a mixing time typed in "Analyze again" is stored with the result as not detected
    typed_mix = spec.mixing_time is None and not result.mixing_time_detected
    return run_analysis(
        spec,
        readings,
        AnalysisOptions(
            method=result.method,
            fore=(result.fore_start_s, result.fore_end_s) if given else None,
            after=(result.after_start_s, result.after_end_s) if given else None,
            mixing_time=(result.mixing_time_s, result.mixing_time_s_std) if typed_mix else None,
        ),
        **check_context(run.calorimeter, run),
    )


# ----------------------------------------------------------------- queries


def get_run(session: so.Session, actor: Person, run_id: int) -> Run:
    """Return a run ``actor`` may see.

    :raise NotFound: when there is none (or it is another group's)
    """
    run = session.get(Run, run_id)
    if run is None or not can_view_run(actor, run):
        raise NotFound(f"no run with id {run_id}")
    return run


def get_result(session: so.Session, actor: Person, result_id: int) -> Result:
    """Return a result of a run ``actor`` may see, with all its details loaded."""
    result = session.scalar(sa.select(Result).where(Result.id == result_id).options(so.undefer_group("detail")))
    if result is None or not can_view_run(actor, result.run):
        raise NotFound(f"no result with id {result_id}")
    return result


def results_query(run_id: int) -> sa.Select[tuple[Result]]:
    """Return the query of a run's results, oldest first (the last is current)."""
    return sa.select(Result).where(Result.run_id == run_id).order_by(Result.id)


def runs_query(
    actor: Person,
    *,
    kind: str | None = None,
    calorimeter_id: int | None = None,
    group_id: int | None = None,
) -> sa.Select[tuple[Run, Result]]:
    """Return the query of the runs ``actor`` may see with their current result, newest first."""
    q = (
        sa.select(Run, Result)
        .outerjoin(Result, sa.and_(Result.run_id == Run.id, Result.is_current.is_(True)))
        .where(visible_runs_clause(actor))
        .options(
            so.joinedload(Run.author),
            so.joinedload(Run.group),
            so.joinedload(Run.calorimeter),
            so.selectinload(Run.review),
        )
        .order_by(Run.created_at.desc(), Run.id.desc())
    )
    if kind is not None:
        q = q.where(Run.kind == kind)
    if calorimeter_id is not None:
        q = q.where(Run.calorimeter_id == calorimeter_id)
    if group_id is not None:
        q = q.where(Run.group_id == group_id)
    return q


def recent_runs(session: so.Session, actor: Person, limit: int = 10) -> list[tuple[Run, Result | None]]:
    """Return the newest runs ``actor`` may see, with their current result."""
    return [(run, res) for run, res in session.execute(runs_query(actor).limit(limit)).unique().all()]


def paginate(session: so.Session, query: sa.Select[Any], page: int, per_page: int) -> Page[Any]:
    """Return one page of ``query`` (rows as tuples when it selects several entities)."""
    page = max(1, page)
    total = session.scalar(sa.select(sa.func.count()).select_from(query.order_by(None).subquery())) or 0
    rows = session.execute(query.limit(per_page).offset((page - 1) * per_page)).unique().all()
    items = [row if len(row) > 1 else row[0] for row in rows]
    return Page(items=items, total=total, page=page, per_page=per_page)


def run_for_submit_token(session: so.Session, token: str) -> Run | None:
    """Return the run a page form with this one-time token saved already, if any."""
    return session.scalar(sa.select(Run).where(Run.submit_token == token))
