"""Plausibility checks on every run, each carrying the number that triggered it.

:func:`run_checks` looks at an analyzed run and returns a list of :class:`Check`
(``code``, ``severity`` "info" or "warning", ``message``, ``value``):

``solubility``
    The solute mass per 100 g of water against the solubility at the run's coldest
    temperature (``calc/refdata/data/solubility.csv``, source named per entry). Value: percent of
    saturation. Warning from :data:`NEAR_SATURATION` (85 %).
``concentration_range``
    The final solution's solute mass fraction beyond the range of the property model that
    supplied its heat capacity (Laliberté's fitted w_max). Value: the mass fraction.
``delta_t_expected``
    The corrected ΔT against the ΔT the reference ΔH predicts from the run's own inputs
    (the model is affine in ΔT; the prediction is read off it as the planner does). Value:
    measured/predicted − 1, in percent. Warning beyond :data:`DELTA_T_TOLERANCE`.
``calorimeter_heat_capacity``
    The calorimeter's heat capacity (stated, or the calibration's result) outside the range
    of its type (:data:`CALORIMETER_TYPES`) for the water it holds by more than its standard
    uncertainty. Value: C_cal in J/K.
``calibration_history``
    A calibration more than :data:`HISTORY_K` standard uncertainties from the calorimeter's
    own history (given by the caller). Value: the distance in those uncertainties.
"""

from __future__ import annotations

import csv
import math
from collections.abc import Callable, Sequence
from dataclasses import asdict, dataclass
from functools import lru_cache
from typing import Any

import numpy as np

from calc.refdata.datafiles import open_data

__all__ = [
    "Check",
    "run_checks",
    "solubility",
    "plausible_heat_capacity",
    "CALORIMETER_TYPES",
    "DEFAULT_CALORIMETER_TYPE",
    "NEAR_SATURATION",
    "DELTA_T_TOLERANCE",
    "HISTORY_K",
]

#: Percent of saturation from which a solute mass is flagged.
NEAR_SATURATION = 85.0
#: Relative difference between measured and predicted ΔT flagged (beyond the run's own U).
DELTA_T_TOLERANCE = 0.15
#: Coverage factor of the calibration-history check.
HISTORY_K = 3.0

#: Plausible heat capacity per calorimeter type: (low J/K, high J/K, high per J/K of water heat capacity).
#: The upper bound is max(high, per_water · m_water c_p). Foam cups: two nested polystyrene cups, lid and
#: probe; a glass Dewar flask of 100–500 mL; a jacketed glass or steel vessel. (Common practice, no source.)
CALORIMETER_TYPES: dict[str, tuple[float, float, float, str]] = {
    "foam-cups": (0.0, 100.0, 0.25, "foam-cup calorimeter"),
    "dewar": (20.0, 300.0, 0.6, "Dewar flask"),
    "jacketed": (20.0, 1000.0, 2.0, "jacketed vessel"),
    "other": (0.0, 2000.0, 4.0, "calorimeter of another type"),
}
DEFAULT_CALORIMETER_TYPE = "foam-cups"

_WATER_CP = 4.18  # J/(g K) near 20 °C, enough for a plausibility range (common practice, no source)


@dataclass(frozen=True)
class Check:
    """One plausibility finding."""

    code: str
    severity: str  # "info" | "warning"
    message: str
    value: float | None

    def as_dict(self) -> dict[str, Any]:
        """Return the JSON form: code, severity, message, value."""
        out = asdict(self)
        if out["value"] is not None and not math.isfinite(out["value"]):
            out["value"] = None
        return out


@lru_cache(maxsize=1)
def _solubility_table() -> dict[str, tuple[np.ndarray, np.ndarray, str]]:
    from calc.refdata.species import citation

    rows: dict[str, list[tuple[float, float, str]]] = {}
    with open_data("solubility.csv") as fh:
        for row in csv.DictReader(fh):
            rows.setdefault(row["formula"], []).append(
                (float(row["t_C"]), float(row["g_per_100g_water"]), row["source"])
            )
    table = {}
    for formula, entries in rows.items():
        entries.sort()
        table[formula] = (np.array([e[0] for e in entries]), np.array([e[1] for e in entries]), citation(entries[0][2]))
    return table


def solubility(formula: str, t_C: float) -> tuple[float, str] | None:
    """Return (g of solute per 100 g of water, source) at ``t_C``, or None when not tabulated.

    Linear between table temperatures; the nearest end value outside the table.
    """
    entry = _solubility_table().get(formula.strip())
    if entry is None:
        return None
    t, s, source = entry
    return float(np.interp(t_C, t, s)), source


