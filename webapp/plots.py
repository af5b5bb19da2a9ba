"""Draw the notebook's plots as standalone SVG text (and the run plot also as PNG).

Every public function takes calc results or plain data and returns one SVG
document (``str``, UTF-8, no external references, real ``<text>`` in a generic
sans-serif family, a ``<title>`` and ``<desc>`` for screen readers). Nothing here
imports flask or the database, and nothing uses pyplot: each call builds its own
:class:`matplotlib.figure.Figure`, so the functions are safe in a multi-threaded
server.

Colours come from the Okabe–Ito palette; every series also differs by line style
or marker, so colour is never the only cue.
"""

from __future__ import annotations

import hashlib
import io
import math
import re
import textwrap
import threading
from collections.abc import Sequence
from datetime import datetime, timedelta
from typing import TYPE_CHECKING, Any
from xml.sax.saxutils import escape

import matplotlib
import matplotlib.dates as mdates
import numpy as np
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch

from calc import formatting as fmt
from calc.deltat.constructions import EqualAreaConstruction
from calc.kinds import get_kind

if TYPE_CHECKING:
    from calc.analysis import Analysis
    from calc.deltat.periods import Periods
    from calc.uncertainty.gum import BudgetLine

__all__ = [
    "OKABE_ITO", "MAX_DRAWN_POINTS", "run_plot_svg", "run_plot_png", "budget_plot_svg", "calibration_history_svg",
    "preview_plot_svg", "drift_curves", "budget_rows", "decimate_minmax",
]

#: The Okabe–Ito colour-blind-safe palette (Okabe & Ito, "Color Universal Design", 2002/2008).
OKABE_ITO: dict[str, str] = {
    "black": "#000000",
    "orange": "#E69F00",
    "sky_blue": "#56B4E9",
    "bluish_green": "#009E73",
    "yellow": "#F0E442",
    "blue": "#0072B2",
    "vermillion": "#D55E00",
    "reddish_purple": "#CC79A7",
}
_C = OKABE_ITO
_GRID = "#d9d9d9"
_KELVIN_OFFSET = 273.15

#: More readings than this are thinned (min and max of each bucket kept) before drawing.
MAX_DRAWN_POINTS = 1000

_FS_TICK, _FS_LABEL, _FS_TITLE, _FS_NOTE = 8.5, 9.5, 11.0, 8.0

_setup_lock = threading.Lock()
_setup_done = False


def _setup() -> None:
    # svg.fonttype has no per-figure setting; it is set once for the process (real <text> elements).
    global _setup_done
    if _setup_done:
        return
    with _setup_lock:
        matplotlib.rcParams["svg.fonttype"] = "none"
        _setup_done = True


# ------------------------------------------------------------------ pure helpers


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


def drift_curves(analysis: Analysis) -> dict[str, tuple[np.ndarray, np.ndarray]]:
    """Return the drift model of the ΔT method as named curves ``name → (t / s, T / K)``.

    The method's construction draws them over the log (:mod:`calc.deltat.constructions`):
    ``fore`` and ``after`` (Newtonian drifts or straight lines), ``model`` (model-fit) or
    ``start`` and ``extreme`` (naive). A construction with nothing to draw gives an empty dict.
    """
    t = analysis.readings.time_s
    return analysis.delta_t.construction.curves(float(t[0]), float(t[-1]))


def budget_rows(budget: Sequence[BudgetLine], top: int = 8) -> list[tuple[str, float, float]]:
    """Return the rows of the budget plot: ``(label, share, contribution)``, largest share first.

    Inputs that contribute nothing are left out. Beyond ``top`` inputs the rest are grouped as
    ``"other (n inputs)"``: shares add, contributions add in quadrature. When only one input
    would be grouped it is shown by name instead.
    """
    lines = sorted((b for b in budget if b.share > 0 or b.contribution > 0), key=lambda b: -b.share)
    top = max(int(top), 1)
    if len(lines) <= top + 1:
        shown, rest = lines, []
    else:
        shown, rest = lines[:top], lines[top:]
    rows = [(b.label or b.name, float(b.share), float(b.contribution)) for b in shown]
    if rest:
        rows.append((f"other ({len(rest)} inputs)", float(sum(b.share for b in rest)),
                     math.sqrt(sum(b.contribution**2 for b in rest))))
    return rows


