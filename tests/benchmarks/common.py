"""Shared helpers of the benchmarks: simulate a run with a known truth and analyze it."""

from __future__ import annotations

import math
import tempfile
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from calc.analysis import analyze_run
from calc.errors import CupcalError
from calc.simulation.simulator import random_scenario, write_run

KINDS = ("dissolution", "neutralization", "electrical-calibration", "mixing-calibration", "reaction")


@dataclass
class Outcome:
    kind: str
    seed: int
    method: str
    value: float | None
    truth: float
    U: float | None
    u: float | None
    error: str | None
    scale: float  # what a relative error is taken of
    truth_obj: object = None

    @property
    def rel_error(self) -> float:
        return math.inf if self.value is None else (self.value - self.truth) / self.scale

    @property
    def covered(self) -> bool:
        return self.value is not None and abs(self.value - self.truth) <= self.U


def run_one(
    kind: str,
    seed: int,
    *,
    noisy: bool,
    methods=("regnault-pfaundler",),
    workdir: Path | None = None,
    mc_trials: int = 0,
) -> list[Outcome]:
    """Simulate one run and analyze it by each method; return one outcome per method."""
    sim = random_scenario(kind, np.random.default_rng(seed), noisy=noisy)
    tr = sim.truth
    with tempfile.TemporaryDirectory(dir=workdir) as d:
        path = write_run(sim, d, f"run{seed}")
        out = []
        for m in methods:
            if kind in ("electrical-calibration", "mixing-calibration"):
                truth = tr.calorimeter_heat_capacity_J_K
                # the whole calorimeter's heat capacity (contents + cup) is the scale of the figure
                scale = tr.heat_capacity_final_J_K
                key = "calorimeter_heat_capacity"
            else:
                truth = tr.molar_enthalpy_kJ_mol
                scale = abs(truth)
                key = "molar_enthalpy"
            try:
                a = analyze_run(path, method=m, monte_carlo_trials=mc_trials, seed=seed)
            except CupcalError as exc:
                out.append(Outcome(kind, seed, m, None, truth, None, None, str(exc), scale, tr))
                continue
            out.append(
                Outcome(
                    kind,
                    seed,
                    m,
                    a.gum.values[key],
                    truth,
                    a.gum.expanded_uncertainty,
                    a.gum.uncertainties[key],
                    None,
                    scale,
                    tr,
                )
            )
        return out
