"""The thermometer's sawtooth is predicted, and it is not taken for correlated noise (docs/methods.md §8.2)."""

from __future__ import annotations

import numpy as np
import pytest

from calc.deltat.base import resolution_term
from calc.deltat.drift import fit_line, inflation, lag1_autocorrelation
from calc.deltat.quantisation import dither_variance, predicted_sawtooth, split_sawtooth


@pytest.mark.parametrize("sigma_over_q", [0.05, 0.1, 0.2, 0.4, 1.0])
def test_predicted_sawtooth_is_the_mean_reading_error(sigma_over_q):
    # the expectation E[Q(x + n)] − x checked by brute force: numpy rounds 200 000 noisy copies
    # of each value; allowed: 4.5 standard errors of the brute-force mean
    q, sigma = 0.1, sigma_over_q * 0.1
    x = np.linspace(-0.3, 0.3, 61)
    rng = np.random.default_rng(5)
    noisy = x[:, None] + rng.normal(0.0, sigma, (x.size, 200_000))
    want = (np.round(noisy / q) * q).mean(axis=1) - x
    got = predicted_sawtooth(x, q, sigma)
    se = np.sqrt(sigma**2 + q * q / 12.0) / np.sqrt(200_000)
    assert np.max(np.abs(got - want)) < 4.5 * se
    # noise of one step leaves almost nothing (the first harmonic is damped by exp(−2π²) ≈ 3e-9)
    if sigma_over_q >= 1.0:
        assert np.max(np.abs(got)) < 1e-6 * q


def test_without_noise_the_sawtooth_is_the_rounding_error():
    q = 0.01
    x = np.linspace(0.0, 0.05, 501)
    assert np.array_equal(predicted_sawtooth(x, q, 0.0), np.round(x / q) * q - x)


def test_a_swept_staircase_is_not_read_as_correlated_noise():
    # a noise-free drift through about six 0.1 K steps, read every second and stored in kelvin
    # (so the grid sits at 273.15 + j·q: half a step off a grid through zero)
    q = 0.1
    t = np.arange(200.0)
    signal = 293.1537 + 0.0031 * t
    y = 273.15 + np.round((signal - 273.15) / q) * q
    plain = fit_line(t, y)
    aware = fit_line(t, y, q=q)
    assert plain.rho > 0.8  # the residual sawtooth looks like noise correlated over many readings
    assert aware.rho < 0.3
    # the sawtooth's variance enters uninflated: about q²/12 a reading
    assert aware.var_a * t.size == pytest.approx(q * q / 12.0, rel=0.25)
    assert aware.var_b < plain.var_b / 5.0


def test_readings_off_the_grid_are_left_as_they_are():
    rng = np.random.default_rng(3)
    t = np.arange(120.0)
    y = 293.0 + 0.001 * t + rng.normal(0.0, 0.02, t.size)  # not rounded at all
    resid = y - np.polyval(np.polyfit(t, y, 1), t)
    noise, saw_var = split_sawtooth(resid, y - resid, 0.1)
    assert saw_var == 0.0
    assert np.array_equal(noise, resid)


def test_correlated_noise_on_a_fine_grid_keeps_its_correlation():
    # AR(1) noise of 0.02 K with ρ = 0.9, read at 0.001 K: the sawtooth share is negligible, and
    # the lag-1 estimate is what it is without the resolution
    rng = np.random.default_rng(11)
    n, rho = 600, 0.9
    e = np.empty(n)
    e[0] = rng.normal(0.0, 0.02)
    for i in range(1, n):
        e[i] = rho * e[i - 1] + rng.normal(0.0, 0.02 * np.sqrt(1 - rho * rho))
    t = np.arange(float(n))
    y = np.round((295.0 + 0.0005 * t + e) / 0.001) * 0.001
    aware = fit_line(t, y, q=0.001)
    plain = fit_line(t, y)
    assert aware.rho == pytest.approx(plain.rho, abs=0.01)
    assert aware.var_b == pytest.approx(plain.var_b, rel=0.05)
    resid = y - (plain.a + plain.b * (t - plain.t_mean))
    assert lag1_autocorrelation(resid) > 0.8
    assert inflation(aware.rho) > 10.0


def test_edge_flipping_is_not_taken_for_dither():
    # A flat signal 1.2 noise SDs below a step's edge, noise 0.02 q: about one reading in nine
    # flips up, so the readings scatter by more than q/√12 although the noise dithers next to
    # nothing, and their mean (numpy) is off by about 0.36 q. Crediting s² − q²/12 as dither
    # shrank the level term to about 0.7 q/√12; the term must cover the error at k = 2.
    q, sd_noise, n = 0.1, 0.002, 4000
    rng = np.random.default_rng(23)
    level = 0.05 - 1.2 * sd_noise
    read = np.round((level + rng.normal(0.0, sd_noise, n)) / q) * q
    s = float(np.std(read, ddof=1))
    assert s > q / np.sqrt(12.0)  # the flips alone
    assert dither_variance(s, q) == 0.0
    term = resolution_term(q, s)
    assert term == pytest.approx(q / np.sqrt(12.0))
    error = abs(float(read.mean()) - level)
    assert 0.3 * q < error <= 2.0 * term
    # real noise of one step does earn the dither credit
    noisy = np.round((0.03 + rng.normal(0.0, q, 4000)) / q) * q
    assert resolution_term(q, float(np.std(noisy, ddof=1))) < 1e-6
