"""A truth-known run played by the simulated thermometer of :mod:`calc.live.simthermo` (``cupcal record --simulate``).

The simulator sits beside the command line in the top layer of calc, so ``calc.cli.record`` does not
import this module: it loads it by name, the way :mod:`calc.cli.commands` loads every command.
"""

from __future__ import annotations

import tempfile
from typing import Any

from calc.live.devices import DeviceProfile
from calc.live.simthermo import SimThermometer
from calc.simulation.realistic import realistic_scenario
from calc.simulation.run import SimulatedRun, write_run

__all__ = ["simulated_thermometer", "run_file_text", "truth_line"]


def simulated_thermometer(
    kind: str, seed: int | None, profile: DeviceProfile, *, speed: float = 1.0, garble: float = 0.0
) -> tuple[SimulatedRun, SimThermometer]:
    """Simulate one ``kind`` run with the bench's artefacts at 0.01 K resolution; return it and its player."""
    sim = realistic_scenario(kind, seed, resolution=0.01, mixing_given=True)
    return sim, SimThermometer(sim.time_s, sim.reading_C, profile, speed=speed, garble=garble, seed=seed)


def run_file_text(sim: Any, log_name: str) -> str:
    """Return the run file of ``sim`` (TOML) naming ``log_name`` as its readings."""
    with tempfile.TemporaryDirectory() as folder:
        text = write_run(sim, folder, "run").read_text(encoding="utf-8")
    return text.replace('readings = "run.csv"', f'readings = "{log_name}"', 1)


def truth_line(sim: Any) -> str:
    """Return the simulated run's true ΔT_ad and main result, in one line."""
    t = sim.truth
    value = (
        f"ΔH = {t.molar_enthalpy_kJ_mol:.3f} kJ/mol"
        if t.molar_enthalpy_kJ_mol is not None
        else f"C_cal = {t.calorimeter_heat_capacity_J_K:.2f} J/K"
    )
    return f"simulated truth: ΔT_ad = {t.delta_t_adiabatic:.4f} K, {value}"
