"""Reading back a ``calorimeter.json``: the calorimeter and every calibration exactly as written.

Format version 2 (see ``webapp/README.md``) lists every calibration with its id in the notebook
that wrote it, its status (approved, proposed, withdrawn), who approved or withdrew it and when
(with the reason), whether it restarted the cup's history, when it came into force, and, for a
pooled value, the pool (members and left-out ones by those ids, χ², the limit, the Birge ratio).
They are stored as written, without the calibration authority's rules (that happened in the
notebook that wrote them), so the value in force is the same. Calibrations measured by a run are
stored here too and tied to their result when the run comes back. A calibration already here
(same value, uncertainty, measured and stored times) is kept as it is. Version 1 (calibrations
typed by hand only; runs bring their own) is still read.

People are matched by e-mail (:class:`People`); someone not in this notebook gets an inactive
account that cannot sign in.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import math
import secrets
from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from calc.io.runfile import CALORIMETER_TYPES
from webapp.models import Calibration, Calorimeter, Person
from webapp.services.access import require_coordinator
from webapp.services.calorimeters import find_calorimeter
from webapp.services.errors import Invalid
from webapp.services.people import hash_password

STATUSES = ("approved", "proposed", "withdrawn")


@dataclasses.dataclass
class Known:
    """Calibrations read from the archive's ``calorimeter.json`` files, by the writer's ids."""

    #: (calorimeter name, calibration id there) → calibration id here
    by_source: dict[tuple[str, int], int] = dataclasses.field(default_factory=dict)
    #: (calorimeter name, run id there, result id there) → calibration id here
    by_result: dict[tuple[str, int, int], int] = dataclasses.field(default_factory=dict)
    #: (calorimeter name, run id there) → calibration ids here measured by that run
    of_run: dict[tuple[str, int], set[int]] = dataclasses.field(default_factory=dict)
    #: (calorimeter name, calibration id there) of the calibrations this import added
    added: set[tuple[str, int]] = dataclasses.field(default_factory=set)


def when(text: Any, field: str) -> dt.datetime:
    """Return a time of the archive (ISO 8601, UTC) as a naive UTC datetime."""
    if not isinstance(text, str):
        raise Invalid("expected a date and time (ISO 8601)", field=field)
    try:
        t = dt.datetime.fromisoformat(text.replace("Z", "+00:00"))
    except ValueError:
        raise Invalid(f"expected a date and time (ISO 8601), got {text!r}", field=field) from None
    return t.astimezone(dt.UTC).replace(tzinfo=None) if t.tzinfo else t


def _time(c: dict[str, Any], key: str, where: str, *, required: bool = False) -> dt.datetime | None:

    if c.get(key) is None and not required:
        return None
    return when(c.get(key), f"{where}.{key}")


def _text(c: dict[str, Any], key: str, where: str) -> str:
    value = c.get(key)
    if value is None:
        return ""
    if not isinstance(value, str):
        raise Invalid(f"{where}.{key}: expected text", field="calibrations")
    return value


def _fields(c: Any, where: str, people: Any) -> dict[str, Any]:
    """Return the columns of one calibration entry (format 2), checked; the pool is read later."""
    if not isinstance(c, dict):
        raise Invalid(f"{where}: expected an object", field="calibrations")
    hc = c.get("heat_capacity") if isinstance(c.get("heat_capacity"), dict) else {}
    value, u = hc.get("value"), hc.get("standard_uncertainty")
    if (
        not all(isinstance(x, (int, float)) and not isinstance(x, bool) and math.isfinite(x) for x in (value, u))
        or not value > 0
        or u < 0
    ):
        raise Invalid(f"{where}: expected a positive heat capacity ± u in J/K", field="calibrations")
    status = c.get("status", "approved")
    if status not in STATUSES:
        raise Invalid(f"{where}.status: expected one of {', '.join(STATUSES)}, got {status!r}", field="calibrations")
    if not isinstance(c.get("restart", False), bool):
        raise Invalid(f"{where}.restart: expected true or false", field="calibrations")
    taken = _time(c, "taken_at", where, required=True)
    return {
        "heat_capacity_j_k": float(value),
        "heat_capacity_j_k_std": float(u),
        "taken_at": taken,
        "created_at": _time(c, "created_at", where) or taken,
        "note": _text(c, "note", where),
        "created_by": people.get(c.get("created_by")),
        "status": status,
        "approved_by": people.get(c.get("approved_by")),
        "approved_at": _time(c, "approved_at", where),
        "withdrawn_by": people.get(c.get("withdrawn_by")),
        "withdrawn_at": _time(c, "withdrawn_at", where),
        "withdrawn_reason": _text(c, "withdrawn_reason", where),
        "restart": bool(c.get("restart", False)),
        "in_force_at": _time(c, "in_force_at", where),
    }


def _pool(c: dict[str, Any], name: str, known: Known, where: str) -> dict[str, Any] | None:
    """Return a pool with its members' and left-out ids turned into ids here."""
    pool = c.get("pool")
    if pool is None:
        return None
    if not isinstance(pool, dict) or not isinstance(pool.get("members"), list):
        raise Invalid(f"{where}.pool: expected an object with 'members'", field="calibrations")
    out = dict(pool)
    for key in ("members", "excluded"):
        ids = pool.get(key) or []
        if not isinstance(ids, list) or not all(isinstance(i, int) and (name, i) in known.by_source for i in ids):
            raise Invalid(f"{where}.pool.{key}: expected ids of calibrations listed in this file", field="calibrations")
        out[key] = [known.by_source[(name, i)] for i in ids]
    return out


