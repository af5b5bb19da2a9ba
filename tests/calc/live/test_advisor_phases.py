"""The live advisor's phases and status lines on simulated runs whose truth is known (docs/methods.md §9.1).

Truth: calc.simulation (docs/methods.md §7.1): the mixing time t_m, the process's end and the
true result are known, so each phase can be checked against where the log really is.
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from calc.analysis import analyze_run
from calc.live.advice_signals import FORE_TARGET_S
from calc.live.advisor import PHASES, advise
from calc.simulation import simulator
from tests.calc.live.helpers import live_run, upto

ADD_WORDS = {  # the kind's own action at the mixing time
    "dissolution": "add the solid now",
    "reaction": "add the solid now",
    "neutralization": "add the base now",
    "electrical-calibration": "switch the heater on now",
    "mixing-calibration": "pour in the warm water now",
}


def test_too_few_readings_is_waiting(tmp_path):
    text, t, y, _ = live_run("dissolution", 1, tmp_path)
    a = advise(text, t[:5], y[:5])
    assert a.phase == "waiting" and "5 of 10" in a.status
    assert a.estimate is None


def test_fore_period_counts_down_to_three_minutes(tmp_path):
    text, t, y, sim = live_run("dissolution", 2, tmp_path)
    a = advise(text, *upto(t, y, 60.0))
    assert a.phase == "fore"
    assert a.status == "fore period: keep stirring, 2 min more"
    assert a.seconds_more == pytest.approx(FORE_TARGET_S - 60.0, abs=2.0)
    assert a.periods["mixing_time"] is None and a.periods["fore"] == [0.0, 60.0]
    assert len(a.drift_lines) == 1 and a.estimate is None
    later = advise(text, *upto(t, y, 150.0))
    assert later.status == "fore period: keep stirring, 30 s more"


@pytest.mark.parametrize("kind", sorted(ADD_WORDS))
def test_add_now_uses_the_kinds_own_words(kind, tmp_path):
    text, t, y, sim = live_run(kind, 3, tmp_path)
    assert sim.truth.t_m_s > 250.0  # the log is still in its fore period at 240 s
    a = advise(text, *upto(t, y, 240.0))
    assert a.phase == "add_now"
    assert a.status == ADD_WORDS[kind]
    assert a.seconds_more == 0.0


def test_unsteady_fore_period_asks_to_keep_stirring(tmp_path):
    text, t, y, sim = live_run("dissolution", 4, tmp_path)
    t, y = upto(t, y, 250.0)
    # a liquid still settling: 0.2 K decaying with a 2-minute time constant (its drift halves in 80 s)
    a = advise(text, t, y + 0.2 * np.exp(-t / 120.0))
    assert a.phase == "fore"
    assert a.status == "fore period: keep stirring until the drift is steady (it is still changing)"
    steady = advise(text, t, y)
    assert steady.phase == "add_now"


@pytest.mark.parametrize(
    "kind, words",
    [
        ("dissolution", "reaction under way"),
        ("neutralization", "reaction under way"),
        ("electrical-calibration", "heating under way"),
    ],
)
def test_main_period_is_under_way(kind, words, tmp_path):
    text, t, y, sim = live_run(kind, 5, tmp_path)
    a = advise(text, *upto(t, y, sim.truth.t_m_s + 40.0))
    assert a.phase == "reaction"
    assert a.status == words
    assert a.periods["mixing_time"] == pytest.approx(sim.truth.t_m_s, abs=10.0)
    assert a.periods["after"] is None


def test_heater_run_says_how_long_until_the_heater_is_off(tmp_path):
    text, t, y, sim = live_run("electrical-calibration", 6, tmp_path, duration_s=120.0)
    a = advise(text, *upto(t, y, sim.truth.t_m_s + 30.0))
    # heater off at t_m + 120 s, after period 30 s later (calc.deltat.heater.HEATER_LAG_S)
    assert a.seconds_more == pytest.approx(120.0, abs=10.0)


def test_after_period_forecast_then_stop(tmp_path):
    text, t, y, sim = live_run("dissolution", 7, tmp_path, tau_r=20.0)
    seen = []
    for end in np.arange(sim.truth.t_m_s + 60.0, t[-1], 30.0):
        a = advise(text, *upto(t, y, end), target_u=0.5)
        seen.append(a.phase)
        if a.phase == "after":
            assert a.status.startswith("after period: ") and "for U ≤ 0.5 kJ/mol" in a.status
            assert a.seconds_more > 0
        if a.phase == "can_stop":
            assert a.status == "you can stop now: more readings would lower U by less than 2 %"
            assert a.estimate["expanded_u"] <= 0.5
            assert a.periods["after"][1] - a.periods["after"][0] >= 180.0
            break
    assert "reaction" in seen and "after" in seen and seen[-1] == "can_stop"
    # the phases come in their order
    order = [PHASES.index(p) for p in seen]
    assert order == sorted(order)


def test_unreachable_target_is_said_honestly(tmp_path):
    text, t, y, sim = live_run("dissolution", 8, tmp_path, tau_r=20.0)
    a = advise(text, t, y, target_u=0.001)
    assert a.phase == "out_of_reach" and "you can stop" not in a.status
    assert "U ≤ 0.001 kJ/mol cannot be reached" in a.status and "the largest term left is" in a.status
    assert a.estimate["expanded_u"] > 0.001


@pytest.mark.parametrize("kind", ["dissolution", "neutralization", "electrical-calibration"])
def test_estimate_on_a_complete_log_is_the_final_analysis(kind, tmp_path):
    text, t, y, sim = live_run(kind, 9, tmp_path)
    a = advise(text, t, y)
    final = analyze_run(simulator.write_run(sim, tmp_path / "full", "run"))
    key = final.main
    assert a.estimate["quantity"] == key and a.estimate["provisional"] is True
    assert a.estimate["value"] == pytest.approx(final.gum.values[key], rel=1e-9)
    assert a.estimate["expanded_u"] == pytest.approx(final.gum.expanded_uncertainty, rel=1e-9)
    assert a.estimate["delta_t"] == pytest.approx(final.delta_t.value, rel=1e-9)
    assert a.periods["after"] == pytest.approx(list(final.periods.after))


def test_to_dict_is_plain_json_in_every_phase(tmp_path):
    text, t, y, sim = live_run("neutralization", 10, tmp_path)
    phases = set()
    for end in (5.0, 60.0, 250.0, sim.truth.t_m_s + 20.0, t[-1]):
        d = advise(text, *upto(t, y, end), now_s=float(end) + 9.0).to_dict()
        back = json.loads(json.dumps(d, allow_nan=False))
        assert back == d
        assert set(d) == {"phase", "status", "seconds_more", "estimate", "periods", "drift_lines", "warnings"}
        assert set(d["periods"]) == {"fore", "mixing_time", "after"}
        for line in d["drift_lines"]:
            assert set(line) == {"t0", "t1", "T0", "T1"} and all(isinstance(v, float) for v in line.values())
        for w in d["warnings"]:
            assert set(w) == {"code", "message", "value"}
        phases.add(d["phase"])
    assert {"waiting", "fore", "reaction"} <= phases


def test_the_in_situ_kind_is_refused(tmp_path):
    from calc.simulation.insitu import simulate_dissolution_with_calibration

    sim = simulate_dissolution_with_calibration(11)
    path = simulator.write_run(sim, tmp_path, "insitu")
    a = advise(path.read_text(encoding="utf-8"), sim.time_s, sim.reading_C)
    assert a.phase == "refused" and "dissolution-with-calibration" in a.status


@pytest.mark.parametrize(
    "seed, kind", [(90_007, "neutralization"), (90_038, "electrical-calibration"), (90_066, "dissolution")]
)
def test_correlated_noise_in_a_short_fore_period_is_not_the_addition(seed, kind, tmp_path):
    # realistic logs (stirring noise correlated over 5–30 s, room drift) whose first minute wanders
    # like a change; before the line's own uncertainty entered the check, each was called
    # "reaction under way" long before the addition (docs/methods.md §9.1)
    from calc.simulation.realistic import realistic_scenario

    rng = np.random.default_rng(seed)
    sim = realistic_scenario(kind, rng, resolution=0.01, mixing_given=bool(rng.uniform() < 0.5), longer_s=900.0)
    text = simulator.write_run(sim, tmp_path, "r").read_text(encoding="utf-8")
    t, y = sim.time_s, sim.reading_C
    before = [advise(text, t[:n], y[:n]).phase for n in range(10, int(np.searchsorted(t, sim.truth.t_m_s - 5.0)), 5)]
    assert set(before) <= {"waiting", "fore", "add_now"}
    after = advise(text, *upto(t, y, sim.truth.t_m_s + 40.0))
    assert after.phase in ("reaction", "after")
