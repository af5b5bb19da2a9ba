"""The heat capacity in force: the pool of a cup's recent approved measurements.

- The value in force is the pool (:mod:`calc.statistics.calibration_pool`) of the cup's recent approved
  measurements: the newest :data:`POOL_SIZE` measured within :data:`POOL_DAYS` of the newest one,
  and none before the latest *restart* (a confirmed change of the cup). A pool of one is that
  calibration itself; a larger one is stored as its own row (``pool`` holds members and test), so
  a run records exactly which value it used.
- A value in force that would move by more than ``k·√(u_old² + u_new²)`` (:data:`CONFIRM_K`) needs
  an explicit confirmation (:class:`NeedsConfirmation`, raised before anything is written).

Recording, approving and withdrawing the measurements is :mod:`webapp.services.calibrations`.
"""

from __future__ import annotations

import datetime as dt
from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from calc.statistics.calibration_pool import Pooled, moves_too_far, pool
from webapp.models import Calibration, Calorimeter, Person, utcnow
from webapp.services.audit import record_change
from webapp.services.errors import Conflict

#: at most this many recent calibrations are pooled
POOL_SIZE = 5
#: … measured within this many days of the newest
POOL_DAYS = 365
#: a value in force moving by more than k·√(u_old² + u_new²) needs a confirmation
CONFIRM_K = 2.0


class NeedsConfirmation(Conflict):
    """The value in force would move too far: the caller must confirm (nothing was saved)."""

    def __init__(self, message: str) -> None:
        super().__init__(message, field="confirm")


def current_calibration(session: so.Session, calorimeter_id: int) -> Calibration | None:
    """Return the value in force: the approved row that became it last (None: not calibrated)."""
    return session.scalar(
        sa.select(Calibration)
        .where(
            Calibration.calorimeter_id == calorimeter_id,
            Calibration.status == "approved",
            Calibration.in_force_at.is_not(None),
        )
        .order_by(Calibration.in_force_at.desc(), Calibration.id.desc())
        .limit(1)
    )


def members_of(cal: Calibration) -> list[int]:
    """Return the measurement ids behind a value (itself, or a pool's members)."""
    return [int(i) for i in cal.pool["members"]] if cal.pool else [cal.id]


def pool_candidates(session: so.Session, calorimeter_id: int) -> list[Calibration]:
    """Return the approved measurements that may be pooled now, newest first."""
    rows = list(
        session.scalars(
            sa.select(Calibration)
            .where(
                Calibration.calorimeter_id == calorimeter_id,
                Calibration.status == "approved",
                Calibration.pool.is_(None),
                Calibration.heat_capacity_j_k_std > 0,
            )
            .order_by(Calibration.taken_at.desc(), Calibration.id.desc())
        )
    )
    out: list[Calibration] = []
    for c in rows:
        if len(out) >= POOL_SIZE or (out and c.taken_at < out[0].taken_at - dt.timedelta(days=POOL_DAYS)):
            break
        out.append(c)
        if c.restart:
            break
    return out


def describe(cal: Calibration | None) -> str | None:
    """Return a value as audit text: ``18.6 ± 0.4 J/K (#12)`` or ``… (pool of #3, #5)``."""
    if cal is None:
        return None
    what = f"pool of {', '.join(f'#{i}' for i in members_of(cal))}" if cal.pool else f"#{cal.id}"
    return f"{cal.heat_capacity_j_k:.6g} ± {cal.heat_capacity_j_k_std:.2g} J/K ({what})"


