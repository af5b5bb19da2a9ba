"""Every ΔT method, by name: the complete registry and :func:`corrected_delta_t`.

The methods (name → function, docs/methods.md §2):

``regnault-pfaundler`` (default, :mod:`calc.deltat.regnault_pfaundler`)
    Newtonian Regnault–Pfaundler: one Newtonian drift law fitted to the fore and after periods,
    the exchange integrated on the readings (§2.3).
``linear-extrapolation`` (:mod:`calc.deltat.linear_extrapolation`)
    Straight fore and after drift lines extrapolated to the mixing time (§2.1).
``equal-area`` (:mod:`calc.deltat.equal_area`)
    Fore and after lines evaluated at the equal-area time t_x = t_f − ∫F dt (§2.2).
``model-fit`` (:mod:`calc.deltat.modelfit`)
    Least-squares fit of an explicit heat-exchange model (§2.4).
``naive`` (:mod:`calc.deltat.naive`)
    Extreme reading minus the last fore reading (§2.5). Biased; for comparison only.

Each module registers its method with :func:`calc.deltat.base.register_method` when imported;
importing them here makes :data:`METHODS` complete.
"""

from __future__ import annotations

from calc.deltat import equal_area, linear_extrapolation, modelfit, naive, regnault_pfaundler  # noqa: F401 - they register
from calc.deltat.base import DEFAULT_METHOD, METHODS, DeltaT, Log
from calc.errors import InputError

__all__ = ["METHODS", "corrected_delta_t"]


def corrected_delta_t(log: Log, method: str = DEFAULT_METHOD) -> DeltaT:
    """Return the corrected temperature change of ``log`` by ``method``.

    Raises
    ------
    InputError
        For an unknown method name.
    """
    try:
        fn = METHODS[method]
    except KeyError:
        raise InputError(
            f"unknown method '{method}'; expected one of: {', '.join(sorted(METHODS))}",
            field="method",
        ) from None
    dt = fn(log)
    _common_warnings(log, dt)
    return dt


def _common_warnings(log: Log, dt: DeltaT) -> None:
    q = log.resolution
    if abs(dt.value) < 10 * q:
        dt.warnings.append(
            f"|ΔT| = {abs(dt.value):.3g} K is under 10 × the thermometer resolution ({q:g} K): "
            "use a finer thermometer or more substance"
        )
    g_i = log.line("fore").b
    g_f = log.line("after").b
    duration = max(log.periods.main_end - log.periods.mixing_time, 1.0)
    big = max(abs(g_i), abs(g_f)) * duration
    if big > 0.2 * abs(dt.value) or max(abs(g_i), abs(g_f)) * 60 > 0.1:
        dt.warnings.append(
            f"large drift ({max(abs(g_i), abs(g_f)) * 60:.3g} K/min): "
            "let the solutions reach room temperature, use a lid and check the stir plate"
        )
    for w in log.periods.warnings:
        if w not in dt.warnings:
            dt.warnings.append(w)