def plausible_heat_capacity(kind: str | None, water_g: float | None) -> tuple[float, float, str]:
    """Return (low, high, label) of a plausible heat capacity (J/K) for a calorimeter type."""
    low, high, per_water, label = CALORIMETER_TYPES[kind or DEFAULT_CALORIMETER_TYPE]
    if water_g:
        high = max(high, per_water * water_g * _WATER_CP)
    return low, high, label


def run_checks(
    analysis: Any,
    *,
    calorimeter_type: str | None = None,
    history: Sequence[tuple[float, float]] | None = None,
    reference: Any = None,
    composition: Callable[[], tuple[dict[str, float], float]] | None = None,
) -> list[Check]:
    """Return every plausibility check of an analyzed run (:class:`calc.analysis.Analysis`).

    ``composition`` returns the final solution's solutes (formula → g) and water (g); the analysis
    passes its own, so this module needs no import of it.
    """
    out: list[Check] = []
    found = _solubility_check(analysis)
    if found is not None:
        out.append(found)
    found = _concentration_check(analysis, composition) if composition is not None else None
    if found is not None:
        out.append(found)
    found = _delta_t_check(analysis, reference)
    if found is not None:
        out.append(found)
    found = _heat_capacity_check(analysis, calorimeter_type)
    if found is not None:
        out.append(found)
    found = _history_check(analysis, history)
    if found is not None:
        out.append(found)
    return out


def _water_g(analysis: Any) -> float | None:
    spec = analysis.spec
    for section, density in (("water", "water.density"), ("solution", "solution.density")):
        volume = spec.get(section, "volume")
        if volume is not None and density in analysis.properties.values:
            return float(volume.m_as("mL") * analysis.properties.values[density][0])
    vals = analysis.properties.values
    if all(f"{s}.density" in vals for s in ("acid", "base")):  # two stocks mixed (a neutralization)
        return float(sum(spec.get(s, "volume").m_as("mL") * vals[f"{s}.density"][0] for s in ("acid", "base")))
    return None


def _solubility_check(analysis: Any) -> Check | None:
    spec = analysis.spec
    solute = spec.sections.get("solute")
    water = _water_g(analysis)
    if solute is None or not water:
        return None
    dt = analysis.delta_t
    coldest = min(dt.start_temperature, dt.end_temperature) - 273.15
    found = solubility(solute["formula"], coldest)
    if found is None:
        return None
    limit, source = found
    source = source.split(",")[0] + (" (from memory)" if "from memory" in source else "")
    per_100 = 100.0 * solute["mass"].m_as("g") / water
    percent = 100.0 * per_100 / limit
    if percent < NEAR_SATURATION:
        return None
    what = "more than dissolves" if percent > 100.0 else "close to saturation"
    message = (
        f"{solute['mass'].text} of {solute['formula']} in {water:.1f} g of water is {per_100:.1f} g per 100 g, "
        f"{percent:.0f} % of its solubility ({limit:.1f} g per 100 g at {coldest:.1f} °C; {source}): "
        f"{what}; check the mass and the water volume"
    )
    return Check("solubility", "warning", message, round(percent, 1))


def _concentration_check(analysis: Any, composition: Callable[[], tuple[dict[str, float], float]]) -> Check | None:
    props = analysis.properties.values
    cp = props.get("mixture.specific_heat_capacity")
    if cp is None or cp[3] == "run file":
        return None
    from calc.refdata.properties import _laliberte_row

    solutes, water_g = composition()
    total = water_g + sum(solutes.values())
    if not solutes or total <= 0:
        return None
    w = sum(solutes.values()) / total
    for formula in solutes:
        try:
            row = _laliberte_row(formula)
        except Exception:  # noqa: BLE001 - an unreadable formula has been reported elsewhere
            row = None
        if row is None or not row.cp_range[2]:
            continue
        w_max = row.cp_range[2]
        if w > w_max:
            message = (
                f"the final solution's solute mass fraction {w:.3f} is beyond the range of the heat-capacity "
                f"model for {formula} (Laliberté, up to {w_max:.3f}): its c_p is extrapolated; give "
                "[mixture] specific_heat_capacity"
            )
            return Check("concentration_range", "warning", message, round(w, 4))
    return None


