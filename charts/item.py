"""One item's distribution as the analyst typed it, to check the range reads as meant."""

from __future__ import annotations

import numpy as np
from matplotlib.axes import Axes

from charts.numbers import probability
from charts.style import (
    FAIL,
    FONT_SIZE,
    REFERENCE,
    TEXT,
    TOTAL,
    axis_label,
    elide_middle,
    level_label,
    money_axis,
    style_axes,
    title_room,
)
from charts.view_range import body_range, cut_note
from engine import LineItem
from engine.families.distributions import Distribution


def draw_item_preview(ax: Axes, item: LineItem, dist: Distribution, unit: str = "") -> None:
    """Density line for the continuous part, stems for point masses (a risk event's zero,
    discrete values), and the typed low / most likely / high marked."""
    atoms, continuous = dist.parts()
    views: list[tuple[float, float, float | None]] = []
    if continuous:
        typed = [v for v in (item.low, item.most_likely, item.high) if v is not None]
        marks = typed + [v for v, _ in atoms]
        views = [body_range(p.ppf, marks) for _, p in continuous]
        lo, hi = min(v[0] for v in views), max(v[1] for v in views)
        x = np.linspace(lo, hi, 400)
        (line,) = ax.plot(x, dist.pdf(x), color=TOTAL.color, lw=TOTAL.linewidth)
        line.set(label="Density", gid="density")
        ax.fill_between(x, dist.pdf(x), color=TOTAL.color, alpha=0.15, lw=0)
    if atoms:
        values = [v for v, _ in atoms]
        masses = [m for _, m in atoms]
        # Probabilities and densities have different units: stems get their own scale.
        target = ax.twinx() if continuous else ax
        stems = target.stem(values, masses, linefmt="-", markerfmt="D", basefmt=" ")
        target.set_ylim(0, 1.05 * max(masses))
        if continuous:
            target.set_ylabel("Probability of a point value", fontsize=FONT_SIZE)
            target.tick_params(labelsize=FONT_SIZE)
        stems.markerline.set(color=FAIL.color, gid="point-masses")
        stems.stemlines.set(color=FAIL.color)
        stems.set_label("Probability of a point value")
    low_name = f"Low (P{item.low_pct:g})" if item.low_pct is not None else "Low"
    high_name = f"High (P{item.high_pct:g})" if item.high_pct is not None else "High"
    for name, value, style in (
        (low_name, item.low, REFERENCE.linestyle),
        ("Most likely", item.most_likely, "-."),
        (high_name, item.high, REFERENCE.linestyle),
    ):
        if value is None or item.family == "discrete":
            continue
        ax.axvline(value, color=REFERENCE.color, ls=style, lw=1.1, gid=f"mark-{name}")
        level_label(ax, value, name)
    said = f" (risk event, {probability(item.probability)} likely)" if item.is_risk_event else ""
    style_axes(ax, elide_middle(item.name, title_room(ax) - len(said)) + said)
    money_axis(ax.xaxis)
    ax.set_xlabel(axis_label("Value", unit), fontsize=FONT_SIZE)
    note = cut_note(max((v[2] for v in views if v[2] is not None), default=None), unit)
    if note:
        ax.text(
            0.99, 0.02, note, transform=ax.transAxes, ha="right", fontsize=FONT_SIZE - 1,
            color=TEXT, gid="tail-cut",
        )  # fmt: skip
    ax.set_ylim(bottom=0)
    ax.set_ylabel("Density" if continuous else "Probability", fontsize=FONT_SIZE)
    if continuous:  # a density per unit of money has no number worth reading
        ax.tick_params(labelleft=False)
        ax.yaxis.get_offset_text().set_visible(False)
