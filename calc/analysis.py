"""Analyse a run end to end: run file and log → corrected ΔT → heat → result ± U.

:func:`analyze_run` is the one entry point the command line and the web app
call. It never prints; it returns an :class:`Analysis` that the formatters in
:mod:`calc.report` turn into text or JSON.
"""

from __future__ import annotations

import math
import os
from dataclasses import dataclass, field, replace
from functools import lru_cache
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from calc import __version__
from calc.checks import Check, run_checks
from calc.deltat.base import DEFAULT_METHOD, DeltaT, Log
from calc.deltat.registry import corrected_delta_t
from calc.errors import AnalysisError, CupcalError, InputError
from calc.deltat.heater import heater_periods, lag_term, widened
from calc.uncertainty.gum import GumResult, MonteCarloResult, monte_carlo, propagate
from calc.uncertainty.measurement_models import EQUIVALENTS, MAIN_OUTPUT, ModelSpec, Properties, build_model
from calc.deltat.periods import Periods, find_periods
from calc.io.readings import Readings, read_readings
from calc.io.runfile import RunSpec, load_run
from calc.refdata.solutes import STRONG_ACIDS
from calc.deltat.logprep import PreparedLog, gap_warnings, prepare_log
from calc import limits
from calc.limits import require_number

__all__ = ["Analysis", "analyze_run", "analyze_spec", "OUTPUT_UNITS"]

OUTPUT_UNITS = {
    "corrected_delta_t": "K",
    "heat": "J",
    "molar_enthalpy": "kJ/mol",
    "calorimeter_heat_capacity": "J/K",
    "heat_capacity_total": "J/K",  # cup + contents, from an in-situ heater pulse
}



@dataclass
class Analysis:
    """Everything known about one analysed run."""

    spec: RunSpec
    readings: Readings
    periods: Periods
    delta_t: DeltaT
    model: ModelSpec
    gum: GumResult
    properties: Properties
    monte_carlo: MonteCarloResult | None = None
    warnings: list[str] = field(default_factory=list)
    comparison: Any = None
    cautions: list[Any] = field(default_factory=list)
    checks: list[Check] = field(default_factory=list)
    software_version: str = __version__
    rejected: list[dict] = field(default_factory=list)  # readings rejected as spikes
    gaps: list[tuple[float, float]] = field(default_factory=list)  # gaps in the log, s

    @property
    def kind(self) -> str:
        """The run's kind."""
        return self.spec.kind

    @property
    def main(self) -> str:
        """Key of the main result."""
        return self.model.main

    def value(self, key: str) -> tuple[float, float, str]:
        """Return (value, standard uncertainty, unit) of an output."""
        return self.gum.values[key], self.gum.uncertainties[key], OUTPUT_UNITS[key]


def check_options(trials: Any, seed: Any, fore: Any = None, after: Any = None) -> None:
    """Refuse Monte Carlo trials over the limit ``monte_carlo_trials``, a seed outside 0…2³²−1, or
    periods beyond ±10⁶ s, naming the option."""
    require_number(trials, "Monte Carlo trials", field="monte_carlo", minimum=0, whole=True)
    limits.require_size(trials, "monte_carlo_trials", what=f"{trials} Monte Carlo trials", field="monte_carlo")
    if seed is not None:
        require_number(seed, "the Monte Carlo seed", field="seed", minimum=0, maximum=2**32 - 1, whole=True)
    for name, period in (("fore", fore), ("after", after)):
        for end in period or ():
            require_number(end, f"the {name} period's ends in s", field=name, minimum=-1e6, maximum=1e6)


def confined_readings(readings: Path, folder: Path, source: str) -> Path:
    """Return ``readings`` when it resolves inside ``folder`` (the run file's), else raise InputError.

    A run file may not send the command line to read ``../../etc/passwd`` or ``/dev/zero``;
    :func:`calc.io.readings.read_readings` then checks that it is a regular file and caps its size.
    """
    try:
        target = readings.resolve()
        inside = target.is_relative_to(folder.resolve())
    except (OSError, ValueError, RuntimeError):  # a NUL byte in the path, a symlink loop
        raise InputError("is not a usable path; expected a readings file beside the run file",
                         source=source, field="readings") from None
    if not inside:
        raise InputError("must name a file in the run file's folder (or below it), "
                         f"got {limits.shorten(str(readings.name))!r} outside it", source=source, field="readings")
    return target


