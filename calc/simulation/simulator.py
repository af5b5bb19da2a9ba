"""Simulate coffee-cup calorimeter runs whose true answer is known.

The model is the lumped one-node cup of docs/methods.md §7.1::

    C(t) dT/dt = G (T_env + β t − T) + P_stir + P_release(t) + P_heater(t)
    dTs/dt     = (T − Ts) / τ_s                        (probe lag)
    y_k        = q · round((Ts(t_k)(1 + g) + b + e_k) / q),   e_k AR(1) with sd σ and lag-1 φ

It is solved exactly, piece by piece: on each piece the system is linear with a forcing that is itself
the solution of a linear system (constant, ramp, exponential, polynomial), so the augmented state
``[T, Ts, 1, t, e^{−(t−t_m)/τ_r}, 1 − (t−t_m)/t_d, (1 − (t−t_m)/t_d)²]`` advances by a matrix
exponential. ``LumpedModel.solve(..., method="ode")`` integrates the same equations with
``scipy.integrate.solve_ivp`` (max step ≤ min(τ_r, τ_s)/5, t_m and t_m + t_d as breakpoints) as an
independent check, and ``first_order_release_curve`` is the closed form of docs/methods.md §2.4.

Assumptions (stated once, here):

* The probe starts on its steady track of the fore-period (no start-up transient).
* ``tau_h`` is C_final/G_final, the heat-loss time constant of the cup as it is after t_m. For the two
  liquid kinds (neutralization, mixing calibration) G scales with the liquid volume as V^(2/3), so
  before mixing G_A = G_final (V_A/V_total)^(2/3). For the other kinds G stays constant.
* A solid solute enters at the solution's temperature: C steps at t_m, T does not.
* A second liquid mixes instantly at t_m: T jumps to T_mix of docs/methods.md §2.3(ii); the reaction heat
  then follows the release model.
* The run file states one specific heat capacity, that of the final solution ([mixture]); it also
  states every density. By default the simulator gives both liquids of a two-liquid run that same c_p
  (as the analysis does), so heat capacities are additive, Δ_rH does not depend on temperature and the
  reference temperature of a two-liquid result (T_mix or T_A) changes nothing.
* The true input values are rounded to the precision written in the run file, so an unperturbed run
  file states the truth exactly. With ``perturb_inputs=True`` each stated value is the truth plus a
  normal draw with its stated standard uncertainty (the mixing time too).

Reference temperature T_i of ``SimTruth.delta_t_adiabatic`` (= Q/C_final, Q the released heat):
``T(t_m)`` for dissolution, reaction and electrical calibration (T is continuous there); ``T_mix`` for
neutralization. A mixing calibration releases no heat: there delta_t_adiabatic is T_mix − T_A(t_m),
the rise that the calibration formula uses, measured from the cool water's temperature.
``SimTruth.delta_t_from_contents`` is always the adiabatic final temperature minus T(t_m⁻).

The code is split by job, and every name stays importable from here: :mod:`calc.simulation.model` (the
lumped model, its closed form, the noise), :mod:`calc.simulation.run` (truth, options, stated inputs,
``write_run``), :mod:`calc.simulation.kinds` (one ``simulate_*`` function per run kind) and
:mod:`calc.simulation.scenarios` (``random_scenario``).
"""

from __future__ import annotations

from calc.simulation.kinds import (
    WATER_CP,  # noqa: F401  (importable from here, not in __all__)
    WATER_DENSITY,  # noqa: F401
    simulate_dissolution,
    simulate_electrical_calibration,
    simulate_mixing_calibration,
    simulate_neutralization,
    simulate_reaction,
)
from calc.simulation.model import (
    RELEASES,  # noqa: F401
    LumpedModel,
    ar1_noise,
    first_order_release_curve,
    read_probe,
)
from calc.simulation.run import DEFAULT_UNCERTAINTIES, RunOptions, SimTruth, SimulatedRun, write_run
from calc.simulation.scenarios import random_scenario

__all__ = [
    "LumpedModel",
    "SimTruth",
    "SimulatedRun",
    "RunOptions",
    "DEFAULT_UNCERTAINTIES",
    "first_order_release_curve",
    "ar1_noise",
    "read_probe",
    "simulate_dissolution",
    "simulate_neutralization",
    "simulate_electrical_calibration",
    "simulate_mixing_calibration",
    "simulate_reaction",
    "write_run",
    "random_scenario",
]
