"""The forecast of U with more after-period readings (docs/methods.md §9.3)."""

from __future__ import annotations

import numpy as np
import pytest

from calc.analysis import analyze_spec
from calc.io.readings import Readings
from calc.io.runfile import parse_run
from calc.live.advice_forecast import forecast
from tests.calc.live.helpers import live_run, upto


def analyzed(text, t, y):
    spec = parse_run('readings = "x.csv"\n' + text, source="test")
    a = analyze_spec(spec, Readings(t, y + 273.15, np.arange(2, t.size + 2), "test", "s", "degC"), with_reference=False)
    return a, forecast(a, t, y + 273.15)


def test_level_variance_matches_least_squares(tmp_path):
    # The closed form s²(1/n + 12(L/2 + d)²/(nL²)) against the variance of an extrapolated straight
    # line computed from (XᵀX)⁻¹ by numpy (ordinary least squares, Seber & Wild 1989), unit noise.
    text, t, y, sim = live_run("dissolution", 41, tmp_path, tau_r=20.0)
    a, fc = analyzed(text, t, y)
    p = a.periods
    d = 0.5 * (p.main_end - p.mixing_time)
    rate = np.count_nonzero((t >= p.after[0]) & (t <= p.after[1])) / (p.after[1] - p.after[0])
    ratios = []
    for L in (120.0, 300.0, 600.0):
        n = int(round(rate * L))
        x = np.linspace(0.0, L, n)
        X = np.column_stack([np.ones(n), x])
        xstar = np.array([1.0, -d])  # the after line extrapolated back d before its window
        ratios.append(fc.level_var(L) / float(xstar @ np.linalg.inv(X.T @ X) @ xstar))
    # the current window's AR(1) inflation multiplies every length alike: the ratio must not depend on L
    assert max(ratios) / min(ratios) == pytest.approx(1.0, abs=0.06)


def test_forecast_starts_at_u_and_never_rises(tmp_path):
    text, t, y, sim = live_run("neutralization", 42, tmp_path)
    a, fc = analyzed(text, *upto(t, y, sim.truth.t_m_s + 200.0))
    assert fc.expanded(0.0) == pytest.approx(a.gum.expanded_uncertainty, rel=1e-9)
    us = [fc.expanded(x) for x in np.arange(0.0, 3000.0, 10.0)]
    assert all(b <= a_ + 1e-12 for a_, b in zip(us, us[1:]))
    assert us[-1] == fc.expanded(1e9)  # the after window stops growing at 20 minutes (§8.5)
    assert 0.0 <= fc.gain(0.0) < 1.0


def test_forecast_against_the_analysis_two_minutes_later(tmp_path):
    # a quiet run whose U is dominated by the after fit: the forecast U for 2 more minutes of after
    # period against the U the analysis gives when those readings have come (no source: a
    # consistency check of docs/methods.md §9.3; within 25 %)
    text, t, y, sim = live_run("dissolution", 44, tmp_path, tau_r=20.0, noise=0.02, phi=0.5, solute_mass_g=1.0)
    now = sim.truth.t_m_s + 250.0
    a, fc = analyzed(text, *upto(t, y, now))
    later, _ = analyzed(text, *upto(t, y, now + 120.0))
    assert fc.fit_after > 0.5 * (fc.fixed_var + fc.fit_fore + fc.fit_after)  # the test means something
    assert fc.expanded(120.0) == pytest.approx(later.gum.expanded_uncertainty, rel=0.25)
    assert later.gum.expanded_uncertainty < a.gum.expanded_uncertainty
