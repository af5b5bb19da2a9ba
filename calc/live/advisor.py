"""Advice while a run records: which period it is in, what to do next, and when to stop.

:func:`advise` takes the run file (without its readings) and the readings so far and returns an
:class:`Advice`: the phase, one plain status line, the seconds still to wait, a provisional
estimate of ΔT and of the main output ± U from the same analysis as the final one
(:func:`calc.analysis.analyze_spec`), the periods and drift lines for a plot, and warnings.
It keeps no state between calls; the caller may pass the previous phase (hysteresis). docs/methods.md §9.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from calc.analysis import analyze_spec
from calc.deltat.logprep import prepare_log
from calc.errors import AnalysisError, InputError
from calc.io.readings import CELSIUS_RANGE, Readings
from calc.live import advice_phases as phases
from calc.live.advice_checks import checked_arrays, checked_spec, checked_target
from calc.live.advice_signals import Warning_

__all__ = ["Advice", "advise", "PHASES", "WARNING_CODES"]

PHASES = ("waiting", "fore", "add_now", "reaction", "after", "can_stop", "out_of_reach", "refused")
#: phases that more readings no longer change: leaving them needs a clearer gain (advice_phases.HOLD_GAIN)
_HELD = ("can_stop", "out_of_reach")
WARNING_CODES = ("fore_drift", "spike", "probe_out", "readings_stopped", "fore_short", "too_noisy")
_KELVIN = 273.15  # 0 °C in kelvin (SI Brochure, 9th ed., 2.3.1)


@dataclass(frozen=True)
class Advice:
    """What the advisor says about a live run at one moment (see the module docstring)."""

    phase: str
    status: str
    seconds_more: float | None = None
    estimate: phases.Estimate | None = None
    periods: phases.AdvicePeriods = field(default_factory=phases.no_periods)
    drift_lines: list[phases.DriftLine] = field(default_factory=list)
    warnings: list[Warning_] = field(default_factory=list)

    def to_dict(self) -> dict[str, Any]:
        """Return the advice as plain JSON-ready values (floats, strings, lists, dicts, None)."""
        return {
            "phase": self.phase,
            "status": self.status,
            "seconds_more": _plain(self.seconds_more),
            "estimate": None if self.estimate is None else {k: _plain(v) for k, v in self.estimate.items()},
            "periods": {k: _plain(v) for k, v in self.periods.items()},
            "drift_lines": [{k: _plain(v) for k, v in line.items()} for line in self.drift_lines],
            "warnings": [w.to_dict() for w in self.warnings],
        }


def _plain(v: Any) -> Any:
    """Return ``v`` with numpy numbers as Python floats, non-finite numbers as None, tuples as lists."""
    if isinstance(v, (bool, str)) or v is None:
        return v
    if isinstance(v, (list, tuple)):
        return [_plain(x) for x in v]
    x = float(v)
    return x if math.isfinite(x) else None


def _check_previous(previous_phase: str | None) -> None:
    """Refuse a previous phase that is not one of ``PHASES`` (naming the field)."""
    if previous_phase is not None and previous_phase not in PHASES:
        raise InputError(
            f"expected the previous phase to be one of {', '.join(PHASES)}, got {previous_phase!r}",
            field="previous_phase",
        )


def advise(
    run_text: str,
    times_s: Sequence[float],
    temps_c: Sequence[float],
    *,
    target_u: float | None = None,
    now_s: float | None = None,
    source: str = "live run",
    previous_phase: str | None = None,
) -> Advice:
    """Return the advice for a live run (see the module docstring and docs/methods.md §9).

    ``previous_phase`` is the phase of the previous advice on the same run, if any: after a
    "can_stop" or "out_of_reach" the advice leaves it only on a clearer gain (``advice_phases.HOLD_GAIN``).

    Raises
    ------
    InputError
        For a bad run file (naming its field), readings that are not numbers, times that go back,
        temperatures outside −50…150 °C, a target U that is not a positive number, or a
        previous phase that is not one of ``PHASES``.
    """
    spec = checked_spec(run_text, source)
    t, y_c = checked_arrays(times_s, temps_c, source, CELSIUS_RANGE)
    target = checked_target(target_u, spec)
    if now_s is not None:
        phases.require_time(now_s)
    _check_previous(previous_phase)
    if spec.kind not in phases.LIVE_KINDS:
        return Advice(
            "refused",
            f"no live advice for {spec.kind} runs (several events in one log); "
            "record the whole log and analyze it afterwards",
        )
    q = spec.resolution_K
    if t.size < phases.MIN_LIVE_READINGS:
        return Advice(
            "waiting",
            f"waiting for readings ({t.size} of {phases.MIN_LIVE_READINGS})",
            warnings=phases.stopped(t, now_s),
        )
    y = y_c + _KELVIN
    lines = np.arange(2, t.size + 2)
    prep = prepare_log(t, y, resolution=q, lines=lines)
    readings = Readings(t, y, lines, source, "s", "degC")
    given = spec.mixing_time.m_as("s") if spec.mixing_time is not None else None
    held, earlier = previous_phase in _HELD, _earlier_u(spec, readings)
    state = phases.State(spec, target, prep, now_s, held=held, earlier=earlier)
    change = phases.find_change(prep.t, prep.y, q, given)
    if change is None:
        return Advice(**phases.fore_phase(state))
    try:
        analysis = analyze_spec(spec, readings, with_reference=False)
    except (InputError, AnalysisError):
        analysis = None
    return Advice(**phases.later_phase(state, change, analysis))


def _earlier_u(spec: Any, readings: Readings) -> Any:
    """Return end_s -> U of the same analysis on the readings up to ``end_s`` (None: it fails there)."""

    def u_at(end_s: float) -> float | None:
        m = readings.time_s <= end_s + 1e-9
        part = Readings(readings.time_s[m], readings.temperature_K[m], readings.lines[m], readings.source, "s", "degC")
        try:
            return analyze_spec(spec, part, with_reference=False).gum.expanded_uncertainty
        except (InputError, AnalysisError):
            return None

    return u_at
