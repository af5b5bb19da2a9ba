"""Draw the notebook's plots as standalone SVG text (and the run plot also as PNG).

Every public function takes calc results or plain data and returns one SVG
document (``str``, UTF-8, no external references, real ``<text>`` in a generic
sans-serif family, a ``<title>`` and ``<desc>`` for screen readers). Nothing here
imports flask or the database, and nothing uses pyplot: each call builds its own
:class:`matplotlib.figure.Figure`, so the functions are safe in a multi-threaded
server.

Colours come from the Okabe–Ito palette; every series also differs by line style
or marker, so colour is never the only cue.

One module per plot, on the shared set-up of :mod:`~webapp.plots.canvas`: :mod:`~webapp.plots.log`
(the temperature log and the upload preview), :mod:`~webapp.plots.run` (the run plot),
:mod:`~webapp.plots.budget`, :mod:`~webapp.plots.history` (heat capacity over time) and
:mod:`~webapp.plots.classes` (a class's distribution of results and control chart).
"""

from __future__ import annotations

from webapp.plots.budget import budget_plot_svg, budget_rows
from webapp.plots.canvas import MAX_DRAWN_POINTS, OKABE_ITO
from webapp.plots.history import calibration_history_svg
from webapp.plots.log import decimate_minmax, preview_plot_svg
from webapp.plots.run import drift_curves, run_plot_png, run_plot_svg

__all__ = [
    "OKABE_ITO",
    "MAX_DRAWN_POINTS",
    "run_plot_svg",
    "run_plot_png",
    "budget_plot_svg",
    "calibration_history_svg",
    "preview_plot_svg",
    "drift_curves",
    "budget_rows",
    "decimate_minmax",
]
