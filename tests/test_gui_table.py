"""The item table: edits through the importer's reader, undo, merge, paste, marked cells."""

from __future__ import annotations

import pytest
from PySide6.QtCore import Qt

from engine import Estimate, LineItem
from gui.item_editor import ItemEditor
from gui.item_table import ItemTableView
from gui.item_text import TABLE_COLUMNS


def _estimate() -> Estimate:
    return Estimate(
        items=[
            LineItem("Boiler refit", "triangular", 100.0, 120.0, 180.0, group="Plant"),
            LineItem("Control cabinets", "uniform", 40.0, None, 60.0, group="Electrical"),
        ]
    )


@pytest.fixture
def table(qtbot):
    editor = ItemEditor(_estimate())
    view = ItemTableView(editor)
    qtbot.addWidget(view)
    return view


def col(name: str) -> int:
    return TABLE_COLUMNS.index(name)


def test_edit_replaces_the_item_and_mean_follows(table):
    model = table.editor.model
    # Uniform(40, 60): mean 50, sd 20/sqrt(12) = 5.7735 (closed form), shown with the one
    # decimal that every Mean and SD gets when the largest typed figure is in the hundreds.
    assert model.index(1, col("Mean")).data() == "50.0"
    assert model.index(1, col("SD")).data() == "5.8"
    assert model.index(0, col("Mean")).data() == "133.3"  # (100 + 120 + 180) / 3
    table.editor.edit_cell(1, col("High"), "$80")
    assert model.items[1].high == 80.0
    assert model.index(1, col("Mean")).data() == "60.0"


def test_successive_edits_of_one_cell_are_one_undo_step(table):
    editor = table.editor
    editor.edit_cell(0, col("High"), "190")
    editor.edit_cell(0, col("High"), "200")
    editor.edit_cell(0, col("Low"), "90")
    assert editor.undo_stack.count() == 2
    editor.undo_stack.undo()
    assert editor.model.items[0].high == 200.0 and editor.model.items[0].low == 100.0
    editor.undo_stack.undo()
    assert editor.model.items[0] == _estimate().items[0]
    editor.undo_stack.redo()
    assert editor.model.items[0].high == 200.0


def test_bad_cell_is_marked_in_place_and_the_row_kept(table):
    model = table.editor.model
    table.editor.edit_cell(1, col("Low"), "forty")
    index = model.index(1, col("Low"))
    assert index.data() == "forty"
    assert "number" in index.data(Qt.ItemDataRole.ToolTipRole).lower()
    assert index.data(Qt.ItemDataRole.BackgroundRole) is not None
    assert index.data(Qt.ItemDataRole.DecorationRole) is not None
    assert model.rowCount() == 2
    assert [i.name for i in model.valid_items()] == ["Boiler refit"]


def test_validation_problem_points_at_its_column(table):
    model = table.editor.model
    table.editor.edit_cell(0, col("Most likely"), "500")
    tip = model.index(0, col("Most likely")).data(Qt.ItemDataRole.ToolTipRole)
    assert "outside" in tip and "Fix:" in tip
    assert model.invalid_rows() == [0]


def test_paste_block_adds_rows_and_flags_the_bad_one(table):
    table.setCurrentIndex(table.model().index(1, 0))
    block = (
        "Item\tDistribution\tLow\tMost likely\tHigh\tProbability\r\n"
        "Flood barrier\ttriangular\t10\t15\t30\t\r\n"
        "Vendor insolvency\tuniform\t20\t\t50\t140\r\n"
    )
    rows = table.paste_text(block)
    model = table.editor.model
    assert rows == [2, 3]
    assert [i.name for i in model.items] == [
        "Boiler refit",
        "Control cabinets",
        "Flood barrier",
        "Vendor insolvency",
    ]
    assert model.invalid_rows() == [3]
    tip = model.index(3, col("Probability")).data(Qt.ItemDataRole.ToolTipRole)
    assert "above 1" in tip
    table.editor.undo_stack.undo()
    assert model.rowCount() == 2


def test_copy_then_paste_duplicates_rows(table, qtbot):
    table.select_rows([0, 1])
    table.copy()
    table.setCurrentIndex(table.model().index(1, 0))
    table.paste()
    assert [i.name for i in table.editor.model.items[2:]] == ["Boiler refit", "Control cabinets"]


def test_row_operations_undo(table):
    editor = table.editor
    table.select_rows([1])
    table.move_rows(-1)
    assert [i.name for i in editor.model.items] == ["Control cabinets", "Boiler refit"]
    table.duplicate_rows()
    assert editor.model.items[1].name == "Control cabinets (copy)"
    table.select_rows([0])
    table.delete_rows()
    assert editor.model.rowCount() == 2
    table.add_row()
    assert editor.model.rowCount() == 3
    while editor.undo_stack.canUndo():
        editor.undo_stack.undo()
    assert editor.model.items == _estimate().items


def test_enter_commits_and_moves_down(table, qtbot):
    table.show()
    qtbot.waitExposed(table)
    index = table.model().index(0, col("High"))
    table.setCurrentIndex(index)
    table.edit(index)
    editor = table.indexWidget(index)
    editor.selectAll()
    qtbot.keyClicks(editor, "175")
    qtbot.keyClick(editor, Qt.Key.Key_Return)
    # Qt commits an editor's data on Enter through a queued call.
    qtbot.waitUntil(lambda: table.editor.model.items[0].high == 175.0, timeout=2000)
    assert table.currentIndex().row() == 1


def test_ten_thousand_rows_are_read_lazily(qtbot):
    items = [LineItem(f"Line {k}", "triangular", k, k + 1.0, k + 3.0) for k in range(10_000)]
    editor = ItemEditor(Estimate(items=items))
    view = ItemTableView(editor)
    qtbot.addWidget(view)
    view.resize(900, 400)
    view.show()
    qtbot.waitExposed(view)
    view.grab()
    # Only what is painted has been checked, not all 10,000 rows.
    assert 0 < len(editor.model._checks) < 200
    # Triangular(k, k+1, k+3): mean (3k+4)/3 (closed form), in whole units since the
    # largest figure typed is past 10,000.
    assert editor.model.index(9_999, col("Mean")).data() == f"{(3 * 9_999 + 4) / 3:,.0f}"
