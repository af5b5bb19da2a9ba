"""Dissolution with an in-situ electrical calibration in the same log (kind ``dissolution-with-calibration``).

The log holds a dissolution (at the mixing time) and one or two heater pulses (``[heater]``
and optionally ``[heater_2]``, each with its ``start`` on the log's clock), before or after it.
The heat capacity of cup + contents comes from the heater, C = V·I·t / ΔT_heater, so no
model of the solution's heat capacity is needed; ΔH = −C·ΔT_dissolution / n.

One drift law for the whole log
    Between the events the log has drift windows W_0 … W_n. One Newtonian law
    dT/dt = g(T) = a − k (T − T_ref) is fitted to all of them at once (a level L_j per window,
    shared a and k; variable projection is not needed: ``scipy.optimize.least_squares`` on
    5–6 parameters). Each event's corrected ΔT is the Regnault–Pfaundler integral
    ΔT = T_after(t_f) − T_before(t_i) − ∫ g(T) dt over its main period, taken on the readings.
    The covariance of the parameters is a sandwich in which each window keeps its own noise
    level and AR(1) inflation; the ΔT of all events are functions of the same parameters, so
    their covariance is kept: the budget carries it as independent components through its
    Cholesky factor. The quantisation of the level of a window shared by two events enters
    both, with opposite signs.

Reference temperature of ΔH: the dissolution's start when the heater follows (C is that of
the final contents), its end when the heater comes first (C of the initial contents), the
middle when there is one pulse on each side (their mean C).

This module finds the events and fits the shared drift law; :mod:`calc.insitu_analysis` builds the
measurement model and analyses the run end to end.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any, cast

import numpy as np
from scipy.optimize import least_squares

from calc.deltat.base import resolution_term
from calc.deltat.drift import decay_integral, fit_line, inflation, lag1_autocorrelation
from calc.deltat.heater import HEATER_LAG_S
from calc.deltat.periods import MIN_WINDOW_POINTS, Periods, detect_mixing_time, find_periods
from calc.errors import AnalysisError, InputError
from calc.io.readings import Readings
from calc.io.runfile import RunSpec

__all__ = ["KIND", "HEATERS", "Event", "SharedFit", "insitu_periods", "shared_fit"]

KIND = "dissolution-with-calibration"
HEATERS = ("heater", "heater_2")


@dataclass(frozen=True)
class Event:
    """One event of the log: its name, start (t_i) and the start of the drift window after it (t_f)."""

    name: str  # "dissolution", "heater" or "heater_2"
    start: float
    main_end: float


@dataclass
class SharedFit:
    """The shared drift law and the corrected ΔT of every event with their covariance."""

    windows: list[tuple[float, float]]
    events: list[Event]
    params: np.ndarray  # L_0 … L_n, a, k
    cov: np.ndarray
    t_ref: float
    delta_t: np.ndarray  # one per event
    cov_delta_t: np.ndarray
    levels: list[tuple[float, float]]  # (T at t_i, T at t_f) of each event
    resolution_u: list[float]  # per window level
    residual_sd: float
    rho: float

    @property
    def k(self) -> float:
        """Exchange rate constant, 1/s."""
        return float(self.params[-1])


def _heater_times(spec: RunSpec, name: str) -> tuple[float, float] | None:
    sec = spec.sections.get(name)
    if sec is None:
        return None
    return sec["start"].m_as("s"), sec["duration"].m_as("s")


def insitu_periods(spec: RunSpec, readings: Readings) -> tuple[Periods, list[Event], list[tuple[float, float]]]:
    """Return the periods for the report, the events in time order and the drift windows between them.

    Raises
    ------
    InputError
        Naming the field when an event lies outside the log, the events overlap, or a drift
        window between them holds too few readings.
    """
    t, y, src = readings.time_s, readings.temperature_K, readings.source
    heaters = _heaters(spec, t, src)
    first_heater = min(h[1] for h in heaters)
    t_m, u_tm, detected = _mixing_time(spec, t, y, first_heater, src)
    events: list[tuple[str, float, float]] = [("dissolution", t_m, math.nan)]
    events += [(name, start, start + duration) for name, start, duration in heaters]
    events.sort(key=lambda e: e[1])
    out: list[Event] = []
    for i, (name, start, off) in enumerate(events):
        nxt = events[i + 1][1] if i + 1 < len(events) else float(t[-1]) + 1.0
        if name == "dissolution":
            t_f = _dissolution_end(t, y, start, nxt, spec, src)
        else:
            t_f = off + HEATER_LAG_S
        window = t[(t >= t_f - 1e-9) & (t < nxt - 1e-9)]
        if window.size < MIN_WINDOW_POINTS:
            what = "the end of the log" if i + 1 == len(events) else f"the {events[i + 1][0].replace('_', ' ')}"
            raise InputError(
                f"only {window.size} readings between the end of the {name.replace('_', ' ')} (settled at "
                f"{t_f:.0f} s) and {what}; at least {MIN_WINDOW_POINTS} are needed: leave 3–5 minutes of steady "
                "drift between the events",
                field=_field_of(name, i + 1 == len(events)),
                source=src,
            )
        out.append(Event(name, start, float(window[0])))
    windows = _drift_windows(spec, t, out, src)
    diss = next(e for e in out if e.name == "dissolution")
    periods = Periods(
        fore=windows[0],
        after=windows[-1],
        mixing_time=t_m,
        u_mixing_time=u_tm,
        mixing_time_detected=detected,
        main_end=diss.main_end,
    )
    return periods, out, windows


def _heaters(spec: RunSpec, t: np.ndarray, src: str) -> list[tuple[str, float, float]]:
    """Return (name, start s, duration s) of each heater pulse, once checked to lie inside the log."""
    heaters = [(name, *times) for name in HEATERS if (times := _heater_times(spec, name)) is not None]
    for name, start, duration in heaters:
        if not (t[0] < start and start + duration < t[-1]):
            raise InputError(
                f"the heater pulse {start:g}–{start + duration:g} s does not lie inside the log "
                f"({t[0]:g} to {t[-1]:g} s); give {name}.start on the log's clock",
                field=f"{name}.start",
                source=src,
            )
    return heaters


def _drift_windows(spec: RunSpec, t: np.ndarray, events: list[Event], src: str) -> list[tuple[float, float]]:
    """Return the drift windows: the fore period, one after each settled event (the last: the after period)."""
    fore = spec.fore_period or (float(t[0]), float(t[t < events[0].start - 1e-9][-1]))
    windows = [fore] + [
        (e.main_end, float(t[t < events[i + 1].start - 1e-9][-1]) if i + 1 < len(events) else float(t[-1]))
        for i, e in enumerate(events)
    ]
    if spec.after_period is not None:
        if spec.after_period[0] < events[-1].main_end - 1e-9:
            raise InputError(
                f"after_period starts at {spec.after_period[0]:g} s, before the last event has settled "
                f"({events[-1].main_end:g} s)",
                field="after_period",
                source=src,
            )
        windows[-1] = spec.after_period
    if np.count_nonzero((t >= windows[0][0]) & (t <= windows[0][1])) < MIN_WINDOW_POINTS:
        raise InputError(
            f"too few readings before the first event at {events[0].start:g} s; at least "
            f"{MIN_WINDOW_POINTS} are needed (3–5 minutes are advised)",
            field="fore_period",
            source=src,
        )
    return windows


def _field_of(name: str, last: bool) -> str:
    return f"{name}.start" if name != "dissolution" else ("mixing_time" if not last else "after_period")


def _mixing_time(
    spec: RunSpec, t: np.ndarray, y: np.ndarray, first_heater: float, src: str
) -> tuple[float, float, bool]:
    if spec.mixing_time is not None:
        t_m = spec.mixing_time.m_as("s")
        if not t[0] < t_m < t[-1]:
            raise InputError(
                f"mixing_time {t_m:g} s lies outside the log ({t[0]:g} s to {t[-1]:g} s)",
                field="mixing_time",
                source=src,
            )
        return t_m, spec.mixing_time.u_as("s"), False
    before = t < first_heater
    if np.count_nonzero(before) < 3 * MIN_WINDOW_POINTS:
        raise InputError(
            "the heater comes first or too early to find the dissolution in the log; give mixing_time in the run file",
            field="mixing_time",
            source=src,
        )
    t_m, u = detect_mixing_time(t[before], y[before], spec.resolution_K)
    return t_m, u, True


def _dissolution_end(t: np.ndarray, y: np.ndarray, t_m: float, nxt: float, spec: RunSpec, src: str) -> float:
    """Return where the dissolution has settled, from the log up to the next event."""
    keep = t < nxt - 1e-9
    try:
        p = find_periods(t[keep], y[keep], resolution=spec.resolution_K, mixing_time=t_m, source=src)
    except InputError:
        raise InputError(
            f"too few readings between the dissolution at {t_m:g} s and the next event at {nxt:g} s: "
            "leave 5–10 minutes for the dissolution to finish and the drift to settle",
            field="mixing_time",
            source=src,
        ) from None
    if any(w.startswith("the log ends too soon") for w in p.warnings):
        raise InputError(
            f"the heater starts at {nxt:g} s, before the dissolution at {t_m:g} s has finished and its "
            "drift has settled: switch the heater on later (about 10 release time constants and 3–5 "
            "minutes of steady drift after the dissolution)",
            field="mixing_time",
            source=src,
        )
    return p.main_end


# ------------------------------------------------------------------ the shared fit


def _window_model(params: np.ndarray, j: int, t: np.ndarray, c: float, t_ref: float) -> np.ndarray:
    level, a, k = params[j], params[-2], params[-1]
    return cast(np.ndarray, level + (a - k * (level - t_ref)) * decay_integral(k, t - c))


def shared_fit(
    readings: Readings, events: list[Event], windows: list[tuple[float, float]], resolution: float
) -> SharedFit:
    """Fit one Newtonian drift law to every window and return each event's corrected ΔT."""
    t, y = readings.time_s, readings.temperature_K
    masks = [(t >= a - 1e-9) & (t <= b + 1e-9) for a, b in windows]
    # each window's level sits next to the event it borders: the end of the fore window, else the start
    refs = [windows[0][1]] + [w[0] for w in windows[1:]]
    lines = [fit_line(t[m], y[m]) for m in masks]
    t_ref = float(np.mean([ln.a for ln in lines]))
    x0 = np.array([ln.at(r) for ln, r in zip(lines, refs)] + [float(np.mean([ln.b for ln in lines])), 0.0])
    tw = [t[m] for m in masks]
    yw = [y[m] for m in masks]

    def resid(p: np.ndarray) -> np.ndarray:
        return np.concatenate([_window_model(p, j, tw[j], refs[j], t_ref) - yw[j] for j in range(len(tw))])

    scale = np.array([0.01] * len(windows) + [1e-4, 1e-4])
    sol = least_squares(resid, x0, x_scale=scale, method="lm")
    p = sol.x
    r = resid(p)
    jac = sol.jac
    n, npar = r.size, p.size
    omega, rhos, sds = _window_noise(r, [w.size for w in tw], npar, resolution)
    try:
        a_inv = np.linalg.inv(jac.T @ jac)
        cov = a_inv @ (jac.T @ (jac * omega[:, None])) @ a_inv
    except np.linalg.LinAlgError:
        raise AnalysisError(f"{readings.source}: the drift windows do not determine a drift law") from None
    values, grads, levels, extra = [], [], [], []
    for i, ev in enumerate(events):
        f = _event_delta_t(t, y, ev, i, refs, t_ref)
        values.append(f(p))
        grads.append(_gradient(f, p, cov))
        levels.append(_event_levels(p, i, ev, refs, t_ref))
        inner = (t > ev.start) & (t < ev.main_end)
        extra.append(_inner_weights(t[inner], ev.start, ev.main_end))
    g = np.array(grads)
    cov_dt = g @ cov @ g.T
    k = float(p[-1])
    s = float(np.sqrt(np.mean(omega)))
    for i, w in enumerate(extra):  # the readings inside each main period carry their own noise
        cov_dt[i, i] += (k * s) ** 2 * float(np.dot(w, w))
    res_u = [resolution_term(resolution, sd) for sd in sds]
    return SharedFit(
        list(windows),
        list(events),
        p,
        cov,
        t_ref,
        np.array(values),
        cov_dt,
        levels,
        res_u,
        float(np.sqrt(float(np.dot(r, r)) / max(n - npar, 1))),
        max(rhos),
    )