def _places(u: float) -> int:
    """Decimals of a value with uncertainty ``u`` (calc.formatting; four when u is zero)."""
    return fmt.decimals_for(u) if u > 0 and math.isfinite(u) else 4


def _fmt_u(u: float, unit: str) -> str:
    return fmt.uncertainty(u, unit).replace("-", "−")


def _fmt(value: float, u: float, unit: str) -> str:
    return fmt.measured(value, u, unit).replace("-", "−")


def _num(x: float, d: int) -> str:
    return f"{x:.{d}f}".replace("-", "−")


def _plain(s: str) -> str:
    # matplotlib treats $…$ as mathtext; user text is shown literally
    return s.replace("$", r"\$")


# ------------------------------------------------------------------ figure plumbing


def _figure(width_in: float, height_in: float) -> Figure:
    _setup()
    fig = Figure(figsize=(width_in, height_in), dpi=72)
    fig.patch.set_facecolor("white")
    return fig


def _style_axes(ax: Any, *, grid_axis: str = "y") -> None:
    ax.spines[["top", "right"]].set_visible(False)
    ax.spines[["left", "bottom"]].set(color="#4d4d4d", linewidth=0.8)
    ax.tick_params(labelsize=_FS_TICK, colors="#333333", width=0.8, length=3.5)
    ax.grid(True, axis=grid_axis, color=_GRID, linewidth=0.6)
    ax.set_axisbelow(True)


def _margins(fig: Figure, *, left: float, right: float, top: float, bottom: float) -> Any:
    w, h = fig.get_size_inches()
    return fig.add_axes((left / w, bottom / h, max(w - left - right, 0.5) / w, max(h - top - bottom, 0.5) / h))


def _heading(fig: Figure, title: str, subtitle: str | None = None) -> None:
    h = fig.get_size_inches()[1]
    fig.text(0.12 / fig.get_size_inches()[0], 1 - 0.1 / h, _plain(title), ha="left", va="top",
             fontsize=_FS_TITLE, fontweight="bold", color=_C["black"])
    if subtitle:
        fig.text(0.12 / fig.get_size_inches()[0], 1 - 0.32 / h, _plain(subtitle), ha="left", va="top",
                 fontsize=_FS_NOTE, color="#4d4d4d")


_TAG = re.compile(r"(<[^<>!?]+>)")
_ID = re.compile(r'\sid="([^"]+)"')
_REF = re.compile(r'(url\(#|href="#)([^")]+)')


def _to_svg(fig: Figure, title: str, desc: str) -> str:
    """Render ``fig`` and return a self-contained, accessible SVG document."""
    buf = io.StringIO()
    fig.savefig(buf, format="svg", metadata={"Creator": None, "Date": None, "Format": None, "Type": None})
    svg = buf.getvalue()
    svg = re.sub(r"<!DOCTYPE[^>]*>\s*", "", svg, count=1)
    svg = re.sub(r"<metadata>.*?</metadata>\s*", "", svg, count=1, flags=re.S)
    # Ids: drop the unreferenced ones and give the rest a prefix unique to the picture (several SVGs
    # may share a page). matplotlib's own ids are random, so they are renumbered before hashing.
    # Only tags are edited (odd parts): text content may hold anything a user typed.
    parts = _TAG.split(svg)
    tags = [i for i in range(1, len(parts), 2) if 'id="' in parts[i] or "#" in parts[i]]
    referenced = {m.group(2) for i in tags for m in _REF.finditer(parts[i])}
    names: dict[str, str] = {}

    def rename(m: re.Match[str]) -> str:
        old = m.group(1)
        if old not in referenced and not old.startswith("cc-"):
            return ""
        if old not in names:
            names[old] = "@@" + (old[3:] if old.startswith("cc-") else str(len(names)))
        return f' id="{names[old]}"'

    for i in tags:
        parts[i] = _REF.sub(lambda m: m.group(1) + names.get(m.group(2), m.group(2)), _ID.sub(rename, parts[i]))
    # references before their definition (rare) are renamed in a second look
    for i in tags:
        parts[i] = _REF.sub(lambda m: m.group(1) + names.get(m.group(2), m.group(2)), parts[i])
    prefix = "c" + hashlib.sha1("".join(parts).encode("utf-8")).hexdigest()[:8]
    for i in tags:
        parts[i] = parts[i].replace('id="@@', f'id="{prefix}-').replace("#@@", f"#{prefix}-")
    svg = "".join(parts)
    head = (
        f' role="img" aria-labelledby="{prefix}-title" aria-describedby="{prefix}-desc">'
        f'\n <title id="{prefix}-title">{escape(title)}</title>\n <desc id="{prefix}-desc">{escape(desc)}</desc>'
    )
    start = svg.index("<svg")
    end = svg.index(">", start)
    return svg[:end] + head + svg[end + 1:]


