"""Analyse a run end to end: run file and log → corrected ΔT → heat → result ± U.

:func:`analyze_run` is the one entry point the command line and the web app
call. It never prints; it returns an :class:`Analysis` that the formatters in
:mod:`calc.report` turn into text or JSON.
"""

from __future__ import annotations

import math
import os
from dataclasses import dataclass, field
from functools import lru_cache
from pathlib import Path
from typing import Any

import numpy as np

from calc import __version__
from calc.deltat import DEFAULT_METHOD, DeltaT, Log, corrected_delta_t
from calc import limits
from calc.errors import AnalysisError, InputError
from calc.limits import require_number
from calc.gum import GumResult, MonteCarloResult, monte_carlo, propagate
from calc.models import EQUIVALENTS, MAIN_OUTPUT, ModelSpec, Properties, build_model
from calc.periods import Periods, find_periods
from calc.readings import Readings, read_readings
from calc.runfile import RunSpec, load_run
from calc.solutes import STRONG_ACIDS

__all__ = ["Analysis", "analyze_run", "analyze_spec", "OUTPUT_UNITS"]

OUTPUT_UNITS = {
    "corrected_delta_t": "K",
    "heat": "J",
    "molar_enthalpy": "kJ/mol",
    "calorimeter_heat_capacity": "J/K",
}

#: Plausible calorimeter heat capacities of a coffee-cup calorimeter, J/K (SCIENCE §2.2–2.3;
#: common practice, no source): outside this range a calibration is flagged.
PLAUSIBLE_C_CAL = (0.0, 100.0)


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
    software_version: str = __version__

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
    :func:`calc.readings.read_readings` then checks that it is a regular file and caps its size.
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
    readings = read_readings(confined_readings(spec.readings_path, Path(path).parent, src), source=rsrc)
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
    with_reference: bool = True,
) -> Analysis:
    """Analyse an already parsed run and log (used by the web app for re-analysis).

    ``with_reference=False`` skips the reference comparison and the cautions (the JSON
    record carries neither), which keeps batch analysis fast.
    """
    check_options(monte_carlo_trials, seed, fore, after)
    two = spec.kind in ("neutralization", "mixing-calibration")
    mix = spec.mixing_time
    periods = find_periods(
        readings.time_s,
        readings.temperature_K,
        resolution=spec.resolution_K,
        mixing_time=None if mix is None else mix.m_as("s"),
        u_mixing_time=0.0 if mix is None else mix.u_as("s"),
        fore=fore or spec.fore_period,
        after=after or spec.after_period,
        two_solution=two,
        source=readings.source,
        lines=readings.lines,
    )
    log = Log(readings.time_s, readings.temperature_K, periods, spec.resolution_K, two_solution=two)
    dt = corrected_delta_t(log, method or spec.method or DEFAULT_METHOD)
    if not math.isfinite(dt.value) or dt.value == 0.0:
        raise AnalysisError(f"{readings.source}: no usable temperature change was found")
    props = resolve_properties(spec, dt)
    model = build_model(spec, dt, props)
    gum = propagate(model.inputs, model.model, model.main)
    warnings: list[str] = []
    warnings.extend(dt.warnings)
    warnings.extend(props.warnings)
    warnings.extend(kind_warnings(spec, dt, gum, model))
    mc = None
    if monte_carlo_trials and monte_carlo_trials > 0:
        mc = monte_carlo(model.inputs, model.model, model.main, gum, trials=monte_carlo_trials, seed=seed)
        if not mc.agrees:
            unit = MAIN_OUTPUT[spec.kind][1]
            warnings.append(
                f"the Monte Carlo 95 % interval [{mc.low:.4g}, {mc.high:.4g}] {unit} differs from the GUM interval "
                f"by more than the tolerance ({mc.tolerance:.2g} {unit}); report the Monte Carlo interval"
            )
    analysis = Analysis(spec, readings, periods, dt, model, gum, props, mc, warnings)
    if with_reference:
        _attach_reference(analysis)
    return analysis


# ------------------------------------------------------------------ properties


def resolve_properties(spec: RunSpec, dt: DeltaT) -> Properties:
    """Return the densities and heat capacity the model needs.

    A value in the run file always wins; otherwise the property models of
    :mod:`calc.properties` supply it and the source is recorded.
    """
    import importlib

    class _Lazy:
        def __getattr__(self, name: str) -> Any:
            return getattr(importlib.import_module("calc.properties"), name)

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
    from calc.molar_mass import molar_mass

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


#: Cation of each strong base; anions come from calc.solutes.STRONG_ACIDS and ion charges
#: from calc.models.EQUIVALENTS (H⁺ or OH⁻ per formula unit).
_CATIONS = {"NaOH": "Na", "KOH": "K", "LiOH": "Li", "Ba(OH)2": "Ba", "Ca(OH)2": "Ca"}


def _final_composition(spec: RunSpec, props: Properties) -> tuple[dict[str, float], float]:
    """Return the solutes (formula → g) and water mass (g) of the final solution."""
    from calc.molar_mass import molar_mass

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
        c = gum.values["calorimeter_heat_capacity"]
        u = gum.uncertainties["calorimeter_heat_capacity"]
        if c < PLAUSIBLE_C_CAL[0] or c > PLAUSIBLE_C_CAL[1]:
            out.append(
                f"calorimeter heat capacity {c:.3g} J/K is implausible for a coffee-cup calorimeter "
                f"(expected {PLAUSIBLE_C_CAL[0]:g}–{PLAUSIBLE_C_CAL[1]:g} J/K): check the masses, temperatures and mixing time"
            )
        if c > 0 and u / c > 0.2:
            out.append(
                f"the calorimeter heat capacity is uncertain by {100 * u / c:.0f} % (over 20 %): "
                "prefer an electrical calibration, or repeat the calibration"
            )
    else:
        cal = spec.get("calorimeter", "heat_capacity")
        if cal is not None and cal.value > 0 and cal.u_as("J/K") / cal.m_as("J/K") > 0.2:
            out.append("the calorimeter heat capacity is uncertain by more than 20 %: it limits the result")
        if cal is not None and (cal.m_as("J/K") < 0 or cal.m_as("J/K") > PLAUSIBLE_C_CAL[1]):
            out.append(f"calorimeter heat capacity {cal.text} is implausible for a coffee-cup calorimeter")
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
        from calc.hazards import cautions_for
    except ImportError:
        return []
    return cautions_for(list(formulas))


@lru_cache(maxsize=512)
def _reference(kind: str, formula: str | None, acid: str | None, base: str | None, name: str | None) -> Any:
    try:
        from calc.reference import find_reference
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
        from calc.compare import compare
    except ImportError:
        return
    ref = _reference(
        spec.kind,
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
