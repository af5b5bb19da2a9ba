"""The run plot: the temperature log with the ΔT method's drift model and the corrected ΔT (SVG and PNG)."""

from __future__ import annotations

import io
import math
from typing import TYPE_CHECKING, Any

import numpy as np
from matplotlib.figure import Figure
from matplotlib.lines import Line2D

from calc.deltat.constructions import EqualAreaConstruction
from calc.kinds import get_kind
from webapp.plots.canvas import (
    FS_LABEL,
    KELVIN_OFFSET,
    add_axes,
    heading,
    legend_below,
    measured_text,
    new_figure,
    number_text,
    places,
    style_axes,
    to_svg,
)
from webapp.plots.canvas import OKABE_ITO as _C
from webapp.plots.log import describe_log, draw_log, finish_log_axes, time_scale

if TYPE_CHECKING:
    from calc.analysis import Analysis


def drift_curves(analysis: Analysis) -> dict[str, tuple[np.ndarray, np.ndarray]]:
    """Return the drift model of the ΔT method as named curves ``name → (t / s, T / K)``.

    The method's construction draws them over the log (:mod:`calc.deltat.constructions`):
    ``fore`` and ``after`` (Newtonian drifts or straight lines), ``model`` (model-fit) or
    ``start`` and ``extreme`` (naive). A construction with nothing to draw gives an empty dict.
    """
    t = analysis.readings.time_s
    return analysis.delta_t.construction.curves(float(t[0]), float(t[-1]))


_CURVE_STYLE = {
    "fore": dict(color=_C["blue"], linestyle=(0, (6, 2.5)), linewidth=1.5),
    "after": dict(color=_C["vermillion"], linestyle=(0, (6, 2, 1.5, 2)), linewidth=1.5),
    "model": dict(color=_C["bluish_green"], linestyle=(0, (4, 2)), linewidth=1.6),
    "start": dict(color=_C["blue"], linestyle=(0, (6, 2.5)), linewidth=1.5),
    "extreme": dict(color=_C["vermillion"], linestyle=(0, (6, 2, 1.5, 2)), linewidth=1.5),
}


def _curve_label(method: str, name: str, two_solution: bool) -> str:
    if method == "regnault-pfaundler":
        if name == "fore":
            return "fore drift line" if two_solution else "Newtonian drift, fore fit"
        return "Newtonian drift, after fit"
    if method in ("linear-extrapolation", "equal-area"):
        return f"{name} drift line"
    if method == "model-fit":
        return "fitted exchange model"
    return {"start": "start level", "extreme": "extreme reading"}.get(name, name)


def _draw_delta_t(ax: Any, analysis: Analysis, ts: float) -> list[Any]:
    """Draw the corrected ΔT as a double arrow at t_i (t_x for equal-area); return legend handles."""
    dt, c = analysis.delta_t, analysis.delta_t.construction
    t = analysis.readings.time_s
    at = c.delta_t_time
    t_at = float(analysis.periods.mixing_time if at is None else at) / ts
    start, end = dt.start_temperature - KELVIN_OFFSET, dt.end_temperature - KELVIN_OFFSET
    span = (float(t[-1]) - float(t[0])) / ts
    purple = _C["reddish_purple"]
    handles = []
    if isinstance(c, EqualAreaConstruction):
        ax.axvline(t_at, color=purple, linestyle=(0, (1, 1.5)), linewidth=1.0)
        handles.append(Line2D([], [], color=purple, linestyle=(0, (1, 1.5)), label="equal-area time t_x"))
    for level in (start, end):
        ax.plot([t_at - 0.025 * span, t_at + 0.025 * span], [level, level], color=purple, linewidth=1.2)
    ax.annotate(
        "",
        xy=(t_at, end),
        xytext=(t_at, start),
        arrowprops=dict(arrowstyle="<|-|>", color=purple, linewidth=1.6, shrinkA=0, shrinkB=0, mutation_scale=9),
    )
    ax.text(
        t_at - 0.012 * span,
        (start + end) / 2,
        "ΔT",
        ha="right",
        va="center",
        fontsize=FS_LABEL,
        fontweight="bold",
        bbox=dict(boxstyle="round,pad=0.15", facecolor="white", edgecolor="none", alpha=0.85),
    )
    handles.append(
        Line2D(
            [],
            [],
            color=purple,
            linewidth=1.6,
            marker="|",
            markersize=8,
            label=f"corrected ΔT = {number_text(dt.value, places(dt.u))} K, u = {number_text(dt.u, places(dt.u))} K",
        )
    )
    return handles