def analyze_run(
    path: str | os.PathLike[str],
    *,
    method: str | None = None,
    monte_carlo_trials: int = 0,
    seed: int | None = None,
    source: str | None = None,
    with_reference: bool = True,
) -> Analysis:
    """Analyse the run file at ``path``.

    Parameters
    ----------
    path:
        The run file (TOML); its ``readings`` path is relative to it.
    method:
        ΔT method name (overrides the run file's ``method``); default
        ``regnault-pfaundler``.
    monte_carlo_trials:
        Number of Monte Carlo trials for the JCGM 101 check (0: no check).
    seed:
        Seed of the Monte Carlo generator, for reproducible intervals.

    Raises
    ------
    InputError
        For any problem with the run file or the log (names file, field or line).
    AnalysisError
        When the readings cannot give a trustworthy result.
    """
    src = source or str(path)
    check_options(monte_carlo_trials, seed)
    spec = load_run(path, source=src)
    rsrc = os.path.join(os.path.dirname(src), limits.shorten(str(spec.raw.get("readings"))))
    readings = read_readings(confined_readings(spec.readings_path, Path(path).parent, src), source=rsrc,
                             column=spec.temperature_column)
    return analyze_spec(spec, readings, method=method, monte_carlo_trials=monte_carlo_trials, seed=seed,
                        with_reference=with_reference)


def analyze_spec(
    spec: RunSpec,
    readings: Readings,
    *,
    method: str | None = None,
    monte_carlo_trials: int = 0,
    seed: int | None = None,
    fore: tuple[float, float] | None = None,
    after: tuple[float, float] | None = None,
    mixing_time: tuple[float, float] | None = None,
    with_reference: bool = True,
    calorimeter_type: str | None = None,
    history: Sequence[tuple[float, float]] | None = None,
) -> Analysis:
    """Analyse an already parsed run and log (used by the web app for re-analysis).

    ``mixing_time`` (value, standard uncertainty in s) overrides the run file's. Before the
    periods are found, repeated time stamps are merged and spikes rejected
    (:mod:`calc.deltat.logprep`). ``with_reference=False`` skips the reference comparison and the
    cautions (the JSON record carries neither), which keeps batch analysis fast. ``calorimeter_type`` (else the
    run file's ``[calorimeter] type``) and ``history`` (the calorimeter's earlier calibrations,
    (value, u) in J/K) feed the plausibility checks of :mod:`calc.checks`.
    """
    check_options(monte_carlo_trials, seed, fore, after)
    if spec.kind == "dissolution-with-calibration":
        from calc.insitu import analyze_insitu

        return analyze_insitu(spec, readings, method=method, monte_carlo_trials=monte_carlo_trials, seed=seed,
                              fore=fore, after=after, with_reference=with_reference,
                              calorimeter_type=calorimeter_type, history=history)
    two = spec.kind in ("neutralization", "mixing-calibration")
    prep = prepare_log(readings.time_s, readings.temperature_K, resolution=spec.resolution_K, lines=readings.lines)
    if mixing_time is not None:
        t_mix, u_mix = float(mixing_time[0]), float(mixing_time[1])
    elif spec.mixing_time is not None:
        t_mix, u_mix = spec.mixing_time.m_as("s"), spec.mixing_time.u_as("s")
    else:
        t_mix, u_mix = None, 0.0
    periods = find_periods(
        prep.t,
        prep.y,
        resolution=spec.resolution_K,
        mixing_time=t_mix,
        u_mixing_time=u_mix,
        fore=fore or spec.fore_period,
        after=after or spec.after_period,
        two_solution=two,
        source=readings.source,
        lines=prep.lines,
    )
    duration = _heater_duration(spec)
    if duration is not None:
        periods = heater_periods(prep.t, periods, duration, source=readings.source,
                                 after_given=(after or spec.after_period) is not None)
    log = Log(prep.t, prep.y, periods, spec.resolution_K, two_solution=two)
    method_name = method or spec.method or DEFAULT_METHOD
    dt = corrected_delta_t(log, method_name)
    if duration is not None:
        dt = _with_lag_term(dt, prep.t, prep.y, periods, spec, duration, method_name)
    if not math.isfinite(dt.value) or dt.value == 0.0:
        raise AnalysisError(f"{readings.source}: no usable temperature change was found")
    _extra_terms(log, dt, method_name, prep)
    props = resolve_properties(spec, dt)
    model = build_model(spec, dt, props)
    gum = propagate(model.inputs, model.model, model.main)
    warnings: list[str] = list(prep.warnings)
    warnings.extend(dt.warnings)
    warnings.extend(props.warnings)
    warnings.extend(kind_warnings(spec, dt, gum, model))
    warnings.extend(_wide_interval_warning(gum, model.main))
    mc = None
    if monte_carlo_trials and monte_carlo_trials > 0:
        mc = monte_carlo(model.inputs, model.model, model.main, gum, trials=monte_carlo_trials, seed=seed)
        if not mc.agrees:
            unit = MAIN_OUTPUT[spec.kind][1]
            warnings.append(
                f"the Monte Carlo 95 % interval [{mc.low:.4g}, {mc.high:.4g}] {unit} differs from the GUM interval "
                f"by more than the tolerance ({mc.tolerance:.2g} {unit}); report the Monte Carlo interval"
            )
    analysis = Analysis(spec, readings, periods, dt, model, gum, props, mc, warnings,
                        rejected=prep.rejected, gaps=prep.gaps)
    if with_reference:
        _attach_reference(analysis)
    analysis.checks = run_checks(analysis, calorimeter_type=calorimeter_type, history=history,
                                 reference=_run_reference(spec) if analysis.main == "molar_enthalpy" else None,
                                 composition=lambda: _final_composition(spec, props))
    return analysis