def _window_noise(
    r: np.ndarray, sizes: list[int], npar: int, resolution: float
) -> tuple[np.ndarray, list[float], list[float]]:
    """Return each reading's noise variance (AR(1)-inflated, per window), each window's ρ and residual sd."""
    omega, start, rhos, sds = np.empty(r.size), 0, [], []
    for size in sizes:
        rj = r[start : start + size]
        rho = lag1_autocorrelation(rj)
        var = inflation(rho) * float(np.dot(rj, rj)) / max(rj.size - npar / len(sizes), 1.0)
        # a staircase of readings scatters less than its quantisation error: floor at q²/12 (GUM F.2.2.1)
        var = max(var, resolution**2 / 12.0)
        omega[start : start + rj.size] = var
        rhos.append(rho)
        sds.append(math.sqrt(float(np.dot(rj, rj)) / max(rj.size - 2, 1)))
        start += rj.size
    return omega, rhos, sds


def _event_levels(p: np.ndarray, i: int, ev: Event, refs: list[float], t_ref: float) -> tuple[float, float]:
    """Return the drift law's levels at event i's start (window i) and at its settled end (window i + 1), K."""
    t_i = float(_window_model(p, i, np.array([ev.start]), refs[i], t_ref)[0])
    t_f = float(_window_model(p, i + 1, np.array([ev.main_end]), refs[i + 1], t_ref)[0])
    return t_i, t_f