def _time_scale(t: np.ndarray) -> tuple[float, str]:
    span = float(t[-1] - t[0]) if t.size else 0.0
    return (60.0, "min") if span > 1800.0 else (1.0, "s")


def _draw_log(ax: Any, t: np.ndarray, y_K: np.ndarray, periods: Periods, ts: float) -> list[Any]:
    """Draw readings, shaded periods and the mixing time; return the legend handles."""
    fa, fb = periods.fore
    aa, ab = periods.after
    ax.axvspan(fa / ts, fb / ts, color=_C["sky_blue"], alpha=0.16, linewidth=0, gid="cc-fore-period")
    ax.axvspan(aa / ts, ab / ts, color=_C["orange"], alpha=0.16, linewidth=0, gid="cc-after-period")
    for (a, b), name in (((fa, fb), "fore"), ((aa, ab), "after")):
        ax.text((a + b) / 2 / ts, 0.985, name, transform=ax.get_xaxis_transform(), ha="center", va="top",
                fontsize=_FS_NOTE, color="#4d4d4d")
    td, yd = decimate_minmax(t, y_K)
    ax.plot(td / ts, yd - _KELVIN_OFFSET, color=_C["black"], linewidth=0.9, gid="cc-readings")
    ax.axvline(periods.mixing_time / ts, color=_C["black"], linestyle=(0, (1, 2)), linewidth=1.0,
               gid="cc-mixing-time")
    label = "mixing time" + ("" if not periods.mixing_time_detected else " (detected)")
    return [
        Line2D([], [], color=_C["black"], linewidth=0.9, label="readings"),
        Line2D([], [], color=_C["black"], linestyle=(0, (1, 2)), linewidth=1.0, label=label),
        Patch(facecolor=_C["sky_blue"], alpha=0.3, label="fore period"),
        Patch(facecolor=_C["orange"], alpha=0.3, label="after period"),
    ]


def _legend_below(fig: Figure, ax: Any, handles: list[Any], ncols: int) -> None:
    h = fig.get_size_inches()[1]
    fig.legend(handles=handles, loc="lower left", bbox_to_anchor=(ax.get_position().x0 - 0.01, 0.06 / h / 4),
               ncols=ncols, frameon=False, fontsize=_FS_NOTE, handlelength=2.6, columnspacing=1.4)


# ------------------------------------------------------------------ public plots

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


def _finish_log_axes(ax: Any, t: np.ndarray, lo: float, hi: float, ts: float, tunit: str) -> None:
    pad = 0.08 * max(hi - lo, 0.02)
    ax.set_ylim(lo - pad - _KELVIN_OFFSET, hi + pad + 0.06 * (hi - lo) - _KELVIN_OFFSET)
    ax.set_xlim(float(t[0]) / ts, float(t[-1]) / ts)
    ax.set_xlabel(f"time / {tunit}", fontsize=_FS_LABEL)
    ax.set_ylabel("temperature / °C", fontsize=_FS_LABEL)


def _describe_log(t: np.ndarray, y: np.ndarray, p: Periods) -> str:
    return (
        f"{t.size} temperature readings over {_num(t[-1] - t[0], 0)} s, from {_num(y[0] - _KELVIN_OFFSET, 2)} °C "
        f"to {_num(y[-1] - _KELVIN_OFFSET, 2)} °C; mixing at {_num(p.mixing_time, 0)} s"
        f"{' (detected)' if p.mixing_time_detected else ''}; fore period {_num(p.fore[0], 0)}–{_num(p.fore[1], 0)} s, "
        f"after period {_num(p.after[0], 0)}–{_num(p.after[1], 0)} s."
    )


