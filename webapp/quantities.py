"""The one place that turns stored numbers back into quantities and series.

Columns hold magnitudes in the unit named in the column (``heat_j``, ``heat_j_std``).
A value read back is a new, independent ``ufloat``: correlations between outputs do
not survive storage, so compute correlated results within one calc call.
"""

from __future__ import annotations

from typing import Any

import numpy as np
from uncertainties import ufloat

from calc.io.units import Q_
from webapp.models import Calibration, Result, Run

#: result outputs: key → (value column, uncertainty column, unit)
RESULT_OUTPUTS = {
    "corrected_delta_t": ("corrected_delta_t_k", "corrected_delta_t_k_std", "K"),
    "heat": ("heat_j", "heat_j_std", "J"),
    "molar_enthalpy": ("molar_enthalpy_kj_mol", "molar_enthalpy_kj_mol_std", "kJ/mol"),
    "calorimeter_heat_capacity": ("calorimeter_heat_capacity_j_k", "calorimeter_heat_capacity_j_k_std", "J/K"),
}


def result_value(result: Result, key: str) -> tuple[float, float, str] | None:
    """Return (value, standard uncertainty, unit) of one output, or None when the run has none."""
    vcol, ucol, unit = RESULT_OUTPUTS[key]
    value = getattr(result, vcol)
    if value is None:
        return None
    return value, getattr(result, ucol) or 0.0, unit


def result_quantity(result: Result, key: str) -> Any:
    """Return one output as a pint Quantity whose magnitude is a ``ufloat``, or None."""
    v = result_value(result, key)
    if v is None:
        return None
    return Q_(ufloat(v[0], v[1]), v[2])


def main_value(result: Result) -> tuple[float, float, str]:
    """Return (value, standard uncertainty, unit) of the run's main output."""
    v = result_value(result, result.main)
    assert v is not None  # the main output is always stored
    return v


def calibration_quantity(calibration: Calibration) -> Any:
    """Return a calibration's heat capacity as a Quantity (ufloat magnitude, J/K)."""
    return Q_(ufloat(calibration.heat_capacity_j_k, calibration.heat_capacity_j_k_std), "J/K")


def series(run: Run) -> tuple[np.ndarray, np.ndarray]:
    """Return the run's parsed readings: times (s) and temperatures (K)."""
    t = np.frombuffer(run.series_time_s, dtype="<f8")
    y = np.frombuffer(run.series_temperature_k, dtype="<f8")
    return t, y
