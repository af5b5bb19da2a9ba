"""Analyze a run end to end: run file and log → corrected ΔT → heat → result ± U.

:func:`analyze_run` is the one entry point the command line and the web app
call. It never prints; it returns an :class:`Analysis` that the formatters in
:mod:`calc.report` turn into text or JSON.
"""

from __future__ import annotations

import math
import os
from collections.abc import Callable, Sequence
from dataclasses import replace
from pathlib import Path
from typing import Any, cast

import numpy as np

from calc import limits
from calc.checks import run_checks
from calc.composition import final_composition, resolve_properties
from calc.deltat.base import DEFAULT_METHOD, DeltaT, Log
from calc.deltat.heater import heater_periods, lag_term, widened
from calc.deltat.logprep import PreparedLog, gap_warnings, prepare_log
from calc.deltat.periods import Periods, find_periods
from calc.deltat.registry import corrected_delta_t
from calc.errors import AnalysisError, InputError
from calc.io.readings import Readings, read_readings
from calc.io.runfile import RunSpec, load_run
from calc.kinds import get_kind
from calc.limits import require_number
from calc.referencing import attach_reference, run_reference
from calc.result import OUTPUT_UNITS, Analysis
from calc.run_warnings import kind_warnings, monte_carlo_warning, wide_interval_warning
from calc.uncertainty.gum import GumResult, monte_carlo, propagate
from calc.uncertainty.measurement_models import ModelSpec, RunProperties, build_model

__all__ = ["Analysis", "analyze_run", "analyze_spec", "OUTPUT_UNITS"]


def check_options(trials: Any, seed: Any, fore: Any = None, after: Any = None) -> None:
    """Refuse Monte Carlo trials over the limit ``monte_carlo_trials``, a seed outside 0…2³²−1, or
    periods beyond ±10⁶ s, naming the option."""
    require_number(trials, "Monte Carlo trials", field="monte_carlo", minimum=0, whole=True)
    limits.require_size(trials, "monte_carlo_trials", what=f"{trials} Monte Carlo trials", field="monte_carlo")
    if seed is not None:
        require_number(seed, "the Monte Carlo seed", field="seed", minimum=0, maximum=2**32 - 1, whole=True)
    for name, period in (("fore", fore), ("after", after)):
        for end in period or ():
            require_number(end, f"the {name} period's ends in s", field=name, minimum=-1e6, maximum=1e6)


def confined_readings(readings: Path, folder: Path, source: str) -> Path:
    """Return ``readings`` when it resolves inside ``folder`` (the run file's), else raise InputError.

    A run file may not send the command line to read ``../../etc/passwd`` or ``/dev/zero``;
    :func:`calc.io.readings.read_readings` then checks that it is a regular file and caps its size.
    """
    try:
        target = readings.resolve()
        inside = target.is_relative_to(folder.resolve())
    except (OSError, ValueError, RuntimeError):  # a NUL byte in the path, a symlink loop
        raise InputError(
            "is not a usable path; expected a readings file beside the run file", source=source, field="readings"
        ) from None
    if not inside:
        raise InputError(
            "must name a file in the run file's folder (or below it), "
            f"got {limits.shorten(str(readings.name))!r} outside it",
            source=source,
            field="readings",
        )
    return target


def analyze_run(
    path: str | os.PathLike[str],
    *,
    method: str | None = None,
    monte_carlo_trials: int = 0,
    seed: int | None = None,
    source: str | None = None,
    with_reference: bool = True,
) -> Analysis:
    """Analyze the run file at ``path``.

    Parameters
    ----------
    path:
        The run file (TOML); its ``readings`` path is relative to it.
    method:
        ΔT method name (overrides the run file's ``method``); default
        ``regnault-pfaundler``.
    monte_carlo_trials:
        Number of Monte Carlo trials for the JCGM 101 check (0: no check).
    seed:
        Seed of the Monte Carlo generator, for reproducible intervals.

    Raises
    ------
    InputError
        For any problem with the run file or the log (names file, field or line).
    AnalysisError
        When the readings cannot give a trustworthy result.
    """
    src = source or str(path)
    check_options(monte_carlo_trials, seed)
    spec = load_run(path, source=src)
    rsrc = os.path.join(os.path.dirname(src), limits.shorten(str(spec.raw.get("readings"))))
    readings = read_readings(
        confined_readings(spec.readings_path, Path(path).parent, src), source=rsrc, column=spec.temperature_column
    )
    return analyze_spec(
        spec, readings, method=method, monte_carlo_trials=monte_carlo_trials, seed=seed, with_reference=with_reference
    )


