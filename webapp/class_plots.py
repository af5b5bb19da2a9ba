"""SVG plots of a class: the distribution of a section's results and a control chart.

Same conventions as :mod:`webapp.plots` (whose helpers are reused): one
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
from webapp.plots import _FS_LABEL, _figure, _heading, _legend_below, _margins, _plain, _style_axes, _to_svg
from webapp.plots import OKABE_ITO as _C

__all__ = ["distribution_svg", "control_chart_svg"]


def _jitter(n: int) -> np.ndarray:
    # deterministic spread in [-0.3, 0.3] (golden-ratio sequence), the same picture every time
    return (np.modf(np.arange(n) * 0.6180339887)[0] - 0.5) * 0.6


@functools.lru_cache(maxsize=32)
def _distribution_cached(*args: Any, **kw: Any) -> str:
    return _distribution(*args, **kw)


def distribution_svg(values: Sequence[float], rows: Sequence[str], flagged: Sequence[bool], **kw: Any) -> str:
    """Return a strip plot of results (see :func:`_distribution`); the same data gives the cached picture."""
    return _distribution_cached(tuple(values), tuple(rows), tuple(flagged), **kw)


def _distribution(values: Sequence[float], rows: Sequence[str], flagged: Sequence[bool], *, unit: str,
                     measurement: str, reference: float | None = None, reference_U: float | None = None,
                     width_in: float = 7.5) -> str:
    """Return a strip plot of results, one row per category (section or group), with the reference band.

    ``rows`` names each result's row; ``flagged`` results are drawn as vermillion triangles,
    the others as blue circles. The reference value is a black dashed line, its expanded
    uncertainty a shaded band.
    """
    v = np.asarray(values, dtype=float)
    cats = sorted(set(rows))
    idx = {c: i for i, c in enumerate(cats)}
    height = 1.7 + 0.28 * max(len(cats), 2)
    fig = _figure(width_in, min(height, 14.0))
    ax = _margins(fig, left=1.5, right=0.25, top=0.55, bottom=1.0)
    _style_axes(ax, grid_axis="x")
    y = np.array([idx[r] for r in rows], dtype=float) + _jitter(len(rows))
    f = np.asarray(flagged, dtype=bool)
    handles: list[Any] = []
    if reference is not None:
        if reference_U:
            ax.axvspan(reference - reference_U, reference + reference_U, color=_C["sky_blue"], alpha=0.25,
                       linewidth=0, gid="cc-ref-band")
            handles.append(Patch(facecolor=_C["sky_blue"], alpha=0.4, label=f"reference ± U ({fmt.uncertainty(reference_U, unit)})"))
        ax.axvline(reference, color=_C["black"], linestyle=(0, (5, 2)), linewidth=1.3, gid="cc-ref")
        handles.append(Line2D([], [], color=_C["black"], linestyle=(0, (5, 2)), label=f"reference {fmt.like(reference, reference_U, unit)}"))
    if (~f).any():
        ax.plot(v[~f], y[~f], linestyle="none", marker="o", markersize=4.5, color=_C["blue"], alpha=0.8,
                markeredgewidth=0, gid="cc-results")
        handles.append(Line2D([], [], linestyle="none", marker="o", color=_C["blue"], label="result"))
    if f.any():
        ax.plot(v[f], y[f], linestyle="none", marker="^", markersize=6, color=_C["vermillion"],
                markeredgecolor=_C["black"], markeredgewidth=0.5, gid="cc-flagged")
        handles.append(Line2D([], [], linestyle="none", marker="^", color=_C["vermillion"],
                              markeredgecolor=_C["black"], label="flagged result"))
    ax.set_yticks(range(len(cats)))
    ax.set_yticklabels([_plain(c) for c in cats], fontsize=8)
    ax.set_ylim(-0.6, len(cats) - 0.4)
    ax.invert_yaxis()
    ax.set_xlabel(f"result / ({unit})", fontsize=_FS_LABEL)
    _heading(fig, "Distribution of results", measurement)
    if handles:
        _legend_below(fig, ax, handles, ncols=min(len(handles), 4))
    desc = f"{v.size} results of {measurement} in {len(cats)} row(s)"
    if v.size:
        desc += f", from {fmt.interval(v.min(), v.max(), unit, u=reference_U)}, {int(f.sum())} flagged"
    if reference is not None:
        desc += f"; reference {fmt.like(reference, reference_U, unit)}"
    return _to_svg(fig, "Distribution of results", desc + ".")


def control_chart_svg(values: Sequence[float], limits: Any, flagged: Sequence[bool], *, unit: str,
                      standard: str, baseline: int, width_in: float = 7.5, height_in: float = 3.9,
                      xlabel: str = "run, in time order") -> str:
    """Return an individuals control chart: points in time order, centre line, ±1/2/3 s limits.

    ``limits`` is a :class:`calc.statistics.control_charts.ControlLimits`; points breaking a run rule
    (``flagged``) are vermillion triangles; the baseline period is shaded.
    """
    v = np.asarray(values, dtype=float)
    x = np.arange(1, v.size + 1)
    f = np.asarray(flagged, dtype=bool)
    fig = _figure(width_in, height_in)
    ax = _margins(fig, left=0.95, right=0.25, top=0.55, bottom=1.05)
    _style_axes(ax)
    ax.axvspan(0.5, baseline + 0.5, color=_C["yellow"], alpha=0.18, linewidth=0, gid="cc-baseline")
    ax.axhline(limits.centre, color=_C["black"], linewidth=1.2, gid="cc-centre")
    for k, style, colour in ((1, (0, (1, 2)), _C["bluish_green"]), (2, (0, (4, 2)), _C["orange"]),
                             (3, "-", _C["vermillion"])):
        for sign in (-1, 1):
            ax.axhline(limits.centre + sign * k * limits.sigma, color=colour, linestyle=style, linewidth=1.0)
    ax.plot(x, v, color=_C["blue"], linewidth=0.8, marker="o", markersize=4, gid="cc-points")
    if f.any():
        ax.plot(x[f], v[f], linestyle="none", marker="^", markersize=7, color=_C["vermillion"],
                markeredgecolor=_C["black"], markeredgewidth=0.5, gid="cc-violations")
    handles = [
        Line2D([], [], color=_C["blue"], marker="o", label="result"),
        Line2D([], [], color=_C["black"], label=f"centre {fmt.like(limits.centre, limits.sigma, unit)}"),
        Line2D([], [], color=_C["bluish_green"], linestyle=(0, (1, 2)), label="±1 s"),
        Line2D([], [], color=_C["orange"], linestyle=(0, (4, 2)), label="±2 s"),
        Line2D([], [], color=_C["vermillion"], label="±3 s"),
        Line2D([], [], linestyle="none", marker="^", color=_C["vermillion"], markeredgecolor=_C["black"],
               label="run rule broken"),
        Patch(facecolor=_C["yellow"], alpha=0.35, label=f"baseline ({baseline} points)"),
    ]
    ax.set_xlabel(xlabel, fontsize=_FS_LABEL)
    from matplotlib.ticker import MaxNLocator

    ax.xaxis.set_major_locator(MaxNLocator(integer=True))  # whole runs: no 0.5, 1.5
    ax.set_ylabel(f"result / ({unit})", fontsize=_FS_LABEL)
    ax.set_xlim(0.5, max(v.size, 2) + 0.5)
    _heading(fig, "Control chart", standard)
    _legend_below(fig, ax, handles, ncols=4)
    desc = (f"{v.size} results of {standard}; centre {fmt.like(limits.centre, limits.sigma, unit)}, s = {fmt.uncertainty(limits.sigma, unit)} "
            f"from the first {baseline} points; {int(f.sum())} point(s) break a run rule")
    return _to_svg(fig, "Control chart", desc + ".")