#: kinds compared with the reference values of another kind
_REFERENCE_KIND = {"dissolution-with-calibration": "dissolution"}


def _run_reference(spec: RunSpec) -> Any:
    """Return the reference value a run's result is compared with (None when there is none)."""
    r = spec.sections.get("reaction", {})
    try:
        return _reference(_REFERENCE_KIND.get(spec.kind, spec.kind), spec.get("solute", "formula") or r.get("limiting_reagent"),
                          spec.get("acid", "formula"), spec.get("base", "formula"), spec.get("reference", "name"))
    except CupcalError:  # an unknown reference name is reported by the comparison, not by a check
        return None


def _heater_duration(spec: RunSpec) -> float | None:
    """Return the heater's stated duration (s) of an electrical calibration, else None."""
    if spec.kind != "electrical-calibration":
        return None
    return spec.get("heater", "duration").m_as("s")


def _with_lag_term(dt: DeltaT, t: Any, y: Any, periods: Periods, spec: RunSpec, duration: float,
                   method: str) -> DeltaT:
    """Widen ΔT's method term when the after period starts soon after the heater stops."""

    def redo(after: tuple[float, float]) -> float:
        moved = replace(periods, after=after, main_end=after[0])
        return corrected_delta_t(Log(t, y, moved, spec.resolution_K), method).value

    return widened(dt, lag_term(dt.value, periods, t, duration, redo))


#: A result whose 95 % interval is wider than this share of its value gets a warning naming the
#: largest contribution (a result more than 5 % off must never pass without a word).
WIDE_INTERVAL = 0.05


def _wide_interval_warning(gum: GumResult, main: str) -> list[str]:
    v, U = gum.values[main], gum.expanded_uncertainty
    if not (math.isfinite(v) and math.isfinite(U)) or v == 0 or U <= WIDE_INTERVAL * abs(v):
        return []
    top = max(gum.budget, key=lambda b: b.share, default=None)
    why = f"; the largest contribution is {top.label} ({100 * top.share:.0f} % of the variance)" if top else ""
    return [f"the 95 % interval is ±{100 * U / abs(v):.1f} % of the result (over {100 * WIDE_INTERVAL:.0f} %){why}"]


