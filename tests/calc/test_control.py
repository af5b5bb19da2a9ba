"""Control charts: the moving-range constants, limits, each run rule, calibration due dates."""

from __future__ import annotations

from datetime import date, datetime

import numpy as np
import pytest

from calc.errors import InputError
from calc.statistics.control_charts import (
    D2,
    D3,
    D4,
    RULES,
    calibration_due,
    calibration_status,
    control_chart,
    individuals_limits,
    is_overdue,
    run_rules,
)


def test_moving_range_constants_match_the_published_table():
    # Shewhart control-chart constants for subgroups of n = 2 (ISO 7870-2 tables; ASTM STP 15D;
    # from memory): d2 = 1.128, d3 = 0.853, D4 = 3.267
    assert D2 == pytest.approx(1.128, abs=5e-4)
    assert D3 == pytest.approx(0.853, abs=5e-4)
    assert D4 == pytest.approx(3.267, abs=5e-4)


def test_d2_by_simulation_with_numpy_normal_draws():
    # mean |x1 − x2| of standard normal pairs; 400 000 pairs: SE 0.853/√4e5 = 0.0013
    rng = np.random.default_rng(12)
    pairs = rng.standard_normal((400_000, 2))
    r = np.abs(pairs[:, 0] - pairs[:, 1])
    assert float(r.mean()) == pytest.approx(D2, abs=0.005)
    assert float(r.std()) == pytest.approx(D3, abs=0.005)


def test_sigma_from_the_average_moving_range_estimates_the_scatter():
    rng = np.random.default_rng(2)
    x = 17.2 + 0.3 * rng.standard_normal(20_000)
    lim = individuals_limits(x)
    assert lim.sigma == pytest.approx(0.3, rel=0.02)
    assert lim.centre == pytest.approx(17.2, abs=0.01)
    assert lim.warnings == ()


def test_limits_by_hand():
    # own arithmetic: moving ranges 2, 1, 2 → MR̄ = 5/3; centre 2.5; σ̂ = MR̄/d2
    lim = individuals_limits([1.0, 3.0, 2.0, 4.0])
    assert lim.mr_bar == pytest.approx(5 / 3)
    assert lim.centre == pytest.approx(2.5)
    assert lim.sigma == pytest.approx(5 / 3 / D2)
    assert lim.upper_3s == pytest.approx(2.5 + 3 * lim.sigma)
    assert lim.lower_2s == pytest.approx(2.5 - 2 * lim.sigma)
    assert lim.upper_1s == pytest.approx(2.5 + lim.sigma)
    assert lim.mr_ucl == pytest.approx(D4 * 5 / 3)
    assert "about 20" in lim.warnings[0]


# Hand-made sequences (centre 0, σ 1), each breaking exactly one rule at the index given.
# (common practice, no source: the sequences are built from the rule definitions)
SEQUENCES = {
    "beyond-3s": ([0.5, -0.5, 3.5, -0.5, 0.5], [2]),
    "2-of-3-beyond-2s": ([0.5, -0.5, 2.5, 0.3, 2.4, -0.5], [4]),
    "4-of-5-beyond-1s": ([-0.5, 1.5, 1.2, 0.5, 1.8, 1.3, -0.4], [5]),
    "8-on-one-side": ([0.2, 0.5, 0.1, 0.7, 0.3, 0.6, 0.2, 0.4, -0.3], [7]),
    "6-trend": ([-1.0, -0.6, -0.2, 0.2, 0.6, 0.9, 0.5], [5]),
}


@pytest.mark.parametrize("rule", sorted(RULES))
def test_each_run_rule_is_triggered_alone_by_its_sequence(rule):
    values, where = SEQUENCES[rule]
    v = run_rules(values, 0.0, 1.0)
    assert [(x.index, x.rule) for x in v] == [(i, rule) for i in where]
    assert v[0].message
    # the mirror image breaks the same rule (on the other side, or falling)
    w = run_rules([-x for x in values], 0.0, 1.0)
    assert [(x.index, x.rule) for x in w] == [(i, rule) for i in where]


def test_rules_use_the_chart_centre_and_sigma():
    values, _ = SEQUENCES["beyond-3s"]
    scaled = [17.2 + 0.4 * x for x in values]
    assert [x.rule for x in run_rules(scaled, 17.2, 0.4)] == ["beyond-3s"]
    assert run_rules(scaled, 17.2, 1.0) == []


def test_an_in_control_sequence_breaks_no_rule_and_a_tie_breaks_a_trend():
    assert run_rules([0.3, -0.8, 1.1, -0.2, 0.4, -1.3, 0.9, -0.1, 0.6, -0.5], 0.0, 1.0) == []
    assert run_rules([-1.0, -0.6, -0.2, -0.2, 0.6, 0.9], 0.0, 1.0) == []
    assert run_rules([], 0.0, 1.0) == []


def test_a_long_run_is_flagged_at_every_point_past_the_eighth():
    v = run_rules([0.1, 0.4, 0.2, 0.5, 0.3, 0.6, 0.2, 0.5, 0.1, 0.4], 0.0, 1.0)
    assert [(x.index, x.rule) for x in v] == [(7, "8-on-one-side"), (8, "8-on-one-side"), (9, "8-on-one-side")]


def test_control_chart_with_a_baseline_period():
    rng = np.random.default_rng(8)
    base = list(17.2 + 0.2 * rng.standard_normal(20))
    later = base + [17.2, 18.5, 17.3]  # a point 6.5 σ high
    chart = control_chart(later, baseline=20)
    assert chart.limits.n_baseline == 20 and chart.limits.warnings == ()
    assert (21, "beyond-3s") in [(v.index, v.rule) for v in chart.violations]
    assert 21 in chart.moving_range_violations and 22 in chart.moving_range_violations
    same = control_chart([17.2, 18.5, 17.3], baseline=base)
    assert same.limits == chart.limits


def test_calibration_due_dates_follow_the_calendar():
    # Gregorian calendar: 2024 is a leap year
    assert calibration_due(date(2024, 2, 28), 2) == date(2024, 3, 1)
    assert calibration_due(datetime(2023, 12, 20, 15, 30), 30) == date(2024, 1, 19)
    st = calibration_status(date(2024, 1, 10), 90, today=date(2024, 4, 9))
    assert st.due == date(2024, 4, 9) and not st.overdue and st.days_left == 0
    assert is_overdue(date(2024, 1, 10), 90, today=date(2024, 4, 10))
    assert calibration_status(date(2024, 1, 10), 90, today=date(2024, 4, 12)).days_left == -3


def test_control_input_errors():
    with pytest.raises(InputError, match="sigma > 0"):
        run_rules([1.0, 2.0], 0.0, 0.0)
    with pytest.raises(InputError, match="point 2 is not a finite number"):
        run_rules([1.0, float("inf")], 0.0, 1.0)
    with pytest.raises(InputError, match="never differ"):
        individuals_limits([3.0, 3.0, 3.0])
    with pytest.raises(InputError, match="interval_days"):
        calibration_due(date(2024, 1, 1), 0)
    with pytest.raises(InputError, match="last_calibration"):
        calibration_due("2024-01-01", 30)  # type: ignore[arg-type]
