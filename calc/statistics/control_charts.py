"""Control charts of check-standard runs, run rules and calibration due dates.

An individuals chart (docs/methods.md §6.2; ISO 7870-2): the centre line is the mean of a baseline
period of in-control results, and the standard deviation is estimated from the average moving
range of consecutive results, ``σ̂ = MR̄/d₂`` with ``d₂ = 1.128`` for ranges of two. The limits
are the centre ± 1, 2 and 3 σ̂; the moving-range chart's upper limit is ``D₄·MR̄`` with
``D₄ = 3.267``. Both constants follow from the normal distribution — the range of two normal
values is √2·σ times a half-normal variable — and are computed here with ``scipy.stats.halfnorm``.

The run rules are those the product owner asked for (one point beyond 3 s; two of three beyond
2 s on one side; four of five beyond 1 s on one side; eight in a row on one side; six in a row
rising or falling), written as ``s`` for the chart's σ̂. A rule is flagged at the point that
completes its pattern; for the "beyond" rules that point must itself lie beyond the limit, so one
pattern is not flagged again as the window slides on. Limits should come from about 20 in-control
points that are not the points being judged.

A robust start (:func:`robust_start`, used by :func:`control_chart` unless ``robust=False``)
keeps one gross error in the baseline from moving the chart: the baseline points whose modified
z-score ``|x − median| / (1.4826 · MAD)`` exceeds 3.5 are set aside, and the limits come from
the remaining, in-control points. 1.4826 = 1/Φ⁻¹(3/4) makes the MAD estimate σ for normal data.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Sequence
from dataclasses import dataclass
from datetime import date, datetime, timedelta

import numpy as np
from scipy import stats as sps

from calc.errors import InputError
from calc.statistics.precision import finite_series

__all__ = [
    "D2",
    "D3",
    "D4",
    "RULES",
    "ControlLimits",
    "Violation",
    "ControlChart",
    "moving_ranges",
    "individuals_limits",
    "run_rules",
    "control_chart",
    "CalibrationStatus",
    "calibration_due",
    "calibration_status",
    "is_overdue",
    "BASELINE_ADVISED",
    "MAD_SCALE",
    "ROBUST_Z",
    "robust_start",
]

#: d₂: mean range of two standard normal values, √2·E|Z| for Z half-normal (= 2/√π ≈ 1.128).
D2 = math.sqrt(2.0) * float(sps.halfnorm.mean())
#: d₃: standard deviation of that range, √2·SD of the half-normal (≈ 0.853).
D3 = math.sqrt(2.0) * float(sps.halfnorm.std())
#: D₄ = 1 + 3 d₃/d₂: upper limit factor of the moving-range chart (≈ 3.267).
D4 = 1.0 + 3.0 * D3 / D2

#: In-control baseline points advised for the limits (docs/methods.md §6.2).
BASELINE_ADVISED = 20
#: 1/Φ⁻¹(3/4) ≈ 1.4826: the MAD times this estimates σ of normal data.
MAD_SCALE = 1.0 / float(sps.norm.ppf(0.75))
#: Modified z-score beyond which a baseline point is set aside (a common cut for gross errors).
ROBUST_Z = 3.5

#: Rule identifiers and their meaning, in the order they are checked.
RULES: dict[str, str] = {
    "beyond-3s": "one point beyond 3 s",
    "2-of-3-beyond-2s": "two of three points in a row beyond 2 s on one side",
    "4-of-5-beyond-1s": "four of five points in a row beyond 1 s on one side",
    "8-on-one-side": "eight points in a row on one side of the centre line",
    "6-trend": "six points in a row steadily rising or falling",
}


def _series(values: Sequence[float] | np.ndarray, what: str, minimum: int) -> np.ndarray:
    return finite_series(values, what, minimum, noun="point", too_few=f"at least {minimum} points are needed")


def moving_ranges(values: Sequence[float] | np.ndarray) -> np.ndarray:
    """Return the moving ranges |x_i − x_{i−1}| of consecutive values (one fewer than the values)."""
    x = _series(values, "moving ranges", 2)
    return np.abs(np.diff(x))


@dataclass(frozen=True)
class ControlLimits:
    """Centre line and limits of an individuals chart, from a baseline period.

    Attributes
    ----------
    centre, sigma:
        Mean of the baseline and σ̂ = MR̄/d₂.
    mr_bar, mr_ucl:
        Average moving range and the moving-range chart's upper limit D₄·MR̄.
    n_baseline:
        Number of baseline points.
    lower_3s, lower_2s, lower_1s, upper_1s, upper_2s, upper_3s:
        centre ∓ 3, 2, 1 σ̂ (2 s: warning, 3 s: action).
    warnings:
        E.g. a baseline shorter than advised.
    """

    centre: float
    sigma: float
    mr_bar: float
    mr_ucl: float
    n_baseline: int
    lower_3s: float
    lower_2s: float
    lower_1s: float
    upper_1s: float
    upper_2s: float
    upper_3s: float
    warnings: tuple[str, ...] = ()
    #: indices (0-based, within the baseline) of the points the robust start set aside
    set_aside: tuple[int, ...] = ()


def robust_start(baseline: Sequence[float] | np.ndarray) -> tuple[np.ndarray, tuple[int, ...]]:
    """Return the in-control points of a baseline and the indices of those set aside.

    A point is set aside when its modified z-score ``|x − median| / (MAD_SCALE · MAD)`` exceeds
    :data:`ROBUST_Z`. With a MAD of zero (more than half the points equal) only points away from
    the median by more than ROBUST_Z times the scale below are set
    aside, with 1.2533 times the mean absolute deviation in place of 1.4826 MAD (the usual
    fallback; 1.2533 = √(π/2) makes it estimate σ for normal data). The points kept stay in time
    order.

    Raises
    ------
    InputError
        For fewer than 2 points or a non-finite value.
    """
    x = _series(baseline, "control-chart baseline", 2)
    med = float(np.median(x))
    dev = np.abs(x - med)
    scale = MAD_SCALE * float(np.median(dev))
    if scale <= 0:
        scale = math.sqrt(math.pi / 2.0) * float(np.mean(dev))
        if scale <= 0:
            return x, ()
    keep = dev <= ROBUST_Z * scale
    if int(keep.sum()) < 2:
        return x, ()
    return x[keep], tuple(int(i) for i in np.flatnonzero(~keep))


def individuals_limits(baseline: Sequence[float] | np.ndarray) -> ControlLimits:
    """Return the individuals-chart limits from a baseline of in-control results.

    Parameters
    ----------
    baseline:
        At least 2 results in time order (about 20 are advised).

    Returns
    -------
    ControlLimits

    Raises
    ------
    InputError
        For fewer than 2 points, a non-finite value, or a baseline without any variation.
    """
    x = _series(baseline, "control-chart baseline", 2)
    mr_bar = float(np.mean(np.abs(np.diff(x))))
    if mr_bar <= 0:
        raise InputError("control-chart baseline: consecutive results never differ, so no limits can be set")
    c = float(x.mean())
    s = mr_bar / D2
    warnings: tuple[str, ...] = ()
    if x.size < BASELINE_ADVISED:
        warnings = (f"limits from {x.size} baseline points; about {BASELINE_ADVISED} in-control points are advised",)
    return ControlLimits(
        centre=c,
        sigma=s,
        mr_bar=mr_bar,
        mr_ucl=D4 * mr_bar,
        n_baseline=int(x.size),
        lower_3s=c - 3 * s,
        lower_2s=c - 2 * s,
        lower_1s=c - s,
        upper_1s=c + s,
        upper_2s=c + 2 * s,
        upper_3s=c + 3 * s,
        warnings=warnings,
    )


@dataclass(frozen=True)
class Violation:
    """A run rule broken at a point of the chart (``index`` is 0-based; messages count from 1)."""

    index: int
    rule: str
    message: str


def _side(z: float) -> str:
    return "above" if z > 0 else "below"


def _k_of_n_beyond(z: np.ndarray, i: int, k: int, n: int, limit: int) -> Violation | None:
    """The rule "k of the n points up to point i lie beyond ``limit`` s on one side" (point i among them)."""
    zi = float(z[i])
    if i < n - 1 or abs(zi) <= limit or int(np.sum(np.sign(zi) * z[i - n + 1 : i + 1] > limit)) < k:
        return None
    p = i + 1  # 1-based for messages
    where = f"{limit} s {_side(zi)} the centre line"
    return Violation(i, f"{k}-of-{n}-beyond-{limit}s", f"{k} of points {p - n + 1}–{p} lie beyond {where}")


def run_rules(values: Sequence[float] | np.ndarray, centre: float, sigma: float) -> list[Violation]:
    """Check the run rules of :data:`RULES` on a sequence of results.

    Parameters
    ----------
    values:
        The results in time order.
    centre, sigma:
        Centre line and σ̂ of the chart (e.g. from :func:`individuals_limits`).

    Returns
    -------
    list of Violation
        Sorted by point, then in the order of :data:`RULES`. A point on the centre line is on
        neither side; equal neighbours break a trend; "beyond k s" means strictly beyond.

    Raises
    ------
    InputError
        For a non-finite value or centre, or sigma ≤ 0.
    """
    x = _series(values, "control chart", 0)
    try:
        ok = math.isfinite(float(centre)) and math.isfinite(float(sigma)) and float(sigma) > 0
    except (TypeError, ValueError):
        ok = False
    if not ok:
        raise InputError(f"control chart: need a finite centre line and sigma > 0, got {centre!r}, {sigma!r}")
    z = (x - centre) / sigma
    sign = np.sign(z)
    out: list[Violation] = []
    n = z.size
    for i in range(n):
        zi = float(z[i])
        p = i + 1  # 1-based for messages
        if abs(zi) > 3:
            out.append(Violation(i, "beyond-3s", f"point {p} lies {zi:+.2f} s from the centre line (beyond 3 s)"))
        out.extend(v for v in (_k_of_n_beyond(z, i, 2, 3, 2), _k_of_n_beyond(z, i, 4, 5, 1)) if v is not None)
        if i >= 7 and sign[i] != 0 and np.all(sign[i - 7 : i + 1] == sign[i]):
            out.append(Violation(i, "8-on-one-side", f"points {p - 7}–{p} all lie {_side(zi)} the centre line"))
        if i >= 5:
            d = np.diff(x[i - 5 : i + 1])
            if np.all(d > 0) or np.all(d < 0):
                way = "rising" if d[0] > 0 else "falling"
                out.append(Violation(i, "6-trend", f"points {p - 5}–{p} are steadily {way}"))
    return out


@dataclass(frozen=True)
class ControlChart:
    """An individuals chart: its limits, the points judged and the rules they break."""

    limits: ControlLimits
    values: tuple[float, ...]
    moving_ranges: tuple[float, ...]
    violations: tuple[Violation, ...]
    moving_range_violations: tuple[int, ...]  # indices i whose |x_i − x_{i−1}| exceeds D₄·MR̄


def control_chart(
    values: Sequence[float] | np.ndarray, *, baseline: int | Sequence[float], robust: bool = True
) -> ControlChart:
    """Build an individuals chart of ``values`` with limits from a baseline.

    Parameters
    ----------
    values:
        The results in time order.
    baseline:
        The number of leading ``values`` that form the baseline period, or a separate sequence of
        in-control baseline results.
    robust:
        Set gross errors in the baseline aside first (:func:`robust_start`); the limits come from
        the points kept, and ``limits.set_aside`` names the others.

    Returns
    -------
    ControlChart
        Every point of ``values`` is judged against the baseline's limits.
    """
    x = _series(values, "control chart", 1)
    if isinstance(baseline, (int, np.integer)):
        if not 2 <= int(baseline) <= x.size:
            raise InputError(
                f"control chart: the baseline must be 2 to {x.size} points, got {baseline}", field="baseline"
            )
        base = x[: int(baseline)]
    else:
        base = _series(baseline, "control-chart baseline", 2)
    aside: tuple[int, ...] = ()
    if robust:
        base, aside = robust_start(base)
    limits = individuals_limits(base)
    if aside:
        note = (
            f"{len(aside)} baseline point(s) set aside as gross errors (modified z-score > {ROBUST_Z:g}): "
            + ", ".join(str(i + 1) for i in aside)
        )
        limits = dataclasses.replace(limits, set_aside=aside, warnings=limits.warnings + (note,))
    mr = np.abs(np.diff(x))
    mr_bad = tuple(int(i) + 1 for i in np.flatnonzero(mr > limits.mr_ucl))
    return ControlChart(
        limits,
        tuple(float(v) for v in x),
        tuple(float(v) for v in mr),
        tuple(run_rules(x, limits.centre, limits.sigma)),
        mr_bad,
    )


# ------------------------------------------------------------------------ calibration


@dataclass(frozen=True)
class CalibrationStatus:
    """When a calorimeter's calibration falls due, and whether it is overdue on ``today``."""

    last_calibration: date
    interval_days: int
    due: date
    overdue: bool
    days_left: int  # negative when overdue


