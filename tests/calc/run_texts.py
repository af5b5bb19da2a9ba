"""Run files the tests parse (invented values): one copy of each, which a test changes where it needs to."""

from __future__ import annotations

#: a neutralization of 50 mL 1 mol/L HCl by 50 mL 1.1 mol/L NaOH, every property stated
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
