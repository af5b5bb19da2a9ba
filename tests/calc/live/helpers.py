"""Simulated live runs for the advisor's tests: a run file without readings and the readings it would log.

Truth: calc.simulation (an exact solution of the lumped heat balance, docs/methods.md §7.1, checked
against scipy's ODE solver in tests/calc/test_simulate.py).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from calc.simulation import simulator

SIMULATE = {
    "dissolution": simulator.simulate_dissolution,
    "neutralization": simulator.simulate_neutralization,
    "electrical-calibration": simulator.simulate_electrical_calibration,
    "mixing-calibration": simulator.simulate_mixing_calibration,
    "reaction": simulator.simulate_reaction,
}

#: Quiet, well-behaved runs: 0.003 K noise, 0.01 K resolution, 5 minutes before the addition.
QUIET = {"noise": 0.003, "resolution": 0.01, "fore_s": 300.0, "after_s": 1200.0, "tau_s": 3.0, "tau_h": 3600.0}


def live_run(kind: str, seed: int, folder: Path, **options) -> tuple[str, np.ndarray, np.ndarray, object]:
    """Return (run-file text without a readings key, times in s, readings in °C, the simulated run)."""
    sim = SIMULATE[kind](seed, **{**QUIET, **options})
    path = simulator.write_run(sim, folder, f"{kind}-{seed}")
    text = "\n".join(
        line for line in path.read_text(encoding="utf-8").splitlines() if not line.startswith("readings =")
    )
    return text + "\n", np.asarray(sim.time_s, dtype=float), np.asarray(sim.reading_C, dtype=float), sim


def upto(t: np.ndarray, y: np.ndarray, time_s: float) -> tuple[np.ndarray, np.ndarray]:
    """Return the readings logged up to ``time_s``."""
    m = t <= time_s
    return t[m], y[m]