def _as_date(d: date | datetime, what: str) -> date:
    if isinstance(d, datetime):
        return d.date()
    if isinstance(d, date):
        return d
    raise InputError(f"{what}: expected a date, got {d!r}", field=what)


def calibration_due(last_calibration: date | datetime, interval_days: int) -> date:
    """Return the date a calibration falls due: ``interval_days`` after the last one.

    Raises
    ------
    InputError
        For a non-date or an interval that is not a positive whole number of days.
    """
    last = _as_date(last_calibration, "last_calibration")
    whole = isinstance(interval_days, (int, np.integer)) and not isinstance(interval_days, bool)
    if not (whole and interval_days >= 1):
        raise InputError(f"expected a positive whole number of days, got {interval_days!r}", field="interval_days")
    return last + timedelta(days=int(interval_days))


def calibration_status(
    last_calibration: date | datetime, interval_days: int, today: date | datetime | None = None
) -> CalibrationStatus:
    """Return the due date and whether the calibration is overdue on ``today`` (default: today).

    The calibration is still valid on its due date and overdue from the day after.
    """
    due = calibration_due(last_calibration, interval_days)
    now = date.today() if today is None else _as_date(today, "today")
    left = (due - now).days
    return CalibrationStatus(_as_date(last_calibration, "last_calibration"), int(interval_days), due, left < 0, left)


def is_overdue(last_calibration: date | datetime, interval_days: int, today: date | datetime | None = None) -> bool:
    """Return True when the calibration's due date has passed on ``today`` (default: today)."""
    return calibration_status(last_calibration, interval_days, today).overdue