def analyze_spec(
    spec: RunSpec,
    readings: Readings,
    *,
    method: str | None = None,
    monte_carlo_trials: int = 0,
    seed: int | None = None,
    fore: tuple[float, float] | None = None,
    after: tuple[float, float] | None = None,
    mixing_time: tuple[float, float] | None = None,
    with_reference: bool = True,
    calorimeter_type: str | None = None,
    history: Sequence[tuple[float, float]] | None = None,
) -> Analysis:
    """Analyze an already parsed run and log (used by the web app for re-analysis).

    ``mixing_time`` (value, standard uncertainty in s) overrides the run file's. Before the
    periods are found, repeated time stamps are merged and spikes rejected
    (:mod:`calc.deltat.logprep`). ``with_reference=False`` skips the reference comparison and the
    cautions (the JSON record carries neither), which keeps batch analysis fast. ``calorimeter_type`` (else the
    run file's ``[calorimeter] type``) and ``history`` (the calorimeter's earlier calibrations,
    (value, u) in J/K) feed the plausibility checks of :mod:`calc.checks`.
    """
    check_options(monte_carlo_trials, seed, fore, after)
    kind = get_kind(spec.kind)
    analyze: Callable[..., Analysis] | None = kind.hook("analyze")
    if analyze is not None:  # a kind with an analysis of its own (the in-situ calibration)
        return analyze(
            spec,
            readings,
            method=method,
            monte_carlo_trials=monte_carlo_trials,
            seed=seed,
            fore=fore,
            after=after,
            with_reference=with_reference,
            calorimeter_type=calorimeter_type,
            history=history,
        )
    try:
        prep, periods, dt = _corrected_delta_t(spec, readings, method, fore, after, mixing_time)
        props = resolve_properties(spec, dt)
        model = build_model(spec, dt, props)
        gum = propagate(model.inputs, model.model, model.main)
    except OverflowError:  # a drift fit of a few readings whose uncertainty is beyond any float
        raise AnalysisError(
            f"{readings.source}: the drift fits do not pin down the temperature change (their "
            "uncertainty overflows); is the after period long enough?"
        ) from None
    warnings = _warnings(spec, prep, dt, props, model, gum)
    mc = None
    if monte_carlo_trials and monte_carlo_trials > 0:
        mc = monte_carlo(model.inputs, model.model, model.main, gum, trials=monte_carlo_trials, seed=seed)
        warnings.extend(monte_carlo_warning(mc, kind.main_unit))
    analysis = Analysis(
        spec, readings, periods, dt, model, gum, props, mc, warnings, rejected=prep.rejected, gaps=prep.gaps
    )
    _judge(analysis, with_reference, calorimeter_type, history)
    return analysis


def _warnings(
    spec: RunSpec, prep: PreparedLog, dt: DeltaT, props: RunProperties, model: ModelSpec, gum: GumResult
) -> list[str]:
    """Return the warnings of every step: the log, ΔT, the properties, the kind's own, the interval's width."""
    return [
        *prep.warnings,
        *dt.warnings,
        *props.warnings,
        *kind_warnings(spec, dt, gum, model),
        *wide_interval_warning(gum, model.main),
    ]


def _judge(
    analysis: Analysis,
    with_reference: bool,
    calorimeter_type: str | None,
    history: Sequence[tuple[float, float]] | None,
) -> None:
    """Set the result against its reference (when asked) and run the plausibility checks on it."""
    spec = analysis.spec
    if with_reference:
        attach_reference(analysis)
    analysis.checks = run_checks(
        analysis,
        calorimeter_type=calorimeter_type,
        history=history,
        reference=run_reference(spec) if analysis.main == "molar_enthalpy" else None,
        composition=lambda: final_composition(spec, analysis.properties),
    )


