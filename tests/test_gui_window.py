"""The main window end to end: recompute on edit, undo, import, export, close, recovery."""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest
from gui_fixtures import two_uniforms
from PySide6.QtWidgets import QDialogButtonBox, QMessageBox

from engine import Estimate, LineItem, Settings
from fileio.demo import SAMPLE_DIR
from gui.item_text import TABLE_COLUMNS

TIMEOUT_MS = 30_000
# The offscreen platform says it cannot pass size hints on to a window manager; harmless.
pytestmark = pytest.mark.qt_log_ignore("This plugin does not support propagateSizeHints")


def exact_settings() -> Settings:
    return Settings(levels=(50.0, 80.0), method="exact")


def open_estimate(window, qtbot, estimate: Estimate, settings: Settings) -> None:
    with qtbot.waitSignal(window.recomputer.finished, timeout=TIMEOUT_MS):
        window.set_document(estimate, settings, None)


def level_value(window, level: float) -> float:
    rows = window.last_outcome.analysis.levels
    return next(r.value for r in rows if r.level == level)


def table_total(window, row: int) -> float:
    column = window.results.table.column_names().index("Total")
    return float(window.results.table.item(row, column).text().replace(",", ""))


def test_editing_a_cell_recomputes_the_level_table_and_undo_restores_it(make_window, qtbot):
    window = make_window()
    open_estimate(window, qtbot, two_uniforms(), exact_settings())
    # U(0,100) + U(0,100) is triangular on [0, 200]: P80 = 200 - sqrt(0.4 * 100^2) = 136.754
    # (sum of two uniforms, Irwin–Hall n = 2, Johnson, Kotz & Balakrishnan, Continuous
    # Univariate Distributions vol. 2, ch. 26).
    assert level_value(window, 80) == pytest.approx(200 - math.sqrt(4000), rel=1e-3)
    assert table_total(window, 1) == pytest.approx(136.754, abs=0.5)  # shown to whole units

    high = TABLE_COLUMNS.index("High")
    with qtbot.waitSignal(window.recomputer.finished, timeout=TIMEOUT_MS):
        window.editor.edit_cell(1, high, "200")
    # U(0,100) + U(0,200) is a trapezoid on [0, 300]; its top tail is
    # 1 - F(x) = (300 - x)^2 / (2 * 100 * 200), so P80 = 300 - sqrt(8000) = 210.557 and
    # P50 = 150 by symmetry (convolution of two uniform densities, same source).
    assert level_value(window, 80) == pytest.approx(300 - math.sqrt(8000), rel=1e-3)
    assert level_value(window, 50) == pytest.approx(150, rel=1e-3)
    assert table_total(window, 1) == pytest.approx(210.557, abs=0.5)
    assert window.is_modified()

    with qtbot.waitSignal(window.recomputer.finished, timeout=TIMEOUT_MS):
        window.undo_stack.undo()
    assert level_value(window, 80) == pytest.approx(200 - math.sqrt(4000), rel=1e-3)
    assert not window.is_modified()


def test_a_settings_change_is_one_undo_step(make_window, qtbot):
    """Typing new levels recomputes at them; undo brings back the old levels and figures.
    P95 of U(0,100) + U(0,100) is 200 - sqrt(1000) (Irwin–Hall n = 2, as above)."""
    window = make_window()
    open_estimate(window, qtbot, two_uniforms(), exact_settings())
    with qtbot.waitSignal(window.recomputer.finished, timeout=TIMEOUT_MS):
        window.settings_panel.levels.setText("50, 95")
        window.settings_panel.levels.editingFinished.emit()
    assert level_value(window, 95) == pytest.approx(200 - math.sqrt(1000), rel=1e-3)
    assert window.undo_stack.undoText() == "Change settings"
    with qtbot.waitSignal(window.recomputer.finished, timeout=TIMEOUT_MS):
        window.undo_stack.undo()
    assert window.settings.levels == (50.0, 80.0)
    assert window.settings_panel.levels.text() == "50, 80"
    assert level_value(window, 80) == pytest.approx(200 - math.sqrt(4000), rel=1e-3)


