"""Honest intervals: the 95 % intervals hold the truth in 93–97 % of noisy simulated runs.

Runs: calc.simulation.simulator.random_scenario with noise 0.002–0.02 K (AR(1) φ up to 0.6), resolution
0.001–0.1 K, and every stated input drawn around its true value with its stated uncertainty.
"""

from __future__ import annotations

import math
import os

import numpy as np

from tests.benchmarks.common import KINDS, run_one

N_PER_KIND = int(os.environ.get("CUPCAL_COVERAGE_RUNS", "1000"))  # ≥ 400 asked; 1000 halves the binomial noise


def test_coverage_per_kind(tmp_path):
    print(
        f"\ncoverage of the 95 % interval over {N_PER_KIND} noisy runs per kind (binomial SD "
        f"{100 * math.sqrt(0.95 * 0.05 / N_PER_KIND):.1f} %)"
    )
    results = {}
    for kind in KINDS:
        outs = [run_one(kind, 50_000 + seed, noisy=True, workdir=tmp_path)[0] for seed in range(N_PER_KIND)]
        ok = [o for o in outs if o.value is not None]
        failed = len(outs) - len(ok)
        cov = float(np.mean([o.covered for o in ok]))
        z = np.array([(o.value - o.truth) / o.u for o in ok])
        results[kind] = (cov, failed)
        print(
            f"  {kind:<24} coverage {100 * cov:5.1f} %   SD of (x − truth)/u = {np.std(z):.2f}   "
            f"median U/value = {100 * np.median([o.U / abs(o.value) for o in ok]):.2f} %   failed {failed}"
        )
    for kind, (cov, failed) in results.items():
        assert failed == 0, f"{kind}: {failed} runs could not be analyzed"
        assert 0.93 <= cov <= 0.97, f"{kind}: coverage {100 * cov:.1f} %"
