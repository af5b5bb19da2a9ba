"""The noise correlation of the two drift windows is estimated once for both (docs/methods.md §8.4).

Truth: AR(1) series e_t = ρ e_(t−1) + √(1 − ρ²) w_t with w_t standard normal, whose lag-1
autocorrelation is ρ by construction (common practice, no source). One reading a second with a
correlation time of 20 s gives ρ = exp(−1/20).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.signal import lfilter

from calc.deltat.drift import lag1_autocorrelation, pooled_lag1

RHO = float(np.exp(-1 / 20))


def _ar1(rng: np.random.Generator, n: int) -> np.ndarray:
    w = rng.normal(size=n) * np.sqrt(1 - RHO * RHO)
    w[0] = rng.normal()  # start in the stationary state
    return lfilter([1.0], [1.0, -RHO], w)


def test_one_window_pooled_is_its_own_estimate():
    r = _ar1(np.random.default_rng(3), 200)
    assert pooled_lag1(r) == pytest.approx(lag1_autocorrelation(r), abs=1e-12)


def test_a_short_window_borrows_the_long_windows_correlation():
    rng = np.random.default_rng(11)
    own, pooled = [], []
    for _ in range(300):
        fore, after = _ar1(rng, 90), _ar1(rng, 600)
        own.append(lag1_autocorrelation(fore))
        pooled.append(pooled_lag1(fore, after))
    # a 90-reading window alone reads the correlation low; pooled with 600 readings it is close
    assert np.mean(own) < RHO - 0.02
    assert abs(np.mean(pooled) - RHO) < 0.01
    assert np.std(pooled) < 0.5 * np.std(own)
