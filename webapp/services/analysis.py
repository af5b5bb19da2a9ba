"""The bridge to calc: parse an upload, supply C_cal, analyze, and map an Analysis to rows.

Nothing here touches the session; :mod:`webapp.services.runs` owns the transactions.
calc's :class:`~calc.errors.InputError` and :class:`~calc.errors.AnalysisError` become
:class:`~webapp.services.errors.Invalid` with calc's own message (it names the file,
line or field).
"""

from __future__ import annotations

import dataclasses
import math
import re
import secrets
import tomllib
from typing import Any

import numpy as np

from calc import limits
from calc.analysis import Analysis, analyze_spec, check_options
from calc.deltat.base import DEFAULT_METHOD
from calc.deltat.registry import METHODS
from calc.errors import AnalysisError, InputError
from calc.io.quantities import Measured
from calc.io.readings import Readings, parse_readings
from calc.io.runfile import RunSpec, parse_run
from calc.kinds import get_kind, kind_names
from calc.limits import LimitExceeded
from calc.report import to_record
from calc.uncertainty.gum import GumResult
from webapp.models import Calibration, Result, RunInput
from webapp.services.errors import Invalid, TooLarge

#: kinds whose model needs the calorimeter's heat capacity
NEEDS_HEAT_CAPACITY = tuple(k for k in kind_names() if get_kind(k).needs_heat_capacity)

_HEADER_RE = re.compile(r"^[ \t]*\[[ \t]*calorimeter[ \t]*\][ \t]*(?:#.*)?$", re.MULTILINE)


@dataclasses.dataclass(frozen=True)
class AnalysisOptions:
    """How to analyze a run: ΔT method, period overrides (s), Monte Carlo trials and seed."""

    method: str | None = None
    fore: tuple[float, float] | None = None
    after: tuple[float, float] | None = None
    monte_carlo_trials: int = 0
    seed: int | None = None
    mixing_time: tuple[float, float] | None = None  # (s, standard uncertainty in s); overrides the run file

    def checked(self) -> AnalysisOptions:
        """Return the options after checking them.

        :raise Invalid: for an unknown method, a period that is not two increasing
            finite times, or a Monte Carlo trial count out of range
        """
        if self.method is not None and (not isinstance(self.method, str) or self.method not in METHODS):
            raise Invalid(
                f"unknown method {limits.shorten(repr(self.method))}; expected one of: {', '.join(sorted(METHODS))}",
                field="method",
            )
        for name, period in (("fore", self.fore), ("after", self.after)):
            if period is None:
                continue
            if len(period) != 2 or not all(
                isinstance(x, int) and not isinstance(x, bool) or isinstance(x, float) and math.isfinite(x)
                for x in period
            ):
                raise Invalid("expected two times in seconds, like [0, 170]", field=name)
            try:
                check_options(0, None, **{name: period})
            except InputError as exc:
                raise invalid(exc, name) from None
            if not period[1] > period[0]:
                raise Invalid(
                    f"the period must end after it starts (got {period[0]:g} s to {period[1]:g} s)", field=name
                )
        if self.mixing_time is not None:
            v, u = self.mixing_time
            if not (isinstance(v, (int, float)) and math.isfinite(v)):
                raise Invalid("expected the mixing time in seconds on the log's clock, like 180", field="mixing_time")
            if not (isinstance(u, (int, float)) and math.isfinite(u) and u >= 0):
                raise Invalid(
                    "expected the mixing time's standard uncertainty in seconds (0 or more)", field="mixing_time"
                )
        try:
            check_options(self.monte_carlo_trials, self.seed)
        except InputError as exc:
            raise invalid(exc, "monte_carlo") from None
        return self


def invalid(exc: InputError | AnalysisError, default_field: str) -> Invalid | TooLarge:
    """Return the :class:`Invalid` carrying calc's message for ``exc``."""
    field = getattr(exc, "field", None) or default_field
    if isinstance(exc, LimitExceeded):
        return TooLarge(str(exc), field=field)
    return Invalid(str(exc), field=field)