def _inner_weights(tt: np.ndarray, a: float, b: float) -> np.ndarray:
    x = np.concatenate([[a], tt, [b]])
    d = np.diff(x)
    w = np.zeros(x.size)
    w[:-1] += 0.5 * d
    w[1:] += 0.5 * d
    return w[1:-1]


def _event_delta_t(
    t: np.ndarray, y: np.ndarray, ev: Event, i: int, refs: list[float], t_ref: float
) -> Callable[[np.ndarray], float]:
    inner = (t > ev.start) & (t < ev.main_end)
    tt, yy = t[inner], y[inner]
    w = _inner_weights(tt, ev.start, ev.main_end)
    span = ev.main_end - ev.start
    x_all = np.concatenate([[ev.start], tt, [ev.main_end]])
    w_a = 0.5 * (x_all[1] - x_all[0])
    w_b = 0.5 * (x_all[-1] - x_all[-2])
    inner_sum = float(np.dot(w, yy))

    def f(p: np.ndarray) -> float:
        t_i, t_f = _event_levels(p, i, ev, refs, t_ref)
        a, k = p[-2], p[-1]
        integral_t = inner_sum + w_a * t_i + w_b * t_f
        return cast(float, (t_f - t_i) - (a * span - k * (integral_t - t_ref * span)))

    return f


def _gradient(f: Any, p: np.ndarray, cov: np.ndarray) -> np.ndarray:
    g = np.empty(p.size)
    sd = np.sqrt(np.maximum(np.diag(cov), 0.0))
    for i in range(p.size):
        h = sd[i] * 1e-3 if sd[i] > 0 and math.isfinite(sd[i]) else 1e-8 * max(abs(p[i]), 1.0)
        hi, lo = p.copy(), p.copy()
        hi[i] += h
        lo[i] -= h
        g[i] = (f(hi) - f(lo)) / (2 * h)
    return g
