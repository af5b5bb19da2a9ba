"""Electrical calibrations: the after period starts once the heater is off (calc.deltat.heater).

The truth comes from the simulator's closed-form lumped model (calc.simulation.simulator); the check
value is the energy balance V·I·t = C·ΔT (Joule heating; common practice, no source).
"""

from __future__ import annotations

from pathlib import Path

import pytest
from click.testing import CliRunner

from calc.analysis import analyze_run
from calc.cli.commands import cli
from calc.errors import InputError
from calc.simulation.simulator import simulate_electrical_calibration, write_run


def short_log(tmp_path: Path, seed: int, tail_s: float, **kw: float) -> tuple[Path, object]:
    """A Dewar-sized calibration whose log ends ``tail_s`` after the heater stops."""
    sim = simulate_electrical_calibration(
        seed,
        c_cal=133.0,
        duration_s=120.0,
        after_s=120.0 + tail_s,
        fore_s=60,
        tau_s=4.0,
        noise=0.003,
        resolution=0.01,
        voltage_V=6.0,
        current_A=2.0,
        tau_h=3000,
        **kw,
    )
    return write_run(sim, tmp_path, f"cal{seed}"), sim


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_log_ending_45_s_after_the_heater(tmp_path: Path, seed: int) -> None:
    path, sim = short_log(tmp_path, seed, 45.0)
    a = analyze_run(path, with_reference=False)
    t_off = sim.truth.t_m_s + 120.0
    assert a.periods.after[0] >= t_off
    truth = sim.truth.delta_t_adiabatic  # = V·I·t / C_final
    assert a.delta_t.value == pytest.approx(truth, rel=0.02)
    c, U = a.gum.values["calorimeter_heat_capacity"], a.gum.expanded_uncertainty
    assert abs(c - sim.truth.calorimeter_heat_capacity_J_K) <= U
    assert any("after the heater stops" in w for w in a.warnings)


def test_long_log_keeps_its_after_period(tmp_path: Path) -> None:
    path, sim = short_log(tmp_path, 4, 600.0)
    a = analyze_run(path, with_reference=False)
    assert a.periods.after[0] >= sim.truth.t_m_s + 120.0 + 30.0
    assert not any("after the heater stops" in w for w in a.warnings)


def test_after_period_inside_the_heating_is_refused(tmp_path: Path) -> None:
    path, _ = short_log(tmp_path, 5, 300.0)
    path.write_text('after_period = ["150 s", "480 s"]\n' + path.read_text())
    with pytest.raises(InputError) as caught:
        analyze_run(path)
    assert caught.value.field == "after_period" and "before the heater is off at 180 s" in caught.value.message


def test_log_ending_with_the_heater_is_refused_in_one_line(tmp_path: Path) -> None:
    path, _ = short_log(tmp_path, 6, 8.0)
    result = CliRunner().invoke(cli, ["analyze", str(path), "--monte-carlo", "0"])
    assert result.exit_code == 2
    lines = result.output.strip().splitlines()
    assert len(lines) == 1 and "heater.duration" in lines[0] and "record until at least" in lines[0]


def test_after_periods_shorter_than_five_minutes_get_the_stability_term() -> None:
    # docs/methods.md §8.9: the restart check runs for after periods under SETTLED_AFTER_S (5 min)
    import math

    import numpy as np

    from calc.deltat.heater import HEATER_LAG_S, SETTLED_AFTER_S, lag_term
    from calc.deltat.periods import Periods

    t = np.arange(0.0, 1200.0, 1.0)
    t_off = 100.0 + 300.0  # mixing time + duration
    for length, expect in ((200.0, 0.01 / math.sqrt(3.0)), (SETTLED_AFTER_S, 0.0)):
        start = t_off + HEATER_LAG_S
        per = Periods(
            fore=(0.0, 99.0),
            after=(start, start + length),
            mixing_time=100.0,
            u_mixing_time=0.0,
            mixing_time_detected=False,
            main_end=start,
        )
        assert lag_term(1.0, per, t, 300.0, lambda after: 1.01) == pytest.approx(expect, rel=1e-9)