def decode_readings(raw: bytes, name: str) -> str:
    """Return the readings upload as text (UTF-8, a byte-order mark allowed)."""
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise Invalid(
            f"{name}: byte {exc.start + 1} is not UTF-8 text; expected a CSV file of times and temperatures",
            field="readings",
        ) from None


def _run_file_or_none(run_toml: str) -> dict[str, Any] | None:
    """Return a run file's TOML, or None when it does not parse (parse_run reports it with the line)."""
    try:
        return tomllib.loads(run_toml.lstrip("\ufeff"))
    except (ValueError, RecursionError):  # TOMLDecodeError, a 5000-digit number, deep nesting
        return None


def needs_supplied_heat_capacity(run_toml: str) -> bool:
    """Return whether the run's kind needs C_cal and its file does not give it."""
    data = _run_file_or_none(run_toml)
    if data is None or data.get("kind") not in NEEDS_HEAT_CAPACITY:
        return False
    cal = data.get("calorimeter", {})
    return isinstance(cal, dict) and "heat_capacity" not in cal


def run_file_text(run_toml: str, section: str, key: str) -> str | None:
    """Return the run file's ``[section] key`` as text without surrounding blanks, if it has a readable one."""
    data = _run_file_or_none(run_toml)
    part = data.get(section) if data is not None else None
    value = part.get(key) if isinstance(part, dict) else None
    return value.strip() if isinstance(value, str) and value.strip() else None


def calorimeter_name_in(run_toml: str) -> str | None:
    """Return the run file's ``[calorimeter] name``, if it has a readable one."""
    return run_file_text(run_toml, "calorimeter", "name")


def heat_capacity_text(calibration: Calibration) -> str:
    """Return the calibration as run-file text (floats written exactly)."""
    return f"{calibration.heat_capacity_j_k!r} ± {calibration.heat_capacity_j_k_std!r} J/K"


def supply_heat_capacity(run_toml: str, calibration: Calibration, source: str) -> str:
    """Return the run text with ``[calorimeter] heat_capacity`` set from ``calibration``.

    The stored run file stays as uploaded; this text exists only for the analysis and
    is rebuilt the same way from the run's recorded calibration on every re-analysis.
    """
    line = f'heat_capacity = "{heat_capacity_text(calibration)}"'
    data = tomllib.loads(run_toml)
    if "calorimeter" not in data:
        text = run_toml + ("" if run_toml.endswith("\n") else "\n") + f"\n[calorimeter]\n{line}\n"
    else:
        match = _HEADER_RE.search(run_toml)
        if match is None:
            raise Invalid(
                f"{source}: the calorimeter's heat capacity can be supplied only to a [calorimeter] section "
                "written as a table header; give heat_capacity in the run file",
                field="calorimeter.heat_capacity",
            )
        text = run_toml[: match.end()] + "\n" + line + run_toml[match.end() :]
    check = tomllib.loads(text)["calorimeter"].get("heat_capacity")
    if check != heat_capacity_text(calibration):  # pragma: no cover - guards the text edit
        raise Invalid(f"{source}: could not supply the heat capacity", field="calorimeter.heat_capacity")
    return text


def parse_inputs(
    run_toml: str,
    run_file_name: str,
    readings_text: str,
    readings_name: str,
    calibration: Calibration | None,
) -> tuple[RunSpec, Readings]:
    """Parse the run file (with C_cal supplied from ``calibration``) and the readings."""
    text = run_toml.lstrip("\ufeff")  # a byte-order mark is kept in the stored file only
    if calibration is not None:
        text = supply_heat_capacity(text, calibration, run_file_name)
    try:
        spec = parse_run(text, source=run_file_name, base_dir=None)
    except InputError as exc:
        raise invalid(exc, "run_file") from None
    try:
        readings = parse_readings(readings_text, source=readings_name, column=spec.temperature_column)
    except InputError as exc:
        raise invalid(exc, "readings") from None
    return spec, readings