def _same(session: so.Session, cal: Calorimeter, f: dict[str, Any]) -> Calibration | None:
    return session.scalar(
        sa.select(Calibration)
        .where(
            Calibration.calorimeter_id == cal.id,
            Calibration.heat_capacity_j_k == f["heat_capacity_j_k"],
            Calibration.heat_capacity_j_k_std == f["heat_capacity_j_k_std"],
            Calibration.taken_at == f["taken_at"],
            Calibration.created_at == f["created_at"],
        )
        .order_by(Calibration.id)
        .limit(1)
    )


def restore_calibrations(
    session: so.Session, actor: Person, cal: Calorimeter, entries: list[Any], people: Any, known: Known, where: str
) -> int:
    """Store the calibrations of a format-2 file this notebook lacks (pools after their members); return how many."""
    added = 0
    pools = []
    for i, c in enumerate(entries):
        at = f"{where}: calibrations[{i}]"
        if isinstance(c, dict) and c.get("pool") is not None:
            pools.append((at, c))
            continue
        added += _one(session, actor, cal, c, None, people, known, at)
    for at, c in pools:
        added += _one(session, actor, cal, c, _pool(c, cal.name, known, at), people, known, at)
    return added


def _one(
    session: so.Session,
    actor: Person,
    cal: Calorimeter,
    c: Any,
    pool: dict[str, Any] | None,
    people: Any,
    known: Known,
    at: str,
) -> int:
    f = _fields(c, at, people)
    row, added = _same(session, cal, f), 0
    if row is None:
        require_coordinator(actor, "add calibrations")
        row = Calibration(calorimeter=cal, **f)
        if pool is not None:  # left unset otherwise: a JSON null is not SQL NULL, and "not a pool" is NULL
            row.pool = pool
        session.add(row)
        session.flush()
        added = 1
    source = c.get("id")
    if isinstance(source, int):
        known.by_source[(cal.name, source)] = row.id
        if added:
            known.added.add((cal.name, source))
    run, result = c.get("from_run"), c.get("from_result")
    if isinstance(run, int) and isinstance(result, int):
        known.by_result[(cal.name, run, result)] = row.id
        known.of_run.setdefault((cal.name, run), set()).add(row.id)
    return added


def new_calorimeter(session: so.Session, actor: Person, doc: dict[str, Any], where: str) -> Calorimeter:
    """Return the calorimeter of the file, adding it (a coordinator) when this notebook lacks it."""

    cal = find_calorimeter(session, doc["name"])
    if cal is not None:
        return cal
    require_coordinator(actor, "add calorimeters")
    vessel = doc.get("vessel_type", "foam-cups")
    if vessel not in CALORIMETER_TYPES:
        raise Invalid(
            f"{where}: vessel_type: expected one of {', '.join(CALORIMETER_TYPES)}, got {vessel!r}", field="vessel_type"
        )
    interval = doc.get("calibration_interval_days")
    if interval is not None and (not isinstance(interval, int) or isinstance(interval, bool) or interval < 1):
        raise Invalid(f"{where}: calibration_interval_days: expected a whole number of days", field="calorimeter")
    cal = Calorimeter(
        name=doc["name"].strip()[:200],
        parts=str(doc.get("parts") or ""),
        location=str(doc.get("location") or "")[:200],
        calibration_interval_days=interval,
        vessel_type=vessel,
    )
    if doc.get("created_at"):
        cal.created_at = when(doc["created_at"], "created_at")
    session.add(cal)
    session.flush()
    return cal


def restore_trail(
    session: so.Session, cal: Calorimeter, entries: Any, people: Any, known: Known, *, new_calorimeter: bool, where: str
) -> None:
    """Store the audit entries of the calorimeter (when it is new here) and of the calibrations just added."""
    from webapp.models import AuditEntry

    if not isinstance(entries, list):
        raise Invalid(f"{where}: audit_trail: expected a list", field="audit_trail")
    for i, e in enumerate(entries):
        if not isinstance(e, dict) or not isinstance(e.get("field"), str) or not isinstance(e.get("entity_id"), int):
            raise Invalid(
                f"{where}: audit_trail[{i}]: expected an object with 'entity_id' and 'field'", field="audit_trail"
            )
        if e.get("entity") == "calorimeter" and new_calorimeter:
            entity_id = cal.id
        elif e.get("entity") == "calibration" and (cal.name, e["entity_id"]) in known.added:
            entity_id = known.by_source[(cal.name, e["entity_id"])]
        else:
            continue
        session.add(
            AuditEntry(
                at=when(e.get("at"), f"audit_trail[{i}].at"),
                person=people.get(e.get("person")),
                entity=e["entity"],
                entity_id=entity_id,
                field=e["field"][:80],
                old=None if e.get("old") is None else str(e["old"]),
                new=None if e.get("new") is None else str(e["new"]),
            )
        )


