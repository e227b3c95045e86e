"""Charts draw headless on an Agg figure, put one artist per curve and mark the levels, and
show the numbers of the analysis they are given (checked against closed forms)."""

from __future__ import annotations

import numpy as np
import pytest
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.collections import PolyCollection
from matplotlib.figure import Figure
from matplotlib.patches import StepPatch
from report_fixtures import (
    irwin_hall_normal,
    irwin_hall_ppf,
    mixed_estimate,
    uniforms,
    widths_estimate,
)

from charts.drivers import draw_drivers
from charts.gap import draw_gap_curve, gap_outside_band
from charts.item import draw_item_preview
from charts.total import draw_density, draw_s_curve
from engine import LineItem, analyze, build_distribution

LEVELS = (50.0, 80.0, 90.0)


def axes():
    figure = Figure(figsize=(6, 4))
    FigureCanvasAgg(figure)
    return figure, figure.add_subplot()


def by_gid(ax, gid):
    found = [a for a in ax.get_children() if a.get_gid() == gid]
    assert len(found) == 1, f"expected one artist {gid!r}, found {len(found)}"
    return found[0]


@pytest.fixture(scope="module")
def exact():
    return analyze(uniforms(3), method="exact", levels=LEVELS)


@pytest.fixture(scope="module")
def simulated():
    return analyze(uniforms(3), method="simulation", levels=LEVELS, trials=20_000, seed=7)


def test_s_curve_has_total_and_normal_and_marks_levels(exact):
    figure, ax = axes()
    draw_s_curve(ax, exact, "EUR")
    figure.canvas.draw()
    total, normal = by_gid(ax, "total"), by_gid(ax, "normal")
    # The total's curve passes through the Irwin–Hall percentiles (Johnson, Kotz &
    # Balakrishnan vol. 2), within the grid's error.
    x, y = total.get_data()
    for q in (0.2, 0.5, 0.9):
        assert np.interp(100 * q, y, x) == pytest.approx(irwin_hall_ppf(q, 3), abs=2e-3)
    x, y = normal.get_data()
    assert np.interp(90.0, y, x) == pytest.approx(irwin_hall_normal(np.array(0.9), 3), abs=1e-3)
    marks = by_gid(ax, "levels-total")
    assert list(marks.get_ydata()) == list(LEVELS)
    assert list(marks.get_xdata()) == [r.value for r in exact.levels]
    assert len(by_gid(ax, "levels-normal").get_xdata()) == len(LEVELS)
    assert [t.get_text() for t in ax.texts] == ["P50", "P80", "P90"]


def test_density_exact_is_a_line_that_keeps_the_mass(exact):
    figure, ax = axes()
    draw_density(ax, exact)
    figure.canvas.draw()
    x, y = by_gid(ax, "total").get_data()
    assert len(x) <= 800
    # Irwin–Hall n = 3: the density at 1.5 is 3/4 (Johnson, Kotz & Balakrishnan vol. 2).
    assert np.interp(1.5, x, y) == pytest.approx(0.75, abs=0.01)
    assert np.trapezoid(y, x) == pytest.approx(1.0, abs=0.01)
    assert {f"level-P{lv:g}" for lv in LEVELS} <= {a.get_gid() for a in ax.lines}
    by_gid(ax, "normal")


def test_density_simulated_is_a_histogram(simulated):
    figure, ax = axes()
    draw_density(ax, simulated)
    figure.canvas.draw()
    bars = by_gid(ax, "total")
    assert isinstance(bars, StepPatch)
    values, edges = bars.get_data()[:2]
    assert np.sum(values * np.diff(edges)) == pytest.approx(1.0, abs=0.01)
    by_gid(ax, "normal")


def test_gap_curve_flags_the_percentiles_where_the_shortcut_fails(exact):
    figure, ax = axes()
    draw_gap_curve(ax, exact, "EUR")
    figure.canvas.draw()
    assert isinstance(by_gid(ax, "band"), PolyCollection)
    flagged = set(np.round(by_gid(ax, "fails").get_xdata()).astype(int))
    # Independent check from the Irwin–Hall closed form, away from the band's edge where
    # the grid's error could tip a percentile either way.
    for p in range(1, 100):
        q = p / 100
        total = irwin_hall_ppf(q, 3)
        gap = abs(float(irwin_hall_normal(np.array(q), 3)) - total)
        band = exact.tolerance * total
        if gap > 1.2 * band:
            assert p in flagged, p
        elif gap < 0.8 * band:
            assert p not in flagged, p
    # Irwin–Hall n = 3: the shortcut fails in the tails first (REFERENCES.md: P99 off ~2%).
    assert 1 in flagged and 99 in flagged and 50 not in flagged


