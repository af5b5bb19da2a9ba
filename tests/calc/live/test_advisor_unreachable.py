""" "Cannot be reached" is said only when the readings agree that U no longer falls (docs/methods.md §9.4).

The forecast holds fixed every budget line but the after fits'; U may still fall through the others.
Before the advice gives up on a target it compares U now with U of the log two minutes ago.
"""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pytest

from calc.live.advice_forecast import HORIZON_S, MIN_GAIN
from calc.live.advice_phases import RECHECK_S, _after_status
from calc.live.advisor import advise
from tests.calc.live.helpers import L0, forecast_with_gain, live_run, upto

FLAT = forecast_with_gain(0.5 * MIN_GAIN)  # U = 1 now, 2 more minutes lower it by 1 %
TARGET = 0.5  # below U's floor: the forecast cannot reach it


def status(then: float | None, *, held: bool = False) -> dict:
    asked: list[float] = []

    def earlier(end_s: float) -> float | None:
        asked.append(end_s)
        return then

    st = SimpleNamespace(unit="kJ/mol", held=held, earlier=earlier, prep=SimpleNamespace(t=np.array([0.0, 900.0])))
    out = _after_status(st, TARGET, FLAT, L0)
    assert asked == [900.0 - HORIZON_S]
    return out


def test_u_still_falling_defers_the_verdict():
    out = status(1.05)  # U fell from 1.05 to 1 in the last two minutes: 4.8 % > 2 %
    assert out == {
        "phase": "after",
        "seconds_more": RECHECK_S,
        "status": "after period: U fell by 5 % in the last 2 min, more than forecast; "
        "60 s more, then the advice looks again",
    }


@pytest.mark.parametrize("then", [1.01, 0.98, None])
def test_u_that_no_longer_falls_confirms_it(then):
    # 1 % fell, U rose a little, or the earlier log has no analysis: the forecast's verdict stands
    out = status(then)
    assert out["phase"] == "out_of_reach"
    assert "U ≤ 0.5 kJ/mol cannot be reached" in out["status"]
    assert "you can stop" not in out["status"]  # the target is not met: the page must not say so


def test_the_hold_applies_to_the_readings_too():
    # 2.5 % fell: enough to defer a fresh verdict, not to leave a "you can stop" already given
    assert status(1.0 / 0.975)["phase"] == "after"
    assert status(1.0 / 0.975, held=True)["phase"] == "out_of_reach"


def test_the_earlier_u_is_the_analysis_of_the_shorter_log(tmp_path):
    text, t, y, sim = live_run("dissolution", 8, tmp_path, tau_r=20.0)
    end = sim.truth.t_m_s + 600.0
    a = advise(text, *upto(t, y, end), target_u=0.001)
    assert a.phase == "out_of_reach" and "cannot be reached" in a.status
    b = advise(text, *upto(t, y, end - HORIZON_S), target_u=0.001)
    # the verdict stood, so the log two minutes earlier had a U at most 2 % above today's
    assert a.estimate["expanded_u"] >= (1.0 - MIN_GAIN) * b.estimate["expanded_u"]
