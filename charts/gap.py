"""Where the normal shortcut fails: its gap from the total across percentiles 1-99, in money,
against the tolerance band, so the failing percentiles stand out."""

from __future__ import annotations

import numpy as np
from matplotlib.axes import Axes

from charts.style import (
    BAND_FILL,
    FAIL,
    FONT_SIZE,
    REFERENCE,
    TOTAL,
    axis_label,
    legend_above,
    level_label,
    money_axis,
    style_axes,
)
from engine import Analysis


def gap_outside_band(analysis: Analysis) -> dict[str, np.ndarray]:
    """The gap curve with its band (±tolerance × |total percentile|) and where it leaves it."""
    curve = analysis.gap_curve()
    band = analysis.tolerance * np.abs(curve["total"])
    return {**curve, "band": band, "fails": np.abs(curve["gap"]) > band}


def draw_gap_curve(ax: Axes, analysis: Analysis, unit: str = "") -> None:
    """Normal minus total: below zero the shortcut understates, above it overstates."""
    curve = gap_outside_band(analysis)
    p, gap, band, fails = curve["percentile"], curve["gap"], curve["band"], curve["fails"]
    ax.fill_between(
        p,
        -band,
        band,
        color=BAND_FILL,
        hatch="..",
        edgecolor="#b9a77f",
        lw=0.0,
        label=f"Tolerance ±{100 * analysis.tolerance:g}% of the total",
        gid="band",
    )
    ax.axhline(0, color=REFERENCE.color, lw=0.8)
    (line,) = ax.plot(p, gap, color=TOTAL.color, ls=TOTAL.linestyle, lw=TOTAL.linewidth)
    line.set(label="Normal shortcut minus total", gid="gap")
    (marks,) = ax.plot(
        p[fails],
        gap[fails],
        ls="none",
        marker=FAIL.marker,
        ms=4.5,
        color=FAIL.color,
        gid="fails",
    )
    marks.set_label(f"Outside the band ({int(fails.sum())} of {len(p)} percentiles)")
    for r in analysis.levels:
        ax.axvline(r.level, color=REFERENCE.color, ls=REFERENCE.linestyle, lw=REFERENCE.linewidth)
        level_label(ax, r.level, f"P{r.level:g}")
    style_axes(ax, "Gap of the normal shortcut")
    money_axis(ax.yaxis)
    ax.set_xlim(0, 100)
    ax.set_xlabel("Percentile of the total", fontsize=FONT_SIZE)
    ax.set_ylabel(axis_label("Normal minus total", unit), fontsize=FONT_SIZE)
    legend_above(ax)
