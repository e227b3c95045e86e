"""Before and after on one S-curve: how far a revision moved the total at every confidence
level, with the base estimates marked where each is read."""

from __future__ import annotations

import numpy as np
from matplotlib.axes import Axes

from charts.style import (
    FONT_SIZE,
    NORMAL,
    REFERENCE,
    TOTAL,
    axis_label,
    elide_middle,
    legend_above,
    money_axis,
    style_axes,
)
from charts.total import SHOWN
from engine.comparison import Comparison

TITLE_CHARS = 40  # each estimate's title in the legend: two entries on one row


def draw_before_after(ax: Axes, comparison: Comparison, unit: str = "") -> None:
    q = np.linspace(SHOWN[0], SHOWN[1], 600)
    sides = (
        ("before", comparison.before, comparison.before_title, TOTAL),
        ("after", comparison.after, comparison.after_title, NORMAL),
    )
    for gid, analysis, title, look in sides:
        (line,) = ax.plot(
            analysis.total.ppf(q), 100 * q, color=look.color, ls=look.linestyle, lw=look.linewidth
        )
        line.set(label=f"{gid.capitalize()}: {elide_middle(title, TITLE_CHARS)}", gid=gid)
        base = analysis.base_estimate
        ax.plot(
            [base],
            [100 * float(analysis.total.cdf(base))],
            ls="none",
            marker=look.marker,
            ms=6,
            mfc="white",
            color=look.color,
            gid=f"{gid}-base",
        )
    for row in comparison.levels:
        ax.axhline(row.level, color=REFERENCE.color, ls=REFERENCE.linestyle, lw=REFERENCE.linewidth)
    style_axes(ax, "S-curves before and after (markers: the base estimates)")
    money_axis(ax.xaxis)
    ax.set_xlabel(axis_label("Total", unit), fontsize=FONT_SIZE)
    ax.set_ylabel("Confidence level (%)", fontsize=FONT_SIZE)
    ax.set_ylim(0, 100)
    legend_above(ax)