def _draw_delta_t(ax: Any, analysis: Analysis, ts: float) -> list[Any]:
    """Draw the corrected ΔT as a double arrow at t_i (t_x for equal-area); return legend handles."""
    dt, c = analysis.delta_t, analysis.delta_t.construction
    t = analysis.readings.time_s
    at = c.delta_t_time
    t_at = float(analysis.periods.mixing_time if at is None else at) / ts
    start, end = dt.start_temperature - _KELVIN_OFFSET, dt.end_temperature - _KELVIN_OFFSET
    span = (float(t[-1]) - float(t[0])) / ts
    purple = _C["reddish_purple"]
    handles = []
    if isinstance(c, EqualAreaConstruction):
        ax.axvline(t_at, color=purple, linestyle=(0, (1, 1.5)), linewidth=1.0)
        handles.append(Line2D([], [], color=purple, linestyle=(0, (1, 1.5)), label="equal-area time t_x"))
    for level in (start, end):
        ax.plot([t_at - 0.025 * span, t_at + 0.025 * span], [level, level], color=purple, linewidth=1.2)
    ax.annotate("", xy=(t_at, end), xytext=(t_at, start), arrowprops=dict(
        arrowstyle="<|-|>", color=purple, linewidth=1.6, shrinkA=0, shrinkB=0, mutation_scale=9))
    ax.text(t_at - 0.012 * span, (start + end) / 2, "ΔT", ha="right", va="center", fontsize=_FS_LABEL,
            fontweight="bold", bbox=dict(boxstyle="round,pad=0.15", facecolor="white", edgecolor="none", alpha=0.85))
    handles.append(Line2D([], [], color=purple, linewidth=1.6, marker="|", markersize=8,
                          label=f"corrected ΔT = {_num(dt.value, _places(dt.u))} K, u = {_num(dt.u, _places(dt.u))} K"))
    return handles


def _run_figure(analysis: Analysis, width_in: float, height_in: float) -> tuple[Figure, str, str]:
    """Build the run plot; return the figure, its title and its text description."""
    dt = analysis.delta_t
    t, y = analysis.readings.time_s, analysis.readings.temperature_K
    rejected = getattr(analysis, "rejected", None) or []
    if rejected:  # spikes are drawn as marks, not as part of the line, and do not set the scale
        wild = np.isin(t, [r["time_s"] for r in rejected]) & np.isin(y, [r["temperature_K"] for r in rejected])
        t, y = t[~wild], y[~wild]
    ts, tunit = _time_scale(t)
    fig = _figure(width_in, height_in)
    ax = _margins(fig, left=0.75, right=0.25, top=0.72, bottom=1.15)
    _style_axes(ax)
    handles = _draw_log(ax, t, y, analysis.periods, ts)
    two = get_kind(analysis.kind).two_solution
    for name, (tt, yy) in drift_curves(analysis).items():
        style = _CURVE_STYLE.get(name, dict(color=_C["bluish_green"], linestyle="--", linewidth=1.4))
        ax.plot(tt / ts, yy - _KELVIN_OFFSET, gid=f"cc-curve-{name}", **style)
        handles.append(Line2D([], [], label=_curve_label(dt.method, name, two), **style))
    lo, hi = float(np.min(y)), float(np.max(y))
    if math.isfinite(dt.start_temperature) and math.isfinite(dt.end_temperature):
        lo, hi = min(lo, dt.start_temperature, dt.end_temperature), max(hi, dt.start_temperature, dt.end_temperature)
        handles += _draw_delta_t(ax, analysis, ts)
    _finish_log_axes(ax, t, lo, hi, ts, tunit)
    if rejected:
        y0, y1 = ax.get_ylim()
        rt = np.array([r["time_s"] for r in rejected]) / ts
        ry = np.clip(np.array([r["temperature_K"] for r in rejected]) - _KELVIN_OFFSET, y0, y1)
        ax.plot(rt, ry, linestyle="none", marker="x", markersize=6, color=_C["vermillion"], gid="cc-rejected")
        handles.append(Line2D([], [], linestyle="none", marker="x", color=_C["vermillion"],
                              label=f"rejected as spike ({len(rejected)}; off-scale ones at the edge)"))
    title = analysis.spec.get("info", "title") or f"{analysis.kind} run"
    _heading(fig, str(title), f"{analysis.kind} · corrected ΔT by the {dt.method} method")
    _legend_below(fig, ax, handles, ncols=3)
    desc = (f"{_describe_log(t, y, analysis.periods)} Corrected temperature change "
            f"{_fmt(dt.value, dt.u, 'K')} (standard uncertainty) by the {dt.method} method.")
    return fig, f"Temperature log: {title}", desc


