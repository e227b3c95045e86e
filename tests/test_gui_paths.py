"""The Paths tab: shown for a schedule of parallel paths, filled from the analysis, hidden
for a cost estimate; editing an item's Path cell turns an estimate into a schedule."""

from __future__ import annotations

import pytest
from gui_fixtures import two_uniforms

from engine import Estimate, LineItem, Settings
from gui.item_text import TABLE_COLUMNS
from gui.paths_panel import path_rows

TIMEOUT_MS = 30_000
pytestmark = pytest.mark.qt_log_ignore("This plugin does not support propagateSizeHints")


def four_paths() -> Estimate:
    # Four independent triangular(80, 100, 120) paths: P(finish <= 100) = 0.5^4
    # (REFERENCES.md check value, product of the paths' CDFs).
    items = [
        LineItem(f"Branch {k}", "triangular", 80, 100, 120, paths=(f"P{k}",)) for k in range(4)
    ]
    return Estimate(items, title="Four paths", unit="working days")


def open_estimate(window, qtbot, estimate: Estimate) -> None:
    with qtbot.waitSignal(window.recomputer.finished, timeout=TIMEOUT_MS):
        window.set_document(estimate, Settings(levels=(50.0, 80.0, 90.0)), None)


def test_paths_tab_shows_the_finish_and_each_path(make_window, qtbot):
    window = make_window()
    open_estimate(window, qtbot, four_paths())
    panel = window.results
    assert panel.tabs.isTabVisible(panel._paths_index)
    analysis = window.last_outcome.analysis
    assert analysis.total.cdf(100.0) == pytest.approx(0.0625, abs=1e-4)
    table = panel.paths.table
    assert table.rowCount() == 6  # four paths, the finish, the merge bias
    assert table.item(4, 0).text() == "Finish (latest path)"
    assert table.item(0, table.columnCount() - 1).text() == "25.0%"  # exact: no interval
    headers, rows = path_rows(analysis)
    assert headers[4:7] == ["P50", "P80", "P90"]
    assert float(rows[5][4]) == pytest.approx(analysis.paths.merge_bias[0], abs=0.05)


def test_a_cost_estimate_hides_the_tab_and_a_path_cell_makes_a_schedule(make_window, qtbot):
    window = make_window()
    open_estimate(window, qtbot, two_uniforms())
    panel = window.results
    assert not panel.tabs.isTabVisible(panel._paths_index)
    path = TABLE_COLUMNS.index("Path")
    with qtbot.waitSignal(window.recomputer.finished, timeout=TIMEOUT_MS):
        window.editor.edit_cell(0, path, "North")
    assert window.last_outcome.analysis.paths is None  # one named path, one unnamed: still a sum
    with qtbot.waitSignal(window.recomputer.finished, timeout=TIMEOUT_MS):
        window.editor.edit_cell(1, path, "South")
    analysis = window.last_outcome.analysis
    assert [r.name for r in analysis.paths.rows] == ["North", "South"]
    assert panel.tabs.isTabVisible(panel._paths_index)
    # max of two independent U(0, 100): F(t) = (t / 100)^2, so P50 = 100 * sqrt(0.5)
    assert analysis.levels[0].value == pytest.approx(100 * 0.5**0.5, abs=0.1)


def test_paths_charts_are_drawn_only_when_the_tab_is_shown(make_window, qtbot):
    window = make_window()
    open_estimate(window, qtbot, four_paths())
    panel = window.results
    assert panel.tabs.currentIndex() != panel._paths_index
    drawn = panel.paths.curves.figure.axes
    assert not drawn and panel.paths._to_draw is not None  # hidden: nothing drawn yet
    panel.tabs.setCurrentIndex(panel._paths_index)
    assert panel.paths._to_draw is None
    titles = [ax.get_title(loc="left") or ax.get_title() for ax in panel.paths.curves.figure.axes]
    assert any("S-curves" in t for t in titles)
    # criticality written as elsewhere: '25.0%', one decimal
    texts = [t.get_text() for t in panel.paths.criticality.figure.axes[0].texts]
    assert "25.0%" in texts


def test_a_schedule_is_not_shared_out_but_keeps_the_chance_of_its_base(
    make_window, qtbot, tmp_path
):
    from engine.allocation import NOT_A_SUM

    window = make_window()
    open_estimate(window, qtbot, four_paths())
    panel = window.results.allocation
    assert panel.status.text() == NOT_A_SUM and panel.table.rowCount() == 0
    # base 100 (the most likely values): P(finish <= 100) = 0.5^4 = 6.25% (product of the
    # paths' CDFs, REFERENCES.md check value)
    assert "6.2%" in panel.base_said.text() or "6.3%" in panel.base_said.text()
    written = window.document.export_report(tmp_path / "schedule.json")
    assert written is not None and '"allocation"' not in written.read_text(encoding="utf-8")


def test_comparing_two_schedules_says_why_there_are_no_group_shares(
    make_window, qtbot, tmp_path, monkeypatch
):
    from PySide6.QtWidgets import QFileDialog, QLabel

    from engine.allocation import NOT_A_SUM
    from gui.compare_dialog import compare_with

    window = make_window()
    open_estimate(window, qtbot, four_paths())
    after = tmp_path / "after.csv"
    rows = "".join(f"Branch {k},triangular,80,100,{110 if k else 120},P{k}\n" for k in range(4))
    after.write_text("Item,Distribution,Low,Most likely,High,Path\n" + rows, encoding="utf-8")
    monkeypatch.setattr(QFileDialog, "getOpenFileName", lambda *a, **k: (str(after), ""))
    dialog = compare_with(window)
    qtbot.addWidget(dialog)
    with qtbot.waitSignal(dialog._signals.finished, timeout=TIMEOUT_MS):
        pass
    assert dialog.comparison.shares_note == NOT_A_SUM
    page = dialog.tabs.widget(2)
    assert isinstance(page, QLabel) and page.text() == NOT_A_SUM
    # the finish still moves: three paths now end by 110, so P90 is earlier
    p90 = dialog.comparison.levels[-1]
    assert p90.after < p90.before
    dialog.close()
