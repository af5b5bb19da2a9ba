"""Measurement models of each kind, checked against hand-worked arithmetic (our own examples)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from calc.deltat.base import DeltaT
from calc.io.runfile import parse_run
from calc.uncertainty.gum import propagate
from calc.uncertainty.measurement_models import RunProperties, build_model
from tests.calc.run_texts import NEUT


def _dt(value: float, start_K: float) -> DeltaT:
    return DeltaT("regnault-pfaundler", value, 0.002, 50.0, 0.0, 0.0, 0.0, 0.0, start_K, 0.001, start_K + value)


def _propagated(text: str, delta_t: DeltaT, stated: dict[str, tuple[float, float]], main: str | None = None):
    """Parse the run file ``text``, give the model the ``stated`` properties ({name: (value, u)}, densities in g/mL,
    specific heat capacities in J/(g*K)) as a run file states them, build it with ``delta_t`` and propagate ``main``
    (the kind's main output by default); return the models and the propagation."""
    spec = parse_run(text, source="run.toml")
    props = RunProperties()
    for name, (value, u) in stated.items():
        props.add(name, value, u, "g/mL" if name.endswith("density") else "J/(g*K)", "run file")
    ms = build_model(spec, delta_t, props)
    return ms, propagate(ms.inputs, ms.model, main or ms.main)


def test_neutralization_heat_balance_by_hand():
    stated = {
        "acid.density": (1.016, 0.001),
        "base.density": (1.040, 0.001),
        "mixture.specific_heat_capacity": (3.960, 0.010),
    }
    T_A = 295.15  # 22.00 °C: acid at mixing
    ms, g = _propagated(NEUT, _dt(6.500, T_A), stated)
    # By hand: m_a = 50.00·1.016 = 50.80 g; m_b = 50.00·1.040 = 52.00 g;
    # C_final = (50.80 + 52.00)·3.960 + 20.0 = 407.088 + 20.0 = 427.088 J/K
    # heat = C_final·ΔT + m_b·c·(T_A − T_B) = 427.088·6.500 + 52.00·3.960·(22.00 − 22.50)
    #      = 2776.072 − 102.96 = 2673.112 J
    # limiting: n(H+) = 0.05000 mol < n(OH−) = 0.05500 mol → ΔH = −2673.112/0.05000 J/mol = −53.462 kJ/mol
    assert g.values["heat"] == pytest.approx(2673.112, abs=1e-6)
    assert g.values["molar_enthalpy"] == pytest.approx(-53.46224, abs=1e-5)
    # base concentration is in excess: it cannot matter to first order
    share = {b.name: b.share for b in g.budget}
    assert share["base.concentration"] == pytest.approx(0.0, abs=1e-12)
    assert "limiting reagent: acid" in ms.amount_note


ELEC = """
kind = "electrical-calibration"
readings = "r.csv"
[thermometer]
resolution = "0.001 K"
[water]
volume = "100.00 ± 0.05 mL"
density = "0.9978 ± 0.0002 g/mL"
[heater]
voltage = "5.000 ± 0.005 V"
current = "1.0000 ± 0.0010 A"
duration = "150.0 ± 0.1 s"
[mixture]
specific_heat_capacity = "4.181 ± 0.002 J/(g*K)"
"""


def test_electrical_calibration_by_hand():
    stated = {"water.density": (0.9978, 0.0002), "mixture.specific_heat_capacity": (4.181, 0.002)}
    _ms, g = _propagated(ELEC, _dt(1.7200, 294.0), stated)
    # By hand: Q = 5.000·1.0000·150.0 = 750.0 J; ε = 750.0/1.7200 = 436.0465 J/K;
    # m_w c = 99.78·4.181 = 417.18018 J/K; C_cal = 436.04651 − 417.18018 = 18.86633 J/K
    assert g.values["heat"] == pytest.approx(750.0)
    assert g.values["calorimeter_heat_capacity"] == pytest.approx(18.86633, abs=1e-4)
    # sensitivity to ΔT: ∂C/∂ΔT = −Q/ΔT² = −750/1.72² = −253.515 J/K²
    sens = {b.name: b.sensitivity for b in g.budget}
    assert sens["delta_t.fit"] == pytest.approx(-750 / 1.72**2, rel=1e-6)
    assert math.isfinite(g.expanded_uncertainty)


# ---- the start level of a two-solution run is counted once (docs/methods.md §5.5)

MIXCAL = """
kind = "mixing-calibration"
readings = "r.csv"
[thermometer]
resolution = "0.01 K"
[water]
volume = "50.00 ± 0.05 mL"
[warm_water]
volume = "50.00 ± 0.05 mL"
temperature = "45.00 ± 0.05 degC"
"""


def _start_only(value: float, start_K: float, u_start: float) -> DeltaT:
    """A ΔT whose only uncertainty is the fore line's level at the mixing time (inside its fit term)."""
    return DeltaT("regnault-pfaundler", value, u_start, math.inf, 0.0, 0.0, 0.0, 0.0, start_K, u_start, start_K + value)


def _start_share_u(g, names: tuple[str, ...]) -> float:
    """Standard uncertainty the named inputs give the main output (their contributions in quadrature)."""
    return math.sqrt(sum(b.contribution**2 for b in g.budget if b.name in names))


def test_neutralization_counts_the_acid_start_level_once():
    """Independent check: draw the fore line's level error e and apply the plain heat balance.

    The run's ΔT is T_end − (T_A + e) and its acid term m_b c (T_A + e − T_B), so e reaches the heat
    with −(C_final − m_b c) = −(m_a c + C_cal): the two appearances partly cancel (common practice,
    no source; energy balance of two liquids poured together).
    """
    stated = {
        "acid.density": (1.016, 0.0),
        "base.density": (1.040, 0.0),
        "mixture.specific_heat_capacity": (3.960, 0.0),
    }
    T_A, T_B, dT, u = 295.15, 295.65, 6.500, 0.02
    _ms, g = _propagated(NEUT, _start_only(dT, T_A, u), stated, "heat")
    rng = np.random.default_rng(20261205)
    e = rng.normal(0.0, u, 400_000)
    m_a, m_b, c, C_cal = 50.00 * 1.016, 50.00 * 1.040, 3.960, 20.0
    heat = (m_a * c + m_b * c + C_cal) * (dT - e) + m_b * c * (T_A + e - T_B)
    expected = float(np.std(heat))  # ≈ (m_a c + C_cal)·u = 4.42 J
    assert _start_share_u(g, ("acid.temperature", "delta_t.fit")) == pytest.approx(expected, rel=0.01)
    # counted twice, as independent inputs, it would be √(C_final² + (m_b c)²)·u ≈ 9.4 J
    assert expected < 0.5 * math.hypot(m_a * c + m_b * c + C_cal, m_b * c) * u


def test_mixing_calibration_counts_the_cool_start_level_once():
    """Independent check: the same draw through C_cal = c_warm (T_w − T_end)/(T_end − T_c) − c_cool."""
    stated = {
        "water.density": (0.9978, 0.0),
        "warm_water.density": (0.9902, 0.0),
        "mixture.specific_heat_capacity": (4.181, 0.0),
    }
    T_c, dT, u = 295.15, 10.80, 0.02
    _ms, g = _propagated(MIXCAL, _start_only(dT, T_c, u), stated)
    rng = np.random.default_rng(20261206)
    e = rng.normal(0.0, u, 400_000)
    c = 4.181
    c_cool, c_warm = 50.00 * 0.9978 * c, 50.00 * 0.9902 * c
    T_end = T_c + dT  # the end level does not depend on the fore line
    C_cal = c_warm * (318.15 - T_end) / (T_end - (T_c + e)) - c_cool
    assert _start_share_u(g, ("water.temperature", "delta_t.fit")) == pytest.approx(float(np.std(C_cal)), rel=0.02)