def _run_figure(analysis: Analysis, width_in: float, height_in: float) -> tuple[Figure, str, str]:
    """Build the run plot; return the figure, its title and its text description."""
    dt = analysis.delta_t
    t, y = analysis.readings.time_s, analysis.readings.temperature_K
    rejected = getattr(analysis, "rejected", None) or []
    if rejected:  # spikes are drawn as marks, not as part of the line, and do not set the scale
        wild = np.isin(t, [r["time_s"] for r in rejected]) & np.isin(y, [r["temperature_K"] for r in rejected])
        t, y = t[~wild], y[~wild]
    ts, tunit = time_scale(t)
    fig = new_figure(width_in, height_in)
    ax = add_axes(fig, left=0.75, right=0.25, top=0.72, bottom=1.15)
    style_axes(ax)
    handles = draw_log(ax, t, y, analysis.periods, ts)
    two = get_kind(analysis.kind).two_solution
    for name, (tt, yy) in drift_curves(analysis).items():
        style = _CURVE_STYLE.get(name, dict(color=_C["bluish_green"], linestyle="--", linewidth=1.4))
        ax.plot(tt / ts, yy - KELVIN_OFFSET, gid=f"cc-curve-{name}", **style)
        handles.append(Line2D([], [], label=_curve_label(dt.method, name, two), **style))
    lo, hi = float(np.min(y)), float(np.max(y))
    if math.isfinite(dt.start_temperature) and math.isfinite(dt.end_temperature):
        lo, hi = min(lo, dt.start_temperature, dt.end_temperature), max(hi, dt.start_temperature, dt.end_temperature)
        handles += _draw_delta_t(ax, analysis, ts)
    finish_log_axes(ax, t, lo, hi, ts, tunit)
    if rejected:
        y0, y1 = ax.get_ylim()
        rt = np.array([r["time_s"] for r in rejected]) / ts
        ry = np.clip(np.array([r["temperature_K"] for r in rejected]) - KELVIN_OFFSET, y0, y1)
        ax.plot(rt, ry, linestyle="none", marker="x", markersize=6, color=_C["vermillion"], gid="cc-rejected")
        handles.append(
            Line2D(
                [],
                [],
                linestyle="none",
                marker="x",
                color=_C["vermillion"],
                label=f"rejected as spike ({len(rejected)}; off-scale ones at the edge)",
            )
        )
    title = analysis.spec.get("info", "title") or f"{analysis.kind} run"
    heading(fig, str(title), f"{analysis.kind} · corrected ΔT by the {dt.method} method")
    legend_below(fig, ax, handles, ncols=3)
    desc = (
        f"{describe_log(t, y, analysis.periods)} Corrected temperature change "
        f"{measured_text(dt.value, dt.u, 'K')} (standard uncertainty) by the {dt.method} method."
    )
    return fig, f"Temperature log: {title}", desc


def run_plot_svg(analysis: Analysis, *, width_in: float = 7.5, height_in: float = 4.2) -> str:
    """Return the SVG plot of a run: readings, periods, the method's drift model and the corrected ΔT."""
    fig, title, desc = _run_figure(analysis, width_in, height_in)
    return to_svg(fig, title, desc)


def run_plot_png(analysis: Analysis, *, width_in: float = 7.5, height_in: float = 4.2, dpi: int = 150) -> bytes:
    """Return the run plot of :func:`run_plot_svg` as PNG bytes (for documents that cannot show SVG)."""
    fig, _title, _desc = _run_figure(analysis, width_in, height_in)
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi, metadata={"Software": None})
    return buf.getvalue()
