"""A live run's run file: checked when the run starts, completed for the advisor and for the stored run.

A recorder may send its run file without a ``readings`` key (the readings come through the API);
the text given to calc then gets one (``readings = "live-<id>.csv"``) in front. A run whose file
gives no heat capacity takes its calorimeter's value in force, exactly as an upload does
(:func:`webapp.services.analysis.supply_heat_capacity`).
"""

from __future__ import annotations

import tomllib
from pathlib import PurePosixPath
from typing import Any

import sqlalchemy.orm as so

from calc.errors import InputError
from calc.io.runfile import RunSpec, parse_run
from webapp.models import Calibration
from webapp.services.analysis import invalid, needs_supplied_heat_capacity, supply_heat_capacity
from webapp.services.errors import Invalid

#: the name a live run's file is stored under (the recorder sends text, not a file)
RUN_FILE_NAME = "live-{id}.toml"
READINGS_NAME = "live-{id}.csv"


def toml_data(text: Any) -> dict[str, Any]:
    """Return the run file's TOML as a dict; not text, empty or not TOML is Invalid (field run_file)."""
    if not isinstance(text, str) or not text.strip():
        raise Invalid("expected the run file (TOML text) in the field run_file", field="run_file")
    try:
        return tomllib.loads(text.lstrip("\ufeff"))
    except (ValueError, RecursionError):
        try:
            parse_run(text.lstrip("\ufeff"), source="run_file")  # calc's message names the line
        except InputError as exc:
            raise invalid(exc, "run_file") from None
        raise Invalid("not valid TOML", field="run_file") from None


def readings_name(text: str, live_id: int) -> str:
    """Return the name of the readings file the run file names (its base name), else ``live-<id>.csv``."""
    value = toml_data(text).get("readings")
    if isinstance(value, str) and value.strip():
        name = PurePosixPath(value.strip().replace("\\", "/")).name
        if name:
            return name[:255]
    return READINGS_NAME.format(id=live_id)


def with_readings_key(text: str, name: str) -> str:
    """Return ``text`` with a top-level ``readings`` key (added in front when it has none)."""
    text = text.lstrip("\ufeff")
    if "readings" in toml_data(text):
        return text
    return f'readings = "{name}"\n' + text


def analysis_text(text: str, live_id: int, calibration: Calibration | None) -> str:
    """Return the run file as calc reads it: a readings key, and C_cal from ``calibration`` when needed."""
    full = with_readings_key(text, readings_name(text, live_id))
    if calibration is not None and needs_supplied_heat_capacity(full):
        full = supply_heat_capacity(full, calibration, RUN_FILE_NAME.format(id=live_id))
    return full


def calibration_for(session: so.Session, text: str, calorimeter_id: int | None) -> Calibration | None:
    """Return the calibration that supplies C_cal to a run file that gives none (None: not needed).

    :raise Invalid: when the file needs one and its calorimeter has none
    """
    if not needs_supplied_heat_capacity(text):
        return None
    from webapp.services.calorimeters import current_calibration

    calibration = current_calibration(session, calorimeter_id) if calorimeter_id is not None else None
    if calibration is None:
        raise Invalid(
            "the run file gives no [calorimeter] heat_capacity and its calorimeter has no heat "
            "capacity in force; give it in the run file or calibrate first",
            field="calorimeter.heat_capacity",
        )
    return calibration


def checked_run_file(session: so.Session, text: str, calorimeter_id: int | None) -> RunSpec:
    """Return the run file parsed by calc (with C_cal supplied when needed); its errors are Invalid."""
    calibration = calibration_for(session, text, calorimeter_id)
    try:
        return parse_run(analysis_text(text, 0, calibration), source="run_file")
    except InputError as exc:
        raise invalid(exc, "run_file") from None
