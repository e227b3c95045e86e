"""QUndoCommand around gui.commands and gui.correlation_commands: Qt only labels, stacks
and merges them."""

from __future__ import annotations

from collections.abc import Callable

from PySide6.QtGui import QUndoCommand

from engine import Settings
from gui.commands import Command, ReplaceItems
from gui.correlation_commands import ReplaceCorrelation
from gui.item_model import ItemTableModel

CELL_EDIT_ID = 1


class ItemsUndoCommand(QUndoCommand):
    """Runs a command on the model; remembers its inverse for undo.

    `cell` (row, column) marks a single-cell edit: successive edits of the same cell merge
    into one undo step, which keeps the first edit's inverse and the latest edit's result.
    """

    def __init__(
        self,
        model: ItemTableModel,
        command: Command,
        text: str,
        cell: tuple[int, int] | None = None,
    ):
        super().__init__(text)
        self._model = model
        self._forward = command
        self._inverse: Command | None = None
        self._cell = cell

    def redo(self) -> None:
        self._inverse = self._model.execute(self._forward)

    def undo(self) -> None:
        assert self._inverse is not None
        self._forward = self._model.execute(self._inverse)

    def id(self) -> int:
        return CELL_EDIT_ID if self._cell is not None else -1

    def mergeWith(self, other: QUndoCommand) -> bool:
        if not isinstance(other, ItemsUndoCommand) or other._cell != self._cell:
            return False
        if not isinstance(other._forward, ReplaceItems):
            return False
        self._forward = other._forward
        return True


CORRELATION_EDIT_ID = 2


class CorrelationUndoCommand(QUndoCommand):
    """Runs a correlation command through the editor; successive edits with the same
    `merge_key` (the default's spin box stepping, one cell retyped) merge into one step."""

    def __init__(self, editor, command: ReplaceCorrelation, text: str, merge_key=None):
        super().__init__(text)
        self._editor = editor
        self._forward = command
        self._inverse: ReplaceCorrelation | None = None
        self._key = merge_key

    def redo(self) -> None:
        self._inverse = self._editor.execute_correlation(self._forward)

    def undo(self) -> None:
        assert self._inverse is not None
        self._forward = self._editor.execute_correlation(self._inverse)

    def id(self) -> int:
        return CORRELATION_EDIT_ID if self._key is not None else -1

    def mergeWith(self, other: QUndoCommand) -> bool:
        if not isinstance(other, CorrelationUndoCommand) or other._key != self._key:
            return False
        self._forward = other._forward
        return True


SETTINGS_EDIT_ID = 3


class SettingsUndoCommand(QUndoCommand):
    """A change of the analysis settings; `apply(settings)` shows and uses them. Successive
    changes merge into one step, so typing a list of levels undoes as one edit."""

    def __init__(self, apply: Callable[[Settings], None], old: Settings, new: Settings):
        super().__init__("Change settings")
        self._apply = apply
        self._old = old
        self._new = new

    def redo(self) -> None:
        self._apply(self._new)

    def undo(self) -> None:
        self._apply(self._old)

    def id(self) -> int:
        return SETTINGS_EDIT_ID

    def mergeWith(self, other: QUndoCommand) -> bool:
        if not isinstance(other, SettingsUndoCommand):
            return False
        self._new = other._new
        return True
