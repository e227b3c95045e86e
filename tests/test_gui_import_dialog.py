"""The import dialog says what `rangefold check` says: the sheets combined and the others as
tick boxes, the rows left out (a subtotal can be taken back as an item), the columns kept as
notes; its preview numbers rows as the sheet does."""

from __future__ import annotations

from estimator_workbooks import PLAN_ITEMS, cost_plan_workbook
from PySide6.QtWidgets import QLabel

from fileio.import_summary import skipped_row_line
from fileio.readers import read_estimate
from gui.import_dialog import ImportDialog


def test_dialog_lists_sheets_left_out_rows_and_notes_in_checks_words(qtbot, tmp_path):
    path = cost_plan_workbook(tmp_path / "depot.xlsx")
    dialog = ImportDialog(path)
    qtbot.addWidget(dialog)
    estimate = dialog.estimate
    assert [i.name for i in estimate.items][:4] == [r[1] for r in PLAN_ITEMS]
    assert set(dialog.other_sheets) == {"Risk register"}
    assert dialog.other_sheets["Risk register"].isChecked()
    assert len(estimate.items) == 6
    # The same words as `check`.
    expected = [skipped_row_line(e, True) for e in estimate.summary["rows_skipped"]]
    shown = [dialog.left_out.item(k).text() for k in range(dialog.left_out.count())]
    assert shown == expected
    assert "kept as notes on each item: Ref, Basis" in dialog.summary.text()
    # Clearing the register's box reads the plan alone.
    dialog.set_other_sheet("Risk register", False)
    assert len(dialog.estimate.items) == 4
    assert not dialog.other_sheets["Risk register"].isChecked()
    dialog.set_other_sheet("Risk register", True)
    assert len(dialog.estimate.items) == 6


def test_a_subtotal_taken_back_becomes_an_item(qtbot, tmp_path):
    path = cost_plan_workbook(tmp_path / "depot.xlsx")
    dialog = ImportDialog(path)
    qtbot.addWidget(dialog)
    dialog.take_back("Cost plan", 8)
    names = [i.name for i in dialog.estimate.items]
    assert "Subtotal groundworks" in names
    taken = [dialog.left_out.item(k).text() for k in range(dialog.left_out.count())]
    assert any(t.startswith("sheet 'Cost plan' row 8 taken back as an item") for t in taken)
    dialog.take_back("Cost plan", 8, as_item=False)
    assert "Subtotal groundworks" not in [i.name for i in dialog.estimate.items]
    assert read_estimate(path, keep_rows=[("Cost plan", 8)]).items[2].name == (
        "Subtotal groundworks"
    )


def test_preview_numbers_rows_as_the_sheet_and_names_the_pert_shape(qtbot, tmp_path):
    path = cost_plan_workbook(tmp_path / "depot.xlsx")
    dialog = ImportDialog(path)
    qtbot.addWidget(dialog)
    assert dialog.preview.header_row == 4
    first = dialog.rows.verticalHeaderItem(0).text()
    assert first == "5"  # the row below the header, as the problem list numbers it
    labels = [w.text() for w in dialog.findChildren(QLabel)]
    assert "PERT shape:" in labels and "Shape:" not in labels


def test_item_table_shows_source_and_notes_and_edits_keep_them(tmp_path):
    from gui.item_model import item_cells, item_from_text, source_tooltip

    item = read_estimate(cost_plan_workbook(tmp_path / "depot.xlsx")).items[0]
    assert source_tooltip(item) == (
        "From sheet 'Cost plan', row 6\nRef: 1.1\nBasis: rock allowance"
    )
    cells = item_cells(item) | {"High": "1400000"}
    edited = item_from_text(cells, item)
    assert edited.high == 1_400_000
    assert (edited.sheet, edited.row, edited.notes) == (item.sheet, item.row, item.notes)


def test_sheets_from_the_command_line_preselect_the_dialog(qtbot, tmp_path):
    path = cost_plan_workbook(tmp_path / "depot.xlsx")
    dialog = ImportDialog(path, sheets=["Risk register"])
    qtbot.addWidget(dialog)
    assert dialog.sheet.currentText() == "Risk register"
    assert [i.sheet for i in dialog.estimate.items] == ["Risk register"] * 2
    assert set(dialog.other_sheets) == {"Cost plan"}
    assert not dialog.other_sheets["Cost plan"].isChecked()
    every = ImportDialog(path, sheets=["all"])
    qtbot.addWidget(every)
    assert len(every.estimate.items) == 6
    assert every.other_sheets["Risk register"].isChecked()
