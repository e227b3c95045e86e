"""Which items make the total wide and which make it lean: variance share and skew share per
item, largest first, so the analyst knows where better ranges would pay."""

from __future__ import annotations

import numpy as np
from matplotlib.axes import Axes

from charts.style import (
    FONT_SIZE,
    HISTOGRAM_FILL,
    SKEW,
    TOTAL,
    elide_middle,
    legend_above,
    style_axes,
)
from engine import Analysis

LABEL_CHARS = 38


def draw_drivers(ax: Axes, analysis: Analysis, top: int = 12) -> None:
    drivers = [d for d in analysis.drivers if d.variance_share or d.skew_share][:top]
    y = np.arange(len(drivers))[::-1]  # largest at the top
    height = 0.38
    ax.barh(
        y + height / 2,
        [100 * d.variance_share for d in drivers],
        height=height,
        color=TOTAL.color,
        edgecolor=TOTAL.color,
        label="Share of variance",
        gid="variance",
    )
    ax.barh(
        y - height / 2,
        [100 * d.skew_share for d in drivers],
        height=height,
        color=HISTOGRAM_FILL,
        edgecolor=SKEW.color,
        hatch=SKEW.hatch,
        lw=0.8,
        label="Share of skewness",
        gid="skew",
    )
    ax.set_yticks(y, [elide_middle(d.name, LABEL_CHARS) for d in drivers], fontsize=FONT_SIZE)
    ax.axvline(0, color="#4b5563", lw=0.8)
    style_axes(
        ax,
        f"Drivers of the total (top {len(drivers)} of {len(analysis.drivers)} items)",
        title_side="right",
    )
    ax.grid(False, axis="y")
    ax.set_xlabel("Share (%)", fontsize=FONT_SIZE)
    legend_above(ax)
