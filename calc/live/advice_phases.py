"""The phases of a live run and what the advisor says in each (docs/methods.md §9.1).

Each function returns the keyword arguments of :class:`calc.live.advisor.Advice` (an :class:`AdviceParts`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, NotRequired, TypedDict

import numpy as np

from calc.deltat.drift import LineFit, fit_line
from calc.deltat.heater import HEATER_LAG_S
from calc.deltat.logprep import PreparedLog
from calc.errors import InputError
from calc.io.runfile import RunSpec
from calc.kinds import get_kind
from calc.live import advice_signals as sig
from calc.live.advice_forecast import HORIZON_S, MIN_GAIN, Forecast, forecast
from calc.live.advice_signals import Warning_, find_change
from calc.live.advice_text import ADD_NOW, UNDER_WAY, amount_text, default_target, duration, target_text

__all__ = [
    "AdviceParts",
    "AdvicePeriods",
    "Drawing",
    "DriftLine",
    "Estimate",
    "State",
    "fore_phase",
    "later_phase",
    "require_time",
    "stopped",
    "find_change",
    "LIVE_KINDS",
    "MIN_LIVE_READINGS",
    "MIN_AFTER_STOP_S",
    "HOLD_GAIN",
]

#: Kinds with one event per log, which the advisor follows.
LIVE_KINDS = tuple(ADD_NOW)
#: Readings before the advisor says anything.
MIN_LIVE_READINGS = 10
#: The shortest after period the advisor lets a run stop with, s (the analysis warns below 120 s, §1;
#: 5 minutes are the usual advice; 3 minutes with a forecast that says more would not help).
MIN_AFTER_STOP_S = 180.0
#: Once the advice said "you can stop", it goes back to "after" only when more readings would lower U by
#: this fraction or more (a hysteresis above MIN_GAIN: the gain of a noisy log wobbles around its limit).
HOLD_GAIN = 1.5 * MIN_GAIN
#: When U still falls faster than the forecast says, the advice looks again after this long, s.
RECHECK_S = 60.0
#: Spikes are warned about while they are this recent, s (the final analysis lists them all).
SPIKE_RECENT_S = 120.0
#: The shortest after period the advisor calls one (a shorter one is not told from the end of the change), s.
MIN_AFTER_S = 60.0
_KELVIN = 273.15


class AdvicePeriods(TypedDict):
    """The periods found so far, s: fore and after as [start, end], None until known."""

    fore: list[float] | None
    mixing_time: float | None
    after: list[float] | None


def no_periods() -> AdvicePeriods:
    """Return the periods of an advice that has found none yet."""
    return {"fore": None, "mixing_time": None, "after": None}


class DriftLine(TypedDict):
    """A drift line to draw from (t0, T0) to (t1, T1), s and °C."""

    t0: float
    t1: float
    T0: float
    T1: float


class Estimate(TypedDict):
    """The provisional result: ΔT ± u (K) and the main output ± U in ``unit``."""

    delta_t: float
    u_delta_t: float
    value: float
    expanded_u: float
    unit: str
    quantity: str
    provisional: bool


class Drawing(TypedDict, total=False):
    """What the advice shows beside its status: periods, drift lines, warnings and the estimate."""

    periods: AdvicePeriods
    drift_lines: list[DriftLine]
    warnings: list[Warning_]
    estimate: Estimate | None


class AdviceParts(Drawing):
    """The keyword arguments of :class:`calc.live.advisor.Advice` a phase function returns."""

    phase: str
    status: str
    seconds_more: NotRequired[float | None]


@dataclass(frozen=True)
class State:
    """What every phase needs: the run, the target U, the prepared log and the clock."""

    spec: RunSpec
    target: float | None  # None: the default target, from the provisional value
    prep: PreparedLog
    now_s: float | None
    held: bool = False  # the previous advice said "you can stop": leaving that needs a clearer gain (HOLD_GAIN)
    earlier: Any = None  # end_s -> U of the same analysis on the readings up to end_s (None: not known)

    @property
    def unit(self) -> str:
        """The main output's unit."""
        return get_kind(self.spec.kind).main_unit


def require_time(now_s: Any) -> None:
    """Refuse a clock time that is not a finite number."""
    if isinstance(now_s, bool) or not isinstance(now_s, (int, float)) or not math.isfinite(now_s):
        raise InputError(f"expected the time now in s (a finite number), got {now_s!r}", field="now_s")


def stopped(t: np.ndarray, now_s: float | None) -> list[Warning_]:
    """Return the "readings_stopped" warning when the last reading is older than the limit."""
    if now_s is None or t.size == 0 or now_s - float(t[-1]) <= sig.STOPPED_AFTER_S:
        return []
    age = now_s - float(t[-1])
    return [Warning_("readings_stopped", f"no new reading for {age:.0f} s: is the thermometer still logging?", age)]