def test_bad_row_is_left_out_with_a_notice(make_window, qtbot):
    window = make_window()
    open_estimate(window, qtbot, two_uniforms(), exact_settings())
    low = TABLE_COLUMNS.index("Low")
    with qtbot.waitSignal(window.recomputer.finished, timeout=TIMEOUT_MS):
        window.editor.edit_cell(1, low, "lots")
    assert not window.left_out.isHidden()
    assert "1 row left out of the total" in window.left_out.text()
    # One U(0,100) alone: P80 = 80 (uniform quantile, closed form).
    assert level_value(window, 80) == pytest.approx(80, rel=1e-3)


def test_closing_with_unsaved_changes_asks(make_window, qtbot, monkeypatch):
    window = make_window()
    open_estimate(window, qtbot, two_uniforms(), exact_settings())
    window.editor.edit_cell(0, TABLE_COLUMNS.index("Item"), "Crane and rigging")
    asked = []

    def answer(*args, **kwargs):
        asked.append(args[2])
        return QMessageBox.StandardButton.Cancel

    monkeypatch.setattr(QMessageBox, "question", answer)
    window.show()
    assert not window.close()
    assert asked and "not saved" in asked[0]
    monkeypatch.setattr(QMessageBox, "question", lambda *a, **k: QMessageBox.StandardButton.Discard)
    assert window.close()


def test_save_then_reopen_gives_the_same_estimate(make_window, qtbot, tmp_path):
    window = make_window()
    open_estimate(window, qtbot, two_uniforms(), exact_settings())
    path = tmp_path / "yard.rangefold"
    assert window.document.save_to(path)
    assert not window.is_modified()
    other = make_window()
    with qtbot.waitSignal(other.recomputer.finished, timeout=TIMEOUT_MS):
        assert other.document.open_path(path)
    assert other.estimate.items == two_uniforms().items
    assert other.settings.method == "exact"
    assert str(path) in other.document.recent_files()


def test_export_writes_a_report_that_opens_back(make_window, qtbot, tmp_path):
    window = make_window()
    open_estimate(window, qtbot, two_uniforms(), exact_settings())
    written = window.document.export_report(tmp_path / "yard.json")
    data = json.loads(Path(written).read_text(encoding="utf-8"))
    text = json.dumps(data)
    assert "Crane hire" in text
    # The report carries the figures on screen: P80 of the triangular sum (see above).
    assert f"{level_value(window, 80):.6g}"[:5] in text.replace(",", "")
    xlsx = window.document.export_report(tmp_path / "yard.xlsx")
    from openpyxl import load_workbook

    book = load_workbook(xlsx, read_only=True)
    assert book.sheetnames
    book.close()


def test_cancel_stops_a_long_simulation(make_window, qtbot):
    window = make_window()
    items = [LineItem(f"Work package {k}", "pert", 10.0, 12.0 + k % 5, 30.0) for k in range(60)]
    settings = Settings(levels=(50.0, 90.0), method="simulation", trials=5_000_000, seed=3)
    with qtbot.waitSignal(window.recomputer.progress, timeout=TIMEOUT_MS):
        window.set_document(Estimate(items=items), settings, None)
    assert window.cancel_button.isVisible() or not window.cancel_button.isHidden()
    with qtbot.waitSignal(window.recomputer.cancelled, timeout=TIMEOUT_MS):
        window.cancel_button.click()
    assert window.last_outcome is None
    assert "Cancelled" in window.compute_label.text()


