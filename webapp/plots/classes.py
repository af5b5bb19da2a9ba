"""SVG plots of a class: the distribution of a section's results and a control chart.

Same conventions as the other plots (:mod:`webapp.plots.canvas`): one
:class:`matplotlib.figure.Figure` per call (no pyplot), Okabe–Ito colours, every series also
told apart by marker or line style, a ``<title>`` and ``<desc>``, no external references.
"""

from __future__ import annotations

import functools
from collections.abc import Sequence
from typing import Any

import numpy as np
from matplotlib.lines import Line2D
from matplotlib.patches import Patch

from calc import formatting as fmt
from webapp.plots.canvas import FS_LABEL, add_axes, heading, legend_below, new_figure, plain, style_axes, to_svg
from webapp.plots.canvas import OKABE_ITO as _C

__all__ = ["distribution_svg", "control_chart_svg"]


#: how a result is marked: blue circles, and vermillion triangles for flagged ones (rule broken)
_RESULT: dict[str, Any] = dict(linestyle="none", marker="o", color=_C["blue"])
_FLAGGED: dict[str, Any] = dict(linestyle="none", marker="^", color=_C["vermillion"], markeredgecolor=_C["black"])
#: the control limits: k (in s), line style, colour
_LIMITS = ((1, (0, (1, 2)), _C["bluish_green"]), (2, (0, (4, 2)), _C["orange"]), (3, "-", _C["vermillion"]))


def _jitter(n: int) -> np.ndarray:
    # deterministic spread in [-0.3, 0.3] (golden-ratio sequence), the same picture every time
    return (np.modf(np.arange(n) * 0.6180339887)[0] - 0.5) * 0.6


@functools.lru_cache(maxsize=32)
def _distribution_cached(*args: Any, **kw: Any) -> str:
    return _distribution(*args, **kw)


def distribution_svg(values: Sequence[float], rows: Sequence[str], flagged: Sequence[bool], **kw: Any) -> str:
    """Return a strip plot of results (see :func:`_distribution`); the same data gives the cached picture."""
    return _distribution_cached(tuple(values), tuple(rows), tuple(flagged), **kw)


def _distribution(
    values: Sequence[float],
    rows: Sequence[str],
    flagged: Sequence[bool],
    *,
    unit: str,
    measurement: str,
    reference: float | None = None,
    reference_U: float | None = None,
    width_in: float = 7.5,
) -> str:
    """Return a strip plot of results, one row per category (section or group), with the reference band.

    ``rows`` names each result's row; ``flagged`` results are drawn as vermillion triangles,
    the others as blue circles. The reference value is a black dashed line, its expanded
    uncertainty a shaded band.
    """
    v = np.asarray(values, dtype=float)
    cats = sorted(set(rows))
    idx = {c: i for i, c in enumerate(cats)}
    height = 1.7 + 0.28 * max(len(cats), 2)
    fig = new_figure(width_in, min(height, 14.0))
    ax = add_axes(fig, left=1.5, right=0.25, top=0.55, bottom=1.0)
    style_axes(ax, grid_axis="x")
    y = np.array([idx[r] for r in rows], dtype=float) + _jitter(len(rows))
    f = np.asarray(flagged, dtype=bool)
    handles = [] if reference is None else _draw_reference(ax, reference, reference_U, unit)
    if (~f).any():
        ax.plot(v[~f], y[~f], markersize=4.5, alpha=0.8, markeredgewidth=0, gid="cc-results", **_RESULT)
        handles.append(Line2D([], [], label="result", **_RESULT))
    if f.any():
        ax.plot(v[f], y[f], markersize=6, markeredgewidth=0.5, gid="cc-flagged", **_FLAGGED)
        handles.append(Line2D([], [], label="flagged result", **_FLAGGED))
    ax.set_yticks(range(len(cats)))
    ax.set_yticklabels([plain(c) for c in cats], fontsize=8)
    ax.set_ylim(-0.6, len(cats) - 0.4)
    ax.invert_yaxis()
    ax.set_xlabel(f"result / ({unit})", fontsize=FS_LABEL)
    heading(fig, "Distribution of results", measurement)
    if handles:
        legend_below(fig, ax, handles, ncols=min(len(handles), 4))
    desc = f"{v.size} results of {measurement} in {len(cats)} row(s)"
    if v.size:
        desc += f", from {fmt.interval(v.min(), v.max(), unit, u=reference_U)}, {int(f.sum())} flagged"
    if reference is not None:
        desc += f"; reference {fmt.like(reference, reference_U, unit)}"
    return to_svg(fig, "Distribution of results", desc + ".")


