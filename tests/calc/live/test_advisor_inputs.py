"""Bad input to the live advisor is refused with an InputError that names the field (docs/methods.md §9.1)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from calc.errors import InputError
from calc.live.advisor import advise
from tests.calc.live.helpers import live_run, upto


@pytest.fixture
def run(tmp_path):
    text, t, y, _ = live_run("dissolution", 31, tmp_path)
    return text, *upto(t, y, 100.0)


def refused(field: str, *args, **kwargs) -> InputError:
    with pytest.raises(InputError) as info:
        advise(*args, **kwargs)
    assert info.value.field == field, str(info.value)
    return info.value


def test_run_file_errors_name_the_field(run):
    text, t, y = run
    refused("kind", text.replace('kind = "dissolution"', 'kind = "soup"'), t, y)
    refused("kind", "\n".join(line for line in text.splitlines() if not line.startswith("kind")), t, y)
    refused("solute.mass", text.replace('mass = "', 'mass = "x'), t, y)
    no_thermometer = "\n".join(
        line for line in text.splitlines() if not line.startswith(("[thermometer]", "resolution ="))
    )
    refused("thermometer", no_thermometer, t, y)
    refused("thermo_meter", text.replace("[thermometer]", "[thermo_meter]"), t, y)
    refused("run_file", None, t, y)
    err = refused(None, "kind = [", t, y)
    assert "not valid TOML" in str(err)


def test_a_readings_key_is_allowed_and_ignored(run):
    text, t, y = run
    with_key = 'readings = "elsewhere.csv"\n' + text
    assert advise(with_key, t, y).to_dict() == advise(text, t, y).to_dict()


def test_reading_errors_name_the_array(run):
    text, t, y = run
    refused("temps_c", text, t, y[:-1])
    back = t.copy()
    back[20] = back[18]
    err = refused("times_s", text, back, y)
    assert "reading 21 goes back in time" in str(err)
    refused("times_s", text, np.where(np.arange(t.size) == 3, math.nan, t), y)
    refused("temps_c", text, t, np.where(np.arange(t.size) == 3, 200.0, y))
    refused("temps_c", text, t, ["warm"] * t.size)
    refused("times_s", text, [[1.0, 2.0]], [[20.0, 20.0]])


@pytest.mark.parametrize("bad", [0.0, -1.0, math.inf, math.nan, "0.5", True])
def test_target_must_be_a_positive_number(run, bad):
    text, t, y = run
    refused("target_u", text, t, y, target_u=bad)


@pytest.mark.parametrize("bad", [math.nan, math.inf, "now", None.__class__])
def test_clock_must_be_a_number(run, bad):
    text, t, y = run
    refused("now_s", text, t, y, now_s=bad)


def test_no_readings_is_waiting_not_an_error(run):
    text, _, _ = run
    a = advise(text, [], [])
    assert a.phase == "waiting" and a.to_dict()["warnings"] == []


# the provisional Newtonian fit of this log's first two minutes is degenerate (numpy warns on the way)
@pytest.mark.filterwarnings(
    "ignore:overflow encountered:RuntimeWarning", "ignore:invalid value encountered:RuntimeWarning"
)
def test_a_fit_whose_uncertainty_overflows_gets_advice_not_a_crash(tmp_path):
    # run 22 of tests/benchmarks/test_stop_advice.py: at 120 readings ΔT's model term overflowed a float
    from calc.simulation.realistic import realistic_scenario
    from calc.simulation.run import write_run

    rng = np.random.default_rng(90_022)
    sim = realistic_scenario(
        "neutralization", rng, resolution=0.1, mixing_given=bool(rng.uniform() < 0.5), longer_s=900.0
    )
    text = write_run(sim, tmp_path, "x").read_text(encoding="utf-8")
    a = advise(text, sim.time_s[:120], sim.reading_C[:120])
    assert a.phase in ("reaction", "after", "can_stop") and a.to_dict()["status"]