def _common_warnings(st: State, fore: sig.ForeState | None) -> list[Warning_]:
    out = stopped(st.prep.t, st.now_s)
    recent = [r for r in st.prep.rejected if r["time_s"] >= float(st.prep.t[-1]) - SPIKE_RECENT_S]
    if recent:
        out.append(
            Warning_(
                "spike",
                f"{len(recent)} wild reading(s) in the last {SPIKE_RECENT_S / 60:.0f} min left "
                f"out, the last at {recent[-1]['time_s']:g} s; check the thermometer's contact",
                recent[-1]["time_s"],
            )
        )
    if fore is not None:
        if fore.drifting:
            out.append(
                Warning_(
                    "fore_drift",
                    f"the fore period drifts by {fore.slope_k_per_min:+.3f} K/min (limit "
                    f"±{sig.FORE_DRIFT_LIMIT_K_PER_MIN:g} K/min): is the liquid at room temperature?",
                    fore.slope_k_per_min,
                )
            )
        if fore.noise_k > sig.NOISE_LIMIT_K:
            out.append(
                Warning_(
                    "too_noisy",
                    f"the readings scatter by {fore.noise_k:.3f} K beyond the thermometer's "
                    f"steps (limit {sig.NOISE_LIMIT_K:g} K): check the stirring and the probe",
                    fore.noise_k,
                )
            )
    return out


def _fore_line(st: State, end: float) -> sig.ForeState | None:
    m = st.prep.t <= end
    return sig.fore_state(st.prep.t[m], st.prep.y[m], st.spec.resolution_K)


def _line(fit: LineFit, t0: float, t1: float) -> DriftLine:
    return {"t0": t0, "t1": t1, "T0": fit.at(t0) - _KELVIN, "T1": fit.at(t1) - _KELVIN}


def fore_phase(st: State) -> AdviceParts:
    """Before the change: keep stirring until the fore period is long and steady, then add."""
    t = st.prep.t
    fore = _fore_line(st, float(t[-1]))
    warnings = _common_warnings(st, fore)
    periods: AdvicePeriods = {"fore": [float(t[0]), float(t[-1])], "mixing_time": None, "after": None}
    lines = [_line(fore.line, float(t[0]), float(t[-1]))] if fore is not None else []
    base: Drawing = {"periods": periods, "drift_lines": lines, "warnings": warnings}
    length = float(t[-1] - t[0])
    if fore is None or length < sig.FORE_TARGET_S:
        more = sig.FORE_TARGET_S - length
        return {
            "phase": "fore",
            "status": f"fore period: keep stirring, {duration(more)} more",
            "seconds_more": more,
            **base,
        }
    if not fore.steady:
        return {
            "phase": "fore",
            "status": "fore period: keep stirring until the drift is steady (it is still changing)",
            "seconds_more": 60.0,
            **base,
        }
    return {"phase": "add_now", "status": ADD_NOW[st.spec.kind], "seconds_more": 0.0, **base}


def _estimate(analysis: Any, unit: str) -> Estimate:
    gum, dt = analysis.gum, analysis.delta_t
    return {
        "delta_t": dt.value,
        "u_delta_t": dt.u,
        "value": gum.values[gum.main],
        "expanded_u": gum.expanded_uncertainty,
        "unit": unit,
        "quantity": gum.main,
        "provisional": True,
    }


def _in_after(st: State, analysis: Any) -> bool:
    """True when the analysis found an after period that begins after the process is over."""
    if any("ends too soon" in w for w in analysis.periods.warnings):
        return False
    heater = st.spec.sections.get("heater")
    if heater is not None and "duration" in heater:
        t_off = analysis.periods.mixing_time + float(heater["duration"].m_as("s"))
        if analysis.periods.after[0] < t_off + HEATER_LAG_S - 1e-9:
            return False
    a0, a1 = analysis.periods.after
    # judged on its first minutes: a long after window bends a little with the Newtonian drift itself
    m = (st.prep.t >= a0 - 1e-9) & (st.prep.t <= min(a1, a0 + MIN_AFTER_STOP_S) + 1e-9)
    return a1 - a0 >= MIN_AFTER_S and not sig.curved(st.prep.t[m], st.prep.y[m])


def later_phase(st: State, change: tuple[float, float], analysis: Any) -> AdviceParts:
    """After the change: the main period under way, then the after period and when to stop."""
    t_m = analysis.periods.mixing_time if analysis is not None else change[0]
    fore = _fore_line(st, t_m)
    warnings = _common_warnings(st, fore) + _after_change_warnings(st, fore, t_m)
    t = st.prep.t
    periods: AdvicePeriods = {"fore": [float(t[0]), t_m], "mixing_time": t_m, "after": None}
    lines = [_line(fore.line, float(t[0]), t_m)] if fore is not None else []
    estimate = _estimate(analysis, st.unit) if analysis is not None else None
    base: Drawing = {"periods": periods, "drift_lines": lines, "warnings": warnings, "estimate": estimate}
    if analysis is None or estimate is None or not _in_after(st, analysis):
        return {
            "phase": "reaction",
            "status": UNDER_WAY[st.spec.kind],
            "seconds_more": _main_left(st, analysis, t_m),
            **base,
        }
    a0, a1 = (float(x) for x in analysis.periods.after)
    periods["after"] = [a0, a1]
    m = (t >= a0 - 1e-9) & (t <= a1 + 1e-9)
    lines.append(_line(fit_line(t[m], st.prep.y[m]), t_m, a1))
    target = st.target if st.target is not None else default_target(st.unit, estimate["value"])
    return {**base, **_after_status(st, target, forecast(analysis, st.prep.t, st.prep.y), a1 - a0)}