def test_gap_band_is_the_tolerance_times_the_total(exact):
    curve = gap_outside_band(exact)
    assert np.allclose(curve["band"], 0.01 * np.abs(curve["total"]))


def test_drivers_are_sorted_with_closed_form_shares():
    analysis = analyze(widths_estimate(), method="exact")
    figure, ax = axes()
    draw_drivers(ax, analysis)
    figure.canvas.draw()
    variance = [b.get_width() for b in ax.containers[0]]
    # Uniform variance w^2/12 (Johnson, Kotz & Balakrishnan vol. 2): shares 9/14, 4/14, 1/14.
    assert variance == pytest.approx([100 * 9 / 14, 100 * 4 / 14, 100 / 14])
    labels = [t.get_text() for t in ax.get_yticklabels()]
    tops = [b.get_y() for b in ax.containers[0]]
    assert labels[int(np.argmax(tops))] == "Width 3"  # largest at the top
    assert len(ax.containers) == 2  # variance and skew


def test_drivers_show_at_most_top():
    analysis = analyze(uniforms(20), method="exact")
    _figure, ax = axes()
    draw_drivers(ax, analysis, top=5)
    assert len(ax.containers[0]) == 5


def test_item_preview_marks_typed_values():
    item = LineItem("Partitions", "triangular", 90.0, 100.0, 130.0)
    figure, ax = axes()
    draw_item_preview(ax, item, build_distribution(item), "EUR")
    figure.canvas.draw()
    for gid, value in (("mark-Low", 90.0), ("mark-Most likely", 100.0), ("mark-High", 130.0)):
        assert by_gid(ax, gid).get_xdata()[0] == value
    x, y = by_gid(ax, "density").get_data()
    # Triangular (90, 100, 130): peak density 2 / (130 - 90) at the mode.
    assert np.interp(100.0, x, y) == pytest.approx(2 / 40, rel=0.02)


def test_item_preview_draws_point_masses_as_stems():
    event = next(i for i in mixed_estimate().items if i.is_risk_event)
    figure, ax = axes()
    draw_item_preview(ax, event, build_distribution(event))
    figure.canvas.draw()
    stems = [a for a in figure.axes[1].get_children() if a.get_gid() == "point-masses"]
    assert len(stems) == 1
    assert list(stems[0].get_xdata()) == [0.0]
    assert list(stems[0].get_ydata()) == pytest.approx([0.95])  # 1 - probability of occurrence
    discrete = next(i for i in mixed_estimate().items if i.family == "discrete")
    figure, ax = axes()
    draw_item_preview(ax, discrete, build_distribution(discrete))
    stems = by_gid(ax, "point-masses")
    assert list(stems.get_xdata()) == [100, 150, 300]
    assert list(stems.get_ydata()) == pytest.approx([0.2, 0.5, 0.3])


def test_a_heavy_tail_is_cut_from_the_view_and_the_levels_stay_readable():
    # A claim with P90/P10 = 10^4: its P99.95 is over a thousand times its P90. The spread
    # chart stops a few P10-P90 widths past the median, keeps every level in view, draws
    # the histogram over that view (not over the whole tail) and says
    # where the cut tail goes; a plain estimate is drawn whole, with no such note.
    wide = LineItem("Claim", "lognormal", 1.0, None, 1e4, low_pct=10, high_pct=90)
    works = LineItem("Works", "triangular", 900.0, 1000.0, 1300.0)
    from engine import Estimate

    analysis = analyze(Estimate([wide, works]), method="simulation", trials=20_000, seed=3)
    _, ax = axes()
    draw_density(ax, analysis)
    left, right = ax.get_xlim()
    p9995 = float(analysis.total.ppf(np.array([0.9995]))[0])
    assert right < p9995 / 100 and all(left <= r.value <= right for r in analysis.levels)
    histogram = next(a for a in ax.patches if isinstance(a, StepPatch))
    edges = histogram.get_data().edges
    assert left <= edges[0] and edges[-1] <= right  # the bins share out the view alone
    assert "P99.95" in by_gid(ax, "tail-cut").get_text()
    _, ax = axes()
    draw_density(ax, analyze(uniforms(3), method="exact", levels=LEVELS))
    assert not [a for a in ax.get_children() if a.get_gid() == "tail-cut"]
    _, ax = axes()
    draw_item_preview(ax, wide, build_distribution(wide))
    assert ax.get_xlim()[1] < 1e5 and "P99.95" in by_gid(ax, "tail-cut").get_text()