def run_analysis(
    spec: RunSpec,
    readings: Readings,
    options: AnalysisOptions,
    *,
    calorimeter_type: str | None = None,
    history: list[tuple[float, float]] | None = None,
) -> Analysis:
    """Analyze with calc; its errors become :class:`Invalid`.

    ``calorimeter_type`` (the calorimeter record's type, unless the run file states one) and
    ``history`` (its calibrations, (value, u) in J/K) feed calc's plausibility checks.
    """
    options = options.checked()
    seed = options.seed
    if options.monte_carlo_trials and seed is None:
        seed = secrets.randbelow(2**32)  # recorded with the result, so the interval can be reproduced
    try:
        return analyze_spec(
            spec,
            readings,
            method=options.method,
            monte_carlo_trials=options.monte_carlo_trials,
            seed=seed,
            fore=options.fore,
            after=options.after,
            calorimeter_type=spec.get("calorimeter", "type") or calorimeter_type,
            history=history,
            mixing_time=options.mixing_time,
        )
    except InputError as exc:
        raise invalid(exc, "run_file") from None
    except AnalysisError as exc:
        raise invalid(exc, "readings") from None


def inputs_from_spec(spec: RunSpec, calibration: Calibration | None) -> list[RunInput]:
    """Return the run's measured inputs, one row per ``value ± u unit`` field."""
    rows: list[RunInput] = []
    supplied = f"calibration #{calibration.id}" if calibration is not None else None
    if spec.mixing_time is not None:
        rows.append(_input_row("mixing_time", spec.mixing_time, "run file"))
    for section, fields in spec.sections.items():
        for name, value in fields.items():
            dotted = f"{section}.{name}"
            if isinstance(value, Measured):
                origin = supplied if (supplied and dotted == "calorimeter.heat_capacity") else "run file"
                rows.append(_input_row(dotted, value, origin))
            elif dotted == "thermometer.resolution":
                rows.append(
                    RunInput(
                        field=dotted,
                        value=float(value),
                        std_uncertainty=None,
                        unit="K",
                        text=str(spec.raw.get("thermometer", {}).get("resolution", "")),
                        origin="run file",
                    )
                )
    return rows


def _input_row(field: str, m: Measured, origin: str) -> RunInput:
    return RunInput(field=field, value=m.value, std_uncertainty=m.u, unit=m.unit, text=m.text[:300], origin=origin)


def result_from_analysis(analysis: Analysis, *, input_name: str, periods_given: bool) -> Result:
    """Map an :class:`~calc.analysis.Analysis` to a new :class:`Result` row (not yet added)."""
    gum = analysis.gum
    p = analysis.periods
    d = analysis.delta_t
    dt_v, dt_u = _gum_value(gum, "corrected_delta_t")
    q_v, q_u = _gum_value(gum, "heat")
    h_v, h_u = _gum_value(gum, "molar_enthalpy")
    c_v, c_u = _gum_value(gum, "calorimeter_heat_capacity")
    if None in (dt_v, dt_u, q_v, q_u) or not math.isfinite(gum.expanded_uncertainty):
        raise Invalid(
            f"{input_name}: the analysis gave no finite result; check the inputs and the log", field="readings"
        )
    warnings = list(analysis.warnings) + [w for w in p.warnings if w not in analysis.warnings]
    return Result(
        method=d.method,
        main=analysis.main,
        fore_start_s=float(p.fore[0]),
        fore_end_s=float(p.fore[1]),
        after_start_s=float(p.after[0]),
        after_end_s=float(p.after[1]),
        mixing_time_s=float(p.mixing_time),
        mixing_time_s_std=float(p.u_mixing_time),
        mixing_time_detected=bool(p.mixing_time_detected),
        periods_given=periods_given,
        corrected_delta_t_k=dt_v,
        corrected_delta_t_k_std=dt_u,
        heat_j=q_v,
        heat_j_std=q_u,
        molar_enthalpy_kj_mol=h_v,
        molar_enthalpy_kj_mol_std=h_u,
        calorimeter_heat_capacity_j_k=c_v,
        calorimeter_heat_capacity_j_k_std=c_u,
        expanded_uncertainty=float(gum.expanded_uncertainty),
        coverage_factor=float(gum.coverage_factor),
        dof_eff=finite_or_none(gum.dof_eff),
        budget=_jsonable([b.as_dict() for b in gum.budget]),
        warnings=warnings,
        comparison=_jsonable(dataclasses.asdict(analysis.comparison)) if analysis.comparison is not None else None,
        cautions=_jsonable([dataclasses.asdict(c) for c in analysis.cautions]),
        construction=_construction(analysis),
        properties={
            k: {
                "value": finite_or_none(v[0]),
                "standard_uncertainty": finite_or_none(v[1]),
                "unit": v[2],
                "source": v[3],
            }
            for k, v in analysis.properties.values.items()
        },
        monte_carlo=_jsonable(dataclasses.asdict(analysis.monte_carlo)) if analysis.monte_carlo else None,
        record=_jsonable(to_record(analysis, input_name)),
        checks=_jsonable([c.as_dict() for c in analysis.checks]),
        software_version=analysis.software_version,
    )


