"""Rangefold's chart look: a colour-blind safe palette whose series also differ by line style,
marker and hatching, so a chart printed in grey still reads."""

from __future__ import annotations

from dataclasses import dataclass

from matplotlib.axes import Axes
from matplotlib.axis import Axis
from matplotlib.legend import Legend
from matplotlib.ticker import FuncFormatter, MaxNLocator

from charts.numbers import compact


@dataclass(frozen=True)
class Series:
    color: str
    linestyle: str
    marker: str
    hatch: str = ""
    linewidth: float = 1.8


# Dark teal and burnt orange sit far apart for every common colour-vision type and in
# luminance; the muted plum marks failures, slate marks reference lines.
TOTAL = Series("#17607a", "-", "o", "", 2.0)
NORMAL = Series("#c8631b", "--", "s", "", 1.6)
FAIL = Series("#8c2d6b", "none", "X", "xx", 1.2)
SKEW = Series("#c8631b", "-", "", "////", 1.0)
REFERENCE = Series("#4b5563", ":", "", "", 1.0)
BAND_FILL = "#e8dcc4"  # light sand: the tolerance band, also hatched
HISTOGRAM_FILL = "#b7d3dd"
TEXT = "#1f2933"
FONT_SIZE = 8.5


def style_axes(ax: Axes, title: str = "", title_side: str = "left") -> None:
    """Quiet frame: light grid behind the data, no top or right spine. A chart whose tick
    labels are long names puts its title on the right, where it has the width it needs."""
    ax.set_axisbelow(True)
    ax.grid(True, color="#d9dde3", linewidth=0.6)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    ax.tick_params(labelsize=FONT_SIZE, colors=TEXT)
    if title:
        ax.set_title(title, fontsize=FONT_SIZE + 1.5, color=TEXT, loc=title_side)


def legend_above(ax: Axes) -> Legend:
    """The legend in rows between the title and the plot, where it covers no bar, curve or
    P-label; as many entries a row as the axes' width holds, the title lifted over it."""
    handles, labels = ax.get_legend_handles_labels()
    figure = ax.get_figure()
    # Before layout the axes' own width is unknown (tick labels take their share), so the
    # rows are sized on the figure, and the legend hangs from the axes' right end.
    width = 0.85 * figure.get_figwidth() if figure else 4.0
    entry = max(len(label) for label in labels) * FONT_SIZE * 0.55 / 72 + 0.55  # inches
    columns = max(1, min(len(labels), int(width // entry)))
    rows = -(-len(labels) // columns)
    legend = ax.legend(
        handles,
        labels,
        loc="lower right",
        bbox_to_anchor=(1.0, 1.0),
        ncols=columns,
        fontsize=FONT_SIZE,
        frameon=False,
        borderaxespad=0.2,
        borderpad=0.1,
        columnspacing=1.2,
        handlelength=1.8,
    )
    for side in ("left", "right"):
        title = ax.get_title(loc=side)
        if title:
            lift = 6 + rows * FONT_SIZE * 1.5
            ax.set_title(title, fontsize=FONT_SIZE + 1.5, color=TEXT, loc=side, pad=lift)
    return legend


def money_axis(axis: Axis) -> None:
    """Ticks said the way estimators say sums: 12.3 k, 4.1 M."""
    axis.set_major_formatter(FuncFormatter(lambda x, _pos: compact(x)))
    # Labels like '1.25 M' are wider than the digits the default locator plans for.
    axis.set_major_locator(MaxNLocator(nbins=6))


def display_text(text: str) -> str:
    """User text on one line for a chart or a printed page: tabs and line breaks (which
    the fonts have no glyph for) become single spaces."""
    return " ".join(text.split())


def elide_middle(text: str, limit: int) -> str:
    """Long names keep both ends ('Risk: column sh…, replace shell'): the end often says
    which of several similar items it is."""
    text = display_text(text)
    if len(text) <= limit:
        return text
    head = limit // 2
    return text[:head] + "…" + text[len(text) - (limit - 1 - head) :]


def title_room(ax: Axes) -> int:
    """Characters a title can hold at the title's size: the figure's width less the room
    the axis labels take on the left."""
    figure = ax.get_figure()
    inches = 0.85 * figure.get_figwidth() if figure else 4.0
    return max(12, int(inches * 72 / ((FONT_SIZE + 1.5) * 0.6)))


def axis_label(name: str, unit: str) -> str:
    return f"{name} ({unit})" if unit else name


def level_label(ax: Axes, x: float, text: str) -> None:
    """A label standing along a vertical marker line, so close levels do not collide."""
    ax.annotate(
        text,
        (x, 1.0),
        xycoords=("data", "axes fraction"),
        xytext=(2, -3),
        textcoords="offset points",
        rotation=90,
        ha="left",
        va="top",
        fontsize=FONT_SIZE,
        color=TEXT,
        bbox={"boxstyle": "square,pad=0.1", "fc": "white", "ec": "none", "alpha": 0.8},
    )