def _extra_terms(log: Log, dt: DeltaT, method_name: str, prep: PreparedLog) -> None:
    """Add the budget terms the drift fits do not see, and their warnings (docs/methods.md)."""
    from calc.deltat.budget_terms import inadequacy_term, mixing_time_term, quantisation_drift_term, room_drift_term
    from calc.deltat.registry import METHODS

    p = log.periods
    dt.u_mixing_time = max(dt.u_mixing_time, mixing_time_term(log, METHODS[method_name], dt.value))
    dt.u_drift_resolution = quantisation_drift_term(log, dt.value)
    if method_name == "regnault-pfaundler":
        u_dis, diff = inadequacy_term(log, dt)
        dt.u_model = math.hypot(u_dis, room_drift_term(log, dt, METHODS[method_name]))
        if dt.u_model**2 > 0.5 * dt.u**2:
            why = (f"the after period alone gives a ΔT {diff:+.3g} K different" if u_dis > 0
                   else "the main period is long, so an unseen change of the room temperature weighs heavily")
            dt.warnings.append(
                f"the drift model's inadequacy dominates the uncertainty of ΔT ({why}); check for a changing "
                "room temperature, evaporation or a heating stirrer, and keep the main period short"
            )
    dt.warnings.extend(gap_warnings(prep.gaps, p.mixing_time, p.main_end))


# ------------------------------------------------------------------ properties


def resolve_properties(spec: RunSpec, dt: DeltaT) -> Properties:
    """Return the densities and heat capacity the model needs.

    A value in the run file always wins; otherwise the property models of
    :mod:`calc.refdata.properties` supply it and the source is recorded.
    """
    import importlib

    class _Lazy:
        def __getattr__(self, name: str) -> Any:
            return getattr(importlib.import_module("calc.refdata.properties"), name)

    pm: Any = _Lazy()
    props = Properties()
    T0 = dt.start_temperature
    T_mean = T0 + 0.5 * dt.value

    def explicit(section: str, name: str, key: str, unit: str) -> bool:
        m = spec.get(section, name)
        if m is None:
            return False
        props.add(key, m.m_as(unit), m.u_as(unit), unit, "run file")
        return True

    def water_density(key: str, T: float) -> tuple[float, float]:
        pv = pm.water_density(T)
        props.add(key, pv.value, pv.u, "g/mL", f"{pv.model} at {T - 273.15:.1f} °C")
        return pv.value, pv.u

    kind = spec.kind
    if kind in ("dissolution", "electrical-calibration", "mixing-calibration"):
        if not explicit("water", "density", "water.density", "g/mL"):
            water_density("water.density", T0)
    if kind == "mixing-calibration":
        if not explicit("warm_water", "density", "warm_water.density", "g/mL"):
            water_density("warm_water.density", spec.get("warm_water", "temperature").m_as("K"))
    if kind == "reaction":
        if not explicit("solution", "density", "solution.density", "g/mL"):
            water_density("solution.density", T0)
            props.warnings.append(
                "solution density not given: the density of water was used; give [solution] density"
            )
    if kind == "neutralization":
        for sec in ("acid", "base"):
            if not explicit(sec, "density", f"{sec}.density", "g/mL"):
                T = T0 if sec == "acid" else spec.get("base", "temperature").m_as("K")
                pv = _stock_density(pm, spec, sec, T)
                props.add(f"{sec}.density", pv.value, pv.u, "g/mL", f"{pv.model} at {T - 273.15:.1f} °C")
    if explicit("mixture", "specific_heat_capacity", "mixture.specific_heat_capacity", "J/(g*K)"):
        return props
    solutes, water_g = _final_composition(spec, props)
    if solutes:
        dens, cp = pm.solution_properties(solutes, water_g, T_mean)
    else:
        cp = pm.water_specific_heat(T_mean)
    props.add("mixture.specific_heat_capacity", cp.value, cp.u, "J/(g*K)", f"{cp.model} at {T_mean - 273.15:.1f} °C")
    if "fallback" in cp.model.lower() and solutes:
        props.warnings.append(
            "no solution model covers " + ", ".join(solutes) + ": the heat capacity of water was used with a "
            "larger uncertainty; give [mixture] specific_heat_capacity for a better result"
        )
    if kind == "reaction" and not solutes:
        props.warnings.append(
            "specific heat capacity of the final solution not given: that of water was used; "
            "give [mixture] specific_heat_capacity"
        )
    return props


