"""Calibration authority and the heat capacity in force.

- A calibration recorded by staff (a technician or a coordinator) is *approved*; a student's is
  *proposed* until staff approve it. Only approved measurements count.
- The value in force is the pool of the cup's recent approved measurements
  (:mod:`webapp.services.in_force`). A value in force that would move too far needs an explicit
  confirmation; a calibration run that would do so without one stays proposed.
- Withdrawing a calibration lists the runs that used it (or a pool holding it); they are
  re-analyzed with the value now in force in one action, locked (signed) runs excepted.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from calc.errors import InputError
from calc.io.quantities import parse_measured
from webapp.models import STAFF_ROLES, Calibration, Calorimeter, Person, Result, Run, utcnow
from webapp.services.audit import record_change
from webapp.services.errors import Conflict, Forbidden, Invalid, get_or_not_found
from webapp.services.in_force import (
    NeedsConfirmation,
    approved_calibration,
    current_calibration,
    describe,
    members_of,
    refresh_in_force,
)


def parse_heat_capacity(text: str, field: str = "heat_capacity") -> tuple[float, float]:
    """Return (value, u) in J/K from ``"18.6 ± 2.0 J/K"``.

    :raise Invalid: with calc's message when the text is not a heat capacity
    """
    try:
        m = parse_measured(text, field=field, expected="J/K")
    except InputError as exc:
        raise Invalid(str(exc), field=field) from None
    value, u = m.m_as("J/K"), m.u_as("J/K")
    if not value > 0:
        raise Invalid(f"field '{field}': expected a positive heat capacity, got {text!r}", field=field)
    return value, u


def is_staff(person: Person | None) -> bool:
    """Return whether ``person`` may record or approve a calibration in force."""
    return person is not None and person.role in STAFF_ROLES


def require_staff(person: Person, what: str) -> None:
    """Raise :class:`Forbidden` unless ``person`` is a technician or a coordinator."""
    if not is_staff(person):
        raise Forbidden(f"only a technician or a coordinator may {what}")


def parse_measured_date(text: Any, field: str = "measured_on") -> dt.datetime:
    """Return an ISO 8601 date (``2026-03-14``, or a date and time) as a naive UTC datetime.

    :raise Invalid: missing, not ISO 8601, or in the future
    """
    if not isinstance(text, str) or not text.strip():
        raise Invalid("missing: give the date the heat capacity was measured (YYYY-MM-DD)", field=field)
    try:
        when = dt.datetime.fromisoformat(text.strip().replace("Z", "+00:00"))
    except ValueError:
        raise Invalid(f"expected an ISO 8601 date such as 2026-03-14, got {text.strip()[:40]!r}", field=field) from None
    if when.tzinfo is not None:
        when = when.astimezone(dt.UTC).replace(tzinfo=None)
    if when.date() > utcnow().date() + dt.timedelta(days=1):
        raise Invalid(f"the date {when.date().isoformat()} is in the future", field=field)
    return when


def measured_at(run: Run) -> dt.datetime:
    """Return when a run was measured: its ``[info] date`` when that is an ISO date, else when it was stored."""
    try:
        return parse_measured_date(run.performed_on or "", "performed_on")
    except Invalid:
        return run.created_at


# ------------------------------------------------------------------ due dates


def overdue_note(
    day: dt.date | None, calibration: Calibration | None, calorimeter: Calorimeter | None, default_days: int
) -> str | None:
    """Return the warning for a run measured on ``day`` with ``calibration``'s value, or None when in time.

    The value was due again ``interval`` days after it was measured (the calorimeter's own interval,
    else ``default_days``); a run measured after that day used an overdue calibration.
    """
    if calibration is None or day is None:
        return None
    days = (calorimeter.calibration_interval_days if calorimeter is not None else None) or int(default_days)
    due = calibration.taken_at.date() + dt.timedelta(days=days)
    if day <= due:
        return None
    return (
        f"calibration overdue: this run was measured on {day.isoformat()}, but the calorimeter's heat capacity "
        f"in force was measured on {calibration.taken_at.date().isoformat()} and was due again on "
        f"{due.isoformat()} (every {days} days); calibrate the cup, then re-analyze"
    )


def run_day(run: Run) -> dt.date:
    """Return the day a run was measured."""
    return measured_at(run).date()


def text_day(text: str | None) -> dt.date:
    """Return the day of an ``[info] date`` (today when it is missing or not ISO 8601)."""
    try:
        return parse_measured_date(text or "", "date").date()
    except Invalid:
        return utcnow().date()


# ------------------------------------------------------------------ recording and approving


def calibration_from_result(
    session: so.Session, calorimeter: Calorimeter, result: Result, actor: Person | None, *, reanalysis: bool = False
) -> Calibration:
    """Add the heat capacity a calibration run measured (the caller commits).

    Staff's calibration is approved and pooled at once (a re-analysis replaces the run's earlier
    calibration), unless it would move the value in force too far: then it waits, proposed, for a
    confirmation. A student's is a proposal, and changes nothing in force until staff approve it.
    """
    run = result.run
    approved = is_staff(actor)
    if approved and reanalysis:
        _replace_earlier(session, actor, run.id, keep=None)
    now = utcnow()
    cal = Calibration(
        calorimeter=calorimeter,
        heat_capacity_j_k=result.calorimeter_heat_capacity_j_k,
        heat_capacity_j_k_std=result.calorimeter_heat_capacity_j_k_std or 0.0,
        taken_at=measured_at(run),
        result=result,
        note=f"{run.kind} run #{run.id}, {result.method}",
        created_by=actor,
        status="approved" if approved else "proposed",
        approved_by=actor if approved else None,
        approved_at=now if approved else None,
    )
    session.add(cal)
    session.flush()
    record_change(session, actor, "calibration", cal.id, "status", None, cal.status)
    if approved:
        try:
            refresh_in_force(session, calorimeter, actor, new=cal)
        except NeedsConfirmation as exc:
            record_change(session, actor, "calibration", cal.id, "status", "approved", "proposed")
            cal.status, cal.approved_by, cal.approved_at = "proposed", None, None
            cal.note += " · awaiting confirmation: " + exc.message.split(";")[0]
            if reanalysis:
                refresh_in_force(session, calorimeter, actor, confirm=True)
    return cal


def _replace_earlier(session: so.Session, actor: Person | None, run_id: int, keep: int | None) -> None:
    """Withdraw the other live calibrations of the same run (a re-analysis replaces them)."""
    older = session.scalars(
        sa.select(Calibration)
        .join(Result, Calibration.result_id == Result.id)
        .where(Result.run_id == run_id, Calibration.status != "withdrawn")
    ).all()
    for old in older:
        if old.id != keep:
            _withdraw(session, actor, old, f"replaced by the re-analysis of run #{run_id}")


def enter_heat_capacity(
    session: so.Session,
    actor: Person,
    calorimeter: Calorimeter,
    heat_capacity: str,
    measured_on: Any,
    note: str = "",
    *,
    confirm: bool = False,
    restart: bool = False,
) -> Calibration:
    """Record a heat capacity measured elsewhere, with the date it was measured (staff), and commit."""
    from webapp.services.concurrency import locked_calorimeter

    require_staff(actor, "record a heat capacity")
    value, u = parse_heat_capacity(heat_capacity)
    when = parse_measured_date(measured_on)
    if len(note or "") > 300:
        raise Invalid("at most 300 characters", field="note")
    calorimeter = locked_calorimeter(session, calorimeter.id)
    note = (note or "").strip() or f"entered by {actor.name}"
    cal = approved_calibration(calorimeter, actor, (value, u), when, note, restart=bool(restart))
    session.add(cal)
    session.flush()
    record_change(session, actor, "calibration", cal.id, "status", None, "approved")
    refresh_in_force(session, calorimeter, actor, confirm=confirm or restart, new=cal)
    session.commit()
    return cal


def approve_calibration(
    session: so.Session, actor: Person, calibration_id: int, *, confirm: bool = False, restart: bool = False
) -> Calibration:
    """Approve a proposed calibration (staff) so it joins the value in force, and commit."""
    from webapp.services.concurrency import locked_calorimeter

    require_staff(actor, "approve a calibration")
    cal = get_calibration(session, calibration_id)
    calorimeter = locked_calorimeter(session, cal.calorimeter_id)
    cal = get_calibration(session, calibration_id)
    if cal.status != "proposed":
        raise Conflict(f"calibration {cal.id} is {cal.status}, not proposed", field="status")
    if cal.result is not None:
        _replace_earlier(session, actor, cal.result.run_id, keep=cal.id)
    record_change(session, actor, "calibration", cal.id, "status", "proposed", "approved")
    cal.status, cal.approved_by, cal.approved_at, cal.restart = "approved", actor, utcnow(), bool(restart)
    refresh_in_force(session, calorimeter, actor, confirm=confirm or restart, new=cal)
    session.commit()
    return cal


def get_calibration(session: so.Session, calibration_id: int) -> Calibration:
    """Return a calibration by id, or raise :class:`NotFound`."""
    return get_or_not_found(session, Calibration, calibration_id, "calibration", "calibration_id")


# ------------------------------------------------------------------ withdrawing


def _withdraw(session: so.Session, actor: Person | None, cal: Calibration, reason: str) -> None:
    record_change(session, actor, "calibration", cal.id, "status", cal.status, "withdrawn")
    cal.status, cal.withdrawn_by, cal.withdrawn_at, cal.withdrawn_reason = "withdrawn", actor, utcnow(), reason
    pools = session.scalars(
        sa.select(Calibration).where(
            Calibration.calorimeter_id == cal.calorimeter_id,
            Calibration.pool.is_not(None),
            Calibration.status == "approved",
        )
    ).all()
    for p in pools:
        if cal.id in members_of(p):
            record_change(session, actor, "calibration", p.id, "status", p.status, "withdrawn")
            p.status, p.withdrawn_by, p.withdrawn_at = "withdrawn", actor, utcnow()
            p.withdrawn_reason = f"its member #{cal.id} was withdrawn"


def withdraw_calibration(session: so.Session, actor: Person, calibration_id: int, reason: str) -> Calibration:
    """Withdraw a calibration (staff), with a reason; the value in force is recomputed; commit."""
    from webapp.services.concurrency import locked_calorimeter

    require_staff(actor, "withdraw a calibration")
    reason = (reason or "").strip()
    if not reason:
        raise Invalid("missing: say why the calibration is withdrawn", field="reason")
    if len(reason) > 300:
        raise Invalid("at most 300 characters", field="reason")
    cal = get_calibration(session, calibration_id)
    calorimeter = locked_calorimeter(session, cal.calorimeter_id)
    cal = get_calibration(session, calibration_id)
    if cal.pool is not None:
        raise Invalid(
            "a pooled value is not withdrawn itself: withdraw the calibration that is wrong", field="calibration_id"
        )
    if cal.status == "withdrawn":
        raise Conflict(f"calibration {cal.id} is withdrawn already", field="status")
    _withdraw(session, actor, cal, reason)
    refresh_in_force(session, calorimeter, actor, confirm=True)
    session.commit()
    return cal


def runs_using(session: so.Session, calibration: Calibration) -> list[Run]:
    """Return the runs whose C_cal came from this calibration or from a pool that held it."""
    ids = {calibration.id}
    if calibration.pool is None:
        pools = session.scalars(
            sa.select(Calibration).where(
                Calibration.calorimeter_id == calibration.calorimeter_id, Calibration.pool.is_not(None)
            )
        ).all()
        ids |= {p.id for p in pools if calibration.id in members_of(p)}
    return list(session.scalars(sa.select(Run).where(Run.calibration_id.in_(ids)).order_by(Run.id)))


@dataclasses.dataclass
class Reanalyzed:
    """What one "re-analyze the runs that used it" action did."""

    calibration: Calibration | None  # the value now in force, used for every run re-analyzed
    reanalyzed: list[int] = dataclasses.field(default_factory=list)
    locked: list[int] = dataclasses.field(default_factory=list)
    failed: list[tuple[int, str]] = dataclasses.field(default_factory=list)


def reanalyze_runs_using(session: so.Session, actor: Person, calibration_id: int) -> Reanalyzed:
    """Re-analyze, with the value now in force, every unlocked run that used this calibration; commit once.

    Each run keeps its method and periods (Monte Carlo is not repeated). Locked runs are listed,
    not changed: the lock is checked again under the row lock in the transaction that writes.
    """
    from webapp.services.concurrency import begin_write, lock_row
    from webapp.services.errors import ServiceError

    require_staff(actor, "re-analyze runs after a calibration change")
    cal = get_calibration(session, calibration_id)
    target = current_calibration(session, cal.calorimeter_id)
    if target is None:
        raise Invalid(
            "the calorimeter has no heat capacity in force; record or approve one first", field="calibration_id"
        )
    if target.id == cal.id:
        raise Invalid("this calibration is the value in force; withdraw it first", field="calibration_id")
    plans = []
    out = Reanalyzed(target)
    for run in runs_using(session, cal):
        if run.locked:
            out.locked.append(run.id)
            continue
        try:
            plans.append((run.id, run.calibration_id, _analyze_with(run, target)))
        except ServiceError as exc:
            out.failed.append((run.id, exc.message))
    target_id = target.id
    begin_write(session)
    target = session.get(Calibration, target_id)
    for run_id, used_id, result in plans:
        run = lock_row(session, Run, run_id)
        if run is None or run.locked:
            out.locked.append(run_id)
            continue
        if run.calibration_id != used_id:
            out.failed.append((run_id, "its calibration changed meanwhile; nothing was changed"))
            continue
        _switch(session, actor, run, target, result)
        out.reanalyzed.append(run_id)
    session.commit()
    out.calibration = target
    return out


def _analyze_with(run: Run, target: Calibration) -> Result:
    from webapp.services.analysis import (
        AnalysisOptions,
        decode_readings,
        parse_inputs,
        result_from_analysis,
        run_analysis,
    )

    current = run.current_result
    given = bool(current and current.periods_given)
    options = AnalysisOptions(
        method=current.method if current else None,
        fore=(current.fore_start_s, current.fore_end_s) if given else None,
        after=(current.after_start_s, current.after_end_s) if given else None,
    )
    text = decode_readings(run.readings_raw, run.readings_name)
    spec, readings = parse_inputs(run.run_toml, run.run_file_name, text, run.readings_name, target)
    analysis = run_analysis(spec, readings, options)
    return result_from_analysis(analysis, input_name=run.run_file_name, periods_given=given)


def _switch(session: so.Session, actor: Person, run: Run, target: Calibration, result: Result) -> None:
    from webapp.services.result_store import store_result

    record_change(session, actor, "run", run.id, "calibration", describe(run.calibration), describe(target))
    run.calibration = target
    for row in run.inputs:
        if row.field == "calorimeter.heat_capacity" and row.origin.startswith("calibration #"):
            row.value, row.std_uncertainty = target.heat_capacity_j_k, target.heat_capacity_j_k_std
            row.text = f"{target.heat_capacity_j_k!r} ± {target.heat_capacity_j_k_std!r} J/K"[:300]
            row.origin = f"calibration #{target.id}"
    store_result(session, actor, run, result)
