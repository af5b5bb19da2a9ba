"""The budget plot: each input's share of the variance of the result, largest first."""

from __future__ import annotations

import math
import textwrap
from collections.abc import Sequence
from typing import TYPE_CHECKING

import numpy as np

from calc import formatting as fmt
from webapp.plots.canvas import (
    FS_LABEL,
    FS_NOTE,
    add_axes,
    heading,
    new_figure,
    no_data,
    plain,
    style_axes,
    to_svg,
    uncertainty_text,
)
from webapp.plots.canvas import OKABE_ITO as _C

if TYPE_CHECKING:
    from calc.uncertainty.gum import BudgetLine


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
        rows.append(
            (
                f"other ({len(rest)} inputs)",
                float(sum(b.share for b in rest)),
                math.sqrt(sum(b.contribution**2 for b in rest)),
            )
        )
    return rows


def budget_plot_svg(budget: list[BudgetLine], *, unit: str, top: int = 8) -> str:
    """Return the SVG bar chart of each input's share of the variance of the result."""
    rows = budget_rows(budget, top)
    fig = new_figure(7.5, 1.1 + 0.36 * max(len(rows), 1))
    ax = add_axes(fig, left=2.6, right=1.9, top=0.6, bottom=0.5)
    style_axes(ax, grid_axis="x")
    ax.spines["left"].set_visible(False)
    ax.tick_params(axis="y", length=0)
    if not rows:
        no_data(ax, "no uncertainty contributions")
        ax.set_yticks([])
    ypos = np.arange(len(rows))[::-1]
    for i, ((label, share, contrib), yp) in enumerate(zip(rows, ypos)):
        other = label.startswith("other (") and i == len(rows) - 1 and len(rows) > top
        ax.barh(
            yp,
            100 * share,
            height=0.62,
            color=_C["sky_blue"] if other else _C["blue"],
            hatch="///" if other else None,
            edgecolor=_C["black"] if other else _C["blue"],
            linewidth=0.5,
            gid=f"cc-bar-{i}",
        )
        ax.text(
            100 * share,
            yp,
            f"  {100 * share:.1f} %  ({uncertainty_text(contrib, unit)})",
            va="center",
            ha="left",
            fontsize=FS_NOTE,
            color=_C["black"],
        )
    ax.set_yticks(ypos, [plain(textwrap.fill(r[0], 40)) for r in rows], fontsize=FS_NOTE)
    ax.set_ylim(-0.6, len(rows) - 0.4)
    ax.set_xlim(0, 100 * max((r[1] for r in rows), default=1.0) * 1.02 or 1.0)
    ax.set_xlabel("share of the variance u_c² / %", fontsize=FS_LABEL)
    heading(
        fig,
        "Uncertainty budget",
        f"share of the combined variance; in parentheses the contribution |c_i|·u(x_i) in {unit}",
    )
    desc = (
        "; ".join(
            f"{label}: {fmt.percent(s)} of the variance, contribution {fmt.uncertainty(contrib, unit)}"
            for label, s, contrib in rows
        )
        or "no uncertainty contributions"
    )
    return to_svg(fig, "Uncertainty budget", desc + ".")
