"""The JSON export of one run for a lab notebook, and the runs of a selection.

The JSON export carries everything needed to reproduce the run: the run file text and the
readings exactly as stored (UTF-8 text, or base64 when the bytes are not UTF-8), every output
± standard uncertainty with its unit, the budget, warnings, the comparison, the cautions, the
analysis options, the software version and the provenance (who recorded and analyzed it,
when, and which calibration supplied the calorimeter's heat capacity). Access is that of
viewing the run (:func:`webapp.services.runs.get_run`).
"""

from __future__ import annotations

import base64
import datetime as dt
import hashlib
import json
from collections.abc import Iterable
from typing import Any

import sqlalchemy.orm as so

from calc import __version__
from calc.refdata.comparison import verdict, verdict_record
from webapp.jsonfields import attrs
from webapp.models import Person, Result, Run, RunInput
from webapp.quantities import RESULT_OUTPUTS, result_value
from webapp.services.errors import Invalid, NotFound
from webapp.services.runs import get_run

FORMAT = "cupcal-run-export"
FORMAT_VERSION = 1
#: most runs in one selection export
MAX_SELECTION = 200


def iso(value: dt.datetime | None) -> str | None:
    """Return a stored (naive UTC) time as ISO 8601 with ``Z``, or None."""
    return None if value is None else value.isoformat() + "Z"


def input_json(i: RunInput) -> dict[str, Any]:
    """Return one measured input of a run as read from its file (value ± u in the unit written, and its origin)."""
    return {
        **attrs(i, "field", "value"),
        "standard_uncertainty": i.std_uncertainty,
        **attrs(i, "unit", "text", "origin"),
    }


def _person(p: Person | None) -> dict[str, Any] | None:
    return None if p is None else {"name": p.name, "email": p.email}


def outputs_of(result: Result) -> dict[str, dict[str, Any]]:
    """Return every stored output of ``result`` as ``{key: {value, standard_uncertainty, unit}}``."""
    out = {}
    for key in RESULT_OUTPUTS:
        v = result_value(result, key)
        if v is not None:
            out[key] = {"value": v[0], "standard_uncertainty": v[1], "unit": v[2]}
    return out


def mixing_time_json(result: Result) -> dict[str, Any]:
    """Return the mixing time a result used, ± u, and whether it was detected from the log."""
    return {
        "value": result.mixing_time_s,
        "standard_uncertainty": result.mixing_time_s_std,
        "unit": "s",
        "detected": result.mixing_time_detected,
    }


def findings_json(result: Result) -> dict[str, Any]:
    """Return what the analysis found beside the value: budget, warnings, checks, comparison, verdict, cautions."""
    return {
        **attrs(result, "budget", "warnings", "checks", "comparison"),
        "verdict": verdict_record(verdict(result.comparison)),
        "cautions": result.cautions,
    }


def result_document(result: Result) -> dict[str, Any]:
    """Return one result with every output ± u, the budget, warnings, comparison and options."""
    main = result_value(result, result.main)
    return {
        "id": result.id,
        "is_current": result.is_current,
        "main": result.main,
        "value": main[0] if main else None,
        "standard_uncertainty": main[1] if main else None,
        "unit": main[2] if main else "",
        "expanded_uncertainty": result.expanded_uncertainty,
        "coverage_factor": result.coverage_factor,
        "dof_eff": result.dof_eff,
        "outputs": outputs_of(result),
        "options": {
            "method": result.method,
            "periods_given": result.periods_given,
            "fore": [result.fore_start_s, result.fore_end_s],
            "after": [result.after_start_s, result.after_end_s],
        },
        "mixing_time": mixing_time_json(result),
        **findings_json(result),
        **attrs(result, "properties", "monte_carlo", "software_version"),
        "analyzed_at": iso(result.created_at),
        "analyzed_by": _person(result.created_by),
    }


def file_entry(name: str, data: bytes, media_type: str) -> dict[str, Any]:
    """Return a stored file for JSON: its name, SHA-256, and text (UTF-8) or base64."""
    entry: dict[str, Any] = {
        "name": name,
        "media_type": media_type,
        "size": len(data),
        "sha256": hashlib.sha256(data).hexdigest(),
    }
    try:
        entry["text"] = data.decode("utf-8")
    except UnicodeDecodeError:
        entry["base64"] = base64.b64encode(data).decode("ascii")
    return entry


def run_document(run: Run, *, exported_at: dt.datetime | None = None) -> dict[str, Any]:
    """Return the JSON export of ``run`` (see the module docstring); the caller checked access."""
    current = run.current_result
    cal = run.calibration
    return {
        "format": FORMAT,
        "format_version": FORMAT_VERSION,
        "software": {"name": "cupcal", "version": __version__},
        "exported_at": iso(exported_at or dt.datetime.now(dt.UTC).replace(tzinfo=None)),
        "run": {
            "id": run.id,
            "kind": run.kind,
            "title": run.title,
            "operator": run.operator,
            "bench": run.bench,
            "performed_on": run.performed_on,
            "notes": run.notes,
            "points": run.points,
            "group": run.group.name if run.group else None,
            "calorimeter": run.calorimeter.name if run.calorimeter else None,
        },
        "files": {
            "run_file": file_entry(run.run_file_name, run.run_toml.encode("utf-8"), "application/toml"),
            "readings": file_entry(run.readings_name, run.readings_raw, "text/csv"),
        },
        "inputs": [input_json(i) for i in run.inputs],
        "result": result_document(current) if current is not None else None,
        "earlier_results": [result_document(r) for r in run.results if r is not current],
        "provenance": {
            "recorded_by": _person(run.author),
            "recorded_at": iso(run.created_at),
            "calibration": None
            if cal is None
            else {
                "id": cal.id,
                "calorimeter": cal.calorimeter.name,
                "heat_capacity": {
                    "value": cal.heat_capacity_j_k,
                    "standard_uncertainty": cal.heat_capacity_j_k_std,
                    "unit": "J/K",
                },
                "taken_at": iso(cal.taken_at),
                "from_run": cal.result.run_id if cal.result is not None else None,
                "note": cal.note,
            },
            "locked": run.locked,
            "locked_by": _person(run.locked_by),
            "locked_at": iso(run.locked_at),
        },
    }


def export_json(session: so.Session, actor: Person, run_id: int) -> str:
    """Return the JSON export of a run ``actor`` may see."""
    return json.dumps(run_document(get_run(session, actor, run_id)), ensure_ascii=False, indent=2, allow_nan=False)


def selected_runs(session: so.Session, actor: Person, run_ids: Iterable[int]) -> list[Run]:
    """Return the runs of a selection, each one ``actor`` may see, in the order given.

    :raise Invalid: for an empty or too long selection
    :raise NotFound: for a run that does not exist or is not the actor's to see
    """
    ids = list(dict.fromkeys(run_ids))
    if not ids:
        raise Invalid("select at least one run", field="run_ids")
    if len(ids) > MAX_SELECTION:
        raise Invalid(f"at most {MAX_SELECTION} runs per export", field="run_ids")
    try:
        return [get_run(session, actor, i) for i in ids]
    except NotFound as exc:
        raise NotFound(exc.message, field="run_ids") from None
