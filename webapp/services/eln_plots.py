"""Light SVG plots for archives: the temperature log with its periods, and the budget's largest shares.

The pages draw their plots with matplotlib (about 100 ms a run); an archive of a whole section
holds hundreds of runs, so these two are written directly as SVG text (well under a millisecond
a run) from the stored log and the stored budget. They are plain, self-contained SVG 1.1.
"""

from __future__ import annotations

from typing import Any
from xml.sax.saxutils import escape

import numpy as np

from webapp.models import Result, Run
from webapp.plots import decimate_minmax
from webapp.quantities import series

W, H, PAD, LEFT = 640.0, 320.0, 48.0, 80.0


def _svg(title: str, body: str, height: float = H) -> str:
    return (
        f'<svg xmlns="http://www.w3.org/2000/svg" width="{W:g}" height="{height:g}" '
        f'viewBox="0 0 {W:g} {height:g}" role="img"><title>{escape(title)}</title>'
        f'<rect width="100%" height="100%" fill="#fff"/>{body}</svg>\n'
    )


def log_plot_svg(run: Run, result: Result | None) -> str:
    """Return the temperature log of ``run`` (°C against s) with the result's fore and after periods."""
    t, y = series(run)
    title = f"Temperature log of run {run.id}"
    if len(t) < 2:
        return _svg(title, '<text x="20" y="40">no readings</text>')
    t, y = decimate_minmax(np.asarray(t), np.asarray(y) - 273.15, 400)
    t0, t1 = float(t.min()), float(t.max()) or 1.0
    lo, hi = float(y.min()), float(y.max())
    if hi - lo < 1e-9:
        lo, hi = lo - 0.5, hi + 0.5
    sx = (W - PAD - LEFT) / max(t1 - t0, 1e-9)
    sy = (H - 2 * PAD) / (hi - lo)

    def px(tt: float) -> float:
        return LEFT + (tt - t0) * sx

    def py(v: float) -> float:
        return H - PAD - (v - lo) * sy

    parts = []
    if result is not None:
        for a, b, label in (
            (result.fore_start_s, result.fore_end_s, "fore"),
            (result.after_start_s, result.after_end_s, "after"),
        ):
            parts.append(
                f'<rect x="{px(a):.1f}" y="{PAD:g}" width="{max(px(b) - px(a), 0.5):.1f}" '
                f'height="{H - 2 * PAD:g}" fill="#e6eef7"><title>{label} period {a:g}–{b:g} s</title></rect>'
            )
    points = " ".join(f"{px(a):.1f},{py(b):.1f}" for a, b in zip(t.tolist(), y.tolist()))
    parts.append(f'<polyline points="{points}" fill="none" stroke="#1f3b57" stroke-width="1.2"/>')
    parts.append(
        f'<line x1="{LEFT:g}" y1="{H - PAD:g}" x2="{W - PAD:g}" y2="{H - PAD:g}" stroke="#000"/>'
        f'<line x1="{LEFT:g}" y1="{PAD:g}" x2="{LEFT:g}" y2="{H - PAD:g}" stroke="#000"/>'
    )
    parts.append(
        f'<text x="{LEFT:g}" y="{H - 28:g}" font-size="12">{t0:g} s</text>'
        f'<text x="{W - PAD:g}" y="{H - 28:g}" font-size="12" text-anchor="end">{t1:g} s</text>'
        f'<text x="{(LEFT + W - PAD) / 2:g}" y="{H - 10:g}" font-size="12" text-anchor="middle">time</text>'
        f'<text x="4" y="{H - PAD:g}" font-size="12">{lo:.3f} °C</text>'
        f'<text x="4" y="{PAD - 6:g}" font-size="12">{hi:.3f} °C</text>'
    )
    head = title + (
        f"; corrected ΔT = {result.corrected_delta_t_k:.4f} ± {result.corrected_delta_t_k_std:.4f} K ({result.method})"
        if result is not None
        else ""
    )
    parts.append(f'<text x="{LEFT:g}" y="20" font-size="13">{escape(head)}</text>')
    if result is not None:
        parts.append(
            f'<text x="{W - PAD:g}" y="{H - 10:g}" font-size="11" text-anchor="end">shaded: fore and '
            "after periods</text>"
        )
    return _svg(title, "".join(parts))


def _short(text: str, n: int) -> str:
    return text if len(text) <= n else text[: n - 1] + "…"


def budget_plot_svg(result: Result, top: int = 8) -> str:
    """Return a bar chart of the largest shares of the result's uncertainty budget."""
    rows: list[tuple[str, float]] = []
    for line in result.budget or []:
        if isinstance(line, dict):
            rows.append((str(line.get("label") or line.get("input") or "?"), float(line.get("share") or 0.0)))
    rows = sorted(rows, key=lambda r: -r[1])[:top]
    height = 60 + 26 * max(len(rows), 1)
    body = [
        f'<text x="12" y="22" font-size="13">Largest shares of the variance of the result (run {result.run_id})</text>'
    ]
    for i, (label, share) in enumerate(rows):
        y = 40 + 26 * i
        body.append(
            f'<text x="12" y="{y + 14}" font-size="12">{escape(_short(label, 52))}</text>'
            f'<rect x="340" y="{y}" width="{max(share, 0.0) * 230:.1f}" height="18" fill="#7a4f1d"/>'
            f'<text x="{346 + max(share, 0.0) * 230:.1f}" y="{y + 14}" font-size="12">{100 * share:.1f} %</text>'
        )
    if not rows:
        body.append('<text x="12" y="50" font-size="12">no budget stored</text>')
    return _svg(f"Uncertainty budget of run {result.run_id}", "".join(body), height)


def plots_of(run: Run, result: Result | None) -> dict[str, Any]:
    """Return ``{file name: SVG text}`` of the archive plots of ``run``."""
    out = {"plot-temperature.svg": log_plot_svg(run, result)}
    if result is not None:
        out["plot-budget.svg"] = budget_plot_svg(result)
    return out
