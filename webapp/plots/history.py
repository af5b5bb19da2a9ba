"""The history plot: a calorimeter's heat capacity against date, with the value in use."""

from __future__ import annotations

from datetime import datetime, timedelta
from typing import Any

import matplotlib.dates as mdates
import numpy as np
from matplotlib.lines import Line2D
from matplotlib.patches import Patch

from webapp.plots.canvas import (
    FS_LABEL,
    add_axes,
    heading,
    legend_below,
    measured_text,
    new_figure,
    no_data,
    style_axes,
    to_svg,
)
from webapp.plots.canvas import OKABE_ITO as _C

_UNCERTAINTY_KINDS = {"expanded": "expanded uncertainty U (about 95 %)", "standard": "standard uncertainty u"}


def calibration_history_svg(
    points: list[tuple[datetime, float, float]],
    *,
    unit: str = "J/K",
    current: tuple[float, float] | None = None,
    uncertainty: str = "expanded",
    width_in: float = 7.5,
    height_in: float = 3.8,
) -> str:
    """Return the SVG plot of calorimeter heat capacity against date, with error bars.

    ``points`` are ``(date, value, uncertainty)``; ``current`` is the value in use with its
    uncertainty, drawn as a line and a band. ``uncertainty`` says what the uncertainties are:
    ``"expanded"`` (default) or ``"standard"``; the legend says so.
    """
    if uncertainty not in _UNCERTAINTY_KINDS:
        raise ValueError(f"uncertainty must be one of {sorted(_UNCERTAINTY_KINDS)}, got {uncertainty!r}")
    kind = _UNCERTAINTY_KINDS[uncertainty]
    pts = sorted(points, key=lambda p: p[0])
    fig = new_figure(width_in, height_in)
    ax = add_axes(fig, left=0.85, right=0.25, top=0.5, bottom=1.0)
    style_axes(ax)
    handles = _draw_points(ax, pts, kind)
    if current is not None:
        handles += _draw_current(ax, current, kind, unit)
    ax.set_ylabel(f"heat capacity / ({unit})", fontsize=FS_LABEL)
    ax.set_xlabel("date", fontsize=FS_LABEL)
    heading(fig, "Calorimeter heat capacity over time")
    if handles:
        legend_below(fig, ax, handles, ncols=2)
    desc = f"{len(pts)} calibrations"
    if pts:
        desc += (
            f" from {pts[0][0]:%Y-%m-%d} to {pts[-1][0]:%Y-%m-%d}, values "
            f"{min(p[1] for p in pts):.4g} to {max(p[1] for p in pts):.4g} {unit} ({kind})"
        )
    if current is not None:
        desc += f"; value in use {measured_text(current[0], current[1], unit)}"
    return to_svg(fig, "Calorimeter heat capacity history", desc + ".")


def _draw_points(ax: Any, pts: list[tuple[datetime, float, float]], kind: str) -> list[Any]:
    """Draw the calibrations with their error bars and a date axis; return the legend handles."""
    if not pts:
        no_data(ax, "no calibrations recorded yet")
        ax.set_xticks([])
        return []
    x = [p[0] for p in pts]
    v = np.array([p[1] for p in pts], dtype=float)
    u = np.array([p[2] for p in pts], dtype=float)
    ax.errorbar(x, v, yerr=u, fmt="none", color=_C["blue"], ecolor=_C["blue"], elinewidth=1.1, capsize=3)
    marks = dict(linestyle="none", marker="o", color=_C["blue"], markeredgecolor=_C["black"])
    ax.plot(x, v, markersize=5, markeredgewidth=0.6, gid="cc-cal-points", **marks)
    if len(pts) == 1 or (x[-1] - x[0]) < timedelta(days=2):
        mid = x[0] + (x[-1] - x[0]) / 2
        ax.set_xlim(mid - timedelta(days=3), mid + timedelta(days=3))
    loc = mdates.AutoDateLocator(minticks=3, maxticks=8)
    ax.xaxis.set_major_locator(loc)
    ax.xaxis.set_major_formatter(mdates.ConciseDateFormatter(loc))
    return [Line2D([], [], label=f"calibrations (bars: {kind})", **marks)]


def _draw_current(ax: Any, current: tuple[float, float], kind: str, unit: str) -> list[Any]:
    """Draw the value in use as a line and its uncertainty as a band; return the legend handles."""
    cv, cu = current
    line = dict(color=_C["vermillion"], linestyle=(0, (6, 2.5)), linewidth=1.4)
    ax.axhspan(cv - cu, cv + cu, color=_C["orange"], alpha=0.18, linewidth=0, gid="cc-current-band")
    ax.axhline(cv, gid="cc-current", **line)
    return [
        Line2D([], [], label=f"in use: {measured_text(cv, cu, unit)}", **line),
        Patch(facecolor=_C["orange"], alpha=0.35, label=f"in use ± {kind.split(' (')[0]}"),
    ]