def _corrected_delta_t(
    spec: RunSpec,
    readings: Readings,
    method: str | None,
    fore: tuple[float, float] | None,
    after: tuple[float, float] | None,
    mixing_time: tuple[float, float] | None,
) -> tuple[PreparedLog, Periods, DeltaT]:
    """Return the prepared log, its periods and the corrected ΔT with every budget term."""
    two = get_kind(spec.kind).two_solution
    prep = prepare_log(readings.time_s, readings.temperature_K, resolution=spec.resolution_K, lines=readings.lines)
    if mixing_time is not None:
        t_mix, u_mix = float(mixing_time[0]), float(mixing_time[1])
    elif spec.mixing_time is not None:
        t_mix, u_mix = spec.mixing_time.m_as("s"), spec.mixing_time.u_as("s")
    else:
        t_mix, u_mix = None, 0.0
    periods = find_periods(
        prep.t,
        prep.y,
        resolution=spec.resolution_K,
        mixing_time=t_mix,
        u_mixing_time=u_mix,
        fore=fore or spec.fore_period,
        after=after or spec.after_period,
        two_solution=two,
        source=readings.source,
        lines=prep.lines,
    )
    duration = _heater_duration(spec)
    if duration is not None:
        periods = heater_periods(
            prep.t, periods, duration, source=readings.source, after_given=(after or spec.after_period) is not None
        )
    log = Log(prep.t, prep.y, periods, spec.resolution_K, two_solution=two)
    method_name = method or spec.method or DEFAULT_METHOD
    dt = corrected_delta_t(log, method_name)
    if duration is not None:
        dt = _with_lag_term(dt, prep.t, prep.y, periods, spec, duration, method_name)
    if not math.isfinite(dt.value) or dt.value == 0.0:
        raise AnalysisError(f"{readings.source}: no usable temperature change was found")
    _extra_terms(log, dt, method_name, prep)
    return prep, periods, dt


def _heater_duration(spec: RunSpec) -> float | None:
    """Return the heater's stated duration (s) of an electrical calibration, else None."""
    if not get_kind(spec.kind).timed_heater:
        return None
    return cast("float | None", spec.get("heater", "duration").m_as("s"))


def _with_lag_term(dt: DeltaT, t: Any, y: Any, periods: Periods, spec: RunSpec, duration: float, method: str) -> DeltaT:
    """Widen ΔT's method term when the after period starts soon after the heater stops."""

    def redo(after: tuple[float, float]) -> float:
        moved = replace(periods, after=after, main_end=after[0])
        return corrected_delta_t(Log(t, y, moved, spec.resolution_K), method).value

    return widened(dt, lag_term(dt.value, periods, t, duration, redo))


def _extra_terms(log: Log, dt: DeltaT, method_name: str, prep: PreparedLog) -> None:
    """Add the budget terms the drift fits do not see, and their warnings (docs/methods.md)."""
    from calc.deltat.budget_terms import inadequacy_term, mixing_time_term, quantisation_drift_term, room_drift_term
    from calc.deltat.registry import METHODS

    p = log.periods
    dt.u_mixing_time = max(dt.u_mixing_time, mixing_time_term(log, METHODS[method_name], dt.value))
    dt.u_drift_resolution = quantisation_drift_term(log, dt)
    if method_name == "regnault-pfaundler":
        u_dis, diff = inadequacy_term(log, dt)
        dt.u_model = math.hypot(u_dis, room_drift_term(log, dt, METHODS[method_name]))
        if dt.u_model**2 > 0.5 * dt.u**2:
            why = (
                f"the after period alone gives a ΔT {diff:+.3g} K different"
                if u_dis > 0
                else "the main period is long, so an unseen change of the room temperature weighs heavily"
            )
            dt.warnings.append(
                f"the drift model's inadequacy dominates the uncertainty of ΔT ({why}); check for a changing "
                "room temperature, evaporation or a heating stirrer, and keep the main period short"
            )
    dt.warnings.extend(gap_warnings(prep.gaps, p.mixing_time, p.main_end))


def summary_arrays(analysis: Analysis) -> dict[str, np.ndarray]:
    """Return the series for a plot: times, temperatures and the period bounds."""
    return {
        "time_s": analysis.readings.time_s,
        "temperature_K": analysis.readings.temperature_K,
    }
