"""Corrected-ΔT methods against closed-form solutions of the heat balance.

Truth: the lumped heat balance C dT/dt = G (T_env − T) + P(t) with Newtonian exchange
and a first-order heat release has a closed-form solution (a sum of exponentials;
common practice, no source). tests/calc/closed_form.py writes it out and
test_closed_form_matches_numerical_integration checks it against scipy's ODE solver.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from calc.deltat.base import Log
from calc.deltat.periods import find_periods
from calc.deltat.registry import METHODS, corrected_delta_t
from tests.calc.closed_form import probe_temperature, true_temperature

BASE = dict(T_inf=295.15, k=1 / 3600, T0=294.65, t_m=300.0, D=2.0, k_r=1 / 20, s=1 / 5)


def _log(params, *, t_end=1500.0, dt=2.0, two=False, mixing_time=300.0, noise=0.0, q=1e-6, seed=0):
    t = np.arange(0.0, t_end + dt / 2, dt)
    y = probe_temperature(t, **params)
    if noise:
        y = y + np.random.default_rng(seed).normal(0, noise, t.size)
    y = np.round(y / q) * q
    per = find_periods(t, y, resolution=q, mixing_time=mixing_time, two_solution=two)
    return Log(t, y, per, q, two_solution=two)


def test_closed_form_matches_numerical_integration():
    p = BASE

    def rhs(t, z):
        T, Ts = z
        P = p["D"] * p["k_r"] * math.exp(-p["k_r"] * (t - p["t_m"])) if t >= p["t_m"] else 0.0
        return [p["k"] * (p["T_inf"] - T) + P, p["s"] * (T - Ts)]

    T0 = p["T0"]
    # start the probe on its steady trailing curve, as the closed form assumes
    Ts0 = p["T_inf"] + (T0 - p["T_inf"]) * p["s"] / (p["s"] - p["k"])
    t_eval = np.arange(0, 1200.0, 5.0)
    sol1 = solve_ivp(rhs, (0, p["t_m"]), [T0, Ts0], rtol=1e-11, atol=1e-12, max_step=1.0, dense_output=True)
    sol2 = solve_ivp(rhs, (p["t_m"], 1200.0), sol1.y[:, -1], rtol=1e-11, atol=1e-12, max_step=1.0, dense_output=True)
    num = np.where(
        t_eval < p["t_m"], sol1.sol(np.minimum(t_eval, p["t_m"]))[1], sol2.sol(np.maximum(t_eval, p["t_m"]))[1]
    )
    assert np.max(np.abs(num - probe_temperature(t_eval, **p))) < 1e-6
    num_T = np.where(
        t_eval < p["t_m"], sol1.sol(np.minimum(t_eval, p["t_m"]))[0], sol2.sol(np.maximum(t_eval, p["t_m"]))[0]
    )
    tp = {k: v for k, v in p.items() if k != "s"}
    assert np.max(np.abs(num_T - true_temperature(t_eval, **tp))) < 1e-6


@pytest.mark.parametrize(
    "overrides",
    [
        {},
        {"k_r": 1 / 60, "D": -1.5},  # endothermic, slower
        {"k_r": 1 / 120, "k": 1 / 1500},  # slow release, leaky cup
        {"T0": 296.5},  # start above the convergence temperature
    ],
)
def test_regnault_pfaundler_is_exact_for_newtonian_exchange(overrides):
    p = {**BASE, **overrides}
    t_end = 300 + 14 / p["k_r"] + 300
    log = _log(p, t_end=t_end)
    dt = corrected_delta_t(log, "regnault-pfaundler")
    # docs/methods.md §2.3: |bias| ≤ 0.05 % under these assumptions
    assert dt.value == pytest.approx(p["D"], rel=5e-4)


def test_model_fit_recovers_release_and_probe_time_constants():
    log = _log(BASE)
    dt = corrected_delta_t(log, "model-fit")
    assert dt.value == pytest.approx(BASE["D"], rel=5e-4)
    assert dt.construction.release_time_constant_s == pytest.approx(20.0, rel=0.02)
    assert dt.construction.probe_time_constant_s == pytest.approx(5.0, rel=0.05)


def test_naive_matches_the_closed_form_peak_and_is_biased_low():
    # Start at the convergence temperature, no probe lag: the peak of the closed form is at
    # t* = ln(k_r/k)/(k_r − k) with ΔT_max/ΔT_ad = k_r/(k_r−k)·(e^{−k t*} − e^{−k_r t*}) (docs/methods.md §2.5).
    p = {**BASE, "T0": BASE["T_inf"], "s": 50.0, "k_r": 1 / 60}
    log = _log(p, dt=1.0, t_end=1800)
    k, kr = p["k"], p["k_r"]
    ts = math.log(kr / k) / (kr - k)
    ratio = kr / (kr - k) * (math.exp(-k * ts) - math.exp(-kr * ts))
    dt = corrected_delta_t(log, "naive")
    assert dt.value == pytest.approx(p["D"] * ratio, abs=2e-4)
    assert dt.value < 0.99 * p["D"]


def test_linear_extrapolation_bias_grows_with_release_time():
    # docs/methods.md §2.1: linear extrapolation to t_m is biased by about −(b_f − b_i)(τ_r + τ_s).
    fast = corrected_delta_t(_log({**BASE, "k_r": 1 / 4}), "linear-extrapolation")
    slow = corrected_delta_t(_log({**BASE, "k_r": 1 / 90}, t_end=300 + 14 * 90 + 300), "linear-extrapolation")
    assert abs(fast.value - BASE["D"]) / BASE["D"] < 0.005
    assert abs(slow.value - BASE["D"]) > abs(fast.value - BASE["D"])


def test_equal_area_time_is_where_the_areas_balance():
    log = _log(BASE)
    dt = corrected_delta_t(log, "equal-area")
    t_x = dt.construction.t_x
    # the equal-area time of a first-order rise with lag sits roughly τ_r + τ_s after mixing
    assert 300 + 10 < t_x < 300 + 60
    assert dt.value == pytest.approx(BASE["D"], rel=0.005)


def test_two_solution_start_is_the_fore_level_at_mixing():
    # Second solution poured at t_m: T jumps from T_A to T_mix, then a fast release D.
    T_A_inf, kA = 295.15, 1 / 3000
    t = np.arange(0.0, 1200.0, 1.0)
    t_m = 240.0
    T_A = lambda tt: T_A_inf + (294.95 - T_A_inf) * np.exp(-kA * tt)  # noqa: E731
    T_mix = T_A(t_m) + 0.35
    k2, T2_inf, D, kr, s = 1 / 2400, 295.3, 6.5, 1 / 4, 1 / 3
    u = np.maximum(t - t_m, 0)
    A2 = -D * kr / (kr - k2)
    A1 = (T_mix - T2_inf) - A2
    b1, b2 = A1 * s / (s - k2), A2 * s / (s - kr)
    post = T2_inf + b1 * np.exp(-k2 * u) + b2 * np.exp(-kr * u) + (T_A(t_m) - T2_inf - b1 - b2) * np.exp(-s * u)
    y = np.where(t < t_m, T_A(t), post)
    per = find_periods(t, y, resolution=1e-6, mixing_time=t_m, two_solution=True)
    dt = corrected_delta_t(Log(t, y, per, 1e-6, two_solution=True), "regnault-pfaundler")
    expected = T_mix + D - T_A(t_m)
    assert dt.value == pytest.approx(expected, rel=1e-3)
    assert dt.start_temperature == pytest.approx(T_A(t_m), abs=5e-4)  # a straight fore line on a gently curved drift


def test_uncertainty_of_fit_matches_scatter_over_noise_realisations():
    # The covariance-based u(ΔT) should match the spread of ΔT over noise draws (docs/methods.md §2.6).
    vals, us = [], []
    for seed in range(40):
        log = _log(BASE, noise=0.01, seed=seed)
        d = corrected_delta_t(log, "regnault-pfaundler")
        vals.append(d.value)
        us.append(d.u_fit)
    sd = float(np.std(vals, ddof=1))
    # 40 draws: the sample SD is within ±35 % of the truth with high probability (χ², 39 dof)
    assert 0.65 < sd / float(np.mean(us)) < 1.5


def test_detected_mixing_time_is_near_the_true_one():
    t = np.arange(0.0, 1500.0, 2.0)
    y = probe_temperature(t, **BASE)
    per = find_periods(t, y, resolution=0.001)
    assert abs(per.mixing_time - BASE["t_m"]) <= 6.0
    assert per.mixing_time_detected


def test_every_method_is_registered_and_reports_a_value():
    log = _log(BASE)
    for name in ("regnault-pfaundler", "linear-extrapolation", "equal-area", "model-fit", "naive"):
        assert name in METHODS
        d = corrected_delta_t(log, name)
        assert math.isfinite(d.value) and d.u > 0


def test_two_solution_start_level_corrects_the_bent_fore_drift():
    # Closed form: the first solution relaxes exponentially (k_A = the final system's k) towards the
    # room; a straight fore line carried to t_m misses by about k_A·b·L²/12 (docs/methods.md §8.8).
    k, T_room, t_m = 1 / 1200, 295.15, 240.5  # the pour between two readings
    T_A = lambda tt: T_room + (293.65 - T_room) * np.exp(-k * tt)  # noqa: E731
    t = np.arange(0.0, 1500.0, 1.0)
    T_mix = T_A(t_m) + 0.35
    u = np.maximum(t - t_m, 0.0)
    y = np.where(t < t_m, T_A(t), T_room + (T_mix + 3.0 - T_room) * np.exp(-k * u))
    y[(t >= t_m) & (t < t_m + 6)] = T_mix + 3.0  # a fast release, finished in the main period
    per = find_periods(t, y, resolution=1e-6, mixing_time=t_m, two_solution=True)
    dt = corrected_delta_t(Log(t, y, per, 1e-6, two_solution=True), "regnault-pfaundler")
    a, b, t_mean = dt.construction.fore_line
    line_miss = a + b * (t_m - t_mean) - T_A(t_m)
    assert line_miss > 2e-3  # the straight line overshoots a concave drift by several mK
    miss = dt.start_temperature - T_A(t_m)
    assert abs(miss) < 0.15 * line_miss
    assert abs(miss) < 2.0 * dt.u_start_temperature  # what remains is inside the stated term
