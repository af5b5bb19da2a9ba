"""The temperature log of a run: thinning the readings, drawing them with the periods, and the upload preview."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np
from matplotlib.lines import Line2D
from matplotlib.patches import Patch

from webapp.plots.canvas import (
    FS_LABEL,
    FS_NOTE,
    KELVIN_OFFSET,
    MAX_DRAWN_POINTS,
    add_axes,
    heading,
    legend_below,
    new_figure,
    number_text,
    style_axes,
    to_svg,
)
from webapp.plots.canvas import OKABE_ITO as _C

if TYPE_CHECKING:
    from calc.deltat.periods import Periods


def decimate_minmax(t: np.ndarray, y: np.ndarray, max_points: int = MAX_DRAWN_POINTS) -> tuple[np.ndarray, np.ndarray]:
    """Thin a series to at most ``max_points`` readings, keeping the min and max of each bucket.

    The first and last readings and every bucket's extremes are kept in time order, so
    spikes stay visible.
    """
    t = np.asarray(t, dtype=float)
    y = np.asarray(y, dtype=float)
    n = t.size
    if n <= max_points:
        return t, y
    nb = max((max_points - 2) // 2, 1)
    size = -(-n // nb)
    pad = nb * size - n
    yp = np.concatenate([y, np.full(pad, y[-1])]) if pad else y
    yb = yp.reshape(nb, size)
    base = np.arange(nb) * size
    idx = np.concatenate([yb.argmin(axis=1) + base, yb.argmax(axis=1) + base, [0, n - 1]])
    idx = np.unique(idx[idx < n])
    return t[idx], y[idx]


def time_scale(t: np.ndarray) -> tuple[float, str]:
    span = float(t[-1] - t[0]) if t.size else 0.0
    return (60.0, "min") if span > 1800.0 else (1.0, "s")


def draw_log(ax: Any, t: np.ndarray, y_K: np.ndarray, periods: Periods, ts: float) -> list[Any]:
    """Draw readings, shaded periods and the mixing time; return the legend handles."""
    fa, fb = periods.fore
    aa, ab = periods.after
    ax.axvspan(fa / ts, fb / ts, color=_C["sky_blue"], alpha=0.16, linewidth=0, gid="cc-fore-period")
    ax.axvspan(aa / ts, ab / ts, color=_C["orange"], alpha=0.16, linewidth=0, gid="cc-after-period")
    for (a, b), name in (((fa, fb), "fore"), ((aa, ab), "after")):
        ax.text(
            (a + b) / 2 / ts,
            0.985,
            name,
            transform=ax.get_xaxis_transform(),
            ha="center",
            va="top",
            fontsize=FS_NOTE,
            color="#4d4d4d",
        )
    td, yd = decimate_minmax(t, y_K)
    ax.plot(td / ts, yd - KELVIN_OFFSET, color=_C["black"], linewidth=0.9, gid="cc-readings")
    ax.axvline(periods.mixing_time / ts, color=_C["black"], linestyle=(0, (1, 2)), linewidth=1.0, gid="cc-mixing-time")
    label = "mixing time" + ("" if not periods.mixing_time_detected else " (detected)")
    return [
        Line2D([], [], color=_C["black"], linewidth=0.9, label="readings"),
        Line2D([], [], color=_C["black"], linestyle=(0, (1, 2)), linewidth=1.0, label=label),
        Patch(facecolor=_C["sky_blue"], alpha=0.3, label="fore period"),
        Patch(facecolor=_C["orange"], alpha=0.3, label="after period"),
    ]


def finish_log_axes(ax: Any, t: np.ndarray, lo: float, hi: float, ts: float, tunit: str) -> None:
    pad = 0.08 * max(hi - lo, 0.02)
    ax.set_ylim(lo - pad - KELVIN_OFFSET, hi + pad + 0.06 * (hi - lo) - KELVIN_OFFSET)
    ax.set_xlim(float(t[0]) / ts, float(t[-1]) / ts)
    ax.set_xlabel(f"time / {tunit}", fontsize=FS_LABEL)
    ax.set_ylabel("temperature / °C", fontsize=FS_LABEL)


def describe_log(t: np.ndarray, y: np.ndarray, p: Periods) -> str:
    return (
        f"{t.size} temperature readings over {number_text(t[-1] - t[0], 0)} s, from {number_text(y[0] - KELVIN_OFFSET, 2)} °C "
        f"to {number_text(y[-1] - KELVIN_OFFSET, 2)} °C; mixing at {number_text(p.mixing_time, 0)} s"
        f"{' (detected)' if p.mixing_time_detected else ''}; fore period {number_text(p.fore[0], 0)}–{number_text(p.fore[1], 0)} s, "
        f"after period {number_text(p.after[0], 0)}–{number_text(p.after[1], 0)} s."
    )


def preview_plot_svg(
    time_s: np.ndarray, temperature_K: np.ndarray, periods: Periods, *, width_in: float = 7.5, height_in: float = 3.6
) -> str:
    """Return the quick SVG plot of an uploaded log: readings, detected periods and mixing time."""
    t = np.asarray(time_s, dtype=float)
    y = np.asarray(temperature_K, dtype=float)
    ts, tunit = time_scale(t)
    fig = new_figure(width_in, height_in)
    ax = add_axes(fig, left=0.75, right=0.25, top=0.45, bottom=0.95)
    style_axes(ax)
    handles = draw_log(ax, t, y, periods, ts)
    finish_log_axes(ax, t, float(np.min(y)), float(np.max(y)), ts, tunit)
    heading(fig, "Preview of the readings")
    legend_below(fig, ax, handles, ncols=4)
    return to_svg(fig, "Preview of the temperature readings", describe_log(t, y, periods))