def run_plot_svg(analysis: Analysis, *, width_in: float = 7.5, height_in: float = 4.2) -> str:
    """Return the SVG plot of a run: readings, periods, the method's drift model and the corrected ΔT."""
    fig, title, desc = _run_figure(analysis, width_in, height_in)
    return _to_svg(fig, title, desc)


def run_plot_png(analysis: Analysis, *, width_in: float = 7.5, height_in: float = 4.2, dpi: int = 150) -> bytes:
    """Return the run plot of :func:`run_plot_svg` as PNG bytes (for documents that cannot show SVG)."""
    fig, _title, _desc = _run_figure(analysis, width_in, height_in)
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi, metadata={"Software": None})
    return buf.getvalue()


def preview_plot_svg(time_s: np.ndarray, temperature_K: np.ndarray, periods: Periods, *,
                     width_in: float = 7.5, height_in: float = 3.6) -> str:
    """Return the quick SVG plot of an uploaded log: readings, detected periods and mixing time."""
    t = np.asarray(time_s, dtype=float)
    y = np.asarray(temperature_K, dtype=float)
    ts, tunit = _time_scale(t)
    fig = _figure(width_in, height_in)
    ax = _margins(fig, left=0.75, right=0.25, top=0.45, bottom=0.95)
    _style_axes(ax)
    handles = _draw_log(ax, t, y, periods, ts)
    _finish_log_axes(ax, t, float(np.min(y)), float(np.max(y)), ts, tunit)
    _heading(fig, "Preview of the readings")
    _legend_below(fig, ax, handles, ncols=4)
    return _to_svg(fig, "Preview of the temperature readings", _describe_log(t, y, periods))


def budget_plot_svg(budget: list[BudgetLine], *, unit: str, top: int = 8) -> str:
    """Return the SVG bar chart of each input's share of the variance of the result."""
    rows = budget_rows(budget, top)
    fig = _figure(7.5, 1.1 + 0.36 * max(len(rows), 1))
    ax = _margins(fig, left=2.6, right=1.9, top=0.6, bottom=0.5)
    _style_axes(ax, grid_axis="x")
    ax.spines["left"].set_visible(False)
    ax.tick_params(axis="y", length=0)
    if not rows:
        ax.text(0.5, 0.5, "no uncertainty contributions", transform=ax.transAxes, ha="center", va="center",
                fontsize=_FS_LABEL)
        ax.set_yticks([])
    ypos = np.arange(len(rows))[::-1]
    for i, ((label, share, contrib), yp) in enumerate(zip(rows, ypos)):
        other = label.startswith("other (") and i == len(rows) - 1 and len(rows) > top
        ax.barh(yp, 100 * share, height=0.62, color=_C["sky_blue"] if other else _C["blue"],
                hatch="///" if other else None, edgecolor=_C["black"] if other else _C["blue"], linewidth=0.5,
                gid=f"cc-bar-{i}")
        ax.text(100 * share, yp, f"  {100 * share:.1f} %  ({_fmt_u(contrib, unit)})",
                va="center", ha="left", fontsize=_FS_NOTE, color=_C["black"])
    ax.set_yticks(ypos, [_plain(textwrap.fill(r[0], 40)) for r in rows], fontsize=_FS_NOTE)
    ax.set_ylim(-0.6, len(rows) - 0.4)
    ax.set_xlim(0, 100 * max((r[1] for r in rows), default=1.0) * 1.02 or 1.0)
    ax.set_xlabel("share of the variance u_c² / %", fontsize=_FS_LABEL)
    _heading(fig, "Uncertainty budget",
             f"share of the combined variance; in parentheses the contribution |c_i|·u(x_i) in {unit}")
    desc = "; ".join(f"{label}: {fmt.percent(s)} of the variance, contribution {fmt.uncertainty(contrib, unit)}"
                     for label, s, contrib in rows) or "no uncertainty contributions"
    return _to_svg(fig, "Uncertainty budget", desc + ".")


