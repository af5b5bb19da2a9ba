"""The design of a planned run and its predicted evaluation (see :mod:`calc.plan` for the method).

:class:`Design` holds the planned amounts as run-file sections; :func:`planned_delta_t` predicts
the corrected ΔT with the uncertainty components the analysis would report for the planned
readings; :func:`evaluate` puts the expected result through the kind's own model (iterated for the
properties); :func:`plan_warnings` lists what the plan should say.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import Any, NamedTuple

import numpy as np
from scipy import stats as sps

from calc.composition import resolve_properties
from calc.deltat.base import (
    DEFAULT_METHOD,
    METHOD_TERMS,
    DeltaT,
    resolution_term,  # the analysis's own resolution term
)
from calc.deltat.budget_terms import slope_floor  # the analysis's own slope floor
from calc.errors import InputError
from calc.io.quantities import Measured
from calc.io.runfile import RunSpec, parse_run
from calc.kinds import get_kind
from calc.plan_kinds import PLAN_KINDS, solve_delta_t
from calc.run_warnings import kind_warnings
from calc.uncertainty.gum import GumResult
from calc.uncertainty.measurement_models import ModelSpec, RunProperties, build_model

__all__ = [
    "Thermo",
    "Design",
    "Evaluation",
    "timing",
    "reading_sd",
    "planned_delta_t",
    "evaluate",
    "plan_warnings",
    "HOT_RISE_K",
    "AFTER_ADVISED_S",
]

HOT_RISE_K = 10.0
#: After-period length the analysis advises (it warns below 120 s; 5 minutes are advised).
AFTER_ADVISED_S = 300.0
SMOOTHING_S = 15.0
#: above this noise/resolution ratio the readings' SD has its closed form (keeps the grid small)
SHEPPARD_RATIO = 5.0
MAIN_FACTOR = math.log(10.0) + 6.0  # t90 + 6 τ, in units of τ_r


class Thermo(NamedTuple):
    q: float
    sigma: float
    phi: float
    interval: float
    fore: float
    after: float
    tau_r: float
    tau_s: float


def timing(th: Thermo, two_solution: bool) -> dict[str, float]:
    main = MAIN_FACTOR * th.tau_r + th.tau_s + SMOOTHING_S
    after_window = max(th.after - main, 60.0)
    d_fore = 0.0 if two_solution else th.tau_r + th.tau_s
    return {
        "main_s": main,
        "after_window_s": after_window,
        "fore_window_s": th.fore,
        "extrapolation_fore_s": d_fore,
        "extrapolation_after_s": main - d_fore,
    }


def reading_sd(q: float, sigma: float) -> tuple[float, float]:
    """Return (RMS residual SD the fits see, mean resolution term) over the level's place in a step.

    A reading is q·round((T + σZ)/q); where a steady level sits within a step (offset u, uniform)
    decides the readings' scatter: with σ ≪ q they stick to one value (SD 0, so no dither credit).
    """
    u = (np.arange(32) + 0.5) / 32 * q
    if sigma <= 0:
        sd = np.zeros_like(u)
    elif sigma > SHEPPARD_RATIO * q:
        # Sheppard's correction: var = σ² + q²/12, exact to within exp(−2π²σ²/q²) (< 1e-200 here);
        # the grid below would need (q + 12σ)/q rows (a noise of 1000 K read to 0.01 K: 10⁶ rows × 32)
        sd = np.full_like(u, math.sqrt(sigma * sigma + q * q / 12.0))
    else:
        k = np.arange(math.floor(-6 * sigma / q) - 1, math.ceil((q + 6 * sigma) / q) + 2)[:, None] * q
        p = sps.norm.cdf((k + q / 2 - u) / sigma) - sps.norm.cdf((k - q / 2 - u) / sigma)
        mean = (p * k).sum(axis=0)
        sd = np.sqrt(np.maximum((p * k * k).sum(axis=0) - mean**2, 0.0))
    return math.sqrt(float(np.mean(sd**2))), float(np.mean([resolution_term(q, float(x)) for x in sd]))


def planned_delta_t(value: float, T0: float, th: Thermo, two_solution: bool) -> DeltaT:
    """Return the DeltaT the analysis would report for a planned change ``value``."""
    tm = timing(th, two_solution)
    s_read, u_res = reading_sd(th.q, th.sigma)
    s2 = s_read**2
    infl = (1.0 + th.phi) / (1.0 - th.phi)

    def level_var(L: float, d: float) -> tuple[float, float]:
        n = L / th.interval + 1.0
        return s2 * infl * (1.0 / n + 12.0 * (L / 2.0 + d) ** 2 / (n * L * L)), n

    v_f, n_f = level_var(tm["fore_window_s"], tm["extrapolation_fore_s"])
    v_a, n_a = level_var(tm["after_window_s"], tm["extrapolation_after_s"])
    dof = min(n_a / infl - 3.0, n_f / infl - 2.0) if two_solution else (n_f + n_a) / infl - 4.0
    # the analysis's floor on the drift slopes from the resolution (calc.deltat.budget_terms.slope_floor)
    u_b = math.hypot(slope_floor(th.q, s_read, tm["fore_window_s"]), slope_floor(th.q, s_read, tm["after_window_s"]))
    return DeltaT(
        method=DEFAULT_METHOD,
        value=value,
        u_fit=math.sqrt(v_f + v_a),
        dof_fit=max(dof, 1.0),
        u_resolution_start=u_res,
        u_resolution_end=u_res,
        u_method=METHOD_TERMS[DEFAULT_METHOD] * abs(value) / math.sqrt(3.0),
        u_mixing_time=0.0,
        start_temperature=T0,
        u_start_temperature=math.sqrt(s2 * infl * 4.0 / n_f),  # fore line at its end
        end_temperature=T0 + value,
        u_drift_resolution=0.5 * tm["main_s"] * u_b,
    )


@dataclass
class Design:
    kind: str
    sections: dict[str, dict[str, Any]]
    T0: float
    thermo: Thermo
    enthalpy: float | None  # given expected ΔH, kJ/mol
    substances: list[str]

    expected_cal: float | None = None  # J/K: a calibration's expected heat capacity

    @property
    def two_solution(self) -> bool:
        return PLAN_KINDS[self.kind].two_solution

    @property
    def main(self) -> str:
        return PLAN_KINDS[self.kind].main

    def scaled(self, factor: float) -> Design:
        secs = {k: dict(v) for k, v in self.sections.items()}
        for sec, name in PLAN_KINDS[self.kind].scaled:
            m = secs[sec][name]
            secs[sec][name] = Measured(m.value * factor, m.u, m.unit, m.distribution, f"{m.value * factor!r} {m.unit}")
        return replace(self, sections=secs)

    def amount(self) -> tuple[str, float, str]:
        keys = PLAN_KINDS[self.kind].scaled
        m = self.sections[keys[0][0]][keys[0][1]]
        names = " and ".join(f"{sec}.{name}" for sec, name in keys)
        return names + (" (scaled together)" if len(keys) > 1 else ""), m.value, m.unit

    def run_file(self) -> str:
        lines = [
            f'kind = "{self.kind}"',
            'readings = "readings.csv"  # the log to be recorded',
            "",
            "[thermometer]",
            f'resolution = "{self.thermo.q:g} K"',
        ]
        for sec, fields in self.sections.items():
            lines += ["", f"[{sec}]"]
            for name, v in fields.items():
                if isinstance(v, int):
                    lines.append(f"{name} = {v}")
                    continue
                text = v if isinstance(v, str) else f"{v.value:.6g} ± {v.u:.2g} {v.unit}"
                lines.append(f'{name} = "{text}"')
        return "\n".join(lines) + "\n"

    def spec(self) -> RunSpec:
        spec = parse_run(self.run_file(), source="plan")
        for sec, fields in self.sections.items():  # keep each input's own distribution
            for name, v in fields.items():
                if isinstance(v, Measured):
                    spec.sections[sec][name] = v
        return spec


class Evaluation(NamedTuple):
    spec: RunSpec
    dt: DeltaT
    props: RunProperties
    model: ModelSpec
    expected: float
    note: str


def expected_result(design: Design, molality: float | None, T: float) -> tuple[float, str]:
    if design.expected_cal is not None:
        return design.expected_cal, "the heat capacity the calorimeter is expected to have (as given)"
    if design.enthalpy is not None:
        return design.enthalpy, "expected ΔH as given"
    from calc.refdata.reference import find_reference

    sec = design.sections
    ref = find_reference(
        get_kind(design.kind).compared_with,
        formula=sec.get("solute", {}).get("formula"),
        acid=sec.get("acid", {}).get("formula"),
        base=sec.get("base", {}).get("formula"),
    )
    if ref is None:
        what = ", ".join(design.substances)
        raise InputError(
            f"cupcal has no reference enthalpy for {what}: give the expected ΔH (e.g. molar_enthalpy = 17.2 kJ/mol)",
            field="molar_enthalpy",
        )
    from calc.refdata.comparison import compare

    c = compare(ref.value, 0.0, ref, molality=molality, T_K=T) if ref.u > 0 else None
    if c is not None and c.adjusted_reference is not None:
        return c.adjusted_reference, f"{ref.name} ({ref.value:.2f} kJ/mol; {'; '.join(c.adjustments)}) — {ref.source}"
    return ref.value, f"{ref.name} ({ref.value:.2f} kJ/mol) — {ref.source}"


def evaluate(design: Design) -> Evaluation:
    """Predict ΔT from the expected ΔH through the run kind's own model (iterated for properties)."""
    spec = design.spec()
    main = design.main
    value = 0.0
    for _ in range(6):
        dt = planned_delta_t(value, design.T0, design.thermo, design.two_solution)
        props = resolve_properties(spec, dt)
        model = build_model(spec, dt, props)
        expected, note = expected_result(design, model.molality, design.T0)
        x = {inp.name: inp.value for inp in model.inputs}

        def output(d: float, x: dict[str, Any] = x, model: ModelSpec = model) -> float:
            x["delta_t.fit"] = d
            return float(model.model(x)[main])

        new = solve_delta_t(output, expected)
        done = abs(new - value) <= 1e-7 * max(abs(new), 1e-3)
        value = new
        if done:
            break
    dt = planned_delta_t(value, design.T0, design.thermo, design.two_solution)
    props = resolve_properties(spec, dt)
    model = build_model(spec, dt, props)
    return Evaluation(spec, dt, props, model, expected, note)


