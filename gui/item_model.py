"""The item table's Qt model: an adapter over the Estimate, which stays the source of truth.

Every change goes through `execute(command)` (gui.commands), which applies it to
`estimate.items`, tells the views exactly what changed and returns the inverse for undo.
Mean, SD and each cell's problems are computed lazily, per item, and cached by item identity
(items are frozen, so an edit makes a new object and a new cache entry), which keeps the
table quick at ten thousand rows.
"""

from __future__ import annotations

from PySide6.QtCore import QAbstractTableModel, QModelIndex, QPersistentModelIndex, Qt, Signal
from PySide6.QtGui import QBrush, QColor, QFont, QIcon
from PySide6.QtWidgets import QApplication, QStyle

from charts import numbers
from engine import Estimate, LineItem
from gui.commands import Command, InsertItems, RemoveItems, Reorder, ReplaceItems
from gui.item_checks import ItemCheck, ItemChecks
from gui.item_text import (
    EDIT_COLUMNS,
    NUMBER_COLUMNS,
    TABLE_COLUMNS,
    display_cells,
    item_cells,
)

# Amber on light ground, with a warning icon beside the text: told apart without colour.
INVALID_BACKGROUND = QColor("#fde3a7")
READ_ONLY_FOREGROUND = QColor("#4a4a4a")
LONG_CELL = 16  # characters past which a cell may be elided, so its tooltip shows it whole


