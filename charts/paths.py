"""A schedule's parallel paths: each path's S-curve beside the finish's, the longest-mean
path's normal shortcut (the classic answer), and how often each path is the latest."""

from __future__ import annotations

import numpy as np
from matplotlib.axes import Axes
from scipy import special

from charts import numbers
from charts.style import (
    FONT_SIZE,
    HISTOGRAM_FILL,
    NORMAL,
    REFERENCE,
    TEXT,
    TOTAL,
    axis_label,
    elide_middle,
    money_axis,
    style_axes,
)
from engine import Analysis

SHOWN = (0.001, 0.999)
# Muted hues that stay apart from the finish's teal and the shortcut's orange, each with its
# own dash pattern so a grey print still tells the paths apart.
PATH_LINES = (
    ("#6a51a3", (0, (1, 1.5))),
    ("#5f8a4f", (0, (5, 2))),
    ("#7f8a1f", (0, (3, 1.5, 1, 1.5))),
    ("#7b7d8a", (0, (6, 1.5, 1, 1.5, 1, 1.5))),
    ("#a05d7a", (0, (2, 2))),
)
LABEL_CHARS = 28


def draw_path_s_curves(ax: Axes, analysis: Analysis, unit: str = "") -> None:
    """The finish lies right of every path's curve: the merge bias is the horizontal gap
    between it and the longest path's normal shortcut."""
    section = analysis.paths
    if section is None:
        raise ValueError("the estimate names fewer than two paths")
    q = np.linspace(SHOWN[0], SHOWN[1], 400)
    for k, (row, total) in enumerate(zip(section.rows, section.path_totals, strict=True)):
        color, dashes = PATH_LINES[k % len(PATH_LINES)]
        (line,) = ax.plot(total.ppf(q), 100 * q, color=color, ls=dashes, lw=1.2)
        line.set(label=elide_middle(row.name, LABEL_CHARS), gid=f"path-{k}")
    longest = next(r for r in section.rows if r.longest_mean)
    normal = longest.mean + longest.sd * special.ndtri(q)
    (line,) = ax.plot(normal, 100 * q, color=NORMAL.color, ls=NORMAL.linestyle, lw=NORMAL.linewidth)
    line.set(
        label=f"Normal shortcut ({elide_middle(longest.name, LABEL_CHARS)})",
        gid="normal",
    )
    (line,) = ax.plot(
        analysis.total.ppf(q), 100 * q, color=TOTAL.color, ls=TOTAL.linestyle, lw=TOTAL.linewidth
    )
    line.set(label="Finish (latest path)", gid="finish")
    for level, value, short in zip(section.levels, section.finish, section.shortcut, strict=True):
        ax.axhline(level, color=REFERENCE.color, ls=REFERENCE.linestyle, lw=REFERENCE.linewidth)
        ax.plot([value], [level], marker=TOTAL.marker, ms=5, color=TOTAL.color, ls="none")
        ax.plot([short], [level], marker=NORMAL.marker, ms=4.5, mfc="white", color=NORMAL.color)
        ax.annotate(
            numbers.level(level),
            (value, level),
            xytext=(4, -9),
            textcoords="offset points",
            fontsize=FONT_SIZE,
            color=TEXT,
        )
    style_axes(ax, "S-curves of the paths and of the finish")
    money_axis(ax.xaxis)
    ax.set_xlabel(axis_label("Duration", unit), fontsize=FONT_SIZE)
    ax.set_ylabel("Confidence level (%)", fontsize=FONT_SIZE)
    ax.set_ylim(0, 100)
    # Beside the plot, not above: with a line a path the legend above would take most of
    # the height of the window's chart; beside it, it covers nothing and the curves keep room.
    ax.legend(
        loc="center left",
        bbox_to_anchor=(1.01, 0.5),
        fontsize=FONT_SIZE - 0.5,
        frameon=False,
        handlelength=1.8,
        borderaxespad=0.2,
    )


def draw_criticality(ax: Axes, analysis: Analysis) -> None:
    """How often each path is the latest; the path with the longest mean is outlined."""
    section = analysis.paths
    if section is None:
        raise ValueError("the estimate names fewer than two paths")
    rows = section.rows
    y = np.arange(len(rows))[::-1]
    shares = np.array([100 * r.criticality for r in rows])
    errors = [1.96 * 100 * r.criticality_se if r.criticality_se is not None else 0 for r in rows]
    bars = ax.barh(
        y,
        shares,
        height=0.45,
        color=HISTOGRAM_FILL,
        edgecolor=[TOTAL.color if r.longest_mean else "#7b8794" for r in rows],
        linewidth=[2.0 if r.longest_mean else 0.8 for r in rows],
        xerr=errors if any(errors) else None,
        error_kw={"ecolor": TEXT, "lw": 0.8, "capsize": 2},
        gid="criticality",
    )
    for bar, share in zip(bars, shares, strict=True):
        ax.annotate(
            numbers.percent(share / 100),
            (bar.get_width(), bar.get_y() + bar.get_height() / 2),
            xytext=(4, 0),
            textcoords="offset points",
            va="center",
            fontsize=FONT_SIZE,
            color=TEXT,
        )
    # Names above their bars, not as tick labels: the chart often sits in a narrow pane.
    for bar, r in zip(bars, rows, strict=True):
        ax.annotate(
            elide_middle(r.name, LABEL_CHARS) + (" (longest mean)" if r.longest_mean else ""),
            (0, bar.get_y() + bar.get_height()),
            xytext=(1, 2),
            textcoords="offset points",
            fontsize=FONT_SIZE,
            color=TEXT,
            weight="bold" if r.longest_mean else "normal",
        )
    ax.set_yticks([])
    ax.set_ylim(-0.6, len(rows) - 0.1)
    how = "share of trials, 95% interval" if section.method == "simulation" else "exact"
    style_axes(ax, f"Criticality\n({how})")
    ax.grid(False, axis="y")
    ax.set_xlim(0, max(100.0, float(shares.max()) * 1.15))
    ax.set_xlabel("Latest path (% of outcomes)", fontsize=FONT_SIZE)
