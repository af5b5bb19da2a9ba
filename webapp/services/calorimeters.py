"""Calorimeters and their heat-capacity history (calibrations)."""

from __future__ import annotations

import datetime as dt
from collections.abc import Mapping
from typing import Any

import sqlalchemy as sa
from calc.checks import DEFAULT_CALORIMETER_TYPE
from calc.io.runfile import CALORIMETER_TYPES
import sqlalchemy.orm as so
from calc.errors import InputError
from calc.io.quantities import parse_measured

from webapp.models import Calibration
from webapp.models import Calorimeter
from webapp.models import Person
from webapp.models import Result
from webapp.models import Run
from webapp.models import utcnow
from webapp.services.access import require_coordinator
from webapp.services.audit import record_change
from webapp.services.errors import Conflict
from webapp.services.errors import Invalid
from webapp.services.errors import NotFound

#: fields of a calorimeter that can be edited (each change is audited)
EDITABLE_FIELDS = ("name", "parts", "location", "vessel_type")


def get_calorimeter(session: so.Session, calorimeter_id: int) -> Calorimeter:
    """Return the calorimeter with this id.

    :raise NotFound: when there is none
    """
    cal = session.get(Calorimeter, calorimeter_id)
    if cal is None:
        raise NotFound(f"no calorimeter with id {calorimeter_id}", field="calorimeter_id")
    return cal


def find_calorimeter(session: so.Session, name: str) -> Calorimeter | None:
    """Return the calorimeter with exactly this name, or None."""
    return session.scalar(sa.select(Calorimeter).where(Calorimeter.name == name.strip()))


def calorimeters_query() -> sa.Select[tuple[Calorimeter]]:
    """Return the query of all calorimeters by name."""
    return sa.select(Calorimeter).order_by(Calorimeter.name, Calorimeter.id)


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


def check_vessel_type(value: str) -> str:
    """Return a calorimeter type of calc's list, or raise :class:`Invalid` naming the field."""
    if value not in CALORIMETER_TYPES:
        raise Invalid(f"field 'vessel_type': unknown calorimeter type {value!r}; expected one of: "
                      f"{', '.join(CALORIMETER_TYPES)}", field="vessel_type")
    return value


def create_calorimeter(
    session: so.Session,
    actor: Person,
    *,
    name: str,
    parts: str = "",
    location: str = "",
    heat_capacity: str | None = None,
    vessel_type: str | None = None,
) -> Calorimeter:
    """Add a calorimeter (coordinators only), with an optional first heat capacity, and commit."""
    require_coordinator(actor, "manage calorimeters")
    vessel_type = check_vessel_type(vessel_type or DEFAULT_CALORIMETER_TYPE)
    name = (name or "").strip()
    if not name:
        raise Invalid("must not be empty", field="name")
    if len(name) > 200:
        raise Invalid("at most 200 characters", field="name")
    if find_calorimeter(session, name) is not None:
        raise Conflict(f"a calorimeter named {name!r} exists already", field="name")
    cal = Calorimeter(name=name, parts=parts or "", location=(location or "")[:200], vessel_type=vessel_type)
    session.add(cal)
    if heat_capacity:
        value, u = parse_heat_capacity(heat_capacity)
        session.add(Calibration(calorimeter=cal, heat_capacity_j_k=value, heat_capacity_j_k_std=u,
                                note=f"entered by {actor.name}", created_by=actor))
    session.commit()
    return cal


def update_calorimeter(
    session: so.Session, actor: Person, calorimeter: Calorimeter, changes: Mapping[str, Any]
) -> Calorimeter:
    """Change a calorimeter's name, parts or location (coordinators only), audited, and commit."""
    require_coordinator(actor, "manage calorimeters")
    for key in changes:
        if key not in EDITABLE_FIELDS:
            raise Invalid(f"cannot be changed; editable fields: {', '.join(EDITABLE_FIELDS)}", field=key)
    for key, new in changes.items():
        if not isinstance(new, str):
            raise Invalid("expected text", field=key)
        new = new.strip()
        if key == "vessel_type":
            new = check_vessel_type(new)
        if key == "name":
            if not new:
                raise Invalid("must not be empty", field="name")
            other = find_calorimeter(session, new)
            if other is not None and other.id != calorimeter.id:
                raise Conflict(f"a calorimeter named {new!r} exists already", field="name")
        old = getattr(calorimeter, key)
        if old != new:
            record_change(session, actor, "calorimeter", calorimeter.id, key, old, new)
            setattr(calorimeter, key, new)
    session.commit()
    return calorimeter


