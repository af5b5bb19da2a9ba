"""Simulate a dissolution followed by an in-situ heater pulse in the same log (truth known).

The one-node cup of :mod:`calc.simulation.model` is linear in its forcing, and after the dissolution
its heat capacity and conductance stay those of the final contents. So the log is the
dissolution run plus the response of that final system to the heater pulse alone: the
difference of two :class:`~calc.simulation.model.LumpedModel` runs with and without the pulse
(identical before it). Noise and quantisation are applied once, to the sum.
"""

from __future__ import annotations

import math
from typing import Any, Unpack

import numpy as np

from calc.simulation.kinds import DissolutionOptions, dissolve
from calc.simulation.liquids import HeaterOptions, heater_kw, heater_table
from calc.simulation.model import LumpedModel, read_probe
from calc.simulation.run import SimTruth, SimulatedRun, _decimals

__all__ = ["simulate_dissolution_with_calibration"]

KIND = "dissolution-with-calibration"


class InsituOptions(DissolutionOptions, HeaterOptions, total=False):
    """The keywords of :func:`simulate_dissolution_with_calibration` beyond its own: the dissolution's, the heater's."""


def simulate_dissolution_with_calibration(
    rng: np.random.Generator | int | None,
    *,
    gap_s: float = 600.0,
    tail_s: float = 600.0,
    pulses: str = "after",
    **options: Unpack[InsituOptions],
) -> SimulatedRun:
    """Simulate dissolving a salt and heater pulses ``gap_s`` apart in one log.

    The salt, the water and the release take :func:`calc.simulation.kinds.simulate_dissolution`'s keywords,
    the heater :func:`calc.simulation.kinds.simulate_electrical_calibration`'s, with their defaults.
    ``pulses``: "after" (the dissolution at ``fore_s``, then the pulse), "before" (the pulse at
    ``fore_s``, the dissolution after it) or "both". ``tail_s`` is the log after the last event's
    end. A pulse before the dissolution heats the initial contents; its response is superposed on
    the dissolution run, which is exact only without heat exchange (``tau_h=math.inf``): with
    exchange the pulse's excess would decay at the initial contents' rate after the dissolution
    too. The truth's ``heat_capacity_final_J_K`` is C of cup + final solution; C before the
    dissolution is ``inputs["c_before_J_K"]``.
    """
    if pulses not in ("after", "before", "both"):
        raise ValueError(f"pulses must be 'after', 'before' or 'both', got {pulses!r}")
    (voltage_V, current_A, duration_s), dissolution = heater_kw(options)
    fore0 = float(dissolution.get("fore_s", 300.0))
    first = pulses in ("before", "both")
    dissolution = {**dissolution, "after_s": gap_s, "fore_s": fore0 + (duration_s + gap_s if first else 0.0)}
    ctx, s, n, molar_enthalpy_kJ_mol, release = dissolve(KIND, rng, **dissolution)
    heat = -n * molar_enthalpy_kJ_mol * 1000.0
    g_before, g_after = ctx.conductances(s.c_final)
    model = s.model(ctx, heat, release)
    o = ctx.o
    v, i, dur = ctx.true(voltage_V, "voltage_V"), ctx.true(current_A, "current_A"), ctx.true(duration_s, "duration_s")
    starts = ([("before", round(fore0, 1))] if first else []) + (
        [("after", round(model.t_m + gap_s, 1))] if pulses in ("after", "both") else []
    )
    end = max(t for _w, t in starts) + dur if starts[-1][0] == "after" else model.t_m + gap_s
    count = int(math.floor((end + tail_s) / o["dt"] + 1e-9)) + 1
    times = np.round(np.arange(count) * o["dt"], 9)
    contents, probe = model.solve(times)
    body = s.body
    body.pop("calorimeter", None)
    body.pop("mixture", None)  # the heater measures the heat capacity: no solution model is stated
    for j, (when, t_h) in enumerate(starts):
        c, g = (s.c_before, g_before) if when == "before" else (s.c_final, g_after)
        pulse = {
            "t_initial": o["t_initial_C"],
            "t_env": model.t_env,
            "t_m": t_h,
            "c_before": c,
            "g_before": g,
            "c_after": c,
            "g_after": g,
            "tau_s": model.tau_s,
            "p_stir": model.p_stir,
            "room_drift": model.room_drift,
        }
        c1, p1 = LumpedModel(heat_J=v * i * dur, release="finite", t_d=dur, **pulse).solve(times)
        c0, p0 = LumpedModel(**pulse).solve(times)
        contents, probe = contents + (c1 - c0), probe + (p1 - p0)
        name = "heater" if j == 0 else "heater_2"
        body[name] = {**heater_table(ctx, name, v, i, dur), "start": f"{t_h:.1f} ± 0.5 s"}
    ctx.inputs["c_before_J_K"] = s.c_before
    readings = read_probe(
        ctx.rng, probe, noise=o["noise"], phi=o["phi"], resolution=o["resolution"], gain=o["gain"], offset=o["offset_K"]
    )
    u_tm = ctx.u["mixing_time_s"]
    d = _decimals(u_tm)
    stated_tm = model.t_m + (ctx.rng.normal(0.0, u_tm) if o["perturb_inputs"] else 0.0)
    run: dict[str, Any] = {
        "kind": KIND,
        "readings": "readings.csv",
        "mixing_time": f"{stated_tm:.{d}f} ± {u_tm:.{d}f} s",
        "info": {
            "title": "simulated dissolution with an in-situ heater calibration",
            "notes": "synthetic data with a known truth (calc.simulation.insitu)",
        },
        "calorimeter": {"name": o["calorimeter_name"]},
        "thermometer": {"resolution": f"{o['resolution']:g} K"},
        **body,
    }
    t_a = model.contents_before_mixing()
    truth = SimTruth(
        kind=KIND,
        delta_t_adiabatic=heat / s.c_final,
        heat_J=heat,
        molar_enthalpy_kJ_mol=molar_enthalpy_kJ_mol,
        calorimeter_heat_capacity_J_K=s.c_cal,
        heat_capacity_final_J_K=s.c_final,
        reference="T(t_m)",
        reference_temperature_C=t_a,
        t_contents_at_mixing_C=t_a,
        t_mix_C=None,
        delta_t_from_contents=heat / s.c_final,
        extent_mol=n,
        t_m_s=model.t_m,
        mixing_time_stated_s=round(stated_tm, d),
        t_inf_C=model.t_env,
        **ctx.model_truth(model),
    )
    return SimulatedRun(times, readings, run, truth, contents, probe)
