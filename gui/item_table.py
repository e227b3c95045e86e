"""The item table view: spreadsheet keys (Tab and Enter move on), copy and paste of row
blocks, and row operations on the selected rows, all through the ItemEditor."""

from __future__ import annotations

from PySide6.QtCore import QItemSelection, QItemSelectionModel, Qt, Signal
from PySide6.QtGui import QGuiApplication, QKeyEvent, QKeySequence
from PySide6.QtWidgets import QAbstractItemDelegate, QAbstractItemView, QHeaderView, QTableView

from gui.delegates import CheckedTextDelegate, FamilyDelegate
from gui.item_editor import ItemEditor
from gui.item_text import EDIT_COLUMNS, TABLE_COLUMNS

NAME, GROUP = TABLE_COLUMNS.index("Item"), TABLE_COLUMNS.index("Group")
LAST_TYPED = TABLE_COLUMNS.index("High")  # the names and figures up to here stay in view
# Names give way down to these widths before the columns scroll; the group gets at most
# this share of what is left, the item name the rest.
NAME_MIN_WIDTH, GROUP_MIN_WIDTH, GROUP_SHARE = 140, 64, 0.3
FIGURE_MAX_WIDTH = 100  # a list of discrete values elides rather than push columns away
ROWS_MEASURED = 60  # rows sampled when sizing columns to content: fast on long estimates


