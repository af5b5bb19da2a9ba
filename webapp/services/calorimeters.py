"""Calorimeters and their heat-capacity history (calibrations)."""

from __future__ import annotations

import datetime as dt
from collections.abc import Mapping
from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from calc.checks import DEFAULT_CALORIMETER_TYPE
from calc.io.runfile import CALORIMETER_TYPES
from webapp.models import Calibration, Calorimeter, Person, utcnow
from webapp.services.access import require_coordinator
from webapp.services.audit import record_change
from webapp.services.calibrations import parse_heat_capacity
from webapp.services.errors import Conflict, Invalid, get_or_not_found
from webapp.services.in_force import approved_calibration, current_calibration

#: fields of a calorimeter that can be edited (each change is audited)
EDITABLE_FIELDS = ("name", "parts", "location", "vessel_type")


def get_calorimeter(session: so.Session, calorimeter_id: int) -> Calorimeter:
    """Return the calorimeter with this id.

    :raise NotFound: when there is none
    """
    return get_or_not_found(session, Calorimeter, calorimeter_id, "calorimeter", "calorimeter_id")


def find_calorimeter(session: so.Session, name: str) -> Calorimeter | None:
    """Return the calorimeter with exactly this name, or None."""
    return session.scalar(sa.select(Calorimeter).where(Calorimeter.name == name.strip()))


def calorimeters_query() -> sa.Select[tuple[Calorimeter]]:
    """Return the query of all calorimeters by name."""
    return sa.select(Calorimeter).order_by(Calorimeter.name, Calorimeter.id)


def check_vessel_type(value: str) -> str:
    """Return a calorimeter type of calc's list, or raise :class:`Invalid` naming the field."""
    if value not in CALORIMETER_TYPES:
        raise Invalid(
            f"field 'vessel_type': unknown calorimeter type {value!r}; expected one of: {', '.join(CALORIMETER_TYPES)}",
            field="vessel_type",
        )
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
    measured_on: Any = None,
) -> Calorimeter:
    """Add a calorimeter (coordinators only), with an optional first heat capacity and the date it
    was measured, and commit."""
    from webapp.services.calibrations import parse_measured_date

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
        first = approved_calibration(
            cal, actor, parse_heat_capacity(heat_capacity), parse_measured_date(measured_on), f"entered by {actor.name}"
        )
        first.in_force_at = first.approved_at
        session.add(first)
    session.commit()
    return cal


def update_calorimeter(
    session: so.Session,
    actor: Person,
    calorimeter: Calorimeter,
    changes: Mapping[str, Any],
    expected_version: int | None = None,
    *,
    commit: bool = True,
) -> Calorimeter:
    """Change a calorimeter's name, parts or location (coordinators only), audited, and commit.

    The row is read again under a row lock; an older ``expected_version`` is refused (409).
    """
    from webapp.services.concurrency import check_version, locked_calorimeter

    require_coordinator(actor, "manage calorimeters")
    for key in changes:
        if key not in EDITABLE_FIELDS:
            raise Invalid(f"cannot be changed; editable fields: {', '.join(EDITABLE_FIELDS)}", field=key)
    calorimeter = locked_calorimeter(session, calorimeter.id)
    check_version("calorimeter", calorimeter, expected_version)
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
    if commit:
        session.commit()
    return calorimeter


def enter_heat_capacity(
    session: so.Session,
    actor: Person,
    calorimeter: Calorimeter,
    heat_capacity: str,
    measured_on: Any = None,
    note: str = "",
    *,
    confirm: bool = False,
    restart: bool = False,
) -> Calibration:
    """Record a heat capacity measured elsewhere on a given date (staff), audited, and commit."""
    from webapp.services.calibrations import enter_heat_capacity as enter

    return enter(session, actor, calorimeter, heat_capacity, measured_on, note, confirm=confirm, restart=restart)


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
    """Return the calorimeters whose value in force was measured more than ``max_age_days`` ago (or none).

    Each with when its value in force was measured (None: nothing in force), oldest first; a
    calorimeter's own interval replaces ``max_age_days``.
    """
    now = now or utcnow()
    out = []
    for cal in session.scalars(calorimeters_query()):
        current = current_calibration(session, cal.id)
        days = cal.calibration_interval_days or max_age_days
        if current is None or current.taken_at < now - dt.timedelta(days=days):
            out.append((cal, current.taken_at if current is not None else None))
    return sorted(out, key=lambda cw: (cw[1] is not None, cw[1] or dt.datetime.min, cw[0].name))


def _describe(cal: Calibration | None) -> str | None:
    if cal is None:
        return None
    return f"{cal.heat_capacity_j_k:g} ± {cal.heat_capacity_j_k_std:g} J/K"
