"""Plan a run before anyone pours: predicted ΔT, u(ΔH), the limiting equipment, amounts, cautions.

The prediction uses the analysis's own pieces: the planned amounts become a run file
(:func:`calc.io.runfile.parse_run`), the property models supply densities and the solution's heat
capacity (:func:`calc.composition.resolve_properties`), the kind's model is built by
:func:`calc.uncertainty.measurement_models.build_model` and propagated by :func:`calc.uncertainty.gum.propagate`. Only the corrected
temperature change is predicted instead of measured:

* its value from the expected ΔH (the reference of :func:`calc.refdata.reference.find_reference`, or one
  given, carried to the planned temperature and molality as :func:`calc.refdata.comparison.compare` does).
  The model is affine in ΔT, so ΔT = (ΔH − a)/b with a, b read off the model at two values of ΔT;
  the properties are re-evaluated at the mean temperature until ΔT settles.
* its uncertainty components as the default Regnault–Pfaundler method would report them for
  readings every ``interval`` with noise σ (lag-1 correlation φ) and resolution q:

  - each level keeps the resolution term of :mod:`calc.deltat.base`, ``q/√12 · exp(−2π²(s² − q²/12)/q²)``
    with s the readings' SD, averaged over where a steady level sits within a step (s is the SD of
    q·round((T + σZ)/q), computed from the normal distribution; with σ ≪ q readings stick to one
    value and keep the full q/√12);
  - fit term: both drift lines extrapolated to the equal-area time t_x, each level known to
    ``s²(1+φ)/(1−φ)·[1/n + 12 (L/2 + d)²/(n L²)]`` (s² averaged as above) for a line fitted to n
    readings over a window of length L and extrapolated a distance d past its end (d = 0 gives the
    familiar 4/n). The fore
    window is ``fore``; the analysis starts the after window at t_m + 8.3 τ_r + τ_s + 15 s (six
    release time constants past the 90 % point, plus its 15 s smoothing), so L_after = ``after`` −
    that; t_x ≈ t_m + τ_r + τ_s, and for two solutions the fore line is read at t_m itself.
    Checked against simulated runs analyzed end to end (tests/calc/test_plan.py);
  - the method term of :data:`calc.deltat.base.METHOD_TERMS`; no mixing-time term (the Newtonian
    correction does not need the mixing time).

Useful window of |ΔT|: at least 20 × the resolution and 1 K (resolution and drift corrections stay
small against the change), at most 10 K (near room temperature, Newtonian exchange, safe to handle);
a rise above 10 K is flagged as a hot solution. The limiting equipment is the one with the largest
share of u²(ΔH), budget lines grouped by what they come from (:func:`equipment_of`).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any, Required, TypedDict, Unpack

from calc import limits
from calc.errors import InputError
from calc.io.quantities import Measured, parse_measured
from calc.kinds import get_kind
from calc.limits import require_number
from calc.plan_amounts import Suggestion, suggest
from calc.plan_design import AFTER_ADVISED_S, HOT_RISE_K, Design, Thermo, evaluate, plan_warnings, timing  # noqa: F401
from calc.plan_equipment import EquipmentShare, equipment_of, equipment_shares
from calc.plan_kinds import PLAN_KINDS, build_sections
from calc.uncertainty.gum import BudgetLine, GumResult, propagate
from calc.uncertainty.measurement_models import RunProperties

__all__ = [
    "Plan",
    "Suggestion",
    "EquipmentShare",
    "plan_run",
    "PlanInputs",
    "PLAN_DEFAULTS",
    "equipment_of",
    "PLANNED_KINDS",
    "MIN_DELTA_T_K",
    "MAX_DELTA_T_K",
    "RESOLUTION_MULTIPLE",
    "HOT_RISE_K",
]

PLANNED_KINDS = tuple(PLAN_KINDS)
MIN_DELTA_T_K = 1.0
MAX_DELTA_T_K = 10.0
RESOLUTION_MULTIPLE = 20.0
#: Typical release time constants (docs/methods.md §7.2): salts dissolve in 20–120 s, a poured
#: neutralization mixes in 2–5 s.
DEFAULT_RELEASE_S = {k: v.release_s for k, v in PLAN_KINDS.items()}

MeasuredLike = Measured | str


@dataclass
class Plan:
    """A planned run: what it should show and how well it can measure.

    ``predicted_delta_t`` (K, signed) with its standard uncertainty and components; the expected
    ΔH (``predicted_result``, from ``expected_note``) with the standard and expanded uncertainty
    the analysis would give it; its ``budget`` (as the analysis's), the same grouped by
    ``equipment`` (largest share first, ``limiting`` the first); a ``suggestion`` of amounts that
    keep |ΔT| in ``window`` (None when none can); ``warnings``; the usual ``cautions`` for the
    substances; and the planned ``run_file`` (the readings still to be recorded).
    """

    kind: str
    predicted_delta_t: float
    predicted_u_delta_t: float
    delta_t_components: dict[str, float]
    predicted_result: float
    predicted_u: float
    predicted_U: float
    coverage_factor: float
    dof_eff: float
    result_unit: str
    expected_note: str
    start_temperature_K: float
    window: tuple[float, float]
    budget: list[BudgetLine]
    equipment: list[EquipmentShare]
    limiting: str
    suggestion: Suggestion | None
    warnings: list[str]
    cautions: list[Any]
    properties: RunProperties
    run_file: str
    timing: dict[str, float] = field(default_factory=dict)


def _measured(value: MeasuredLike | None, name: str, unit: str) -> Measured:
    if value is None:
        raise InputError(f"missing: expected a quantity in {unit}", field=name)
    if isinstance(value, Measured):
        try:
            value.m_as(unit)
        except Exception:
            raise InputError(f"expected a quantity in {unit}, got {value.text!r}", field=name) from None
        return value
    return parse_measured(value, field=name, expected=unit)


def _amount(value: MeasuredLike | None, name: str, unit: str, u: float | None = None) -> Measured:
    """Return a positive planned amount; ``u`` replaces the last-digit default of a value without ±."""
    m = _measured(value, name, unit).to(unit)
    if u is not None and m.distribution != "normal":
        m = Measured(m.value, float(u), m.unit, "normal", f"{m.value!r} ± {u!r} {m.unit}")
    if not m.value > 0:
        raise InputError(f"expected a positive value, got {m.text!r}", field=name)
    return m


#: bounds of the planner's plain numbers (name → (least, greatest)); see calc.limits.PHYSICAL_BOUNDS
_NUMBER_BOUNDS = {
    "thermometer_resolution": limits.PHYSICAL_BOUNDS["resolution_K"],
    "thermometer_noise": (0.0, 10.0),
    "temperature": (1.0, 1000.0),
    "interval": (1e-3, 1e5),
    "fore": (1.0, 1e6),
    "after": (1.0, 1e6),
    "release_time": (1e-3, 1e5),
    "probe_time": (1e-3, 1e5),
    "balance_u": (0.0, 1e3),
    "volume_u": (0.0, 1e3),
    "molar_enthalpy": (-1e5, 1e5),
}


def _number(value: float, name: str, *, positive: bool = True) -> float:
    low, high = _NUMBER_BOUNDS.get(name, (0.0, math.inf))
    return require_number(value, name, field=name, minimum=low, maximum=high, exclusive_minimum=positive and low == 0.0)


class PlanInputs(TypedDict, total=False):
    """The keyword arguments of :func:`plan_run`; all but the first two have a default (``PLAN_DEFAULTS``).

    An amount is a :class:`calc.io.quantities.Measured` or its text (``"3.00 g"``, ``"18 ± 2 J/K"``);
    which amounts a kind takes is in :mod:`calc.plan_kinds`: e.g. ``"dissolution"`` (``formula``,
    ``mass``, ``water_volume``); ``"neutralization"`` (``acid``, ``acid_concentration``, ``acid_volume``
    in the cup, ``base``… poured in at ``base_temperature``, by default the start temperature); the
    other kinds' in ``kind_inputs``.
    """

    #: with its uncertainty, e.g. ``"18 ± 2 J/K"`` (a calibration: the value it should find)
    calorimeter_heat_capacity: Required[MeasuredLike]
    #: resolution q, noise σ (a standard deviation) in K, and the lag-1 correlation φ of the noise
    thermometer_resolution: Required[float]
    thermometer_noise: float
    noise_correlation: float
    formula: str | None
    mass: MeasuredLike | None
    water_volume: MeasuredLike | None
    acid: str | None
    base: str | None
    acid_concentration: MeasuredLike | None
    base_concentration: MeasuredLike | None
    acid_volume: MeasuredLike | None
    base_volume: MeasuredLike | None
    base_temperature: MeasuredLike | None
    #: standard uncertainties (g, mL) of the balance and the glassware for amounts written without ``±``
    #: (an explicit ``±`` wins; with neither, half a unit of the last digit)
    balance_u: float | None
    volume_u: float | None
    #: start (room) temperature, K
    temperature: float
    #: (low, high) useful |ΔT| in K; None: (max(1 K, 20 q), 10 K)
    delta_t_window: tuple[float, float] | None
    #: reading interval, fore period, log length after mixing, release time constant τ_r (None: the
    #: kind's, 60 s dissolution, 5 s neutralization) and probe time constant, in seconds
    interval: float
    fore: float
    after: float
    release_time: float | None
    probe_time: float
    #: expected ΔH in kJ/mol, when the reference library has none (or to override it)
    molar_enthalpy: float | None
    kind_inputs: dict[str, Any] | None


#: The inputs passed on to the kind's ``plan_sections`` hook (with the checked ``molar_enthalpy``).
_AMOUNTS: tuple[str, ...] = ("formula", "mass", "water_volume", "acid", "base", "acid_concentration")
_AMOUNTS += ("base_concentration", "acid_volume", "base_volume", "base_temperature", "balance_u", "volume_u")
_REQUIRED = ("calorimeter_heat_capacity", "thermometer_resolution")
#: The defaults of :class:`PlanInputs` (every key but the required two; the amounts: none).
PLAN_DEFAULTS: dict[str, Any] = {
    **dict.fromkeys(_AMOUNTS),
    "thermometer_noise": 0.005,
    "noise_correlation": 0.0,
    "temperature": 295.15,
    "delta_t_window": None,
    "interval": 2.0,
    "fore": 180.0,
    "after": 900.0,
    "release_time": None,
    "probe_time": 5.0,
    "molar_enthalpy": None,
    "kind_inputs": None,
}


def plan_run(kind: str, **inputs: Unpack[PlanInputs]) -> Plan:
    """Predict a run's temperature change and the uncertainty of its ΔH before it is made.

    ``kind`` is a kind with a ``plan_sections`` hook (:mod:`calc.kinds`); the ``inputs`` are
    described in :class:`PlanInputs`.

    Raises
    ------
    TypeError
        For an input :class:`PlanInputs` does not name, or a required one left out.
    InputError
        For an unknown kind, a missing or wrongly dimensioned input (naming it), or a substance
        without a reference value and no ``molar_enthalpy``.
    """
    p = _with_defaults(inputs)
    if kind not in PLANNED_KINDS:
        raise InputError(f"cannot plan a {kind!r} run; expected one of: {', '.join(PLANNED_KINDS)}", field="kind")
    th, T0, molar_enthalpy = _checked_numbers(kind, p)
    params = dict(**{name: p[name] for name in _AMOUNTS}, molar_enthalpy=molar_enthalpy, **(p["kind_inputs"] or {}))
    ev = evaluate(design := _design(kind, p["calorimeter_heat_capacity"], params, T0, th, molar_enthalpy))
    gum: GumResult = propagate(ev.model.inputs, ev.model.model, ev.model.main)
    return _plan(design, ev, gum, _window(p["delta_t_window"], th.q))


def _with_defaults(inputs: Mapping[str, Any]) -> dict[str, Any]:
    """Return ``inputs`` with the defaults of the ones left out; TypeError as for a call with a wrong keyword."""
    unknown = sorted(set(inputs) - set(PLAN_DEFAULTS) - set(_REQUIRED))
    if unknown:
        raise TypeError(f"plan_run() got an unexpected keyword argument {unknown[0]!r}")
    missing = [name for name in _REQUIRED if name not in inputs]
    if missing:
        raise TypeError(f"plan_run() missing required keyword argument(s): {', '.join(map(repr, missing))}")
    return {**PLAN_DEFAULTS, **inputs}


def _checked_numbers(kind: str, p: Mapping[str, Any]) -> tuple[Thermo, float, float | None]:
    """Return the thermometer and timing, the start temperature and the expected ΔH, each within its bounds."""
    q = _number(p["thermometer_resolution"], "thermometer_resolution")
    sigma = _number(p["thermometer_noise"], "thermometer_noise", positive=False)
    phi = p["noise_correlation"]
    if not isinstance(phi, (int, float)) or not 0.0 <= phi < 0.95:
        raise InputError(f"expected a noise correlation between 0 and 0.95, got {phi!r}", field="noise_correlation")
    T0 = _number(p["temperature"], "temperature")
    molar_enthalpy = p["molar_enthalpy"]
    if molar_enthalpy is not None:
        molar_enthalpy = _number(molar_enthalpy, "molar_enthalpy", positive=False)
    for name in ("balance_u", "volume_u"):
        if p[name] is not None:
            _number(p[name], name, positive=False)
    tau_r = DEFAULT_RELEASE_S[kind] if p["release_time"] is None else p["release_time"]
    times = (p["interval"], p["fore"], p["after"], tau_r, p["probe_time"])
    names = ("interval", "fore", "after", "release_time", "probe_time")
    th = Thermo(q, sigma, float(phi), *(_number(v, n) for v, n in zip(times, names)))
    return th, T0, molar_enthalpy


def _design(
    kind: str,
    calorimeter_heat_capacity: MeasuredLike,
    params: dict[str, Any],
    T0: float,
    th: Thermo,
    molar_enthalpy: float | None,
) -> Design:
    """Return the planned run: the calorimeter (or a calibration's expected value) and the kind's amounts."""
    cal = _measured(calorimeter_heat_capacity, "calorimeter_heat_capacity", "J/K")
    built, substances = build_sections(
        kind, params, _amount, _measured, T0, math.sqrt(th.q * th.q / 12.0 + th.sigma * th.sigma)
    )
    sections: dict[str, dict[str, Any]] = {}
    expected_cal = None
    if get_kind(kind).is_calibration:
        expected_cal = cal.m_as("J/K")  # what the calibration should find; not an input of its model
        if not expected_cal > 0:
            raise InputError(f"expected a heat capacity > 0 J/K, got {cal.text!r}", field="calorimeter_heat_capacity")
    else:
        sections["calorimeter"] = {"heat_capacity": cal}
    sections.update(built)
    return Design(kind, sections, T0, th, molar_enthalpy, substances, expected_cal)


def _window(delta_t_window: tuple[float, float] | None, q: float) -> tuple[float, float]:
    """Return the useful |ΔT| window: the one given, else (max(1 K, 20 q), 10 K)."""
    if delta_t_window is None:
        return (max(MIN_DELTA_T_K, RESOLUTION_MULTIPLE * q), MAX_DELTA_T_K)
    window = (float(delta_t_window[0]), float(delta_t_window[1]))
    if not 0 < window[0] < window[1] <= 1000.0:
        raise InputError(
            f"expected a window 0 < low < high in K, got {delta_t_window!r} (at most 1000 K)", field="delta_t_window"
        )
    return window


def _plan(design: Design, ev: Any, gum: GumResult, window: tuple[float, float]) -> Plan:
    """Return the :class:`Plan` of an evaluated design."""
    from calc.refdata.hazards import cautions_for

    dT = ev.dt.value
    warnings = plan_warnings(design, ev, gum, window)
    suggestion = suggest(design, dT, window)
    equipment = equipment_shares(gum.budget)
    return Plan(
        kind=design.kind,
        predicted_delta_t=dT,
        predicted_u_delta_t=ev.dt.u,
        delta_t_components={
            "fit": ev.dt.u_fit,
            "resolution_start": ev.dt.u_resolution_start,
            "resolution_end": ev.dt.u_resolution_end,
            "method": ev.dt.u_method,
            "drift_resolution": ev.dt.u_drift_resolution,
        },
        predicted_result=gum.values[ev.model.main],
        predicted_u=gum.uncertainties[ev.model.main],
        predicted_U=gum.expanded_uncertainty,
        coverage_factor=gum.coverage_factor,
        dof_eff=gum.dof_eff,
        result_unit=ev.model.main_unit,
        expected_note=ev.note,
        start_temperature_K=design.T0,
        window=window,
        budget=gum.budget,
        equipment=equipment,
        limiting=equipment[0].equipment if equipment else "",
        suggestion=suggestion,
        warnings=warnings,
        cautions=cautions_for(design.substances),
        properties=ev.props,
        run_file=design.run_file(),
        timing=timing(design.thermo, design.two_solution),
    )
