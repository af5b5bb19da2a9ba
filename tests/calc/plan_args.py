"""The `cupcal plan` command line the tests and the benchmarks start from (invented inputs).

One copy, so that a test, a fuzzer and a benchmark that mean "a plain KCl dissolution" plan the same run.
"""

from __future__ import annotations

#: 3 g of KCl in 100 mL of water
KCL_SOLUTE = ["--formula", "KCl", "--mass", "3 g", "--water", "100 mL"]
#: a foam cup known to ±2 J/K and a thermometer reading to 0.01 K
CUP_AND_PROBE = ["--calorimeter", "18 ± 2 J/K", "--resolution", "0.01 K"]
#: the least `cupcal plan dissolution` needs
KCL_DISSOLUTION = ["plan", "dissolution", *KCL_SOLUTE, *CUP_AND_PROBE]
#: the same run as calc.plan.plan_run takes it, the balance's and the glassware's ± written in
KCL_PLAN_INPUTS = {
    "formula": "KCl",
    "mass": "3.0 ± 0.0002 g",
    "water_volume": "100.0 ± 0.1 mL",
    "calorimeter_heat_capacity": "18 ± 2 J/K",
    "thermometer_resolution": 0.01,
}