def _stock_density(pm: Any, spec: RunSpec, sec: str, T: float) -> Any:
    from calc.refdata.formula import molar_mass

    formula = spec.get(sec, "formula")
    c = spec.get(sec, "concentration").m_as("mol/L")
    M = molar_mass(formula)
    rho = pm.water_density(T)
    # iterate: mass of solute per litre is c·M; water mass per litre is 1000ρ − cM
    for _ in range(4):
        water_g = 1000.0 * rho.value - c * M
        if water_g <= 0:
            break
        rho, _cp = pm.solution_properties({formula: c * M}, water_g, T)
    return rho


#: Cation of each strong base; anions come from calc.refdata.solutes.STRONG_ACIDS and ion charges
#: from calc.uncertainty.measurement_models.EQUIVALENTS (H⁺ or OH⁻ per formula unit).
_CATIONS = {"NaOH": "Na", "KOH": "K", "LiOH": "Li", "Ba(OH)2": "Ba", "Ca(OH)2": "Ca"}


def _final_composition(spec: RunSpec, props: Properties) -> tuple[dict[str, float], float]:
    """Return the solutes (formula → g) and water mass (g) of the final solution."""
    from calc.refdata.formula import molar_mass

    kind = spec.kind
    if kind == "dissolution":
        rho = props.values["water.density"][0]
        water_g = spec.get("water", "volume").m_as("mL") * rho
        return {spec.get("solute", "formula"): spec.get("solute", "mass").m_as("g")}, water_g
    if kind == "neutralization":
        acid, base = spec.get("acid", "formula"), spec.get("base", "formula")
        na = spec.get("acid", "concentration").m_as("mol/L") * spec.get("acid", "volume").m_as("mL") / 1000
        nb = spec.get("base", "concentration").m_as("mol/L") * spec.get("base", "volume").m_as("mL") / 1000
        total = (spec.get("acid", "volume").m_as("mL") * props.values["acid.density"][0]
                 + spec.get("base", "volume").m_as("mL") * props.values["base.density"][0])
        if acid in STRONG_ACIDS and base in _CATIONS:
            an, za = STRONG_ACIDS[acid], _eq(acid)
            cat, zb = _CATIONS[base], _eq(base)
            # salt formula with charge balance, e.g. Na2SO4, BaCl2
            g = math.gcd(za, zb)
            ncat, nan = za // g, zb // g
            salt = (cat if ncat == 1 else f"{cat}{ncat}") + (an if nan == 1 else f"({an}){nan}")
            h = na * _eq(acid)
            oh = nb * _eq(base)
            xi = min(h, oh)
            n_salt = xi / (ncat * zb)
            solutes = {salt: n_salt * molar_mass(salt)}
            if h > oh:
                solutes[acid] = (h - oh) / _eq(acid) * molar_mass(acid)
            elif oh > h:
                solutes[base] = (oh - h) / _eq(base) * molar_mass(base)
            water_g = total - sum(solutes.values())
            return solutes, water_g
        return {acid: na * molar_mass(acid), base: nb * molar_mass(base)}, total - na * molar_mass(acid) - nb * molar_mass(base)
    if kind == "reaction":
        sol = spec.sections.get("solute")
        if sol is not None:
            rho = props.values["solution.density"][0]
            return {sol["formula"]: sol["mass"].m_as("g")}, spec.get("solution", "volume").m_as("mL") * rho
        return {}, 0.0
    return {}, 0.0


