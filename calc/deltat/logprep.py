"""Prepare a temperature log for analysis: duplicate time stamps, spikes and gaps.

Real loggers repeat a time stamp, drop rows, jitter their clock and record single wild readings
from a loose contact. :func:`prepare_log` merges readings that share a time stamp (their mean),
screens spikes against a running median (the rejected readings are listed, never silently
replaced) and lists the gaps, so that the analysis can warn when a gap falls inside the main
period. Nothing is interpolated: the trapezoid rule of the ΔT methods spans a gap, and a gap in
the main period is reported as a warning.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, cast

import numpy as np

__all__ = ["PreparedLog", "prepare_log", "running_median", "gap_warnings"]

#: Half-width (readings) of the running median of the spike screen: up to this many
#: consecutive wild readings are caught.
SPIKE_HALF_WIDTH = 3
#: A reading is a spike when it is this many robust standard deviations off the running median.
SPIKE_SIGMAS = 8.0
#: A step between readings longer than this many typical steps (and ≥ 10 s) is a gap.
GAP_FACTOR = 4.0


@dataclass
class PreparedLog:
    """A log ready for the periods and the ΔT methods."""

    t: np.ndarray
    y: np.ndarray
    lines: np.ndarray | None
    rejected: list[dict[str, Any]] = field(default_factory=list)  # {"time_s", "temperature_K", "line", "offset_K"}
    gaps: list[tuple[float, float]] = field(default_factory=list)
    merged_duplicates: int = 0
    warnings: list[str] = field(default_factory=list)


def running_median(y: np.ndarray, half: int) -> np.ndarray:
    """Return the running median of ``y`` over 2·half + 1 readings (the ends padded with the end values)."""
    n = y.size
    if n == 0 or half <= 0:
        return y.copy()
    pad = np.concatenate([np.full(half, y[0]), y, np.full(half, y[-1])])
    win = np.lib.stride_tricks.sliding_window_view(pad, 2 * half + 1)
    return cast(np.ndarray, np.median(win, axis=1))


def _merge_duplicates(
    t: np.ndarray, y: np.ndarray, lines: np.ndarray | None
) -> tuple[np.ndarray, np.ndarray, np.ndarray | None, int]:
    keep = np.concatenate([[True], np.diff(t) > 0])
    if keep.all():
        return t, y, lines, 0
    groups = np.cumsum(keep) - 1
    counts = np.bincount(groups)
    ym = np.bincount(groups, weights=y) / counts
    return t[keep], ym, (lines[keep] if lines is not None else None), int(t.size - keep.sum())


def _spikes(y: np.ndarray, resolution: float) -> np.ndarray:
    """Return a mask of the readings that stand off the running median by far more than the noise."""
    if y.size < 4 * SPIKE_HALF_WIDTH + 3:
        return np.zeros(y.size, dtype=bool)
    r = y - running_median(y, SPIKE_HALF_WIDTH)
    mad = float(np.median(np.abs(r - np.median(r)))) * 1.4826
    if not (np.abs(r) > max(SPIKE_SIGMAS * mad, 3.0 * resolution, 1e-9)).any():
        return np.zeros(y.size, dtype=bool)  # nothing stands out even before the stricter test
    # slow (correlated) noise hides from a short median: judge also against a wide one
    rw = y - running_median(y, 5 * SPIKE_HALF_WIDTH)
    mad_w = float(np.median(np.abs(rw - np.median(rw)))) * 1.4826
    thr = max(SPIKE_SIGMAS * mad, 5.0 * mad_w, 3.0 * resolution, 1e-9)
    out = np.abs(r) > thr
    if not out.any():
        return cast(np.ndarray, out)
    # a true spike goes out and comes back: both neighbours of the run of wild readings lie
    # on the same side of it (a step in a fast change does not come back)
    idx = np.flatnonzero(out)
    keep_out = np.zeros_like(out)
    for i in idx:
        j0, j1 = i - 1, i + 1
        while j0 >= 0 and out[j0]:
            j0 -= 1
        while j1 < y.size and out[j1]:
            j1 += 1
        if j0 < 0 or j1 >= y.size:
            keep_out[i] = True
            continue
        base = 0.5 * (y[j0] + y[j1])
        if abs(y[i] - base) > thr and abs(y[j1] - y[j0]) < abs(y[i] - base):
            keep_out[i] = True
    return cast(np.ndarray, keep_out)


def prepare_log(t: np.ndarray, y: np.ndarray, *, resolution: float, lines: np.ndarray | None = None) -> PreparedLog:
    """Merge duplicate time stamps, reject spikes and list gaps (see the module docstring)."""
    t = np.asarray(t, dtype=float)
    y = np.asarray(y, dtype=float)
    notes: list[str] = []
    t, y, lines, merged = _merge_duplicates(t, y, lines)
    if merged:
        notes.append(f"{merged} readings repeated a time stamp: each repeated time now holds the mean of its readings")
    spike = _spikes(y, resolution)
    rejected = []
    if spike.any():
        med = running_median(y, SPIKE_HALF_WIDTH)
        for i in np.flatnonzero(spike):
            rejected.append(
                {
                    "time_s": float(t[i]),
                    "temperature_K": float(y[i]),
                    "line": int(lines[i]) if lines is not None else None,
                    "offset_K": float(y[i] - med[i]) if math.isfinite(med[i]) else None,
                }
            )
        where = ", ".join(
            (f"line {r['line']}" if r["line"] is not None else f"{r['time_s']:g} s") for r in rejected[:6]
        ) + (" …" if len(rejected) > 6 else "")
        notes.append(
            f"{len(rejected)} reading(s) rejected as spikes ({where}): they stand far off their neighbours; "
            "check the thermometer's contact"
        )
        t, y = t[~spike], y[~spike]
        lines = lines[~spike] if lines is not None else None
    gaps: list[tuple[float, float]] = []
    if t.size > 2:
        d = np.diff(t)
        step = float(np.median(d))
        big = np.flatnonzero(d > max(GAP_FACTOR * step, 10.0))
        gaps = [(float(t[i]), float(t[i + 1])) for i in big]
    return PreparedLog(t, y, lines, rejected, gaps, merged, notes)


def gap_warnings(gaps: list[tuple[float, float]], t_m: float, t_f: float) -> list[str]:
    """Return a warning for every gap that overlaps the main period [t_m, t_f]."""
    out = []
    for a, b in gaps:
        if b > t_m and a < t_f:
            out.append(
                f"the log has a gap from {a:g} s to {b:g} s inside the main period ({t_m:.0f}–{t_f:.0f} s): "
                "the heat exchange over the gap is taken as a straight line between the readings on "
                "either side; the result may be off, record without gaps"
            )
    return out
