"""A slope hidden in a drift window reaches ΔT through the method's own fit (docs/methods.md §8.2).

The linearised sensitivity is checked against the method itself: the window's readings are moved
by a small ramp, the regnault-pfaundler method is run again (nonlinear in k), and the change of ΔT
per unit slope must match. The log is the closed-form solution of the lumped heat balance
(tests/calc/closed_form.py, checked there against scipy's ODE solver).
"""

from __future__ import annotations

import numpy as np
import pytest

from calc.deltat.base import Log
from calc.deltat.budget_terms import quantisation_drift_term
from calc.deltat.periods import find_periods
from calc.deltat.registry import METHODS
from tests.calc.closed_form import probe_temperature

PARAMS = dict(T_inf=295.15, k=1 / 3600, T0=294.65, t_m=120.0, D=-1.5, k_r=1 / 60, s=1 / 5)


def _log(two: bool) -> Log:
    t = np.arange(0.0, 1800.0, 2.0)
    y = probe_temperature(t, **PARAMS)
    per = find_periods(t, y, resolution=1e-6, mixing_time=PARAMS["t_m"], two_solution=two)
    return Log(t, y, per, 1e-6, two_solution=two)


@pytest.mark.parametrize("two", [False, True])
@pytest.mark.parametrize("which", ["fore", "after"])
def test_sensitivity_matches_a_refit_with_a_ramp(two, which):
    log = _log(two)
    method = METHODS["regnault-pfaundler"]
    dt = method(log)
    assert dt.slope_sensitivity_s is not None
    a, b = log.periods.fore if which == "fore" else log.periods.after
    m = (log.t >= a - 1e-9) & (log.t <= b + 1e-9)
    eps = 2e-6  # K/s: 0.0036 K over a 30-minute window
    y = log.y.copy()
    y[m] += eps * (log.t[m] - log.t[m].mean())  # pivoting on the window's centre
    moved = method(Log(log.t, y, log.periods, log.resolution, two_solution=two))
    finite_difference = (moved.value - dt.value) / eps
    sens = dt.slope_sensitivity_s[0 if which == "fore" else 1]
    assert sens == pytest.approx(finite_difference, rel=0.03, abs=2.0)


def test_a_short_fore_window_is_pinned_by_the_law():
    # 120 s of fore period against a 1.5-hour after period: the half-and-half split gave the fore
    # floor half of the main period; through the joint law it reaches ΔT much more weakly
    log = _log(False)
    dt = METHODS["regnault-pfaundler"](log)
    sens_f, _ = dt.slope_sensitivity_s
    main = log.periods.main_end - log.periods.mixing_time
    assert abs(sens_f) < 0.5 * main
    q_log = Log(log.t, log.y, log.periods, 0.1)
    with_fit = quantisation_drift_term(q_log, dt)
    split = quantisation_drift_term(q_log, METHODS["naive"](q_log))
    assert 0.0 < with_fit < split
