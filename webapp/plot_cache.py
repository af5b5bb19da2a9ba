"""SVG plots of stored results and calibration histories, kept in a bounded in-memory LRU.

A stored result never changes (re-analysis adds a new one; a signed run is immutable), so
its plots are cached under the result's id. Each app has its own cache
(``app.extensions``), bounded by total size; the cache is thread-safe, so a threaded
server may share it. Drawing the run plot and the budget chart of a 2,000-point log takes
about 100 ms; from the cache, both take a few milliseconds (tests/benchmarks/test_page_speed.py).
"""

from __future__ import annotations

import datetime as dt
import textwrap
import threading
from collections import OrderedDict
from collections.abc import Callable, Hashable, Sequence
from xml.sax.saxutils import escape

from flask import Flask, Response, current_app

from calc.uncertainty.gum import BudgetLine
from webapp.models import Calibration, Result, Run
from webapp.quantities import main_value

_EXT = "cupcal_plot_cache"
#: default bound of one app's cache (setting ``PLOT_CACHE_BYTES``): a 2,000-point run plot and
#: its budget chart take about 50 kB, so this keeps some 600 results' plots
DEFAULT_MAX_BYTES = 32 * 1024 * 1024


class PlotCache:
    """A thread-safe LRU of SVG texts, bounded by their total length in characters."""

    def __init__(self, max_bytes: int = DEFAULT_MAX_BYTES) -> None:
        self.max_bytes = max(0, int(max_bytes))
        self._items: OrderedDict[Hashable, str] = OrderedDict()
        self._size = 0
        self._lock = threading.Lock()
        self.hits = 0
        self.misses = 0

    def __len__(self) -> int:
        with self._lock:
            return len(self._items)

    @property
    def size(self) -> int:
        """Return the total length of the cached texts."""
        with self._lock:
            return self._size

    def get(self, key: Hashable) -> str | None:
        """Return the cached text for ``key`` (and mark it recently used), or None."""
        with self._lock:
            svg = self._items.get(key)
            if svg is None:
                self.misses += 1
                return None
            self._items.move_to_end(key)
            self.hits += 1
            return svg

    def put(self, key: Hashable, svg: str) -> None:
        """Keep ``svg`` under ``key``, dropping the least recently used texts beyond the bound."""
        if len(svg) > self.max_bytes:
            return
        with self._lock:
            old = self._items.pop(key, None)
            if old is not None:
                self._size -= len(old)
            self._items[key] = svg
            self._size += len(svg)
            while self._size > self.max_bytes and self._items:
                _k, dropped = self._items.popitem(last=False)
                self._size -= len(dropped)

    def get_or_draw(self, key: Hashable, draw: Callable[[], str]) -> str:
        """Return the cached text for ``key``, drawing and keeping it when missing.

        Two threads missing the same key at once both draw; the texts are equal.
        """
        svg = self.get(key)
        if svg is None:
            svg = draw()
            self.put(key, svg)
        return svg

    def clear(self) -> None:
        """Forget every cached text."""
        with self._lock:
            self._items.clear()
            self._size = 0


def plot_cache(app: Flask | None = None) -> PlotCache:
    """Return the plot cache of ``app`` (default: the current app), creating it on first use."""
    app = app or current_app._get_current_object()  # type: ignore[attr-defined]
    cache = app.extensions.get(_EXT)
    if cache is None:
        cache = app.extensions.setdefault(_EXT, PlotCache(app.config.get("PLOT_CACHE_BYTES", DEFAULT_MAX_BYTES)))
    return cache


# ---------------------------------------------------------------- plots of stored things


def budget_lines(result: Result) -> list[BudgetLine]:
    """Return the stored budget of ``result`` as calc's budget lines."""
    lines = []
    for b in result.budget or []:
        dof = b.get("degrees_of_freedom")
        lines.append(
            BudgetLine(
                name=str(b.get("input", "")),
                label=str(b.get("label") or b.get("input", "")),
                value=float(b.get("value") or 0.0),
                unit=str(b.get("unit", "")),
                standard_uncertainty=float(b.get("standard_uncertainty") or 0.0),
                distribution=str(b.get("distribution", "")),
                dof=float("inf") if dof is None else float(dof),
                sensitivity=float(b.get("sensitivity") or 0.0),
                contribution=float(b.get("contribution") or 0.0),
                share=float(b.get("share") or 0.0),
            )
        )
    return lines