def test_autosave_is_offered_back_after_a_crash(make_window, qtbot, tmp_path, monkeypatch):
    recovery = tmp_path / "crash-recovery"
    first = make_window(recovery)
    open_estimate(first, qtbot, two_uniforms(), exact_settings())
    first.editor.edit_cell(0, TABLE_COLUMNS.index("High"), "150")
    first.document.autosave()
    assert (recovery / "recovery.json").exists()
    # The crash: the window is never closed, so its recovery file stays.
    offered = []

    def answer(*args, **kwargs):
        offered.append(args[2])
        return QMessageBox.StandardButton.Yes

    monkeypatch.setattr(QMessageBox, "question", answer)
    second = make_window(recovery)
    with qtbot.waitSignal(second.recomputer.finished, timeout=TIMEOUT_MS):
        assert second.document.offer_recovery()
    assert offered and "did not close cleanly" in offered[0]
    assert second.estimate.items[0].high == 150.0
    assert second.is_modified()
    monkeypatch.setattr(QMessageBox, "question", lambda *a, **k: QMessageBox.StandardButton.Discard)
    second.show()
    assert second.close()
    assert not (recovery / "recovery.json").exists()


def test_import_dialog_maps_columns(qtbot, tmp_path):
    from gui.import_dialog import ImportDialog

    path = tmp_path / "rig.csv"
    path.write_text(
        "Description,Min,Likely,Max,Category\n"
        "Derrick lease,10,12,20,Hire\n"
        "Mud pumps,5,6,oops,Hire\n",
        encoding="utf-8",
    )
    dialog = ImportDialog(path)
    qtbot.addWidget(dialog)
    dialog.set_mapping("Item", "Description")
    dialog.set_mapping("Low", "Min")
    dialog.set_mapping("Most likely", "Likely")
    dialog.set_mapping("High", "Max")
    dialog.set_mapping("Group", "")
    assert dialog.mapping == {
        "Item": "Description",
        "Low": "Min",
        "Most likely": "Likely",
        "High": "Max",
    }
    assert dialog.buttons.button(QDialogButtonBox.StandardButton.Ok).isEnabled()
    items = dialog.estimate.items
    assert [i.name for i in items] == ["Derrick lease", "Mud pumps"]
    assert items[0].group == ""
    assert dialog.problems.count() >= 1
    assert "High" in dialog.problems.item(0).text()
    dialog.set_mapping("Group", "Category")
    assert dialog.estimate.items[0].group == "Hire"
    assert "Category" in dialog.rows.horizontalHeaderItem(4).text()
    dialog.set_mapping("Item", "")
    assert not dialog.buttons.button(QDialogButtonBox.StandardButton.Ok).isEnabled()


def test_import_items_adds_rows_as_one_undo_step(make_window, qtbot, tmp_path):
    window = make_window()
    open_estimate(window, qtbot, two_uniforms(), exact_settings())
    path = tmp_path / "extra.csv"
    path.write_text(
        "Item,Distribution,Low,Most likely,High\nLintels,triangular,1,2,4\n", encoding="utf-8"
    )
    with qtbot.waitSignal(window.recomputer.finished, timeout=TIMEOUT_MS):
        assert window.document.import_items(path, interactive=False) == [2]
    assert window.estimate.items[2].name == "Lintels"
    window.undo_stack.undo()
    assert len(window.estimate.items) == 2


@pytest.mark.parametrize(
    "workbook",
    sorted(p for p in SAMPLE_DIR.iterdir() if p.suffix in (".xlsx", ".csv")),
    ids=lambda p: p.name,
)
def test_each_demo_workbook_opens_and_closes(make_window, qtbot, workbook):
    window = make_window()
    window.show()
    assert window.document.open_path(workbook, interactive=False)
    qtbot.waitUntil(
        lambda: not window.recomputer.busy and bool(window.last_outcome or window.last_problem),
        timeout=TIMEOUT_MS,
    )
    if window.last_outcome is not None:
        assert window.results.table.rowCount() == len(window.settings.levels)
        assert window.results.summary.text() == window.last_outcome.analysis.summary
    else:  # a blank template: the window says what is missing instead of figures
        assert window.results.method.text() == window.last_problem
    assert window.close()