def enter_heat_capacity(
    session: so.Session, actor: Person, calorimeter: Calorimeter, heat_capacity: str, note: str = ""
) -> Calibration:
    """Record a heat capacity measured elsewhere (coordinators only), audited, and commit."""
    require_coordinator(actor, "manage calorimeters")
    value, u = parse_heat_capacity(heat_capacity)
    old = current_calibration(session, calorimeter.id)
    cal = Calibration(calorimeter=calorimeter, heat_capacity_j_k=value, heat_capacity_j_k_std=u,
                      note=note.strip() or f"entered by {actor.name}", created_by=actor)
    session.add(cal)
    record_change(session, actor, "calorimeter", calorimeter.id, "heat_capacity",
                  _describe(old), f"{value:g} ± {u:g} J/K")
    session.commit()
    return cal


def add_calibration_from_result(
    session: so.Session, calorimeter: Calorimeter, result: Result, taken_at: dt.datetime, actor: Person | None
) -> Calibration:
    """Add the heat capacity a calibration run's result measured (the caller commits).

    The calibration in force is the latest by ``taken_at`` (the run's time), so the
    re-analysis of an older calibration run does not override a newer one.
    """
    if result.calorimeter_heat_capacity_j_k is None:  # pragma: no cover - calibration kinds always give it
        raise Invalid("this result has no calorimeter heat capacity", field="kind")
    cal = Calibration(
        calorimeter=calorimeter,
        heat_capacity_j_k=result.calorimeter_heat_capacity_j_k,
        heat_capacity_j_k_std=result.calorimeter_heat_capacity_j_k_std or 0.0,
        taken_at=taken_at,
        result=result,
        note=f"{result.run.kind} run #{result.run.id}, {result.method}",
        created_by=actor,
    )
    session.add(cal)
    return cal


def current_calibration(session: so.Session, calorimeter_id: int) -> Calibration | None:
    """Return the calibration in force: the latest by measurement time, then by id."""
    return session.scalar(
        sa.select(Calibration)
        .where(Calibration.calorimeter_id == calorimeter_id)
        .order_by(Calibration.taken_at.desc(), Calibration.id.desc())
        .limit(1)
    )


def calibration_history(calorimeter_id: int) -> sa.Select[tuple[Calibration]]:
    """Return the query of a calorimeter's calibrations, oldest first."""
    return (
        sa.select(Calibration)
        .where(Calibration.calorimeter_id == calorimeter_id)
        .order_by(Calibration.taken_at, Calibration.id)
    )


def calorimeters_due(
    session: so.Session, *, max_age_days: int, now: dt.datetime | None = None
) -> list[tuple[Calorimeter, dt.datetime | None]]:
    """Return the calorimeters whose last calibration is older than ``max_age_days`` (or missing).

    Each with the time of its last calibration (None: never calibrated), oldest first.
    """
    now = now or utcnow()
    last = (
        sa.select(Calibration.calorimeter_id, sa.func.max(Calibration.taken_at).label("last"))
        .group_by(Calibration.calorimeter_id)
        .subquery()
    )
    rows = session.execute(
        sa.select(Calorimeter, last.c.last)
        .outerjoin(last, last.c.calorimeter_id == Calorimeter.id)
        .where(sa.or_(last.c.last.is_(None), last.c.last < now - dt.timedelta(days=max_age_days)))
        .order_by(last.c.last.is_(None).desc(), last.c.last, Calorimeter.name)
    ).all()
    return [(cal, when) for cal, when in rows]


def runs_using(calibration_id: int) -> sa.Select[tuple[Run]]:
    """Return the query of the runs whose C_cal came from this calibration."""
    return sa.select(Run).where(Run.calibration_id == calibration_id).order_by(Run.id)


def _describe(cal: Calibration | None) -> str | None:
    if cal is None:
        return None
    return f"{cal.heat_capacity_j_k:g} ± {cal.heat_capacity_j_k_std:g} J/K"