def run_plot(run: Run, result: Result, app: Flask | None = None) -> tuple[str, bool]:
    """Return the run plot of ``result`` (readings, periods, drift model, corrected ΔT) and whether it was drawn.

    It needs calc's full analysis, rebuilt from the stored files
    (:func:`webapp.services.runs.analysis_of`). When that fails, the picture says why and
    the flag is False (it is not cached, so a later request draws it again).
    """
    from webapp import plots
    from webapp.services.errors import ServiceError
    from webapp.services.runs import analysis_of

    cache = plot_cache(app)
    svg = cache.get(("run", result.id))
    if svg is not None:
        return svg, True
    try:
        svg = plots.run_plot_svg(analysis_of(run, result))
    except ServiceError as exc:
        return message_svg(f"The plot could not be drawn: {exc.message}"), False
    except Exception:  # noqa: BLE001 - a plot must not take the page down
        (app or current_app).logger.exception("run plot of result %s failed", result.id)
        return message_svg("The plot could not be drawn (an internal error; it has been logged)."), False
    cache.put(("run", result.id), svg)
    return svg, True


def budget_plot(result: Result, app: Flask | None = None) -> str:
    """Return the budget bar chart of ``result``, drawn from the stored budget (so it matches the table)."""
    from webapp import plots

    unit = main_value(result)[2]
    return plot_cache(app).get_or_draw(
        ("budget", result.id), lambda: plots.budget_plot_svg(budget_lines(result), unit=unit)
    )


def draw_result_plots(run: Run, result: Result, app: Flask | None = None) -> None:
    """Draw a new result's plots into the cache, so its page opens at once (a failure is only logged)."""
    try:
        run_plot(run, result, app)
        budget_plot(result, app)
    except Exception:  # noqa: BLE001 - the result is stored already; its page draws again on request
        (app or current_app).logger.exception("drawing the plots of result %s failed", result.id)


def message_svg(text: str) -> str:
    """Return a small SVG picture that shows ``text`` (in place of a plot that could not be drawn)."""
    lines = textwrap.wrap(text, 80) or [""]
    height = 24 + 20 * len(lines)
    body = "".join(f'<text x="12" y="{28 + 20 * i}">{escape(line)}</text>' for i, line in enumerate(lines))
    return (
        f'<svg xmlns="http://www.w3.org/2000/svg" width="640" height="{height}" viewBox="0 0 640 {height}" '
        f'role="img" aria-label="{escape(text, {chr(34): "&quot;"})}">'
        f'<rect width="640" height="{height}" fill="#fff6db" stroke="#b07d00"/>'
        f'<g font-family="sans-serif" font-size="14" fill="#1f2328">{body}</g></svg>'
    )


def history_plot(calibrations: Sequence[Calibration], current: Calibration | None, app: Flask | None = None) -> str:
    """Return the heat-capacity history plot (standard uncertainties) of one calorimeter.

    Calibrations are never changed once stored, so the ids name the picture.
    """
    key = ("history", tuple(c.id for c in calibrations), current.id if current else None)

    def draw() -> str:
        from webapp import plots

        points: list[tuple[dt.datetime, float, float]] = [
            (c.taken_at, c.heat_capacity_j_k, c.heat_capacity_j_k_std) for c in calibrations
        ]
        now = (current.heat_capacity_j_k, current.heat_capacity_j_k_std) if current else None
        return plots.calibration_history_svg(points, unit="J/K", current=now, uncertainty="standard")

    return plot_cache(app).get_or_draw(key, draw)


def svg_response(svg: str, *, immutable: bool = True) -> Response:
    """Return an SVG picture as a response: never sniffed, no scripts, cached privately when immutable.

    The pictures of a stored result (and of a calibration history, whose URL names its
    calibrations) never change, so a browser may keep them.
    """
    response = Response(svg, mimetype="image/svg+xml")
    response.headers["X-Content-Type-Options"] = "nosniff"
    response.headers["Content-Security-Policy"] = "default-src 'none'; style-src 'unsafe-inline'"
    response.headers["Cache-Control"] = "private, max-age=31536000, immutable" if immutable else "no-store"
    return response
