"""Outlier tests, ISO 5725-2 precision, Mandel's h and k, Cochran's C and Algorithm A.

Check values and their sources are named beside each check. Critical values are computed in
calc.statistics.precision from scipy's t and F distributions; the tables they are checked against are typed here
from memory, as printed to three decimals.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats as sps

from calc.errors import InputError
from calc.statistics.cochran_test import cochran, cochran_critical
from calc.statistics.precision import (
    grubbs,
    grubbs_critical,
    iso5725,
    mandel_h_critical,
    mandel_h_k,
    mandel_k_critical,
)
from calc.statistics.robust import robust_mean_sd

# ISO 5725-2 (1994) Table 5, Grubbs' test critical values for one largest or one smallest
# observation, upper 5 % and upper 1 % columns (from memory; also docs/methods.md §6.3 for 5 %).
GRUBBS_5 = {3: 1.155, 4: 1.481, 5: 1.715, 6: 1.887, 7: 2.020, 8: 2.126, 9: 2.215, 10: 2.290}
GRUBBS_1 = {3: 1.155, 4: 1.496, 5: 1.764, 6: 1.973, 7: 2.139, 8: 2.274, 9: 2.387, 10: 2.482}


@pytest.mark.parametrize("n", sorted(GRUBBS_5))
def test_grubbs_critical_values_match_the_iso_5725_2_table(n):
    # The table is printed to 3 decimals and not always rounded to nearest (n = 8 computes to
    # 2.1266, printed 2.126; n = 3 computes to 1.1543, printed 1.155, the bound (n−1)/√n = 1.1547):
    # tolerance 0.001.
    assert grubbs_critical(n, 0.05) == pytest.approx(GRUBBS_5[n], abs=1e-3)
    assert grubbs_critical(n, 0.01) == pytest.approx(GRUBBS_1[n], abs=1e-3)


def test_grubbs_at_three_values_can_never_exceed_its_bound():
    # docs/methods.md §6.3: G ≤ (n−1)/√n, so the test is nearly powerless on triplicates
    rng = np.random.default_rng(1)
    bound = 2 / math.sqrt(3)
    for _ in range(200):
        x = rng.standard_cauchy(3)
        assert grubbs(x).G <= bound + 1e-12
    assert grubbs_critical(3) < bound


def test_grubbs_false_alarm_rate_on_normal_data_is_alpha():
    # The meaning of a two-sided 5 % critical value, checked with numpy normal draws (independent
    # of calc.statistics.precision): 100 000 samples of 8 give a rate of 0.05 ± 0.0014 (binomial SD).
    rng = np.random.default_rng(7)
    x = rng.standard_normal((100_000, 8))
    G = np.max(np.abs(x - x.mean(axis=1, keepdims=True)), axis=1) / x.std(axis=1, ddof=1)
    rate = float(np.mean(G > grubbs_critical(8, 0.05)))
    assert rate == pytest.approx(0.05, abs=0.005)


def test_grubbs_flags_the_suspect_value_of_a_section():
    # invented class section: seven ΔH results in kJ/mol, one copying slip
    values = [17.4, 17.9, 17.6, 17.2, 17.8, 21.5, 17.5]
    r = grubbs(values)
    assert r.index == 5 and r.is_outlier
    assert r.G == pytest.approx(abs(21.5 - np.mean(values)) / np.std(values, ddof=1), rel=1e-12)
    assert not grubbs([17.4, 17.9, 17.6, 17.2, 17.8, 17.5]).is_outlier


def test_grubbs_rejects_too_few_or_non_finite_values():
    with pytest.raises(InputError, match="at least 3"):
        grubbs([1.0, 2.0])
    with pytest.raises(InputError, match="value 2 is not a finite number"):
        grubbs([1.0, float("nan"), 3.0])
    assert grubbs([2.0, 2.0, 2.0]).G == 0.0


def test_iso5725_by_hand_for_two_groups_of_two():
    # own arithmetic: means 2 and 6, s_i² = 2 each → s_r² = 2; s_d² = 2·4 + 2·4 = 16;
    # n̄ = (4 − 8/4)/1 = 2; s_L² = (16 − 2)/2 = 7; s_R² = 9
    p = iso5725([[1.0, 3.0], [5.0, 7.0]])
    assert p.mean == pytest.approx(4.0)
    assert p.s_r == pytest.approx(math.sqrt(2))
    assert p.s_L == pytest.approx(math.sqrt(7))
    assert p.s_R == pytest.approx(3.0)
    assert p.r == pytest.approx(2.8 * math.sqrt(2))  # ISO 5725-6 limit factor 2.8 (from memory)
    assert p.R == pytest.approx(2.8 * 3.0)
    assert p.n_bar == pytest.approx(2.0)


def test_iso5725_agrees_with_a_one_way_anova_from_scipy():
    # No published ISO 5725-2 worked data set is remembered well enough to type here, so the
    # one-way analysis is checked by an independent route: scipy.stats.f_oneway gives F; the
    # within-group mean square is computed here from the raw residuals, the between-group mean
    # square is F times it, and the random-effects estimate with unequal group sizes is
    # s_L² = (MS_b − MS_w)/n₀, n₀ = (N − Σn_i²/N)/(p − 1) (one-way ANOVA, from memory).
    rng = np.random.default_rng(11)
    sizes = [3, 2, 4, 3, 3, 2, 5, 3]
    cells = [list(10 + rng.normal(0, 0.4) + rng.normal(0, 0.25, n)) for n in sizes]
    F, pval = sps.f_oneway(*cells)
    N = sum(sizes)
    ms_w = sum(float(np.sum((np.array(c) - np.mean(c)) ** 2)) for c in cells) / (N - len(cells))
    ms_b = F * ms_w
    n0 = (N - sum(n * n for n in sizes) / N) / (len(sizes) - 1)
    p = iso5725(cells)
    assert p.s_r**2 == pytest.approx(ms_w, rel=1e-10)
    assert p.F == pytest.approx(F, rel=1e-10)
    assert p.p_value == pytest.approx(pval, rel=1e-8)
    assert p.s_L**2 == pytest.approx(max(0.0, (ms_b - ms_w) / n0), rel=1e-10)
    assert p.mean == pytest.approx(np.mean(np.concatenate(cells)), rel=1e-12)


def test_iso5725_recovers_the_variance_components_of_a_simulated_class():
    # 320 groups (8 sections × 40) with 2–4 replicates each; true s_L = 0.40, s_r = 0.25
    rng = np.random.default_rng(5)
    cells = [list(rng.normal(0, 0.40) + rng.normal(0, 0.25, int(n))) for n in rng.integers(2, 5, 320)]
    p = iso5725(cells)
    assert p.s_r == pytest.approx(0.25, rel=0.06)
    assert p.s_L == pytest.approx(0.40, rel=0.10)
    assert p.s_R == pytest.approx(math.hypot(0.40, 0.25), rel=0.08)


def test_iso5725_truncates_a_negative_between_group_variance_at_zero():
    p = iso5725([[1.0, 3.0], [1.9, 2.1], [2.0, 2.0, 2.0]])
    assert p.s_L == 0.0 and p.s_R == pytest.approx(p.s_r)


def test_iso5725_input_errors():
    with pytest.raises(InputError, match="at least 2 groups"):
        iso5725([[1.0, 2.0]])
    with pytest.raises(InputError, match="single result"):
        iso5725([[1.0], [2.0]])
    with pytest.raises(InputError, match="group 2"):
        iso5725([[1.0, 2.0], []])


# ISO 5725-2 (1994) Table 6, indicators h and k at the 1 % and 5 % levels (from memory).
MANDEL_H_5 = {3: 1.15, 4: 1.42, 5: 1.57, 6: 1.66, 7: 1.71, 8: 1.75, 9: 1.78, 10: 1.80}
MANDEL_H_1 = {3: 1.15, 4: 1.49, 5: 1.72, 6: 1.87, 7: 1.98, 8: 2.06, 9: 2.13, 10: 2.18}
MANDEL_K_N2_5 = {3: 1.65, 4: 1.76, 5: 1.81}
# ISO 5725-2 (1994) Table 4, Cochran's critical values for n = 2 (from memory; the classical
# Eisenhart tables give the same to 3 decimals).
COCHRAN_N2_5 = {3: 0.967, 4: 0.906, 5: 0.841, 6: 0.781, 7: 0.727, 8: 0.680, 9: 0.638, 10: 0.602}
COCHRAN_N2_1 = {3: 0.993, 4: 0.968, 5: 0.928, 6: 0.883, 7: 0.838, 8: 0.794, 9: 0.754, 10: 0.718}


@pytest.mark.parametrize("p", sorted(MANDEL_H_5))
def test_mandel_h_critical_values_match_the_table(p):
    assert mandel_h_critical(p, 0.05) == pytest.approx(MANDEL_H_5[p], abs=0.006)
    assert mandel_h_critical(p, 0.01) == pytest.approx(MANDEL_H_1[p], abs=0.006)


@pytest.mark.parametrize("p", sorted(MANDEL_K_N2_5))
def test_mandel_k_critical_values_match_the_table(p):
    assert mandel_k_critical(p, 2, 0.05) == pytest.approx(MANDEL_K_N2_5[p], abs=0.006)


@pytest.mark.parametrize("p", sorted(COCHRAN_N2_5))
def test_cochran_critical_values_match_the_table(p):
    assert cochran_critical(p, 2, 0.05) == pytest.approx(COCHRAN_N2_5[p], abs=0.001)
    assert cochran_critical(p, 2, 0.01) == pytest.approx(COCHRAN_N2_1[p], abs=0.001)


def test_mandel_h_and_k_flag_the_odd_groups():
    cells = [
        [10.0, 10.2, 10.1],
        [10.1, 10.3, 10.2],
        [9.9, 10.1, 10.0],
        [10.0, 10.1, 10.2],
        [11.0, 11.2, 11.1],
        [10.0, 10.9, 9.3],
        [10.1, 10.0, 10.2],
        [10.2, 10.1, 10.0],
    ]
    h, k = mandel_h_k(cells)
    # by definition (ISO 5725-2): the h have mean 0 and SD 1; Σk² = p for equal replicates
    assert np.mean(h) == pytest.approx(0.0, abs=1e-12)
    assert np.std(h, ddof=1) == pytest.approx(1.0)
    assert np.sum(k**2) == pytest.approx(len(cells))
    assert int(np.argmax(h)) == 4 and h[4] > mandel_h_critical(8, 0.01)
    assert int(np.argmax(k)) == 5 and k[5] > mandel_k_critical(8, 3, 0.01)
    c = cochran(cells)
    assert c.index == 5 and c.is_outlier and c.n == 3 and c.p == 8


def test_algorithm_a_constants_are_the_normal_consistency_factors():
    # ISO 13528 Annex C constants (docs/methods.md §6.1): 1.483 = 1/Φ⁻¹(0.75) turns a median absolute
    # deviation into σ, and 1.134 = 1/√E[min(max(Z, −1.5), 1.5)²] undoes winsorizing at 1.5σ;
    # both computed here with scipy.stats.norm (the second is 1.1334; ISO prints 1.134).
    assert 1 / sps.norm.ppf(0.75) == pytest.approx(1.483, abs=5e-4)
    var_w = sps.norm.expect(lambda z: np.clip(z, -1.5, 1.5) ** 2)
    assert 1 / math.sqrt(var_w) == pytest.approx(1.134, abs=1e-3)


def test_algorithm_a_is_consistent_for_normal_data_and_robust_to_outliers():
    rng = np.random.default_rng(3)
    x = rng.normal(50.0, 2.0, 20_000)
    r = robust_mean_sd(x)
    assert r.converged
    assert r.mean == pytest.approx(50.0, abs=0.05)
    assert r.sd == pytest.approx(2.0, rel=0.03)
    # 10 % gross errors 10σ high: the plain mean moves by 1σ, Algorithm A's by a fraction of that
    y = np.concatenate([rng.normal(50.0, 2.0, 180), np.full(20, 70.0)])
    assert np.mean(y) - 50.0 > 1.5
    assert abs(robust_mean_sd(y).mean - 50.0) < 0.8


def test_algorithm_a_with_mostly_equal_values_has_zero_sd():
    r = robust_mean_sd([5.0, 5.0, 5.0, 5.0, 9.0])
    assert r.mean == 5.0 and r.sd == 0.0
