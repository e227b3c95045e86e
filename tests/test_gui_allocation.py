"""The window's Allocation tab and File > Compare with...: filled off the GUI thread, the
figures checked against closed forms."""

from __future__ import annotations

import math

import pytest
from gui_fixtures import two_uniforms
from PySide6.QtWidgets import QFileDialog

from engine import Estimate, LineItem, Settings
from gui.compare_dialog import compare_with

TIMEOUT_MS = 30_000
pytestmark = pytest.mark.qt_log_ignore("This plugin does not support propagateSizeHints")


def exact_settings() -> Settings:
    return Settings(levels=(50.0, 80.0), method="exact")


def open_and_allocate(window, qtbot, estimate: Estimate, settings: Settings):
    panel = window.results.allocation
    with qtbot.waitSignal(panel.worker.finished, timeout=TIMEOUT_MS):
        window.set_document(estimate, settings, None)
    return panel


def test_allocation_tab_splits_symmetric_items_evenly_and_reads_a_budget(make_window, qtbot):
    window = make_window()
    panel = open_and_allocate(window, qtbot, two_uniforms(), exact_settings())
    allocation = panel.allocation
    assert allocation is not None and allocation.method == "exact"
    # Two identical independent items: by symmetry each carries half of E[T | T = t] less
    # its base value (the mean, 50, for a uniform with no most likely value).
    for row in allocation.levels:
        assert row.shares[0] == pytest.approx(row.total / 2 - 50, abs=1e-6)
        assert row.shares[1] == pytest.approx(row.shares[0], abs=1e-9)
    panel.by.setCurrentIndex(1)  # by item
    panel.level.setCurrentIndex(1)  # P80
    assert panel.table.rowCount() == 2
    share = float(panel.table.item(0, 1).text().replace(",", ""))
    assert share == pytest.approx(allocation.levels[1].shares[0], abs=0.5)
    assert panel.table.item(0, 2).text() == "50.0%"
    # U(0,100) + U(0,100) is triangular on [0, 200]: F(150) = 1 - 50^2 / (2 * 100^2) = 87.5%
    # (Irwin–Hall n = 2, Johnson, Kotz & Balakrishnan vol. 2).
    panel.budget.setText("150")
    assert "87.5%" in panel.budget_said.text()
    panel.budget.setText("lots")
    assert (
        "enter" in panel.budget_said.text().lower() or "number" in panel.budget_said.text().lower()
    )
    # P(T <= base = 100) = 50% for the symmetric triangular total
    assert "50.0%" in panel.base_said.text()


def test_compare_with_another_file(make_window, qtbot, tmp_path, monkeypatch):
    window = make_window()
    open_and_allocate(window, qtbot, two_uniforms(), exact_settings())
    after = tmp_path / "after.csv"
    after.write_text(
        "Item,Distribution,Low,Most likely,High\n"
        "Crane hire,uniform,0,,60\nScaffold rental,uniform,0,,100\nHoist,fixed,,10,\n",
        encoding="utf-8",
    )
    monkeypatch.setattr(QFileDialog, "getOpenFileName", lambda *a, **k: (str(after), ""))
    dialog = compare_with(window)
    assert dialog is not None
    qtbot.addWidget(dialog)
    with qtbot.waitSignal(dialog._signals.finished, timeout=TIMEOUT_MS):
        pass
    result = dialog.comparison
    assert result is not None
    kinds = sorted((c.name, c.kind) for c in result.changes)
    assert kinds == [("Crane hire", "changed"), ("Hoist", "added")]
    # After: U(0,60) + U(0,100) + 10; its P50 is 10 + 50 + ... the trapezoid's middle:
    # by symmetry P50 = 10 + (60 + 100) / 2 = 90; before P50 = 100.
    p50 = result.levels[0]
    assert p50.before == pytest.approx(100.0, abs=1e-3)
    assert p50.after == pytest.approx(90.0, abs=1e-3)
    assert dialog.tabs.count() == 4
    written = dialog.export(tmp_path / "comparison.pdf")
    assert written is not None and written.read_bytes().startswith(b"%PDF-")
    assert math.isclose(result.before.total.mean, 100.0)
    dialog.close()