def predicted_delta_t(analysis: Any, reference_value: float) -> float | None:
    """Return the ΔT (K) the run's own model gives for ΔH = ``reference_value`` (kJ/mol)."""
    model = analysis.model
    if model.main != "molar_enthalpy":
        return None
    x = {i.name: i.value for i in model.inputs}
    measured = x["delta_t.fit"]
    at_zero = float(model.model({**x, "delta_t.fit": 0.0})["molar_enthalpy"])
    at_meas = float(model.model(x)["molar_enthalpy"])
    slope = (at_meas - at_zero) / measured if measured else 0.0
    if slope == 0.0 or not math.isfinite(slope):
        return None
    return (reference_value - at_zero) / slope


def _delta_t_check(analysis: Any, reference: Any) -> Check | None:
    if reference is None:
        return None
    predicted = predicted_delta_t(analysis, reference.value)
    measured = analysis.delta_t.value
    if predicted is None or predicted == 0.0:
        return None
    rel = measured / predicted - 1.0
    value = analysis.gum.values["molar_enthalpy"]
    own = analysis.gum.expanded_uncertainty / abs(value) if value else math.inf
    tolerance = max(DELTA_T_TOLERANCE, 2.0 * math.hypot(own, 2.0 * reference.u / abs(reference.value)))
    if abs(rel) <= tolerance:
        return None
    message = (
        f"the corrected ΔT {measured:+.3f} K differs by {100 * rel:+.0f} % from the {predicted:+.3f} K that "
        f"{reference.name} ({reference.value:.2f} kJ/mol) predicts for this run's amounts: check the masses, "
        "volumes, the formula and the mixing time"
    )
    return Check("delta_t_expected", "warning", message, round(100.0 * rel, 1))


def _heat_capacity_check(analysis: Any, calorimeter_type: str | None) -> Check | None:
    spec = analysis.spec
    kind = calorimeter_type or spec.get("calorimeter", "type")
    if analysis.main == "calorimeter_heat_capacity":
        c, u = analysis.gum.values[analysis.main], analysis.gum.uncertainties[analysis.main]
        what = "measured"
    elif "heat_capacity_total" in analysis.gum.values and (water_g := _water_g(analysis)):
        # an in-situ heater measures cup + solution: less the water's share, roughly the cup's
        c = analysis.gum.values["heat_capacity_total"] - water_g * _WATER_CP
        u = analysis.gum.uncertainties["heat_capacity_total"]
        what = "implied (heater's cup + solution less the water)"
    else:
        stated = spec.get("calorimeter", "heat_capacity")
        if stated is None:
            return None
        c, u = stated.m_as("J/K"), stated.u_as("J/K")
        what = "stated"
    water = _water_g(analysis)
    low, high, label = plausible_heat_capacity(kind, water)
    if c + u >= low and c - u <= high:  # within the range, or not clearly outside it
        return None
    hint = "" if kind else " (if this is a Dewar flask or a jacketed vessel, set [calorimeter] type)"
    fill = f" holding {water:.0f} g of water" if water else ""
    message = (
        f"the {what} calorimeter heat capacity {c:.4g} ± {u:.2g} J/K is outside {low:g}–{high:.0f} J/K, "
        f"the plausible range for a {label}{fill}{hint}: check the masses, temperatures and mixing time"
    )
    return Check("calorimeter_heat_capacity", "warning", message, round(c, 3))


def _history_check(analysis: Any, history: Sequence[tuple[float, float]] | None) -> Check | None:
    if not history or analysis.main != "calorimeter_heat_capacity":
        return None
    values = np.array([h[0] for h in history], float)
    us = np.array([h[1] for h in history], float)
    c, u = analysis.gum.values[analysis.main], analysis.gum.uncertainties[analysis.main]
    centre = float(np.median(values))
    # the history's own scatter once there are three values, else a typical calibration's uncertainty
    spread = float(np.std(values, ddof=1)) if values.size > 2 else float(np.median(us))
    scale = math.hypot(u, spread)
    if not scale > 0:
        return None
    distance = abs(c - centre) / scale
    if distance <= HISTORY_K:
        return None
    message = (
        f"this calibration, {c:.4g} ± {u:.2g} J/K, is {distance:.1f} standard uncertainties from the "
        f"calorimeter's history (median {centre:.4g} J/K of {values.size} calibrations): repeat it before "
        "using it"
    )
    return Check("calibration_history", "warning", message, round(distance, 2))