class ItemTableModel(QAbstractTableModel):
    # Emitted after any change to the items.
    items_changed = Signal()
    # Emitted for an edit the user made in a cell: (row, column, new item). The owner makes
    # it an undoable command; the model itself never changes items outside `execute`.
    edit_requested = Signal(int, int, object)

    def __init__(self, estimate: Estimate | None = None, parent=None):
        super().__init__(parent)
        self._estimate = estimate or Estimate()
        self._checks = ItemChecks()
        self._warning_icon: QIcon | None = None
        self._decimals: int | None = None  # of the Mean and SD columns, for all rows alike
        self.items_changed.connect(self._forget_decimals)

    # --- the estimate -------------------------------------------------------------------
    @property
    def estimate(self) -> Estimate:
        return self._estimate

    @property
    def items(self) -> list[LineItem]:
        return self._estimate.items

    def set_estimate(self, estimate: Estimate) -> None:
        self.beginResetModel()
        self._estimate = estimate
        self._checks.clear()
        self.endResetModel()
        self.items_changed.emit()

    def decimals(self) -> int:
        """The Mean and SD columns' decimals, from the largest value typed in any row."""
        if self._decimals is None:
            typed = (v for i in self.items for v in (i.low, i.most_likely, i.high))
            self._decimals = numbers.decimals_for(typed)
        return self._decimals

    def _forget_decimals(self) -> None:
        self._decimals = None

    @property
    def checks(self) -> ItemChecks:
        """The items' checks, shared with the recompute worker."""
        return self._checks

    def check(self, row: int) -> ItemCheck:
        return self._checks.of(self.items[row])

    def invalid_rows(self) -> list[int]:
        return [r for r in range(len(self.items)) if self.check(r).problems]

    def valid_items(self) -> list[LineItem]:
        return [item for r, item in enumerate(self.items) if not self.check(r).problems]

    # --- commands -----------------------------------------------------------------------
    def execute(self, command: Command) -> Command:
        """Apply a command to the items, notify the views, and return its inverse."""
        if isinstance(command, ReplaceItems):
            inverse = command.apply(self.items)
            rows = command.rows
            self.dataChanged.emit(
                self.index(rows[0], 0), self.index(rows[-1], len(TABLE_COLUMNS) - 1)
            )
        elif isinstance(command, InsertItems) and _contiguous(command.rows):
            rows = command.rows
            self.beginInsertRows(QModelIndex(), rows[0], rows[-1])
            inverse = command.apply(self.items)
            self.endInsertRows()
        elif isinstance(command, RemoveItems) and _contiguous(sorted(set(command.rows))):
            rows = sorted(set(command.rows))
            self.beginRemoveRows(QModelIndex(), rows[0], rows[-1])
            inverse = command.apply(self.items)
            self.endRemoveRows()
        elif isinstance(command, Reorder):
            self.layoutAboutToBeChanged.emit()
            old = [QPersistentModelIndex(i) for i in self.persistentIndexList()]
            inverse = command.apply(self.items)
            where = {old_row: new_row for new_row, old_row in enumerate(command.order)}
            self.changePersistentIndexList(
                [QModelIndex(i) for i in old],
                [self.index(where[i.row()], i.column()) for i in old],
            )
            self.layoutChanged.emit()
        else:
            self.beginResetModel()
            inverse = command.apply(self.items)
            self.endResetModel()
        self.items_changed.emit()
        return inverse

    # --- Qt model surface ---------------------------------------------------------------
    def rowCount(self, parent=QModelIndex()) -> int:  # noqa: B008 (Qt's signature)
        return 0 if parent.isValid() else len(self.items)

    def columnCount(self, parent=QModelIndex()) -> int:  # noqa: B008
        return 0 if parent.isValid() else len(TABLE_COLUMNS)

    def headerData(self, section, orientation, role=Qt.ItemDataRole.DisplayRole):
        if role != Qt.ItemDataRole.DisplayRole:
            return None
        if orientation == Qt.Orientation.Horizontal:
            return TABLE_COLUMNS[section]
        return str(section + 1)

    def flags(self, index):
        base = Qt.ItemFlag.ItemIsEnabled | Qt.ItemFlag.ItemIsSelectable
        if TABLE_COLUMNS[index.column()] in EDIT_COLUMNS:
            base |= Qt.ItemFlag.ItemIsEditable
        return base

    def data(self, index, role=Qt.ItemDataRole.DisplayRole):
        if not index.isValid():
            return None
        row, column = index.row(), TABLE_COLUMNS[index.column()]
        item = self.items[row]
        if role == Qt.ItemDataRole.DisplayRole:
            if column in EDIT_COLUMNS:
                return display_cells(item)[column]
            dist = self.check(row).distribution
            if dist is None:
                return ""
            return numbers.money(
                dist.mean if column == "Mean" else dist.sd, decimals=self.decimals()
            )
        if role == Qt.ItemDataRole.EditRole:
            return item_cells(item).get(column, "")
        if role == Qt.ItemDataRole.ToolTipRole:
            messages = self.check(row).by_column.get(column)
            if messages:
                return "\n".join(messages)
            if column == "Probability" and item.is_risk_event:
                return "Risk event: costs nothing when it does not occur."
            if column == "Item":
                whole = item.name if len(item.name) > LONG_CELL else ""
                return "\n".join(t for t in (whole, source_tooltip(item)) if t) or None
            if column in EDIT_COLUMNS and len(display_cells(item)[column]) > LONG_CELL:
                return display_cells(item)[column]  # whole, where the cell elides it
            return None
        if role == Qt.ItemDataRole.BackgroundRole:
            if column in self.check(row).by_column:
                return QBrush(INVALID_BACKGROUND)
            return None
        if role == Qt.ItemDataRole.DecorationRole:
            if column in self.check(row).by_column:
                return self._icon()
            return None
        if role == Qt.ItemDataRole.ForegroundRole and column not in EDIT_COLUMNS:
            return QBrush(READ_ONLY_FOREGROUND)
        if role == Qt.ItemDataRole.FontRole and column == "Item" and item.is_risk_event:
            font = QFont()
            font.setItalic(True)
            return font
        if role == Qt.ItemDataRole.TextAlignmentRole:
            if column in NUMBER_COLUMNS or column not in EDIT_COLUMNS:
                return int(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
            return int(Qt.AlignmentFlag.AlignLeft | Qt.AlignmentFlag.AlignVCenter)
        return None

    def setData(self, index, value, role=Qt.ItemDataRole.EditRole) -> bool:
        """Read the typed text through the importer's row reader and ask for an undoable edit."""
        if role != Qt.ItemDataRole.EditRole or not index.isValid():
            return False
        column = TABLE_COLUMNS[index.column()]
        if column not in EDIT_COLUMNS:
            return False
        item = self.items[index.row()]
        cells = item_cells(item)
        text = "" if value is None else str(value)
        if cells.get(column, "") == text:
            return False
        cells[column] = text
        self.edit_requested.emit(index.row(), index.column(), item_from_text(cells, item))
        return True

    def _icon(self) -> QIcon:
        if self._warning_icon is None:
            style = QApplication.style()
            self._warning_icon = style.standardIcon(QStyle.StandardPixmap.SP_MessageBoxWarning)
        return self._warning_icon


def item_from_text(cells: dict[str, str], previous: LineItem | None = None) -> LineItem:
    """A row of cell texts to an item with the importer's validation (fileio.rows)."""
    from fileio.rows import item_from_cells

    if previous is None:
        return item_from_cells(cells, None, None)
    # The source and the notes stay with the item through edits.
    edited = item_from_cells(cells, previous.row, previous.sheet)
    return edited.with_changes(notes=dict(previous.notes))


def source_tooltip(item: LineItem) -> str | None:
    """Where the item was read from and the notes kept from the columns not mapped."""
    lines = []
    if item.row is not None:
        lines.append(
            f"From {'sheet ' + repr(item.sheet) + ', ' if item.sheet else ''}row {item.row}"
        )
    lines += [f"{header}: {text}" for header, text in item.notes.items()]
    return "\n".join(lines) or None


def _contiguous(rows: list[int]) -> bool:
    return bool(rows) and rows[-1] - rows[0] == len(rows) - 1
