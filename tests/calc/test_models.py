"""Measurement models of each kind, checked against hand-worked arithmetic (our own examples)."""

from __future__ import annotations

import math

import pytest

from calc.deltat.base import DeltaT
from calc.io.runfile import parse_run
from calc.uncertainty.gum import propagate
from calc.uncertainty.measurement_models import RunProperties, build_model


def _dt(value: float, start_K: float) -> DeltaT:
    return DeltaT("regnault-pfaundler", value, 0.002, 50.0, 0.0, 0.0, 0.0, 0.0, start_K, 0.001, start_K + value)


NEUT = """
kind = "neutralization"
readings = "r.csv"
[calorimeter]
heat_capacity = "20.0 ± 2.0 J/K"
[thermometer]
resolution = "0.01 K"
[acid]
formula = "HCl"
concentration = "1.000 ± 0.005 mol/L"
volume = "50.00 ± 0.05 mL"
density = "1.016 ± 0.001 g/mL"
[base]
formula = "NaOH"
concentration = "1.100 ± 0.005 mol/L"
volume = "50.00 ± 0.05 mL"
density = "1.040 ± 0.001 g/mL"
temperature = "22.50 ± 0.05 degC"
[mixture]
specific_heat_capacity = "3.960 ± 0.010 J/(g*K)"
"""


def test_neutralization_heat_balance_by_hand():
    spec = parse_run(NEUT, source="n.toml")
    props = RunProperties()
    props.add("acid.density", 1.016, 0.001, "g/mL", "run file")
    props.add("base.density", 1.040, 0.001, "g/mL", "run file")
    props.add("mixture.specific_heat_capacity", 3.960, 0.010, "J/(g*K)", "run file")
    T_A = 295.15  # 22.00 °C: acid at mixing
    ms = build_model(spec, _dt(6.500, T_A), props)
    g = propagate(ms.inputs, ms.model, ms.main)
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
    spec = parse_run(ELEC, source="e.toml")
    props = RunProperties()
    props.add("water.density", 0.9978, 0.0002, "g/mL", "run file")
    props.add("mixture.specific_heat_capacity", 4.181, 0.002, "J/(g*K)", "run file")
    ms = build_model(spec, _dt(1.7200, 294.0), props)
    g = propagate(ms.inputs, ms.model, ms.main)
    # By hand: Q = 5.000·1.0000·150.0 = 750.0 J; ε = 750.0/1.7200 = 436.0465 J/K;
    # m_w c = 99.78·4.181 = 417.18018 J/K; C_cal = 436.04651 − 417.18018 = 18.86633 J/K
    assert g.values["heat"] == pytest.approx(750.0)
    assert g.values["calorimeter_heat_capacity"] == pytest.approx(18.86633, abs=1e-4)
    # sensitivity to ΔT: ∂C/∂ΔT = −Q/ΔT² = −750/1.72² = −253.515 J/K²
    sens = {b.name: b.sensitivity for b in g.budget}
    assert sens["delta_t.fit"] == pytest.approx(-750 / 1.72**2, rel=1e-6)
    assert math.isfinite(g.expanded_uncertainty)