_UNCERTAINTY_KINDS = {"expanded": "expanded uncertainty U (about 95 %)", "standard": "standard uncertainty u"}


def calibration_history_svg(points: list[tuple[datetime, float, float]], *, unit: str = "J/K",
                            current: tuple[float, float] | None = None, uncertainty: str = "expanded",
                            width_in: float = 7.5, height_in: float = 3.8) -> str:
    """Return the SVG plot of calorimeter heat capacity against date, with error bars.

    ``points`` are ``(date, value, uncertainty)``; ``current`` is the value in use with its
    uncertainty, drawn as a line and a band. ``uncertainty`` says what the uncertainties are:
    ``"expanded"`` (default) or ``"standard"``; the legend says so.
    """
    if uncertainty not in _UNCERTAINTY_KINDS:
        raise ValueError(f"uncertainty must be one of {sorted(_UNCERTAINTY_KINDS)}, got {uncertainty!r}")
    kind = _UNCERTAINTY_KINDS[uncertainty]
    pts = sorted(points, key=lambda p: p[0])
    fig = _figure(width_in, height_in)
    ax = _margins(fig, left=0.85, right=0.25, top=0.5, bottom=1.0)
    _style_axes(ax)
    handles: list[Any] = []
    if pts:
        x = [p[0] for p in pts]
        v = np.array([p[1] for p in pts], dtype=float)
        u = np.array([p[2] for p in pts], dtype=float)
        ax.errorbar(x, v, yerr=u, fmt="none", color=_C["blue"], ecolor=_C["blue"], elinewidth=1.1, capsize=3)
        ax.plot(x, v, linestyle="none", marker="o", markersize=5, color=_C["blue"], markeredgecolor=_C["black"],
                markeredgewidth=0.6, gid="cc-cal-points")
        handles.append(Line2D([], [], linestyle="none", marker="o", color=_C["blue"], markeredgecolor=_C["black"],
                              label=f"calibrations (bars: {kind})"))
        if len(pts) == 1 or (x[-1] - x[0]) < timedelta(days=2):
            mid = x[0] + (x[-1] - x[0]) / 2
            ax.set_xlim(mid - timedelta(days=3), mid + timedelta(days=3))
        loc = mdates.AutoDateLocator(minticks=3, maxticks=8)
        ax.xaxis.set_major_locator(loc)
        ax.xaxis.set_major_formatter(mdates.ConciseDateFormatter(loc))
    else:
        ax.text(0.5, 0.5, "no calibrations recorded yet", transform=ax.transAxes, ha="center", va="center",
                fontsize=_FS_LABEL)
        ax.set_xticks([])
    if current is not None:
        cv, cu = current
        ax.axhspan(cv - cu, cv + cu, color=_C["orange"], alpha=0.18, linewidth=0, gid="cc-current-band")
        ax.axhline(cv, color=_C["vermillion"], linestyle=(0, (6, 2.5)), linewidth=1.4, gid="cc-current")
        handles.append(Line2D([], [], color=_C["vermillion"], linestyle=(0, (6, 2.5)), linewidth=1.4,
                              label=f"in use: {_fmt(cv, cu, unit)}"))
        handles.append(Patch(facecolor=_C["orange"], alpha=0.35, label=f"in use ± {kind.split(' (')[0]}"))
    ax.set_ylabel(f"heat capacity / ({unit})", fontsize=_FS_LABEL)
    ax.set_xlabel("date", fontsize=_FS_LABEL)
    _heading(fig, "Calorimeter heat capacity over time")
    if handles:
        _legend_below(fig, ax, handles, ncols=2)
    desc = f"{len(pts)} calibrations"
    if pts:
        desc += (f" from {pts[0][0]:%Y-%m-%d} to {pts[-1][0]:%Y-%m-%d}, values "
                 f"{min(p[1] for p in pts):.4g} to {max(p[1] for p in pts):.4g} {unit} ({kind})")
    if current is not None:
        desc += f"; value in use {_fmt(current[0], current[1], unit)}"
    return _to_svg(fig, "Calorimeter heat capacity history", desc + ".")
