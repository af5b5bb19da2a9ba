"""The pooling rule of repeat calibrations, checked against numpy's weighted average and scipy's chi-square."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from calc.errors import InputError
from calc.statistics.calibration_pool import moves_too_far, pool


def test_consistent_values_give_the_inverse_variance_weighted_mean() -> None:
    xs, us = [18.2, 18.9, 18.5], [0.4, 0.5, 0.3]
    p = pool([(i, x, u) for i, (x, u) in enumerate(zip(xs, us, strict=True))])
    w = 1 / np.square(us)
    mean = np.average(xs, weights=w)  # numpy's weighted average as the reference
    chi2 = float(np.sum(w * (np.array(xs) - mean) ** 2))
    assert p.members == (0, 1, 2) and p.excluded == ()
    assert math.isclose(p.value, mean, rel_tol=1e-14)
    assert math.isclose(p.chi2, chi2, rel_tol=1e-12) and p.dof == 2
    assert math.isclose(p.limit, stats.chi2.ppf(0.95, 2), rel_tol=1e-12)  # 5.991 (scipy)
    birge = math.sqrt(chi2 / 2)
    assert math.isclose(p.birge, birge, rel_tol=1e-12)
    assert math.isclose(p.u, (1 / math.sqrt(w.sum())) * max(1.0, birge), rel_tol=1e-12)


def test_the_inconsistent_member_is_left_out() -> None:
    # the four heater calibrations of issue 13 (newest first), each ± 0.3 J/K (invented uncertainties)
    p = pool([(4, 27.6, 0.3), (3, 25.9, 0.3), (2, 25.6, 0.3), (1, 26.1, 0.3)])
    assert p.excluded == (4,) and set(p.members) == {1, 2, 3}
    assert math.isclose(p.value, np.mean([25.9, 25.6, 26.1]), rel_tol=1e-14)
    # with 27.6 kept, χ² would exceed the 95 % quantile on 3 degrees of freedom
    full = np.array([27.6, 25.9, 25.6, 26.1])
    assert float(np.sum((full - full.mean()) ** 2) / 0.09) > stats.chi2.ppf(0.95, 3)


def test_scatter_beyond_the_stated_uncertainties_widens_the_interval() -> None:
    p = pool([(1, 10.0, 1.0), (2, 12.2, 1.0)])  # χ² = 2.42 < 3.84: consistent, Birge ratio 1.56
    assert p.excluded == () and p.birge > 1
    assert math.isclose(p.u, math.sqrt(0.5) * p.birge, rel_tol=1e-12)


def test_bad_input_and_the_confirmation_rule() -> None:
    with pytest.raises(InputError):
        pool([])
    with pytest.raises(InputError, match="positive"):
        pool([(1, 18.0, 0.0)])
    assert moves_too_far((18.67, 0.5), (886.9, 20.0), 2.0)  # the 15 V typo of issue 12
    assert not moves_too_far((18.67, 0.5), (18.9, 0.4), 2.0)