class ItemTableView(QTableView):
    # A clipboard block that could not be read: the message says how to fix it.
    paste_failed = Signal(str)

    def __init__(self, editor: ItemEditor, parent=None):
        super().__init__(parent)
        self.editor = editor
        self.setModel(editor.model)
        self.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectItems)
        self.setSelectionMode(QAbstractItemView.SelectionMode.ExtendedSelection)
        self.setEditTriggers(
            QAbstractItemView.EditTrigger.DoubleClicked
            | QAbstractItemView.EditTrigger.EditKeyPressed
            | QAbstractItemView.EditTrigger.AnyKeyPressed
        )
        self.setAlternatingRowColors(True)
        self.setWordWrap(False)
        self.setTabKeyNavigation(True)
        text_delegate = CheckedTextDelegate(self)
        self.setItemDelegate(text_delegate)
        self.setItemDelegateForColumn(TABLE_COLUMNS.index("Distribution"), FamilyDelegate(self))
        header = self.horizontalHeader()
        header.setSectionResizeMode(QHeaderView.ResizeMode.Interactive)
        header.setStretchLastSection(False)
        header.setResizeContentsPrecision(ROWS_MEASURED)
        # Long names lose their middle, not their end; the full name is in the tooltip.
        self.setTextElideMode(Qt.TextElideMode.ElideMiddle)
        editor.model.modelReset.connect(self.fit_columns)
        self.fit_columns()
        vertical = self.verticalHeader()
        vertical.setSectionResizeMode(QHeaderView.ResizeMode.Fixed)
        vertical.setDefaultSectionSize(self.fontMetrics().height() + 8)

    # --- columns ------------------------------------------------------------------------
    def fit_columns(self) -> None:
        """Every column as wide as its content; when that overflows the pane, the Item and
        Group columns give up the difference (down to a minimum, names elide well) so that
        the typed figures up to High stay in view."""
        self.resizeColumnsToContents()
        for column in range(self.model().columnCount()):
            if column not in (NAME, GROUP):
                self.setColumnWidth(column, min(self.columnWidth(column), FIGURE_MAX_WIDTH))
        self._natural = (self.columnWidth(NAME), self.columnWidth(GROUP))
        self._share_width()

    def _share_width(self) -> None:
        name, group = getattr(self, "_natural", (self.columnWidth(NAME), self.columnWidth(GROUP)))
        columns = self.model().columnCount()
        everything = sum(self.columnWidth(c) for c in range(columns) if c not in (NAME, GROUP))
        typed = sum(self.columnWidth(c) for c in range(LAST_TYPED + 1) if c not in (NAME, GROUP))
        # Everything in view if it fits; else the names share what the typed figures leave,
        # and the later columns (percentages, mean, SD) scroll.
        fits = self.viewport().width() - everything >= name + group
        room = self.viewport().width() - (everything if fits else typed)
        if name + group > room:
            group = max(GROUP_MIN_WIDTH, min(group, int(room * GROUP_SHARE)))
            name = max(NAME_MIN_WIDTH, room - group)
        self.setColumnWidth(NAME, name)
        self.setColumnWidth(GROUP, group)

    def resizeEvent(self, event) -> None:
        super().resizeEvent(event)
        self._share_width()

    # --- rows ---------------------------------------------------------------------------
    def selected_rows(self) -> list[int]:
        rows = {i.row() for i in self.selectionModel().selectedIndexes()}
        if not rows and self.currentIndex().isValid():
            rows = {self.currentIndex().row()}
        return sorted(rows)

    def select_rows(self, rows: list[int]) -> None:
        model = self.model()
        selection = self.selectionModel()
        # One selection of runs of adjacent rows: selecting row by row is quadratic.
        block = QItemSelection()
        for first, last in _runs(sorted(rows)):
            block.select(model.index(first, 0), model.index(last, 0))
        selection.select(
            block,
            QItemSelectionModel.SelectionFlag.ClearAndSelect
            | QItemSelectionModel.SelectionFlag.Rows,
        )
        if rows:
            first = model.index(rows[0], 0)
            selection.setCurrentIndex(first, QItemSelectionModel.SelectionFlag.NoUpdate)
            self.scrollTo(first)

    def add_row(self) -> None:
        rows = self.selected_rows()
        row = self.editor.add_row(rows[-1] + 1 if rows else None)
        self.setCurrentIndex(self.model().index(row, 0))
        self.edit(self.currentIndex())

    def delete_rows(self) -> None:
        rows = self.selected_rows()
        self.editor.delete_rows(rows)
        if rows and self.model().rowCount():
            self.select_rows([min(rows[0], self.model().rowCount() - 1)])

    def duplicate_rows(self) -> None:
        self.select_rows(self.editor.duplicate_rows(self.selected_rows()))

    def move_rows(self, delta: int) -> None:
        self.select_rows(self.editor.move_rows(self.selected_rows(), delta))

    # --- clipboard ----------------------------------------------------------------------
    def copy(self) -> None:
        rows = self.selected_rows()
        if rows:
            QGuiApplication.clipboard().setText(self.editor.copy_text(rows))

    def paste(self) -> None:
        self.paste_text(QGuiApplication.clipboard().text())

    def paste_text(self, text: str) -> list[int]:
        """One cell pastes into the current cell; a block is added after the current row."""
        if not text.strip():
            return []
        current = self.currentIndex()
        single = "\t" not in text.strip() and "\n" not in text.strip()
        if single and current.isValid() and TABLE_COLUMNS[current.column()] in EDIT_COLUMNS:
            self.editor.edit_cell(current.row(), current.column(), text.strip())
            return [current.row()]
        at = current.row() + 1 if current.isValid() else None
        try:
            rows = self.editor.paste_text(text, at)
        except ValueError as bad:
            self.paste_failed.emit(str(bad))
            return []
        self.select_rows(rows)
        return rows

    # --- keys ---------------------------------------------------------------------------
    def keyPressEvent(self, event: QKeyEvent) -> None:
        if event.matches(QKeySequence.StandardKey.Copy):
            self.copy()
        elif event.matches(QKeySequence.StandardKey.Paste):
            self.paste()
        elif (
            event.key() in (Qt.Key.Key_Return, Qt.Key.Key_Enter)
            and self.state() != QAbstractItemView.State.EditingState
        ):
            self._move_down()
        else:
            super().keyPressEvent(event)

    def closeEditor(self, editor, hint) -> None:
        # Enter commits and moves down, as in a spreadsheet; Tab moves right (Qt's default).
        super().closeEditor(editor, hint)
        if hint == QAbstractItemDelegate.EndEditHint.SubmitModelCache:
            self._move_down()

    def _move_down(self) -> None:
        current = self.currentIndex()
        if current.isValid() and current.row() + 1 < self.model().rowCount():
            self.setCurrentIndex(self.model().index(current.row() + 1, current.column()))


def _runs(rows: list[int]) -> list[tuple[int, int]]:
    """Sorted row numbers as (first, last) runs of adjacent rows."""
    runs: list[tuple[int, int]] = []
    for row in rows:
        if runs and row == runs[-1][1] + 1:
            runs[-1] = (runs[-1][0], row)
        else:
            runs.append((row, row))
    return runs
