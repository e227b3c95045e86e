"""The distribution of the total beside the normal shortcut: its density and its S-curve,
with the chosen confidence levels marked where the analyst reads them."""

from __future__ import annotations

import numpy as np
from matplotlib.axes import Axes
from scipy import special

from charts.style import (
    FONT_SIZE,
    HISTOGRAM_FILL,
    NORMAL,
    REFERENCE,
    TEXT,
    TOTAL,
    axis_label,
    legend_above,
    level_label,
    money_axis,
    style_axes,
)
from charts.view_range import SHOWN, body_range, cut_note
from engine import Analysis
from engine.exact.totals import GridTotal, SampleTotal
from engine.exact.wide_item import WideItemTotal

# The window's tab and the chart say the same words.
SPREAD_TITLE = "Spread of the total"
NORMAL_REACH = 3.0  # sds of the normal curve kept in view when they fall near the total
MAX_POINTS = 800  # a grid this fine is indistinguishable on screen and keeps the PDF small


def method_label(analysis: Analysis) -> str:
    if analysis.method == "simulation":
        return f"Total, simulation ({analysis.trials:,} trials)"
    return "Total, exact"


def shortcut_moments(analysis: Analysis) -> tuple[float, float]:
    """The normal curve drawn: a schedule's is the longest path's (its level table's Normal
    column), not a normal fitted to the finish."""
    if analysis.paths is not None and analysis.shortcut_cumulants is not None:
        return analysis.shortcut_cumulants.mean, analysis.shortcut_cumulants.sd
    return analysis.total.mean, analysis.total.sd


def draw_s_curve(ax: Axes, analysis: Analysis, unit: str = "") -> None:
    """Cumulative probability against the total; levels marked on both curves."""
    q = np.linspace(SHOWN[0], SHOWN[1], 600)
    total = analysis.total.ppf(q)
    mean, sd = shortcut_moments(analysis)
    normal = mean + sd * special.ndtri(q)
    (line,) = ax.plot(total, 100 * q, color=TOTAL.color, ls=TOTAL.linestyle, lw=TOTAL.linewidth)
    line.set(label=method_label(analysis), gid="total")
    (line,) = ax.plot(normal, 100 * q, color=NORMAL.color, ls=NORMAL.linestyle, lw=NORMAL.linewidth)
    line.set(label="Normal shortcut", gid="normal")
    _mark_levels_on_curves(ax, analysis)
    _view(ax, analysis, unit)
    style_axes(ax, "S-curve of the total")
    money_axis(ax.xaxis)
    ax.set_xlabel(axis_label("Total", unit), fontsize=FONT_SIZE)
    ax.set_ylabel("Confidence level (%)", fontsize=FONT_SIZE)
    ax.set_ylim(0, 100)
    legend_above(ax)


def _mark_levels_on_curves(ax: Axes, analysis: Analysis) -> None:
    levels = [r.level for r in analysis.levels]
    ax.plot(
        [r.value for r in analysis.levels],
        levels,
        ls="none",
        marker=TOTAL.marker,
        ms=6,
        color=TOTAL.color,
        gid="levels-total",
    )
    ax.plot(
        [r.normal for r in analysis.levels],
        levels,
        ls="none",
        marker=NORMAL.marker,
        ms=5,
        mfc="white",
        color=NORMAL.color,
        gid="levels-normal",
    )
    for r in analysis.levels:
        ax.axhline(r.level, color=REFERENCE.color, ls=REFERENCE.linestyle, lw=REFERENCE.linewidth)
        ax.annotate(
            f"P{r.level:g}",
            (r.value, r.level),
            xytext=(-6, 4),
            textcoords="offset points",
            ha="right",
            fontsize=FONT_SIZE,
            color=TEXT,
        )


