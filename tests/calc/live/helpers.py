"""Simulated live runs for the advisor's tests: a run file without readings and the readings it would log.

Truth: calc.simulation (an exact solution of the lumped heat balance, docs/methods.md §7.1, checked
against scipy's ODE solver in tests/calc/test_simulate.py).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from calc.live.advice_forecast import HORIZON_S, Forecast
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


L0 = 300.0  # after period so far, s (past the 3 minutes the advice asks for)


def forecast_with_gain(gain: float) -> Forecast:
    """A forecast with U now = 1 and U two minutes later = 1 − gain (k = 2)."""
    total = 0.25
    after = total * (1.0 - (1.0 - gain) ** 2) / (1.0 - L0 / (L0 + HORIZON_S))
    fc = Forecast(
        expanded_now=1.0,
        k=2.0,
        fixed_var=total - after,
        fit_fore=0.0,
        fit_after=after,
        res_fore=0.0,
        res_after=0.0,
        after_length=L0,
        level_var=lambda L: 1.0 / L,
        floor_ratio=lambda L: 1.0,
    )
    assert fc.gain(0.0) == pytest.approx(gain, rel=1e-9)
    assert fc.expanded(0.0) == pytest.approx(1.0)
    return fc
