"""Writes that hold under concurrency: an early write transaction, a row lock, versions, the lock's hash.

- :func:`begin_write` starts the write transaction *before* anything is read that the write
  depends on: ``BEGIN IMMEDIATE`` on SQLite (the database's one writer lock is taken now, not at
  the first INSERT), a plain transaction on PostgreSQL followed by ``SELECT … FOR UPDATE`` of the
  row (:func:`locked_run`, :func:`locked_calorimeter`). The row is then read afresh, so the lock
  and version checks see what is stored, not the session's stale copy.
- Runs and calorimeters carry a ``version`` that SQLAlchemy checks and raises in every ``UPDATE``
  (``version_id_col``); a write naming an older version is refused with :class:`Stale` (409).
- :func:`content_hash` is the SHA-256 of what a lock signs (the run's files and details and the
  current result's numbers); ``cupcal db check`` recomputes it for every locked run.
"""

from __future__ import annotations

import hashlib
import json
from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from webapp.jsonfields import attrs
from webapp.models import Calorimeter, Result, Run
from webapp.services.errors import NotFound, Stale

#: the run details a lock signs, besides the files and the result
SIGNED_FIELDS = (
    "kind",
    "title",
    "operator",
    "bench",
    "performed_on",
    "notes",
    "group_id",
    "calorimeter_id",
    "calibration_id",
)
#: the result numbers a lock signs
SIGNED_RESULT = (
    "id",
    "method",
    "main",
    "fore_start_s",
    "fore_end_s",
    "after_start_s",
    "after_end_s",
    "corrected_delta_t_k",
    "corrected_delta_t_k_std",
    "heat_j",
    "heat_j_std",
    "molar_enthalpy_kj_mol",
    "molar_enthalpy_kj_mol_std",
    "calorimeter_heat_capacity_j_k",
    "calorimeter_heat_capacity_j_k_std",
    "expanded_uncertainty",
    "coverage_factor",
)


def begin_write(session: so.Session) -> None:
    """Start this session's write transaction now (ending any read-only one first).

    On SQLite ``BEGIN IMMEDIATE`` takes the write lock at once (another writer waits up to the
    busy timeout); on PostgreSQL the caller then locks its rows with ``FOR UPDATE``. Objects
    loaded before are expired and read again inside the new transaction.
    """
    if session.in_transaction():
        if session.new or session.dirty or session.deleted:  # pragma: no cover - a service bug
            raise RuntimeError("begin_write with unsaved changes in the session")
        session.rollback()
    conn = session.connection()
    if conn.dialect.name == "sqlite":
        dbapi = conn.connection.dbapi_connection
        if dbapi is not None and not dbapi.in_transaction:
            conn.exec_driver_sql("BEGIN IMMEDIATE")


def lock_row(session: so.Session, model: Any, row_id: int) -> Any:
    """Return the row read afresh, locked FOR UPDATE on PostgreSQL (inside :func:`begin_write`'s transaction)."""
    return session.scalar(
        sa.select(model).where(model.id == row_id).with_for_update().execution_options(populate_existing=True)
    )


def locked_run(session: so.Session, run_id: int) -> Run:
    """Begin the write transaction and return the run read afresh under a row lock."""
    begin_write(session)
    run = lock_row(session, Run, run_id)
    if run is None:
        raise NotFound(f"no run with id {run_id}")
    return run


def locked_calorimeter(session: so.Session, calorimeter_id: int) -> Calorimeter:
    """Begin the write transaction and return the calorimeter read afresh under a row lock."""
    begin_write(session)
    cal = lock_row(session, Calorimeter, calorimeter_id)
    if cal is None:
        raise NotFound(f"no calorimeter with id {calorimeter_id}", field="calorimeter_id")
    return cal


def run_state(run: Run) -> dict[str, Any]:
    """Return the stored state of a run that a 409 answer carries."""
    current = run.current_result
    return {
        **attrs(run, "id", "version"),
        "locked": bool(run.locked),
        "current_result_id": current.id if current else None,
        **attrs(run, "title", "operator", "bench", "performed_on", "notes", "group_id"),
    }


def calorimeter_state(cal: Calorimeter) -> dict[str, Any]:
    """Return the stored state of a calorimeter that a 409 answer carries."""
    return attrs(cal, "id", "version", "name", "parts", "location", "calibration_interval_days")


def check_version(entity: str, obj: Run | Calorimeter, expected: int | None) -> None:
    """Raise :class:`Stale` (409, with the current state) when ``expected`` is not the stored version.

    ``None`` means the caller named no version (allowed where the route says so).
    """
    if expected is None or expected == obj.version:
        return
    state = run_state(obj) if isinstance(obj, Run) else calorimeter_state(obj)  # type: ignore[arg-type]
    raise Stale(
        f"{entity} {obj.id} was changed by someone else (you sent version {expected}, it is now "
        f"version {obj.version}); nothing was saved. Reload it, then make your change again",
        current={entity: state},
    )


def bump(obj: Run | Calorimeter) -> None:
    """Make the next flush UPDATE the row, so its version rises (and is checked)."""
    so.attributes.flag_modified(obj, "title" if isinstance(obj, Run) else "name")


def content_hash(run: Run, result: Result | None) -> str:
    """Return the SHA-256 (hex) of what a lock signs: files, details and the result's numbers."""
    doc: dict[str, Any] = {
        "run_toml": run.run_toml,
        "readings_sha256": hashlib.sha256(run.readings_raw or b"").hexdigest(),
        **{k: getattr(run, k) for k in SIGNED_FIELDS},
        "result": None if result is None else {k: _exact(getattr(result, k)) for k in SIGNED_RESULT},
    }
    return hashlib.sha256(json.dumps(doc, sort_keys=True, ensure_ascii=True).encode("ascii")).hexdigest()


def _exact(x: Any) -> Any:
    return repr(float(x)) if isinstance(x, float) else x
