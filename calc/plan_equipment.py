"""What limits a planned result: the uncertainty budget grouped by the piece of equipment (or data) behind each line."""

from __future__ import annotations

import math
from dataclasses import dataclass

from calc.uncertainty.gum import BudgetLine

__all__ = ["EquipmentShare", "equipment_of", "equipment_shares"]

#: Which piece of equipment (or which data) each model input stands for.
_EQUIPMENT = {
    "calorimeter.heat_capacity": "calorimeter heat capacity (its calibration)",
    "delta_t.resolution_start": "thermometer resolution",
    "delta_t.resolution_end": "thermometer resolution",
    "delta_t.drift_resolution": "thermometer resolution",
    "delta_t.model": "drift model (room, evaporation)",
    "delta_t.fit": "thermometer noise (drift fits)",
    "acid.temperature": "thermometer noise (drift fits)",
    "delta_t.method": "ΔT correction method",
    "delta_t.mixing_time": "mixing time",
    "solute.mass": "balance",
    "reaction.mass": "balance",
    "solute.purity": "reagent purity",
    "acid.concentration": "acid stock (standardisation)",
    "base.concentration": "base stock (standardisation)",
    "base.temperature": "thermometer reading of the base before pouring",
    "mixture.specific_heat_capacity": "property data (densities, heat capacity)",
}


def equipment_of(input_name: str) -> str:
    """Return the piece of equipment (or data) that a model input's uncertainty comes from."""
    if input_name in _EQUIPMENT:
        return _EQUIPMENT[input_name]
    if input_name.endswith(".volume"):
        return "volumetric glassware"
    if input_name.endswith(".density"):
        return "property data (densities, heat capacity)"
    return input_name


@dataclass(frozen=True)
class EquipmentShare:
    """The share of u²(ΔH) that one piece of equipment (or data) carries."""

    equipment: str
    share: float
    contribution: float  # √(Σ contributions²), in the result's unit
    inputs: tuple[str, ...]


def equipment_shares(budget: list[BudgetLine]) -> list[EquipmentShare]:
    """Return the budget grouped by equipment (:func:`equipment_of`), the largest share first."""
    groups: dict[str, list[BudgetLine]] = {}
    for b in budget:
        groups.setdefault(equipment_of(b.name), []).append(b)
    out = [
        EquipmentShare(
            k, sum(b.share for b in v), math.sqrt(sum(b.contribution**2 for b in v)), tuple(b.name for b in v)
        )
        for k, v in groups.items()
    ]
    return sorted(out, key=lambda e: -e.share)
