"""Series of repeat runs: Type A statistics, the shared Type B part, Welch–Satterthwaite, Birge ratio."""

from __future__ import annotations

import math

import numpy as np
import pytest

from calc.errors import InputError
from calc.statistics.replicates import birge_ratio, shared_type_b, summarize_series
from calc.uncertainty.gum import BudgetLine, coverage_factor

# GUM (JCGM 100:2008) Table G.2, t_p(ν) for p = 95 % (from memory; docs/methods.md §5.2 for 2, 3, 4, 9, ∞).
GUM_G2_95 = {
    1: 12.71,
    2: 4.30,
    3: 3.18,
    4: 2.78,
    5: 2.57,
    6: 2.45,
    7: 2.36,
    8: 2.31,
    9: 2.26,
    10: 2.23,
    15: 2.13,
    20: 2.09,
    30: 2.04,
    50: 2.01,
    100: 1.984,
}


@pytest.mark.parametrize("nu", sorted(GUM_G2_95))
def test_student_t_factors_match_gum_table_g2(nu):
    s = summarize_series(np.arange(nu + 1, dtype=float))
    assert s.dof == nu
    digits = 3 if nu == 100 else 2  # the table's precision
    assert s.t95 == pytest.approx(GUM_G2_95[nu], abs=0.6 * 10.0**-digits)


def test_infinite_degrees_of_freedom_give_1_96():
    # GUM Table G.2, ν = ∞: 1.960 (from memory)
    assert coverage_factor(math.inf) == pytest.approx(1.960, abs=5e-4)


def test_series_statistics_by_hand():
    # own arithmetic: mean 17.3, s = 0.2, u = 0.2/√3, interval mean ± t(2)·u with t(2) = 4.303
    s = summarize_series([17.1, 17.5, 17.3])
    assert s.n == 3 and s.mean == pytest.approx(17.3)
    assert s.sd == pytest.approx(0.2)
    assert s.u_mean == pytest.approx(0.2 / math.sqrt(3))
    lo, hi = s.ci95
    assert hi - s.mean == pytest.approx(4.303 * 0.2 / math.sqrt(3), rel=1e-3)
    assert s.mean - lo == pytest.approx(hi - s.mean)
    assert s.u_combined == pytest.approx(s.u_mean) and s.U == pytest.approx(hi - s.mean)


def test_welch_satterthwaite_with_an_equal_exact_type_b_part():
    # GUM G.2b algebra: u_B = u_A with ν_B = ∞ gives u_c = √2 u_A and ν_eff = 4(n − 1)
    s = summarize_series([10.0, 10.4, 10.1, 10.3], type_b_u=None)
    t = summarize_series([10.0, 10.4, 10.1, 10.3], type_b_u=s.u_mean)
    assert t.u_combined == pytest.approx(math.sqrt(2) * s.u_mean)
    assert t.dof_eff == pytest.approx(12.0)
    assert t.k == pytest.approx(coverage_factor(12.0))
    # a Type B part with finite ν (GUM G.4.2: ν = ½ (Δu/u)⁻², 25 % reliability → 8)
    v = summarize_series([10.0, 10.4, 10.1, 10.3], type_b_u=s.u_mean, type_b_dof=8)
    assert v.dof_eff == pytest.approx(4 * s.u_mean**4 / (s.u_mean**4 / 3 + s.u_mean**4 / 8))


@pytest.mark.parametrize(("n", "u_b"), [(3, 0.0), (3, 1.0), (5, 0.5)])
def test_expanded_uncertainty_covers_the_truth_95_percent_of_the_time(n, u_b):
    # Simulated series: one shared systematic error N(0, u_B) per series plus run-to-run scatter
    # N(0, 1); truth 0. With u_B = 0 the t interval is exact (95 %); with a shared part the
    # Welch–Satterthwaite k is an approximation (within about 1 % here). 10 000 series: binomial
    # SD 0.22 %, tolerance ±1.5 %.
    rng = np.random.default_rng(17)
    hits = 0
    trials = 10_000
    for _ in range(trials):
        x = rng.normal(0.0, u_b) + rng.normal(0.0, 1.0, n) if u_b else rng.normal(0.0, 1.0, n)
        s = summarize_series(x, type_b_u=u_b)
        hits += abs(s.mean) <= s.U
    assert hits / trials == pytest.approx(0.95, abs=0.015)


def _line(name: str, contribution: float, dof: float = math.inf) -> BudgetLine:
    return BudgetLine(name, name, 1.0, "", 1.0, "normal", dof, 1.0, contribution, 0.0)


def test_shared_type_b_takes_the_non_averaging_lines_of_a_budget():
    budget = [
        _line("calorimeter.heat_capacity", 0.3),
        _line("mixture.specific_heat_capacity", 0.4),
        _line("solute.mass", 5.0),
        _line("delta_t.fit", 2.0, dof=50),
    ]
    u, dof = shared_type_b(budget)
    assert u == pytest.approx(0.5) and dof == math.inf  # √(0.3² + 0.4²), own arithmetic
    u, dof = shared_type_b(budget, shared=["calorimeter.heat_capacity", "delta_t.fit"])
    assert u == pytest.approx(math.hypot(0.3, 2.0))
    assert dof == pytest.approx((0.3**2 + 2.0**2) ** 2 / (2.0**4 / 50))  # GUM G.2b


def test_birge_ratio_by_hand():
    # own arithmetic: x̄_w = 2, χ² = 1 + 1 = 2, R_B = √(2/1)
    b = birge_ratio([1.0, 3.0], [1.0, 1.0])
    assert b.weighted_mean == pytest.approx(2.0)
    assert b.chi2 == pytest.approx(2.0)
    assert b.ratio == pytest.approx(math.sqrt(2))
    assert b.u_weighted_mean == pytest.approx(1 / math.sqrt(2))


def test_birge_ratio_near_one_when_the_stated_uncertainties_are_right():
    # E[χ²/(n−1)] = 1 for complete uncertainties (the χ² distribution's mean); halving them doubles R_B
    rng = np.random.default_rng(4)
    u = rng.uniform(0.5, 2.0, 400)
    x = 17.2 + u * rng.standard_normal(400)
    assert birge_ratio(x, u).ratio == pytest.approx(1.0, abs=0.1)
    assert birge_ratio(x, u / 2).ratio == pytest.approx(2.0, abs=0.2)


def test_series_input_errors():
    with pytest.raises(InputError, match="at least 2"):
        summarize_series([17.2])
    with pytest.raises(InputError, match="type_b_u"):
        summarize_series([1.0, 2.0], type_b_u=-1.0)
    with pytest.raises(InputError, match="uncertainty 2 must be > 0"):
        birge_ratio([1.0, 2.0], [1.0, 0.0])
    with pytest.raises(InputError, match="2 results but 3 uncertainties"):
        birge_ratio([1.0, 2.0], [1.0, 1.0, 1.0])