def _main_left(st: State, analysis: Any, t_m: float) -> float | None:
    """Seconds until the after period can start: heater off + lag, or about 9 release time constants."""
    heater = st.spec.sections.get("heater")
    end = None
    if heater is not None and "duration" in heater:
        end = t_m + float(heater["duration"].m_as("s")) + HEATER_LAG_S
    elif analysis is not None and analysis.periods.release_time_constant:
        end = t_m + 9.0 * analysis.periods.release_time_constant
    return None if end is None else max(end - float(st.prep.t[-1]), 0.0)


def _after_status(st: State, target: float, fc: Forecast, length: float) -> AdviceParts:
    """The after period's status: how long for U ≤ target, or that the run can stop."""
    unit = st.unit
    wait = max(MIN_AFTER_STOP_S - length, 0.0)
    limit = HOLD_GAIN if st.held else MIN_GAIN
    stop = f"you can stop now: more readings would lower U by less than {limit * 100:.0f} %"
    good = fc.first(lambda x: x >= wait and fc.expanded(x) <= target and fc.gain(x) < limit)
    if good == 0.0:
        return {"phase": "can_stop", "status": stop, "seconds_more": 0.0}
    if good is not None:
        return {
            "phase": "after",
            "status": f"after period: {duration(good)} more for {target_text(target, unit)}",
            "seconds_more": good,
        }
    flat = fc.first(lambda x: x >= wait and fc.gain(x) < limit)
    floor = fc.expanded(flat if flat is not None else 1e9)
    why = f"{target_text(target, unit)} cannot be reached: U stays near {amount_text(floor, unit)} ({_main_line(fc)})"
    if flat == 0.0:
        fell = _recent_gain(st, fc)
        if fell is not None and fell >= limit:
            return {
                "phase": "after",
                "status": f"after period: U fell by {fell * 100:.0f} % in the last "
                f"{duration(HORIZON_S)}, more than forecast; {duration(RECHECK_S)} more, then the advice "
                "looks again",
                "seconds_more": RECHECK_S,
            }
        # not "you can stop": the target is not met; the student and the lab decide (docs/methods.md §9.1)
        more = f"more readings would lower U by less than {limit * 100:.0f} %"
        return {"phase": "out_of_reach", "status": f"{why}; {more}", "seconds_more": 0.0}
    return {
        "phase": "after",
        "status": f"after period: {duration(flat or HORIZON_S)} more; {why}",
        "seconds_more": flat,
    }


def _recent_gain(st: State, fc: Forecast) -> float | None:
    """Return by how much U fell over the last HORIZON_S of readings (None: not known).

    The forecast holds every line but the after fits' fixed; the mixing-time, model and heater-lag
    lines also shrink as the after period grows. Before the advice says a target cannot be reached,
    what the readings really did is checked against it (docs/methods.md §9.4).
    """
    if st.earlier is None or st.prep.t.size == 0:
        return None
    then = st.earlier(float(st.prep.t[-1]) - HORIZON_S)
    return None if then is None or not then > 0 else 1.0 - fc.expanded_now / then


def _main_line(fc: Forecast) -> str:
    """Say what keeps U up once the after period no longer helps: the largest budget line it leaves."""
    return f"the largest term left is {fc.largest}" if fc.largest else "the drift fits' own scatter"


def _after_change_warnings(st: State, fore: sig.ForeState | None, t_m: float) -> list[Warning_]:
    out: list[Warning_] = []
    length = t_m - float(st.prep.t[0])
    if fore is None or length < sig.FORE_MIN_S:
        out.append(
            Warning_(
                "fore_short",
                f"the fore period lasted only {length:.0f} s; {sig.FORE_TARGET_S / 60:.0f} minutes are advised",
                length,
            )
        )
    if fore is not None:
        room = fore.line.at(t_m)
        hit = sig.probe_out(st.prep, t_m, room, st.spec.resolution_K)
        if hit is not None:
            out.append(
                Warning_(
                    "probe_out",
                    f"a sudden step of {hit[1]:+.2f} K towards the room's temperature at "
                    f"{hit[0]:g} s: is the probe still in the liquid?",
                    hit[1],
                )
            )
    return out
