"""Every change to the items and to their stated correlations as an undoable step: edits,
pastes, imports, row operations.

Owns the model and the undo stack; the table view and the menus call these methods, so
there is one way in for a change and each change is one undo step.
"""

from __future__ import annotations

from collections.abc import Sequence

from PySide6.QtCore import QObject, Signal
from PySide6.QtGui import QUndoStack

from charts.numbers import count
from engine import Estimate, LineItem
from fileio.bulk_rows import items_from_cell_rows
from gui.clipboard_text import items_to_tsv, tsv_to_cells
from gui.commands import (
    Command,
    RemoveItems,
    ReplaceItems,
    append_items,
    duplicate_rows,
    move_rows,
)
from gui.correlation_commands import ReplaceCorrelation
from gui.item_model import ItemTableModel, item_from_text
from gui.undo import CorrelationUndoCommand, ItemsUndoCommand


class ItemEditor(QObject):
    # Emitted after the stated correlations change (an edit, its undo or redo).
    correlation_changed = Signal()

    def __init__(self, estimate: Estimate | None = None, parent: QObject | None = None):
        super().__init__(parent)
        self.model = ItemTableModel(estimate, self)
        self.undo_stack = QUndoStack(self)
        self.model.edit_requested.connect(self._edit)

    def set_estimate(self, estimate: Estimate) -> None:
        """A new document: its own items and a fresh undo history."""
        self.undo_stack.clear()
        self.model.set_estimate(estimate)
        self.undo_stack.setClean()

    def _push(self, command: Command, text: str, cell: tuple[int, int] | None = None) -> None:
        self.undo_stack.push(ItemsUndoCommand(self.model, command, text, cell))

    def change_correlation(
        self, command: ReplaceCorrelation, text: str, merge_key: object = None
    ) -> None:
        """A correlation edit as one undo step on the same stack as the item edits."""
        self.undo_stack.push(CorrelationUndoCommand(self, command, text, merge_key))

    def execute_correlation(self, command: ReplaceCorrelation) -> ReplaceCorrelation:
        inverse = command.apply(self.model.estimate)
        self.correlation_changed.emit()
        return inverse

    def _edit(self, row: int, column: int, item: LineItem) -> None:
        self._push(ReplaceItems(((row, item),)), f"edit row {row + 1}", (row, column))

    def edit_cell(self, row: int, column: int, text: str) -> None:
        """Same path as typing in the cell (used by single-cell paste and tests)."""
        self.model.setData(self.model.index(row, column), text)

    def add_row(self, at: int | None = None) -> int:
        count = len(self.model.items)
        # A draft: marked until the user types its range.
        blank = item_from_text({"Item": f"New item {count + 1}", "Distribution": "triangular"})
        command = append_items(count, [blank], at)
        self._push(command, "add row")
        return command.rows[0]

    def delete_rows(self, rows: Sequence[int]) -> None:
        if rows:
            self._push(
                RemoveItems(tuple(sorted(set(rows)))), f"delete {count(len(set(rows)), 'row')}"
            )

    def duplicate_rows(self, rows: Sequence[int]) -> list[int]:
        if not rows:
            return []
        command = duplicate_rows(self.model.items, rows)
        self._push(command, f"duplicate {count(len(set(rows)), 'row')}")
        return command.rows

    def move_rows(self, rows: Sequence[int], delta: int) -> list[int]:
        command = move_rows(len(self.model.items), rows, delta)
        if command is None:
            return list(rows)
        self._push(command, "move rows up" if delta < 0 else "move rows down")
        return [r + delta for r in sorted(set(rows))]

    def insert_items(self, items: Sequence[LineItem], at: int | None, text: str) -> list[int]:
        """Insert items (a paste or an import) as one undo step; returns their rows."""
        if not items:
            return []
        command = append_items(len(self.model.items), list(items), at)
        self._push(command, text)
        return command.rows

    def paste_text(self, text: str, at: int | None) -> list[int]:
        """Rows from a spreadsheet's clipboard, read as the importer reads a row.

        A row with a bad cell is still added, with the cell marked; raises ValueError (with
        the fix) only when the block's shape cannot be read at all.
        """
        rows = tsv_to_cells(text)
        items = items_from_cell_rows(rows)
        return self.insert_items(items, at, f"paste {count(len(items), 'row')}")

    def copy_text(self, rows: Sequence[int]) -> str:
        return items_to_tsv(self.model.items[r] for r in sorted(set(rows)))
