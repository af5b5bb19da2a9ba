"""Finding the mixing time anywhere in a log, and preparing real logs (spikes, repeated stamps, gaps).

Truth: logs from calc.simulation.simulator (an exact solution of the lumped heat balance) with the mixing time
left out of the run file, and closed-form curves written here; the values checked are the known
mixing times. Tolerances are set from the physics (a probe lag of τ_s blurs the start by about
τ_s), not from the method's own output.
"""

from __future__ import annotations

import numpy as np
import pytest

from calc.analysis import analyze_run
from calc.deltat.budget_terms import slope_floor
from calc.deltat.changepoint import detect_mixing_time
from calc.deltat.logprep import gap_warnings, prepare_log
from calc.errors import InputError
from calc.simulation.simulator import simulate_dissolution, simulate_electrical_calibration, write_run


def _sim_log(**kw):
    sim = simulate_dissolution(kw.pop("seed", 1), **kw)
    return sim.time_s, sim.reading_C + 273.15, sim.truth


@pytest.mark.parametrize("fore_s, after_s", [(60.0, 600.0), (300.0, 900.0), (600.0, 3 * 3600.0)])
def test_mixing_time_found_with_short_fore_periods_and_in_long_logs(fore_s, after_s):
    # the old detector fitted the fore line to the first fifth of the log: a 3-hour log with
    # mixing at 600 s was read as mixing at 2512 s
    t, y, tr = _sim_log(
        fore_s=fore_s,
        after_s=after_s,
        tau_r=30.0,
        tau_s=4.0,
        noise=0.004,
        resolution=0.001,
        dt=2.0 if after_s > 3600 else 1.0,
    )
    m = detect_mixing_time(t, y, 0.001)
    assert abs(m.time - tr.t_m_s) <= max(3 * m.u, 6.0)
    assert 0 < m.u < 20


def test_slow_endothermic_dissolution_with_spikes_and_no_mixing_time(tmp_path):
    # NH4NO3 (endothermic), release time constant 150 s, 0.1 K thermometer, two wild readings
    sim = simulate_dissolution(
        5,
        formula="NH4NO3",
        molar_enthalpy_kJ_mol=25.7,
        solute_mass_g=6.0,
        tau_r=150.0,
        fore_s=120.0,
        after_s=2400.0,
        resolution=0.1,
        noise=0.02,
        spikes=2,
        spike_K=1.5,
        omit_mixing_time=True,
    )
    a = analyze_run(write_run(sim, tmp_path, "slow"), with_reference=False)
    assert a.periods.mixing_time_detected
    assert abs(a.periods.mixing_time - sim.truth.t_m_s) <= max(3 * a.periods.u_mixing_time, 10.0)
    assert len(a.rejected) >= 1 and any("spike" in w for w in a.warnings)
    truth = sim.truth.molar_enthalpy_kJ_mol
    assert abs(a.gum.values["molar_enthalpy"] - truth) <= a.gum.expanded_uncertainty + 0.02 * abs(truth)


def test_heater_pulse_filling_most_of_the_log_is_found():
    sim = simulate_electrical_calibration(
        3,
        water_volume_mL=80.0,
        voltage_V=6.0,
        current_A=1.0,
        duration_s=600.0,
        fore_s=200.0,
        after_s=900.0,
        noise=0.003,
        resolution=0.01,
    )
    m = detect_mixing_time(sim.time_s, sim.reading_C + 273.15, 0.01)
    assert abs(m.time - sim.truth.t_m_s) <= max(3 * m.u, 10.0)


def test_no_change_is_refused_naming_mixing_time():
    t = np.arange(0.0, 900.0, 1.0)
    y = 294.0 + 1e-5 * t + np.random.default_rng(2).normal(0, 0.005, t.size)
    with pytest.raises(InputError) as caught:
        detect_mixing_time(t, y, 0.001)
    assert caught.value.field == "mixing_time" and "give mixing_time" in str(caught.value)


def test_two_separate_changes_of_the_same_size_are_refused():
    # a dissolution (down 1 K at 300 s) and later a second portion of another salt (up 1 K at 900 s)
    # in one log: which one is "the" mixing? ask instead of guessing
    t = np.arange(0.0, 1500.0, 1.0)
    y = 294.0 - 1.0 * (1 - np.exp(-np.clip(t - 300, 0, None) / 20)) + (1 - np.exp(-np.clip(t - 900, 0, None) / 25))
    y = y + np.random.default_rng(4).normal(0, 0.002, t.size)
    with pytest.raises(InputError) as caught:
        detect_mixing_time(t, y, 0.001)
    assert caught.value.field == "mixing_time" and "two temperature changes" in str(caught.value)


def test_two_portions_poured_close_together_give_the_first():
    t = np.arange(0.0, 900.0, 1.0)
    y = 294.0 + 0.5 * (t > 300) + 0.5 * (t > 330)
    y = y + np.random.default_rng(4).normal(0, 0.002, t.size)
    assert abs(detect_mixing_time(t, y, 0.001).time - 300.0) <= 2.0


def test_spikes_are_rejected_and_listed_with_their_lines():
    t = np.arange(0.0, 600.0, 1.0)
    y = 294.0 + 0.001 * t + np.random.default_rng(1).normal(0, 0.003, t.size)
    y[100] += 1.0
    y[400:402] -= 0.8
    lines = np.arange(2, t.size + 2)
    p = prepare_log(t, y, resolution=0.001, lines=lines)
    assert sorted(r["line"] for r in p.rejected) == [102, 402, 403]
    assert p.t.size == t.size - 3
    assert "3 reading(s) rejected as spikes" in p.warnings[0]


def test_fast_jump_is_not_taken_for_a_spike():
    t = np.arange(0.0, 600.0, 1.0)
    y = 294.0 + 5.0 * (t >= 200)  # neutralization-like step, no probe lag at all
    p = prepare_log(t, y, resolution=0.001)
    assert p.rejected == []


def test_repeated_stamps_are_merged_and_gaps_in_the_main_period_warned():
    t = np.array([0, 1, 2, 2, 3, 4, 5, 30, 31, 32, 33, 34], dtype=float)
    y = np.array([1, 1, 1, 3, 1, 1, 1, 2, 2, 2, 2, 2], dtype=float) + 293.0
    p = prepare_log(t, y, resolution=0.001)
    assert p.merged_duplicates == 1 and p.y[2] == 295.0
    assert p.gaps == [(5.0, 30.0)]
    assert gap_warnings(p.gaps, 3.0, 40.0) and not gap_warnings(p.gaps, 31.0, 40.0)


def test_slope_floor_from_the_resolution():
    # a flat staircase over 300 s at 0.1 K hides a slope in an interval q/300 s wide (the level can
    # drift up by q − δ or down by δ, δ its offset within the step): u = q/(300·√12)
    assert slope_floor(0.1, 0.1 / np.sqrt(12.0), 300.0) == pytest.approx(0.1 / (300 * np.sqrt(12.0)))
    # noise well above the step dithers the quantiser: the floor vanishes
    assert slope_floor(0.001, 0.01, 300.0) < 1e-12