def _eq(formula: str) -> int:
    return EQUIVALENTS.get(formula, 1)


# ------------------------------------------------------------------ warnings


def kind_warnings(spec: RunSpec, dt: DeltaT, gum: GumResult, model: ModelSpec) -> list[str]:
    out: list[str] = []
    kind = spec.kind
    if kind in ("electrical-calibration", "mixing-calibration"):
        # a heat capacity outside its type's range is a plausibility check (calc.checks)
        c = gum.values["calorimeter_heat_capacity"]
        u = gum.uncertainties["calorimeter_heat_capacity"]
        if c > 0 and u / c > 0.2:
            out.append(
                f"the calorimeter heat capacity is uncertain by {100 * u / c:.0f} % (over 20 %): "
                "prefer an electrical calibration, or repeat the calibration"
            )
    else:
        cal = spec.get("calorimeter", "heat_capacity")
        if cal is not None and cal.value > 0 and cal.u_as("J/K") / cal.m_as("J/K") > 0.2:
            out.append("the calorimeter heat capacity is uncertain by more than 20 %: it limits the result")
    if kind == "neutralization":
        base = spec.get("base", "formula")
        if base in ("Na2CO3", "NaHCO3", "K2CO3", "KHCO3"):
            out.append("a carbonate base gives off CO2: the product state and the heat are ill-defined")
        for sec in ("acid", "base"):
            c = spec.get(sec, "concentration").m_as("mol/L")
            if c > 2.0:
                out.append(
                    f"{sec} stock is concentrated ({c:g} mol/L): its heat of dilution is counted with the "
                    "reaction; use ≤ 1 mol/L"
                )
    if kind == "dissolution":
        formula = spec.get("solute", "formula")
        if formula in ("NaOH", "KOH", "CaCl2", "MgCl2", "LiCl"):
            out.append(
                f"{formula} takes up water from the air: weigh it quickly from a closed container or the "
                "amount will be overstated"
            )
    return out


@lru_cache(maxsize=512)
def _cautions(formulas: tuple[str, ...]) -> list[Any]:
    # cached: a batch repeats the same few substances thousands of times
    try:
        from calc.refdata.hazards import cautions_for
    except ImportError:
        return []
    return cautions_for(list(formulas))


@lru_cache(maxsize=512)
def _reference(kind: str, formula: str | None, acid: str | None, base: str | None, name: str | None) -> Any:
    try:
        from calc.refdata.reference import find_reference
    except ImportError:
        return None
    return find_reference(kind, formula=formula, acid=acid, base=base, name=name)


def _attach_reference(analysis: Analysis) -> None:
    """Attach the reference comparison and the cautions (best effort, never fails the run)."""
    spec = analysis.spec
    formulas = [
        spec.get(sec, "formula")
        for sec in ("solute", "acid", "base")
        if spec.get(sec, "formula") is not None
    ]
    r = spec.sections.get("reaction", {})
    if r.get("limiting_reagent"):
        formulas.append(r["limiting_reagent"])
    analysis.cautions = _cautions(tuple(formulas))
    if analysis.main != "molar_enthalpy":
        return
    try:
        from calc.refdata.comparison import compare
    except ImportError:
        return
    ref = _reference(
        _REFERENCE_KIND.get(spec.kind, spec.kind),
        spec.get("solute", "formula") or r.get("limiting_reagent"),
        spec.get("acid", "formula"),
        spec.get("base", "formula"),
        spec.get("reference", "name"),
    )
    if ref is None:
        return
    v = analysis.gum.values["molar_enthalpy"]
    analysis.comparison = compare(
        v,
        analysis.gum.expanded_uncertainty,
        ref,
        molality=analysis.model.molality,
        T_K=analysis.model.reference_temperature or 298.15,
    )


def summary_arrays(analysis: Analysis) -> dict[str, np.ndarray]:
    """Return the series for a plot: times, temperatures and the period bounds."""
    return {
        "time_s": analysis.readings.time_s,
        "temperature_K": analysis.readings.temperature_K,
    }