class People:
    """People of the notebook by e-mail; someone unknown gets an inactive account (reported)."""

    def __init__(self, session: so.Session, password_method: str) -> None:
        self.session = session
        self.method = password_method
        self.known: dict[str, Person] = {}
        self.created: list[str] = []

    def get(self, who: Any) -> Person | None:
        """Return the person of ``{"name", "email"}`` (or an e-mail), creating an inactive one when new."""
        email = who.get("email") if isinstance(who, dict) else who
        if not isinstance(email, str) or "@" not in email or len(email) > 254:
            return None
        key = email.strip().lower()
        if key not in self.known:
            p = self.session.scalar(sa.select(Person).where(sa.func.lower(Person.email) == key))
            if p is None:
                name = who.get("name") if isinstance(who, dict) and isinstance(who.get("name"), str) else email
                p = Person(
                    email=email.strip(),
                    name=name[:120],
                    role="student",
                    active=False,
                    password_hash=hash_password(secrets.token_hex(24), self.method),
                )
                self.session.add(p)
                self.created.append(email.strip())
            self.known[key] = p
        return self.known[key]


def restore_calorimeter(
    session: so.Session, actor: Person, doc: Any, people: People, where: str, known: Known | None = None
) -> str:
    """Add the calorimeter of ``calorimeter.json`` (when new) and the calibrations it lacks; commit.

    Format 2 brings every calibration as written (:mod:`webapp.services.eln_calibrations`), those
    measured by runs too (``known`` learns them, for the runs); in format 1, calibrations measured
    by a run come back with that run. Return what was done.
    """
    if not isinstance(doc, dict) or not isinstance(doc.get("name"), str) or not doc["name"].strip():
        raise Invalid(f"{where}: expected a calorimeter with a 'name'", field="calorimeter")
    existed = find_calorimeter(session, doc["name"]) is not None
    cal = new_calorimeter(session, actor, doc, where)
    entries = doc.get("calibrations") or []
    if not isinstance(entries, list):
        raise Invalid(f"{where}: calibrations: expected a list", field="calibrations")
    if doc.get("format_version") == 1:
        added = _restore_v1(session, actor, cal, entries, people, where)
    else:
        known = known or Known()
        added = restore_calibrations(session, actor, cal, entries, people, known, where)
        restore_trail(
            session, cal, doc.get("audit_trail") or [], people, known, new_calorimeter=not existed, where=where
        )
    session.commit()
    done = [] if existed else ["added"]
    done.append(f"{added} calibration(s) added" if added else "no calibration to add")
    return f"calorimeter {cal.name!r}: " + ", ".join(done)


def _restore_v1(
    session: so.Session, actor: Person, cal: Calorimeter, entries: list[Any], people: People, where: str
) -> int:
    added = 0
    for i, c in enumerate(entries):
        if not isinstance(c, dict) or c.get("from_run") is not None:
            continue
        hc = c.get("heat_capacity") or {}
        value, u = hc.get("value"), hc.get("standard_uncertainty")
        if not all(isinstance(x, (int, float)) and math.isfinite(x) for x in (value, u)) or not value > 0:
            raise Invalid(f"{where}: calibration {i + 1}: expected a positive heat capacity ± u", field="calibrations")
        taken = when(c.get("taken_at"), f"calibrations[{i}].taken_at")
        if find_calibration(session, cal, value, u, taken) is None:
            require_coordinator(actor, "add calibrations")
            session.add(
                Calibration(
                    calorimeter=cal,
                    heat_capacity_j_k=float(value),
                    heat_capacity_j_k_std=float(u),
                    taken_at=taken,
                    note=str(c.get("note") or ""),
                    created_by=people.get(c.get("created_by")),
                    created_at=when(c.get("created_at") or c["taken_at"], "created_at"),
                )
            )
            added += 1
    return added


def find_calibration(
    session: so.Session, cal: Calorimeter, value: float, u: float, taken: dt.datetime | None
) -> Calibration | None:
    """Return the calorimeter's calibration of this value and uncertainty (and time, when given)."""
    for c in session.scalars(
        sa.select(Calibration)
        .where(Calibration.calorimeter_id == cal.id)
        .order_by(Calibration.taken_at.desc(), Calibration.id.desc())
    ):
        if c.heat_capacity_j_k == value and c.heat_capacity_j_k_std == u and (taken is None or c.taken_at == taken):
            return c
    return None
