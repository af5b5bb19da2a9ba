"""Reading an upload: its files checked and analyzed with calc, its group and calorimeter, its new run row.

Nothing here writes: :mod:`webapp.services.runs` stores what :func:`analyze_upload` returns
(and the page's preview shows it).
"""

from __future__ import annotations

import dataclasses
from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from calc.analysis import Analysis
from calc.io.readings import Readings
from calc.io.runfile import RunSpec
from webapp.models import Calibration, Calorimeter, Group, Person, Result, Run, utcnow
from webapp.services.analysis import (
    AnalysisOptions,
    calorimeter_name_in,
    decode_readings,
    encode_series,
    needs_supplied_heat_capacity,
    parse_inputs,
    result_from_analysis,
    run_analysis,
)
from webapp.services.calorimeters import find_calorimeter
from webapp.services.checks import history_of
from webapp.services.errors import Forbidden, Invalid
from webapp.services.in_force import current_calibration


@dataclasses.dataclass(frozen=True)
class RunUpload:
    """A run as uploaded: the run file and the readings exactly as sent, and where it belongs."""

    run_toml: str
    run_file_name: str
    readings: bytes
    readings_name: str
    calorimeter_id: int | None = None
    group_id: int | None = None
    options: AnalysisOptions = AnalysisOptions()
    #: the one-time token of the page form (unique on the run: a second save with it is refused)
    submit_token: str | None = None


@dataclasses.dataclass
class AnalyzedUpload:
    """An upload read, checked and analyzed, before anything is stored."""

    options: AnalysisOptions
    run_name: str
    readings_name: str
    calorimeter: Calorimeter | None
    calibration: Calibration | None  # the one that supplied C_cal, when the run file gave none
    spec: RunSpec
    readings: Readings
    analysis: Analysis

    def result(self) -> Result:
        """Return the (transient) result row of the analysis."""
        return result_from_analysis(self.analysis, input_name=self.run_name, periods_given=periods_given(self.options))


def analyze_upload(session: so.Session, upload: RunUpload) -> AnalyzedUpload:
    """Read, check and analyze an upload without storing anything (used to record and to preview).

    :raise Invalid: for any problem with the files or the options (calc's message)
    """
    options = upload.options.checked()
    run_name = upload_file_name(upload.run_file_name, "run_file")
    readings_name = upload_file_name(upload.readings_name, "readings")
    readings_text = decode_readings(upload.readings, readings_name)
    calorimeter = calorimeter_for_upload(session, upload)
    calibration: Calibration | None = None
    if calorimeter is not None and needs_supplied_heat_capacity(upload.run_toml):
        calibration = current_calibration(session, calorimeter.id)
        if calibration is None:
            raise Invalid(
                f"{run_name}, field 'calorimeter.heat_capacity': missing, and calorimeter "
                f"{calorimeter.name!r} has no heat capacity yet; give it in the run file or calibrate first",
                field="calorimeter.heat_capacity",
            )
    spec, readings = parse_inputs(upload.run_toml, run_name, readings_text, readings_name, calibration)
    analysis = run_analysis(spec, readings, options, **check_context(calorimeter))
    return AnalyzedUpload(options, run_name, readings_name, calorimeter, calibration, spec, readings, analysis)


def check_context(calorimeter: Calorimeter | None, run: Run | None = None) -> dict[str, Any]:
    """Return what calc's plausibility checks need from the notebook: the cup's type and history."""
    if calorimeter is None:
        return {}
    own = [r.id for r in run.results if r.id is not None] if run is not None else []
    return {"calorimeter_type": calorimeter.vessel_type, "history": history_of(calorimeter, leave_out_results=own)}


def periods_given(options: AnalysisOptions) -> bool:
    """Return whether the options give the fore or after period (else calc finds them)."""
    return options.fore is not None or options.after is not None


def upload_file_name(name: str, field: str) -> str:
    """Return the base name of an uploaded file (no folders), or raise Invalid naming ``field``."""
    name = (name or "").strip().replace("\\", "/").rsplit("/", 1)[-1]
    if not name:
        raise Invalid("missing file name", field=field)
    return name[:255]


def calorimeter_for_upload(session: so.Session, upload: RunUpload) -> Calorimeter | None:
    """Return the calorimeter an upload names (by id, else by its run file's name), if any."""
    if upload.calorimeter_id is not None:
        cal = session.get(Calorimeter, upload.calorimeter_id)
        if cal is None:
            raise Invalid(f"no calorimeter with id {upload.calorimeter_id}", field="calorimeter_id")
        return cal
    name = calorimeter_name_in(upload.run_toml)
    return find_calorimeter(session, name) if name else None


def group_for(
    session: so.Session, actor: Person, group_id: Any, name: str | None, *, explicit: bool = False
) -> Group | None:
    """Return the group a run (uploaded or live) goes to: a student's own; else ``group_id``, else by ``name``.

    ``explicit``: only ``group_id`` counts (a move of a run); raises Forbidden or Invalid naming ``group_id``.
    """
    if group_id is not None and (isinstance(group_id, bool) or not isinstance(group_id, int)):
        raise Invalid("expected a group id (a whole number)", field="group_id")
    if actor.role == "student":
        if group_id is not None and group_id != actor.group_id:
            raise Forbidden("a student records and moves runs only within their own group", field="group_id")
        return actor.group
    if group_id is not None:
        group = session.get(Group, group_id)
        if group is None:
            raise Invalid(f"no group with id {group_id}", field="group_id")
        return group
    if explicit or not name:
        return None
    return session.scalar(sa.select(Group).where(Group.name == name.strip()))


def new_run(
    spec: RunSpec,
    readings: Readings,
    upload: RunUpload,
    run_name: str,
    readings_name: str,
    actor: Person,
    group: Group | None,
    calorimeter: Calorimeter | None,
    calibration: Calibration | None,
) -> Run:
    """Return the new (transient) run row of an analyzed upload."""
    info = spec.sections.get("info", {})
    return Run(
        kind=spec.kind,
        title=(info.get("title") or run_name)[:300],
        run_file_name=run_name,
        run_toml=upload.run_toml,
        readings_name=readings_name,
        readings_raw=upload.readings,
        series_time_s=encode_series(readings.time_s),
        series_temperature_k=encode_series(readings.temperature_K),
        points=len(readings),
        author=actor,
        operator=(info.get("operator") or actor.name)[:200],
        group=group,
        bench=(info.get("bench") or "")[:120],
        performed_on=(info.get("date") or "")[:40],
        notes=info.get("notes") or "",
        sample=(info.get("sample") or "").strip()[:200],
        created_at=utcnow(),
        calorimeter=calorimeter,
        calibration=calibration,
        submit_token=upload.submit_token,
    )