def _draw_reference(ax: Any, reference: float, reference_U: float | None, unit: str) -> list[Any]:
    """Draw the reference value as a dashed line and its expanded uncertainty as a band; return the legend handles."""
    handles: list[Any] = []
    if reference_U:
        band = dict(color=_C["sky_blue"], alpha=0.25, linewidth=0, gid="cc-ref-band")
        ax.axvspan(reference - reference_U, reference + reference_U, **band)
        label = f"reference ± U ({fmt.uncertainty(reference_U, unit)})"
        handles.append(Patch(facecolor=_C["sky_blue"], alpha=0.4, label=label))
    line = dict(color=_C["black"], linestyle=(0, (5, 2)))
    ax.axvline(reference, linewidth=1.3, gid="cc-ref", **line)
    handles.append(Line2D([], [], label=f"reference {fmt.like(reference, reference_U, unit)}", **line))
    return handles


def control_chart_svg(
    values: Sequence[float],
    limits: Any,
    flagged: Sequence[bool],
    *,
    unit: str,
    standard: str,
    baseline: int,
    width_in: float = 7.5,
    height_in: float = 3.9,
    xlabel: str = "run, in time order",
) -> str:
    """Return an individuals control chart: points in time order, centre line, ±1/2/3 s limits.

    ``limits`` is a :class:`calc.statistics.control_charts.ControlLimits`; points breaking a run rule
    (``flagged``) are vermillion triangles; the baseline period is shaded.
    """
    v = np.asarray(values, dtype=float)
    x = np.arange(1, v.size + 1)
    f = np.asarray(flagged, dtype=bool)
    fig = new_figure(width_in, height_in)
    ax = add_axes(fig, left=0.95, right=0.25, top=0.55, bottom=1.05)
    style_axes(ax)
    _draw_limits(ax, limits, baseline)
    ax.plot(x, v, color=_C["blue"], linewidth=0.8, marker="o", markersize=4, gid="cc-points")
    if f.any():
        ax.plot(x[f], v[f], markersize=7, markeredgewidth=0.5, gid="cc-violations", **_FLAGGED)
    handles = [
        Line2D([], [], color=_C["blue"], marker="o", label="result"),
        Line2D([], [], color=_C["black"], label=f"centre {fmt.like(limits.centre, limits.sigma, unit)}"),
        *(Line2D([], [], color=colour, linestyle=style, label=f"±{k} s") for k, style, colour in _LIMITS),
        Line2D([], [], label="run rule broken", **_FLAGGED),
        Patch(facecolor=_C["yellow"], alpha=0.35, label=f"baseline ({baseline} points)"),
    ]
    ax.set_xlabel(xlabel, fontsize=FS_LABEL)
    from matplotlib.ticker import MaxNLocator

    ax.xaxis.set_major_locator(MaxNLocator(integer=True))  # whole runs: no 0.5, 1.5
    ax.set_ylabel(f"result / ({unit})", fontsize=FS_LABEL)
    ax.set_xlim(0.5, max(v.size, 2) + 0.5)
    heading(fig, "Control chart", standard)
    legend_below(fig, ax, handles, ncols=4)
    desc = (
        f"{v.size} results of {standard}; centre {fmt.like(limits.centre, limits.sigma, unit)}, s = {fmt.uncertainty(limits.sigma, unit)} "
        f"from the first {baseline} points; {int(f.sum())} point(s) break a run rule"
    )
    return to_svg(fig, "Control chart", desc + ".")


def _draw_limits(ax: Any, limits: Any, baseline: int) -> None:
    """Shade the baseline period; draw the centre line and the ±1, 2 and 3 s limits."""
    ax.axvspan(0.5, baseline + 0.5, color=_C["yellow"], alpha=0.18, linewidth=0, gid="cc-baseline")
    ax.axhline(limits.centre, color=_C["black"], linewidth=1.2, gid="cc-centre")
    for k, style, colour in _LIMITS:
        for sign in (-1, 1):
            ax.axhline(limits.centre + sign * k * limits.sigma, color=colour, linestyle=style, linewidth=1.0)
