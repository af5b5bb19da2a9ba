"""Run the figure cells: every kind × resolution × mixing time given or detected.

A cell analyses ``n`` truth-known logs from a generator (``"sim"``: calc.simulation.realistic;
``"indep"``: tests/benchmarks/independent_logs.py, which shares no code with calc's simulator)
and records for each run: the relative error, whether the 95 % interval held the truth, whether
a warning came with it, whether it was refused, and |ΔT_true| in units of the resolution.
"""

from __future__ import annotations

import hashlib
import math
import tempfile
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from calc.analysis import analyze_run
from calc.errors import CupcalError

KINDS = ("dissolution", "neutralization", "electrical-calibration", "mixing-calibration", "reaction")
RESOLUTIONS = (0.001, 0.01, 0.1)


@dataclass
class CellRun:
    kind: str
    seed: int
    rel_error: float  # (value − truth)/scale; inf when refused
    covered: bool
    warned: bool
    refused: bool
    message: str
    steps: float  # |ΔT_true|/resolution


def _generate(generator: str, kind: str, seed: int, resolution: float, given: bool, artefacts: bool):
    if generator == "sim":
        from calc.simulation.realistic import realistic_scenario
        from calc.simulation.simulator import write_run

        sim = realistic_scenario(
            kind, np.random.default_rng(seed), resolution=resolution, mixing_given=given, artefacts=artefacts
        )
        tr = sim.truth
        if kind in ("electrical-calibration", "mixing-calibration"):
            truth, scale, key = (
                tr.calorimeter_heat_capacity_J_K,
                tr.heat_capacity_final_J_K,
                "calorimeter_heat_capacity",
            )
        else:
            truth, scale, key = tr.molar_enthalpy_kJ_mol, abs(tr.molar_enthalpy_kJ_mol), "molar_enthalpy"
        return (lambda d: write_run(sim, d, f"r{seed}")), truth, scale, key, abs(tr.delta_t_adiabatic)
    from tests.benchmarks.independent_logs import make_log

    lg = make_log(kind, seed, resolution=resolution, mixing_given=given, artefacts=artefacts)
    return lg.write, lg.truth, lg.scale, lg.key, abs(lg.delta_t)


def cell_seed0(generator: str, kind: str, resolution: float, given: bool) -> int:
    """Return the first seed of a cell, drawn from a hash of the cell so that cells use disjoint seeds.

    With the same seeds in every cell the cells passed or failed together; a 48-bit hash makes an
    overlap of two cells' seed ranges (a few hundred seeds each) vanishingly unlikely.
    """
    key = f"{generator}|{kind}|{resolution:g}|{'given' if given else 'detected'}".encode()
    return int.from_bytes(hashlib.sha256(key).digest()[:6], "big")


def coverage_interval(covered: int, n: int, level: float = 0.95) -> tuple[float, float]:
    """Return the exact (Clopper–Pearson) binomial interval of a coverage ``covered``/``n``."""
    from scipy.stats import binomtest

    if n == 0:
        return math.nan, math.nan
    ci = binomtest(covered, n).proportion_ci(confidence_level=level, method="exact")
    return float(ci.low), float(ci.high)


def run_cell(
    generator: str, kind: str, resolution: float, given: bool, n: int, *, seed0: int = 0, artefacts: bool = True
) -> list[CellRun]:
    """Analyze ``n`` generated runs of one cell (see the module docstring)."""
    out = []
    with tempfile.TemporaryDirectory() as tmp:
        for i in range(n):
            seed = seed0 + i
            write, truth, scale, key, dT = _generate(generator, kind, seed, resolution, given, artefacts)
            path = write(Path(tmp))
            try:
                a = analyze_run(path, with_reference=False)
            except CupcalError as exc:
                out.append(CellRun(kind, seed, math.inf, False, True, True, str(exc), dT / resolution))
                continue
            v = a.gum.values[key]
            U = a.gum.expanded_uncertainty
            out.append(
                CellRun(
                    kind,
                    seed,
                    (v - truth) / scale,
                    abs(v - truth) <= U,
                    bool(a.warnings),
                    False,
                    "; ".join(a.warnings),
                    dT / resolution,
                )
            )
    return out


def summary(runs: list[CellRun]) -> dict[str, float]:
    """Return coverage (of analyzed runs), refusal share, P90 |error| and silent gross errors."""
    ok = [r for r in runs if not r.refused]
    big = [r for r in runs if r.steps >= 20]
    return {
        "n": len(runs),
        "coverage": float(np.mean([r.covered for r in ok])) if ok else math.nan,
        "covered": sum(r.covered for r in ok),
        "analyzed": len(ok),
        "refused": sum(r.refused for r in runs),
        "refused_big_share": (sum(r.refused for r in big) / len(big)) if big else 0.0,
        "p90": float(np.percentile([abs(r.rel_error) for r in ok], 90)) if ok else math.inf,
        "silent_gross": sum(1 for r in ok if abs(r.rel_error) > 0.05 and not r.warned),
    }