def draw_density(ax: Axes, analysis: Analysis, unit: str = "") -> None:
    """Exact totals as a line, simulated ones as a histogram; the normal curve over both."""
    total = analysis.total
    lo, hi = _view(ax, analysis, unit)
    if isinstance(total, SampleTotal):
        edges, density = total.histogram(span=(lo, hi))
        ax.stairs(
            density,
            edges,
            fill=True,
            color=HISTOGRAM_FILL,
            ec=TOTAL.color,
            lw=0.8,
            label=method_label(analysis),
            gid="total",
        )
    elif isinstance(total, GridTotal):
        x, density = _coarsened(total, lo, hi)
        (line,) = ax.plot(x, density, color=TOTAL.color, ls=TOTAL.linestyle, lw=TOTAL.linewidth)
        line.set(label=method_label(analysis), gid="total")
    elif isinstance(total, WideItemTotal):
        x = np.linspace(lo, hi, MAX_POINTS)
        (line,) = ax.plot(
            x, total.pdf(x), color=TOTAL.color, ls=TOTAL.linestyle, lw=TOTAL.linewidth
        )
        line.set(label=method_label(analysis), gid="total")
    else:  # every item fixed: the total is one value
        ax.vlines(
            [total.mean],
            0,
            1,
            color=TOTAL.color,
            lw=TOTAL.linewidth,
            gid="total",
            label="Total (no uncertainty)",
        )
    mean, sd = shortcut_moments(analysis)
    if sd > 0:
        x = np.linspace(lo, hi, 400)
        z = (x - mean) / sd
        pdf = np.exp(-0.5 * z * z) / (sd * np.sqrt(2 * np.pi))
        (line,) = ax.plot(x, pdf, color=NORMAL.color, ls=NORMAL.linestyle, lw=NORMAL.linewidth)
        line.set(label="Normal shortcut", gid="normal")
    for r in analysis.levels:
        ax.axvline(
            r.value,
            color=REFERENCE.color,
            ls=REFERENCE.linestyle,
            lw=REFERENCE.linewidth,
            gid=f"level-P{r.level:g}",
        )
        level_label(ax, r.value, f"P{r.level:g}")
    style_axes(ax, SPREAD_TITLE)
    money_axis(ax.xaxis)
    ax.set_xlabel(axis_label("Total", unit), fontsize=FONT_SIZE)
    ax.set_ylabel("Density", fontsize=FONT_SIZE)
    ax.set_ylim(bottom=0)
    ax.tick_params(labelleft=False)
    legend_above(ax)


def _view(ax: Axes, analysis: Analysis, unit: str) -> tuple[float, float]:
    """Fix the x range to the body of the total and its levels; a note if a tail is cut."""
    mean, sd = shortcut_moments(analysis)
    normal = (mean - NORMAL_REACH * sd, mean + NORMAL_REACH * sd)  # the normal curve's body
    left, right, cut = body_range(
        analysis.total.ppf, (r.value for r in analysis.levels), normal if sd > 0 else ()
    )
    if right > left:
        pad = 0.02 * (right - left)
        ax.set_xlim(left - pad, right + pad)
    note = cut_note(cut, unit)
    if note:
        ax.text(
            0.99, 0.02, note, transform=ax.transAxes, ha="right", fontsize=FONT_SIZE - 1,
            color=TEXT, gid="tail-cut",
        )  # fmt: skip
    return left, right


def _coarsened(total: GridTotal, lo: float, hi: float) -> tuple[np.ndarray, np.ndarray]:
    """Grid density over [lo, hi], summed into at most MAX_POINTS cells (mass is kept)."""
    values, masses = total.values, total.masses
    keep = (values >= lo - total.step) & (values <= hi + total.step)
    values, masses = values[keep], masses[keep]
    block = max(1, -(-len(values) // MAX_POINTS))
    n = len(values) // block * block
    if n == 0:
        return values, masses / total.step
    v = values[:n].reshape(-1, block).mean(axis=1)
    m = masses[:n].reshape(-1, block).sum(axis=1)
    return v, m / (total.step * block)
