"""Where the contingency sits at one level: each group's (or item's) share by conditional
expectation beside the naive share, as horizontal bars, so the gap between the two reads at
a glance."""

from __future__ import annotations

import numpy as np
from matplotlib.axes import Axes
from matplotlib.ticker import MaxNLocator

from charts import numbers
from charts.style import (
    FONT_SIZE,
    HISTOGRAM_FILL,
    NORMAL,
    TOTAL,
    elide_middle,
    legend_above,
    money_axis,
    style_axes,
)
from engine.allocation import Allocation

LABEL_CHARS = 34


def allocation_bars(allocation: Allocation, level: float, by: str = "group", top: int = 12):
    """(names, shares, naive shares or None) at the level, largest share first; `by` is
    "group", "item" or "risk event"."""
    row = allocation.at(level)
    if by == "group":
        names = list(row.groups)
        shares = [row.groups[g] for g in names]
        naive = None if row.naive_groups is None else [row.naive_groups[g] for g in names]
    else:
        names, shares, naive = list(allocation.names), list(row.shares), row.naive
    kept = range(len(names))
    if by == "risk event":
        events = {r.name for r in allocation.risk_events}
        kept = [k for k in kept if names[k] in events]
    order = sorted(kept, key=lambda k: -abs(shares[k]))[:top]
    return (
        [names[k] for k in order],
        [shares[k] for k in order],
        None if naive is None else [naive[k] for k in order],
    )


def draw_allocation(
    ax: Axes, allocation: Allocation, level: float, by: str = "group", unit: str = "", top: int = 12
) -> None:
    names, shares, naive = allocation_bars(allocation, level, by, top)
    row = allocation.at(level)
    y = np.arange(len(names))[::-1]
    height = 0.38
    ax.barh(
        y + height / 2,
        shares,
        height=height,
        color=TOTAL.color,
        edgecolor=TOTAL.color,
        label="Conditional expectation",
        gid="conditional",
    )
    if naive is not None:
        ax.barh(
            y - height / 2,
            naive,
            height=height,
            color=HISTOGRAM_FILL,
            edgecolor=NORMAL.color,
            hatch="////",
            lw=0.8,
            label="Naive (own percentile, scaled)",
            gid="naive",
        )
    ax.set_yticks(y, [elide_middle(n, LABEL_CHARS) for n in names], fontsize=FONT_SIZE)
    ax.axvline(0, color="#4b5563", lw=0.8)
    every = len(allocation_bars(allocation, level, by, top=len(allocation.names))[0])
    largest = "" if every <= len(names) else f" (the {len(names)} largest)"
    style_axes(ax, f"Contingency at {numbers.level(row.level)} by {by}{largest}")
    ax.grid(False, axis="y")
    money_axis(ax.xaxis)
    ax.xaxis.set_major_locator(MaxNLocator(nbins=4))  # the tab is often narrow at 1280x800
    ax.set_xlabel(
        f"Share of the contingency ({unit})" if unit else "Share of the contingency",
        fontsize=FONT_SIZE,
    )
    legend_above(ax)
