"""Legends cover nothing (issue 16): each chart's legend sits outside the plotting area, so no
bar, curve or P-label is hidden, in the window's small figures and on the printed page."""

from __future__ import annotations

import pytest
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from report_fixtures import mixed_estimate

from charts.drivers import draw_drivers
from charts.gap import draw_gap_curve
from charts.item import draw_item_preview
from charts.style import elide_middle
from charts.total import draw_density, draw_s_curve
from engine import LineItem, analyze, build_distribution

CHARTS = (draw_density, draw_s_curve, draw_gap_curve, draw_drivers)


@pytest.fixture(scope="module")
def analysis():
    return analyze(mixed_estimate(), method="simulation", trials=20_000, seed=11)


@pytest.mark.parametrize("draw", CHARTS, ids=lambda d: d.__name__)
@pytest.mark.parametrize("size", [(4.4, 3.2), (8.0, 3.2)], ids=["window", "page"])
def test_legend_lies_outside_the_plot_and_below_the_title(analysis, draw, size):
    figure = Figure(figsize=size, layout="constrained")
    FigureCanvasAgg(figure)
    ax = figure.add_subplot()
    draw(ax, analysis)
    figure.canvas.draw()
    renderer = figure.canvas.get_renderer()
    legend = ax.get_legend().get_window_extent(renderer)
    plot = ax.get_window_extent(renderer)
    titles = [t for t in (ax._left_title, ax.title, ax._right_title) if t.get_text()]
    assert len(titles) == 1
    title = titles[0].get_window_extent(renderer)
    assert legend.y0 >= plot.y1 - 0.5, "the legend reaches into the plotting area"
    assert not legend.overlaps(title)
    assert figure.bbox.x0 - 0.5 <= title.x0 and title.x1 <= figure.bbox.x1 + 0.5, "title cut"
    # Every entry is shown, none cut off the figure.
    assert figure.bbox.x0 - 0.5 <= legend.x0 and legend.x1 <= figure.bbox.x1 + 0.5
    labels = [t.get_text() for t in ax.get_legend().get_texts()]
    assert len(labels) == len(ax.get_legend_handles_labels()[1])


def test_long_names_lose_their_middle_and_titles_fit():
    name = "Risk: column shell fails inspection, replace shell"
    short = elide_middle(name, 30)
    assert len(short) == 30 and short.startswith("Risk: column") and short.endswith("shell")
    assert elide_middle("Pumps", 30) == "Pumps"
    item = LineItem(
        name + " and re-test the whole column", "triangular", 10, 12, 20, probability=0.1
    )
    figure = Figure(figsize=(3.2, 2.6), layout="constrained")  # the window's item preview
    FigureCanvasAgg(figure)
    ax = figure.add_subplot()
    draw_item_preview(ax, item, build_distribution(item))
    figure.canvas.draw()
    title = ax._left_title
    assert title.get_text().endswith("(risk event, 10% likely)") and "…" in title.get_text()
    box = title.get_window_extent(figure.canvas.get_renderer())
    assert figure.bbox.x0 - 0.5 <= box.x0 and box.x1 <= figure.bbox.x1 + 0.5
