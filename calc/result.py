"""The result of one analyzed run (:class:`Analysis`) and the units of its outputs.

Its own module so that the analysis, the in-situ kind, the reports and the checks all use the
one type without importing one another.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from calc import __version__
from calc.checks import Check
from calc.deltat.base import DeltaT
from calc.deltat.periods import Periods
from calc.io.readings import Readings
from calc.io.runfile import RunSpec
from calc.uncertainty.gum import GumResult, MonteCarloResult
from calc.uncertainty.measurement_models import ModelSpec, RunProperties

__all__ = ["Analysis", "OUTPUT_UNITS"]

OUTPUT_UNITS = {
    "corrected_delta_t": "K",
    "heat": "J",
    "molar_enthalpy": "kJ/mol",
    "calorimeter_heat_capacity": "J/K",
    "heat_capacity_total": "J/K",  # cup + contents, from an in-situ heater pulse
}


@dataclass
class Analysis:
    """Everything known about one analyzed run."""

    spec: RunSpec
    readings: Readings
    periods: Periods
    delta_t: DeltaT
    model: ModelSpec
    gum: GumResult
    properties: RunProperties
    monte_carlo: MonteCarloResult | None = None
    warnings: list[str] = field(default_factory=list)
    comparison: Any = None
    cautions: list[Any] = field(default_factory=list)
    checks: list[Check] = field(default_factory=list)
    software_version: str = __version__
    rejected: list[dict[str, Any]] = field(default_factory=list)  # readings rejected as spikes
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