def refresh_in_force(
    session: so.Session,
    calorimeter: Calorimeter,
    actor: Person | None,
    *,
    confirm: bool = False,
    new: Calibration | None = None,
) -> Calibration | None:
    """Recompute the value in force from the approved measurements (the caller commits).

    :param new: the calibration just recorded or approved: it too needs a confirmation when it lies
        more than k·√(u_old² + u_new²) from the value in force (it would be left out of the pool, or
        move it)
    :raise NeedsConfirmation: before anything is written, when the value would move too far
        and ``confirm`` is not set
    """
    session.execute(sa.select(Calorimeter.id).where(Calorimeter.id == calorimeter.id).with_for_update())
    session.flush()
    current = current_calibration(session, calorimeter.id)
    candidates = pool_candidates(session, calorimeter.id)
    if not candidates:
        return None
    p = pool([(c.id, c.heat_capacity_j_k, c.heat_capacity_j_k_std) for c in candidates])
    if not confirm:
        _check_new(calorimeter, current, new)
    if current is not None and sorted(members_of(current)) == sorted(p.members):
        if current.pool is not None and current.pool != p.as_dict():
            current.pool = p.as_dict()  # same members and value: the test now also weighed a newer one
        return current
    if not confirm:
        _check_move(calorimeter, current, p)
    row = _in_force_row(session, calorimeter, actor, candidates, p)
    record_change(session, actor, "calorimeter", calorimeter.id, "heat_capacity", describe(current), describe(row))
    return row


def _check_new(calorimeter: Calorimeter, current: Calibration | None, new: Calibration | None) -> None:
    """Refuse a new calibration lying too far from the value in force (unconfirmed)."""
    if (
        new is not None
        and current is not None
        and moves_too_far(
            (current.heat_capacity_j_k, current.heat_capacity_j_k_std),
            (new.heat_capacity_j_k, new.heat_capacity_j_k_std),
            CONFIRM_K,
        )
    ):
        raise NeedsConfirmation(
            f"calibration {new.heat_capacity_j_k:.4g} ± {new.heat_capacity_j_k_std:.2g} J/K of {calorimeter.name!r} "
            f"lies more than {CONFIRM_K:g} combined standard uncertainties from the value in force, "
            f"{current.heat_capacity_j_k:.4g} ± {current.heat_capacity_j_k_std:.2g} J/K; nothing was saved. Check "
            "the value (a typed voltage, a mass), then confirm it (and say whether the cup itself changed, "
            "to start its history afresh)"
        )


def _check_move(calorimeter: Calorimeter, current: Calibration | None, p: Pooled) -> None:
    """Refuse a new pool moving the value in force too far (unconfirmed)."""
    if current is not None and moves_too_far(
        (current.heat_capacity_j_k, current.heat_capacity_j_k_std), (p.value, p.u), CONFIRM_K
    ):
        raise NeedsConfirmation(
            f"the heat capacity in force of {calorimeter.name!r} would move from {current.heat_capacity_j_k:.4g} ± "
            f"{current.heat_capacity_j_k_std:.2g} J/K to {p.value:.4g} ± {p.u:.2g} J/K, more than {CONFIRM_K:g} "
            "combined standard uncertainties; nothing was saved. Check the value, then confirm the change "
            "(and say whether the cup itself changed, to start its history afresh)"
        )


def approved_calibration(
    calorimeter: Calorimeter,
    actor: Person | None,
    heat_capacity: tuple[float, float],
    taken_at: dt.datetime,
    note: str,
    **more: Any,
) -> Calibration:
    """Return a new calibration of ``calorimeter`` (value, standard uncertainty in J/K), recorded and approved
    by ``actor`` now; ``more`` sets other columns. The caller adds it to the session."""
    value, u = heat_capacity
    return Calibration(
        calorimeter=calorimeter,
        heat_capacity_j_k=value,
        heat_capacity_j_k_std=u,
        taken_at=taken_at,
        note=note,
        created_by=actor,
        status="approved",
        approved_by=actor,
        approved_at=utcnow(),
        **more,
    )


def _in_force_row(
    session: so.Session, calorimeter: Calorimeter, actor: Person | None, candidates: list[Calibration], p: Pooled
) -> Calibration:
    """Make the pool the value in force: its one member, or a new pooled row."""
    now = utcnow()
    if len(p.members) == 1:
        row = session.get(Calibration, p.members[0])
        assert row is not None
        row.in_force_at = now
        return row
    newest = max((c for c in candidates if c.id in p.members), key=lambda c: (c.taken_at, c.id))
    note = f"weighted mean of {len(p.members)} calibrations"
    row = approved_calibration(calorimeter, actor, (p.value, p.u), newest.taken_at, note, pool=p.as_dict())
    row.in_force_at = row.approved_at
    session.add(row)
    session.flush()
    return row
