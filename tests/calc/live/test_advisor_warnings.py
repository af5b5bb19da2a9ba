"""The live advisor's warnings, each on a simulated run with the fault injected (docs/methods.md §9.2).

Truth: calc.simulation (docs/methods.md §7.1); the faults are added to its readings here, so
where and how large they are is known.
"""

from __future__ import annotations

import numpy as np
import pytest

from calc.live.advisor import WARNING_CODES, advise
from tests.calc.live.helpers import live_run, upto


def codes(advice) -> set[str]:
    return {w.code for w in advice.warnings}


def test_a_clean_run_has_no_warnings(tmp_path):
    text, t, y, sim = live_run("dissolution", 21, tmp_path)
    for end in (120.0, 250.0, sim.truth.t_m_s + 30.0, t[-1]):
        assert codes(advise(text, *upto(t, y, end))) == set()


def test_spike_is_warned_as_soon_as_the_next_reading_comes_back(tmp_path):
    text, t, y, _ = live_run("dissolution", 22, tmp_path)
    t, y = upto(t, y, 200.0)
    y = y.copy()
    y[-2] += 1.5  # the reading before the newest is wild (a loose contact); the newest is back
    a = advise(text, t, y)
    spike = [w for w in a.warnings if w.code == "spike"]
    assert spike and spike[0].value == pytest.approx(t[-2])
    assert a.phase in ("fore", "add_now")  # a spike is not taken for the addition
    # two minutes later the spike is old news
    text2, t2, y2, _ = live_run("dissolution", 22, tmp_path)
    t2, y2 = upto(t2, y2, 280.0)
    y2 = y2.copy()
    y2[np.searchsorted(t2, 100.0)] += 1.5
    assert "spike" not in codes(advise(text2, t2, y2))


def test_probe_out_of_the_liquid(tmp_path):
    text, t, y, sim = live_run("electrical-calibration", 23, tmp_path, duration_s=150.0)
    t, y = upto(t, y, sim.truth.t_m_s + 400.0)
    room = float(np.mean(y[t < sim.truth.t_m_s]))  # the fore level stands for the room
    out = t > t[-1] - 8.0  # lifted out 8 s ago: the reading relaxes to the room in the air, τ 10 s
    y = y.copy()
    y[out] = room + (y[out] - room) * np.exp(-(t[out] - t[out][0]) / 10.0)
    y = np.round(y / 0.01) * 0.01
    a = advise(text, t, y)
    hit = [w for w in a.warnings if w.code == "probe_out"]
    assert hit, a.warnings
    assert hit[0].value < 0  # towards the room, below the heated liquid
    assert "probe_out" not in codes(
        advise(text, *upto(*live_run("electrical-calibration", 23, tmp_path, duration_s=150.0)[1:3], t[-1]))
    )


def test_readings_stopped(tmp_path):
    text, t, y, _ = live_run("dissolution", 24, tmp_path)
    t, y = upto(t, y, 100.0)
    assert "readings_stopped" not in codes(advise(text, t, y, now_s=float(t[-1]) + 4.0))
    a = advise(text, t, y, now_s=float(t[-1]) + 12.0)
    w = [w for w in a.warnings if w.code == "readings_stopped"]
    assert w and w[0].value == pytest.approx(12.0)
    assert "readings_stopped" not in codes(advise(text, t, y))  # no clock: the last reading is now


def test_drifting_fore_period(tmp_path):
    # the liquid 3 K below a room it warms towards with a 25-minute time constant: 0.12 K/min
    text, t, y, _ = live_run("dissolution", 25, tmp_path, t_env_offset=3.0, tau_h=1500.0)
    a = advise(text, *upto(t, y, 200.0))
    w = [w for w in a.warnings if w.code == "fore_drift"]
    assert w and w[0].value == pytest.approx(0.12, rel=0.2)


def test_fore_period_too_short(tmp_path):
    text, t, y, sim = live_run("neutralization", 26, tmp_path, fore_s=40.0)
    a = advise(text, *upto(t, y, sim.truth.t_m_s + 60.0))
    assert a.periods["mixing_time"] is not None
    assert "fore_short" in codes(a)
    text, t, y, sim = live_run("neutralization", 26, tmp_path, fore_s=200.0)
    assert "fore_short" not in codes(advise(text, *upto(t, y, sim.truth.t_m_s + 60.0)))


def test_too_noisy(tmp_path):
    text, t, y, _ = live_run("dissolution", 27, tmp_path, noise=0.06)
    a = advise(text, *upto(t, y, 150.0))
    w = [w for w in a.warnings if w.code == "too_noisy"]
    assert w and w[0].value == pytest.approx(0.06, rel=0.3)


def test_every_code_is_in_the_contract():
    assert set(WARNING_CODES) == {"fore_drift", "spike", "probe_out", "readings_stopped", "fore_short", "too_noisy"}
