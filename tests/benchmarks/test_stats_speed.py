"""Speed of the class, replicate and control statistics and of the planner (outside the default run).

The sizes are those of the issue "A whole class at once": a coordinator's week is 40 groups in each
of 8 sections running the same practical three times; a technician's week is check-standard runs
on every calorimeter. The targets are set for a web page that recomputes everything on each view:
the whole class's statistics in ≤ 100 ms, 50 control charts of 60 points in ≤ 100 ms, a plan in
≤ 0.5 s once the property models are loaded.
"""

from __future__ import annotations

import time

import numpy as np

from calc.plan import plan_run
from calc.statistics.cochran_test import cochran
from calc.statistics.control_charts import control_chart
from calc.statistics.precision import grubbs, iso5725, mandel_h_k
from calc.statistics.replicates import summarize_series
from calc.statistics.robust import robust_mean_sd
from tests.calc.plan_args import KCL_PLAN_INPUTS


def _best_of(fn, repeat: int = 5) -> float:
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def test_statistics_of_a_whole_class():
    rng = np.random.default_rng(1)
    sections = [[list(17.5 + rng.normal(0, 0.4) + rng.normal(0, 0.25, 3)) for _ in range(40)] for _ in range(8)]

    def week() -> None:
        for cells in sections:
            means = [float(np.mean(c)) for c in cells]
            grubbs(means)
            robust_mean_sd(means)
            iso5725(cells)
            mandel_h_k(cells)
            cochran(cells)
            for c in cells:
                summarize_series(c, type_b_u=0.1)
        iso5725([c for cells in sections for c in cells])

    t = _best_of(week)
    print(f"\nclass statistics, 8 sections × 40 groups × 3 runs: {t * 1e3:.1f} ms")
    assert t <= 0.1


def test_control_charts_of_every_calorimeter():
    rng = np.random.default_rng(2)
    series = [list(17.2 + 0.15 * rng.standard_normal(60)) for _ in range(50)]

    def week() -> None:
        for s in series:
            control_chart(s, baseline=20)

    t = _best_of(week)
    print(f"\n50 control charts of 60 points with run rules: {t * 1e3:.1f} ms")
    assert t <= 0.1


def test_plan_time():
    def plan() -> None:
        plan_run("dissolution", **KCL_PLAN_INPUTS, thermometer_noise=0.005)

    t0 = time.perf_counter()
    plan()
    cold = time.perf_counter() - t0
    warm = _best_of(plan)
    print(f"\nplan_run: {cold:.2f} s the first time (property models load), {warm * 1e3:.0f} ms after")
    assert warm <= 0.5
