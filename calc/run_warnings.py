"""Warnings about a run's own inputs and result (written into the report and the JSON record).

The plausibility checks with a number attached are in :mod:`calc.checks`; these are the plain
warnings of each kind and of a wide interval.
"""

from __future__ import annotations

import math

from calc.deltat.base import DeltaT
from calc.io.runfile import RunSpec
from calc.kinds import get_kind
from calc.uncertainty.gum import GumResult, MonteCarloResult
from calc.uncertainty.measurement_models import ModelSpec

__all__ = ["kind_warnings", "wide_interval_warning", "monte_carlo_warning", "WIDE_INTERVAL"]

#: A result whose 95 % interval is wider than this share of its value gets a warning naming the
#: largest contribution. A result more than 5 % off must never pass without a word: with the
#: interval at ±2.5 %, 5 % off is four standard uncertainties (about 1 run in 15 000 of a normal
#: spread). At ±5 % it was two: at 1000 runs a cell, 4 of 60 000 truth-known runs were 5.1–6.5 %
#: off with intervals of ±3.2–5.0 % and no warning (docs/methods.md §8.10).
WIDE_INTERVAL = 0.025


def wide_interval_warning(gum: GumResult, main: str) -> list[str]:
    """Return a warning when the 95 % interval is wider than :data:`WIDE_INTERVAL` of the result."""
    v, U = gum.values[main], gum.expanded_uncertainty
    if not (math.isfinite(v) and math.isfinite(U)) or v == 0 or U <= WIDE_INTERVAL * abs(v):
        return []
    top = max(gum.budget, key=lambda b: b.share, default=None)
    why = f"; the largest contribution is {top.label} ({100 * top.share:.0f} % of the variance)" if top else ""
    return [
        f"the 95 % interval is ±{100 * U / abs(v):.1f} % of the result (over {100 * WIDE_INTERVAL:g} %): "
        f"a result several percent off is within its reach{why}"
    ]


def monte_carlo_warning(mc: MonteCarloResult, unit: str) -> list[str]:
    """Return a warning when the Monte Carlo interval disagrees with the GUM interval."""
    if mc.agrees:
        return []
    return [
        f"the Monte Carlo 95 % interval [{mc.low:.4g}, {mc.high:.4g}] {unit} differs from the GUM interval "
        f"by more than the tolerance ({mc.tolerance:.2g} {unit}); report the Monte Carlo interval"
    ]


def kind_warnings(spec: RunSpec, dt: DeltaT, gum: GumResult, model: ModelSpec) -> list[str]:
    """Return the warnings of a run's kind: an uncertain heat capacity, then the kind's ``warnings`` hook."""
    out: list[str] = []
    kind = get_kind(spec.kind)
    if kind.is_calibration:
        # a heat capacity outside its type's range is a plausibility check (calc.checks)
        c = gum.values[kind.main_output]
        u = gum.uncertainties[kind.main_output]
        if c > 0 and u / c > 0.2:
            out.append(
                f"the calorimeter heat capacity is uncertain by {100 * u / c:.0f} % (over 20 %): "
                "prefer an electrical calibration, or repeat the calibration"
            )
    else:
        cal = spec.get("calorimeter", "heat_capacity")
        if cal is not None and cal.value > 0 and cal.u_as("J/K") / cal.m_as("J/K") > 0.2:
            out.append("the calorimeter heat capacity is uncertain by more than 20 %: it limits the result")
    own = kind.hook("warnings")
    if own is not None:
        out.extend(own(spec))
    return out


# ------------------------------------------------------------------ the kinds' ``warnings`` hooks


def neutralization_warnings(spec: RunSpec) -> list[str]:
    """A carbonate base, a concentrated stock."""
    out: list[str] = []
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
    return out


def dissolution_warnings(spec: RunSpec) -> list[str]:
    """A solute that takes up water from the air."""
    formula = spec.get("solute", "formula")
    if formula in ("NaOH", "KOH", "CaCl2", "MgCl2", "LiCl"):
        return [
            f"{formula} takes up water from the air: weigh it quickly from a closed container or the "
            "amount will be overstated"
        ]
    return []
