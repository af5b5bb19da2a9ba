"""Hysteresis of "you can stop" (docs/methods.md §9.1): once said, it stays until more readings would
clearly help again. The forecasts here are built by hand (U = k·√(fixed + after·L₀/L), the 1/n law of
a mean's variance, common practice, no source) so the gain sits where each test needs it."""

from __future__ import annotations

import math
from types import SimpleNamespace

import pytest

from calc.deltat.periods import AFTER_MAX_S
from calc.errors import InputError
from calc.live.advice_forecast import MIN_GAIN, Forecast
from calc.live.advice_phases import HOLD_GAIN, _after_status
from calc.live.advisor import advise
from tests.calc.live.helpers import L0, forecast_with_gain, live_run, upto


def status(fc: Forecast, held: bool, target: float = 1.5) -> dict:
    return _after_status(SimpleNamespace(unit="kJ/mol", held=held, earlier=None), target, fc, L0)


def test_a_gain_between_the_two_limits_keeps_a_stop_but_does_not_start_one():
    assert MIN_GAIN < HOLD_GAIN
    fc = forecast_with_gain(0.5 * (MIN_GAIN + HOLD_GAIN))
    fresh, held = status(fc, held=False), status(fc, held=True)
    assert fresh["phase"] == "after" and fresh["seconds_more"] > 0
    assert held == {
        "phase": "can_stop",
        "seconds_more": 0.0,
        "status": f"you can stop now: more readings would lower U by less than {HOLD_GAIN * 100:.0f} %",
    }


def test_a_clear_gain_ends_a_stop():
    fc = forecast_with_gain(HOLD_GAIN + 0.01)
    assert status(fc, held=True)["phase"] == "after"


def test_held_never_claims_a_target_that_is_not_met():
    fc = forecast_with_gain(0.5 * (MIN_GAIN + HOLD_GAIN))
    out = status(fc, held=True, target=0.5)  # U = 1 and the floor ≈ 0.93 > 0.5
    assert out["phase"] == "out_of_reach" and "U ≤ 0.5 kJ/mol cannot be reached" in out["status"]
    floor = fc.expanded(1e9)
    # the after window stops growing at AFTER_MAX_S (docs/methods.md §8.5)
    assert math.isclose(floor, 2.0 * math.sqrt(fc.fixed_var + fc.fit_after * L0 / AFTER_MAX_S), rel_tol=1e-9)
    assert floor > 0.5


def test_the_previous_phase_is_checked_and_used(tmp_path):
    text, t, y, sim = live_run("dissolution", 7, tmp_path, tau_r=20.0)
    with pytest.raises(InputError, match="previous phase"):
        advise(text, t[:20], y[:20], previous_phase="stopped")
    # a replay that passes each answer's phase on: once "can_stop", it stays so on this quiet log
    seen, prev = [], None
    for end in range(int(sim.truth.t_m_s) + 60, int(sim.truth.t_m_s) + 900, 30):
        prev = advise(text, *upto(t, y, float(end)), target_u=0.5, previous_phase=prev).phase
        seen.append(prev)
    assert "can_stop" in seen
    assert set(seen[seen.index("can_stop") :]) == {"can_stop"}, seen