def _gum_value(gum: GumResult, key: str) -> tuple[float | None, float | None]:
    """Return a GUM output's value and standard uncertainty (None when absent or not finite)."""
    if key not in gum.values:
        return None, None
    return finite_or_none(gum.values[key]), finite_or_none(gum.uncertainties[key])


def _construction(analysis: Analysis) -> dict[str, Any]:
    """Return how ΔT was constructed: calc's construction, the temperatures and the parts of u(ΔT)."""
    p = analysis.periods
    d = analysis.delta_t
    return {
        **_jsonable(d.construction.to_dict()),
        "start_temperature_K": finite_or_none(d.start_temperature),
        "u_start_temperature_K": finite_or_none(d.u_start_temperature),
        "end_temperature_K": finite_or_none(d.end_temperature),
        "components_K": {
            "fit": finite_or_none(d.u_fit),
            "resolution_start": finite_or_none(d.u_resolution_start),
            "resolution_end": finite_or_none(d.u_resolution_end),
            "method": finite_or_none(d.u_method),
            "mixing_time": finite_or_none(d.u_mixing_time),
        },
        "dof_fit": finite_or_none(d.dof_fit),
        "main_end_s": finite_or_none(p.main_end),
        "release_time_constant_s": finite_or_none(p.release_time_constant) if p.release_time_constant else None,
    }


def default_method(spec: RunSpec) -> str:
    """Return the method a run is analyzed with when none is asked for."""
    return spec.method or DEFAULT_METHOD


def encode_series(values: np.ndarray) -> bytes:
    """Return a series as little-endian float64 bytes (the stored form)."""
    return np.ascontiguousarray(values, dtype="<f8").tobytes()


def finite_or_none(x: Any) -> float | None:
    """Return ``x`` as a finite float, or None (missing, not a number, infinite)."""
    try:
        v = float(x)
    except (TypeError, ValueError):
        return None
    return v if math.isfinite(v) else None


def _jsonable(obj: Any) -> Any:
    """Return ``obj`` as strict JSON data (numpy scalars to floats, non-finite to None)."""
    if isinstance(obj, dict):
        return {str(k): _jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_jsonable(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return [_jsonable(v) for v in obj.tolist()]
    if isinstance(obj, (bool, np.bool_)):
        return bool(obj)
    if isinstance(obj, (int, np.integer)):
        return int(obj)
    if isinstance(obj, (float, np.floating)):
        return finite_or_none(obj)
    if obj is None or isinstance(obj, str):
        return obj
    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        return _jsonable(dataclasses.asdict(obj))
    return str(obj)