def test_risk_events_view_and_newest_request_wins(make_window, qtbot):
    window = make_window()
    estimate = Estimate(
        items=[
            LineItem("Walls", "triangular", low=90.0, most_likely=100.0, high=130.0),
            LineItem("Flood", "fixed", most_likely=300.0, probability=0.15),
        ],
        title="Depot (invented)",
    )
    panel = open_and_allocate(
        window, qtbot, estimate, Settings(levels=(50.0, 90.0), method="exact")
    )
    panel.level.setCurrentIndex(1)  # P90: the flood (15% > 10%) has happened there
    panel.by.setCurrentIndex(2)
    assert panel.table.rowCount() == 1
    assert panel.table.item(0, 0).text().startswith("Flood  (chance 15%, expected 45")
    # the flood carries E[flood | T = P90] - 0: nearly all of its 300
    share = float(panel.table.item(0, 1).text().replace(",", ""))
    assert 250 < share <= 300
    # two requests in a row: only the second one's allocation is shown
    analysis = window.last_outcome.analysis
    first = window.last_outcome.estimate
    with qtbot.waitSignal(panel.worker.finished, timeout=TIMEOUT_MS) as blocker:
        panel.compute(first, analysis)
        panel.compute(first, analysis)
    assert panel.worker.latest_id >= 2 and blocker.args[0] is panel.allocation


def test_a_failed_analysis_clears_the_allocation(make_window, qtbot):
    window = make_window()
    panel = open_and_allocate(window, qtbot, two_uniforms(), exact_settings())
    assert panel.table.rowCount() > 0
    window.results.show_problem("row 2, column 'High': the high value is below the low.")
    assert panel.allocation is None and panel.table.rowCount() == 0
    assert "Nothing to allocate" in panel.status.text()


def test_export_while_allocating_waits_for_the_worker(make_window, qtbot, tmp_path, monkeypatch):
    window = make_window()
    panel = window.results.allocation
    with qtbot.waitSignal(window.recomputer.finished, timeout=TIMEOUT_MS):
        window.set_document(two_uniforms(), exact_settings(), None)
    assert panel.worker.busy  # the allocation was only requested with the result

    def on_the_gui_thread(*args, **kwargs):
        raise AssertionError("the report allocated on the GUI thread")

    monkeypatch.setattr("reports.allocate", on_the_gui_thread)
    written = window.document.export_report(tmp_path / "report.json")
    assert written is not None and panel.allocation is not None
    assert '"allocation"' in written.read_text(encoding="utf-8")


def test_labels_and_amounts_read_as_elsewhere():
    from charts import numbers
    from gui.allocation_panel import HEADERS

    assert "Naive share" in HEADERS and "Standard error" in HEADERS
    assert numbers.money(-0.001, decimals=1) == "0.0"  # never '-0.0'
    assert numbers.money(1200.0, sign=True) == "+1,200"
    assert numbers.money(-1200.0, sign=True) == "-1,200"


def test_allocation_chart_keeps_both_ends_of_long_names_and_says_when_it_shows_fewer():
    from matplotlib.figure import Figure

    from charts.allocation import LABEL_CHARS, draw_allocation
    from engine import analyze
    from engine.allocation import allocate

    long_name = "Risk: river works window missed, wait a season"
    items = [
        LineItem(long_name, "fixed", most_likely=300.0, probability=0.2),
        *(LineItem(f"Work {k}", "triangular", 90.0, 100.0, 130.0) for k in range(5)),
    ]
    estimate = Estimate(items, title="Depot (invented)")
    allocation = allocate(estimate, analyze(estimate, levels=(50.0, 90.0), method="exact"))
    ax = Figure().add_subplot()
    draw_allocation(ax, allocation, 90.0, "item", top=3)
    labels = [t.get_text() for t in ax.get_yticklabels()]
    elided = next(t for t in labels if t.startswith("Risk: "))
    assert "…" in elided and elided.endswith("a season") and len(elided) == LABEL_CHARS
    assert "(the 3 largest)" in ax.get_title(loc="left") + ax.get_title()


def test_allocation_chart_waits_until_the_tab_is_shown(make_window, qtbot):
    window = make_window()
    panel = open_and_allocate(window, qtbot, two_uniforms(), exact_settings())
    tabs = window.results.tabs
    assert tabs.currentWidget() is not panel and not panel.chart.figure.axes
    tabs.setCurrentWidget(panel)
    assert (
        panel.chart.figure.axes
        and "Contingency at P80"
        in panel.chart.figure.axes[0].get_title(loc="left") + panel.chart.figure.axes[0].get_title()
    )
