"""JSON shapes of the API's objects (documented in :mod:`webapp.api.openapi`)."""

from __future__ import annotations

from typing import Any

from flask import url_for

from webapp.exports.document import findings_json, input_json, iso, mixing_time_json, outputs_of
from webapp.jsonfields import attrs
from webapp.models import Calibration, Calorimeter, Course, Group, Person, Result, Run
from webapp.quantities import result_value
from webapp.services.runs import Page


def person_ref(p: Person | None) -> dict[str, Any] | None:
    """Return a short reference to a person."""
    return None if p is None else {"id": p.id, "name": p.name}


def person_json(p: Person) -> dict[str, Any]:
    """Return the signed-in person."""
    return {
        **attrs(p, "id", "name", "email", "role"),
        "group": {"id": p.group.id, "name": p.group.name} if p.group else None,
    }


def group_json(g: Group) -> dict[str, Any]:
    """Return a group."""
    return {"id": g.id, "name": g.name, "course_id": g.course_id}


def course_json(c: Course) -> dict[str, Any]:
    """Return a course."""
    return {"id": c.id, "name": c.name, "term": c.term}


def calibration_json(c: Calibration) -> dict[str, Any]:
    """Return one heat-capacity value of a calorimeter's history."""
    return {
        **attrs(c, "id", "calorimeter_id"),
        "heat_capacity": {"value": c.heat_capacity_j_k, "standard_uncertainty": c.heat_capacity_j_k_std, "unit": "J/K"},
        "taken_at": iso(c.taken_at),
        "result_id": c.result_id,
        "run_id": c.result.run_id if c.result is not None else None,
        "note": c.note,
        "measured_on": c.taken_at.date().isoformat(),
        "status": c.status,
        "approved_by": person_ref(c.approved_by),
        "approved_at": iso(c.approved_at),
        "withdrawn_at": iso(c.withdrawn_at),
        "withdrawn_reason": c.withdrawn_reason or None,
        "in_force_since": iso(c.in_force_at),
        "restart": bool(c.restart),
        "pool": c.pool,
    }


def calorimeter_json(c: Calorimeter, current: Calibration | None) -> dict[str, Any]:
    """Return a calorimeter with the heat capacity in force."""
    return {
        "id": c.id,
        "name": c.name,
        "parts": c.parts,
        "location": c.location,
        "vessel_type": c.vessel_type,
        "created_at": iso(c.created_at),
        "calibration_interval_days": c.calibration_interval_days,  # None: the notebook's default
        "version": c.version,
        "current_calibration": calibration_json(current) if current is not None else None,
    }


def result_summary(r: Result) -> dict[str, Any]:
    """Return the main figures of a result."""
    value, u, unit = result_value(r, r.main) or (None, None, "")
    return {
        "id": r.id,
        "run_id": r.run_id,
        "is_current": r.is_current,
        "method": r.method,
        "main": r.main,
        "value": value,
        "standard_uncertainty": u,
        "expanded_uncertainty": r.expanded_uncertainty,
        "coverage_factor": r.coverage_factor,
        "unit": unit,
        "created_at": iso(r.created_at),
    }


def result_json(r: Result) -> dict[str, Any]:
    """Return a result with every output, the windows, the budget and the provenance."""
    return {
        **result_summary(r),
        "outputs": outputs_of(r),
        "dof_eff": r.dof_eff,
        "periods": {
            "fore": [r.fore_start_s, r.fore_end_s],
            "after": [r.after_start_s, r.after_end_s],
            "mixing_time": mixing_time_json(r),
            "given": r.periods_given,
        },
        **findings_json(r),
        "construction": r.construction,
        **attrs(r, "properties", "monte_carlo", "record", "software_version"),
        "created_by": person_ref(r.created_by),
    }


def run_summary(run: Run, current: Result | None) -> dict[str, Any]:
    """Return a run as listed."""
    return {
        **attrs(run, "id", "kind", "title", "operator"),
        "author": person_ref(run.author),
        "group": {"id": run.group.id, "name": run.group.name} if run.group else None,
        "bench": run.bench,
        "performed_on": run.performed_on,
        "created_at": iso(run.created_at),
        "calorimeter": {"id": run.calorimeter.id, "name": run.calorimeter.name} if run.calorimeter else None,
        "points": run.points,
        "locked": run.locked,
        "version": run.version,
        "current_result": result_summary(current) if current is not None else None,
        "url": url_for("api.get_run", run_id=run.id),
    }


def run_json(run: Run) -> dict[str, Any]:
    """Return a run with its inputs, calibration, lock and every result."""
    return {
        **run_summary(run, run.current_result),
        "notes": run.notes,
        "run_file_name": run.run_file_name,
        "readings_name": run.readings_name,
        "calibration": calibration_json(run.calibration) if run.calibration else None,
        "locked_by": person_ref(run.locked_by),
        "locked_at": iso(run.locked_at),
        "locked_result_id": run.locked_result_id,
        "locked_hash": run.locked_hash,
        "inputs": [input_json(i) for i in run.inputs],
        "results": [result_summary(r) for r in run.results],
        "review": review_summary(run),
    }


def review_summary(run: Run) -> dict[str, Any]:
    """Return what has been decided on a run: withdrawn, excluded, accepted (with reasons), a mark by hand."""
    rv = run.review
    return {
        "withdrawn": bool(rv and rv.withdrawn),
        "withdrawn_reason": rv.withdrawn_reason if rv else "",
        "excluded": bool(rv and rv.excluded),
        "excluded_reason": rv.excluded_reason if rv else "",
        "accepted": bool(rv and rv.accepted),
        "accepted_reason": rv.accepted_reason if rv else "",
        "included_in_statistics": not (rv and (rv.withdrawn or rv.excluded)),
        "mark_points": rv.mark_points if rv else None,
        "mark_reason": rv.mark_reason if rv else "",
    }


def page_json(page: Page[Any], items: list[Any]) -> dict[str, Any]:
    """Return a page of items with its position."""
    return {"items": items, "page": page.page, "per_page": page.per_page, "total": page.total, "pages": page.pages}