def plan_warnings(design: Design, ev: Evaluation, gum: GumResult, window: tuple[float, float]) -> list[str]:
    out: list[str] = []
    dT, q = ev.dt.value, design.thermo.q
    a = abs(dT)
    lo, hi = window
    if lo >= hi:
        out.append(
            f"no useful window: the thermometer resolution {q:g} K needs |ΔT| ≥ {lo:g} K; use a finer thermometer"
        )
    elif a < lo:
        out.append(f"the predicted |ΔT| = {a:.2f} K is below the useful window ({lo:g}–{hi:g} K)")
    elif a > hi:
        out.append(f"the predicted |ΔT| = {a:.2f} K is above the useful window ({lo:g}–{hi:g} K)")
    if a < 10 * q:
        out.append(f"|ΔT| is under 10 × the thermometer resolution ({10 * q:g} K): the resolution dominates")
    if dT > HOT_RISE_K:
        out.append(
            f"HOT: the solution will warm by about {dT:.1f} K to about {design.T0 + dT - 273.15:.0f} °C; "
            "use smaller amounts, add the reagent in portions with stirring, and handle the cup with care"
        )
    tm = timing(design.thermo, design.two_solution)
    if design.thermo.after - tm["main_s"] < AFTER_ADVISED_S:
        out.append(
            f"record at least {tm['main_s'] + AFTER_ADVISED_S:.0f} s after mixing: the release needs about "
            f"{tm['main_s']:.0f} s and the after period should then last 5 minutes"
        )
    if design.thermo.fore < 60.0:
        out.append("the fore period is short: 3–5 minutes of readings before mixing are advised")
    for sec, fields in design.sections.items():
        for name, v in fields.items():
            if isinstance(v, Measured) and v.distribution != "normal" and name in ("mass", "volume", "heat_capacity"):
                out.append(
                    f"{sec}.{name} {v.text!r} has no ±: its uncertainty is taken from the last digit "
                    f"({v.u:.2g} {v.unit}); give the balance's, glassware's or calibration's uncertainty"
                )
    out.extend(ev.props.warnings)
    out.extend(kind_warnings(ev.spec, ev.dt, gum, ev.model))
    return out
