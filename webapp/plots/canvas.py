"""What every plot of the notebook shares: the palette, the figure and axes set-up, number text and the SVG.

One :class:`matplotlib.figure.Figure` per call (no pyplot, safe in a multi-threaded server), Okabe–Ito
colours, real ``<text>`` in the SVG, a ``<title>`` and ``<desc>`` for screen readers, ids unique to
the picture so several SVGs may share a page.
"""

from __future__ import annotations

import hashlib
import io
import math
import re
import threading
from typing import Any
from xml.sax.saxutils import escape

import matplotlib
from matplotlib.figure import Figure

from calc import formatting as fmt

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


GRID = "#d9d9d9"


KELVIN_OFFSET = 273.15


#: More readings than this are thinned (min and max of each bucket kept) before drawing.
MAX_DRAWN_POINTS = 1000


FS_TICK, FS_LABEL, FS_TITLE, FS_NOTE = 8.5, 9.5, 11.0, 8.0


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


def places(u: float) -> int:
    """Decimals of a value with uncertainty ``u`` (calc.formatting; four when u is zero)."""
    return fmt.decimals_for(u) if u > 0 and math.isfinite(u) else 4


def uncertainty_text(u: float, unit: str) -> str:
    return fmt.uncertainty(u, unit).replace("-", "−")


def measured_text(value: float, u: float, unit: str) -> str:
    return fmt.measured(value, u, unit).replace("-", "−")


def number_text(x: float, d: int) -> str:
    return f"{x:.{d}f}".replace("-", "−")


def plain(s: str) -> str:
    # matplotlib treats $…$ as mathtext; user text is shown literally
    return s.replace("$", r"\$")


def new_figure(width_in: float, height_in: float) -> Figure:
    _setup()
    fig = Figure(figsize=(width_in, height_in), dpi=72)
    fig.patch.set_facecolor("white")
    return fig


def style_axes(ax: Any, *, grid_axis: str = "y") -> None:
    ax.spines[["top", "right"]].set_visible(False)
    ax.spines[["left", "bottom"]].set(color="#4d4d4d", linewidth=0.8)
    ax.tick_params(labelsize=FS_TICK, colors="#333333", width=0.8, length=3.5)
    ax.grid(True, axis=grid_axis, color=GRID, linewidth=0.6)
    ax.set_axisbelow(True)


def add_axes(fig: Figure, *, left: float, right: float, top: float, bottom: float) -> Any:
    w, h = fig.get_size_inches()
    return fig.add_axes((left / w, bottom / h, max(w - left - right, 0.5) / w, max(h - top - bottom, 0.5) / h))


def heading(fig: Figure, title: str, subtitle: str | None = None) -> None:
    """Write the title (bold) at the figure's top left, and the subtitle under it."""
    w, h = fig.get_size_inches()
    at: dict[str, Any] = dict(ha="left", va="top")
    fig.text(0.12 / w, 1 - 0.1 / h, plain(title), fontsize=FS_TITLE, fontweight="bold", color=_C["black"], **at)
    if subtitle:
        fig.text(0.12 / w, 1 - 0.32 / h, plain(subtitle), fontsize=FS_NOTE, color="#4d4d4d", **at)


def no_data(ax: Any, text: str) -> None:
    """Say in the middle of empty axes why nothing is drawn."""
    ax.text(0.5, 0.5, text, transform=ax.transAxes, ha="center", va="center", fontsize=FS_LABEL)


_TAG = re.compile(r"(<[^<>!?]+>)")


_ID = re.compile(r'\sid="([^"]+)"')


_REF = re.compile(r'(url\(#|href="#)([^")]+)')


def to_svg(fig: Figure, title: str, desc: str) -> str:
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
    return svg[:end] + head + svg[end + 1 :]


def legend_below(fig: Figure, ax: Any, handles: list[Any], ncols: int) -> None:
    h = fig.get_size_inches()[1]
    fig.legend(
        handles=handles,
        loc="lower left",
        bbox_to_anchor=(ax.get_position().x0 - 0.01, 0.06 / h / 4),
        ncols=ncols,
        frameon=False,
        fontsize=FS_NOTE,
        handlelength=2.6,
        columnspacing=1.4,
    )
