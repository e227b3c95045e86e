"""Cell editors: a family chooser, and text editors that check as the importer does.

Number editors show the importer's message under the cursor while the text does not read
(fileio.cells), but still accept it on Enter: the cell then keeps the text, marked as a
problem, so nothing typed is lost.
"""

from __future__ import annotations

from collections.abc import Callable

from PySide6.QtCore import QModelIndex, Qt
from PySide6.QtWidgets import QComboBox, QLineEdit, QStyledItemDelegate, QToolTip, QWidget

from engine import FAMILIES
from gui.item_text import TABLE_COLUMNS
from reports.content import family_name


def cell_parser(column: str) -> Callable[[str], object] | None:
    """The importer's parser for a column's text, or None for free text."""
    from fileio.cells import parse_discrete, parse_number, parse_percentile, parse_probability

    if column == "Probability":
        return parse_probability
    if column in ("Low %", "High %"):
        return parse_percentile
    if column in ("Low", "High"):
        return parse_number
    if column == "Most likely":
        return lambda text: parse_discrete(text) if "@" in text else parse_number(text)
    return None


class FamilyDelegate(QStyledItemDelegate):
    def createEditor(self, parent: QWidget, option, index: QModelIndex) -> QWidget:
        combo = QComboBox(parent)
        for family in FAMILIES:
            combo.addItem(family_name(family), family)
        combo.setEditable(False)
        return combo

    def setEditorData(self, editor: QComboBox, index: QModelIndex) -> None:
        text = str(index.data(Qt.ItemDataRole.EditRole) or "").strip().lower()
        if text in FAMILIES:
            editor.setCurrentIndex(FAMILIES.index(text))
        else:
            # An imported family the engine does not know stays visible until replaced.
            editor.insertItem(0, text, text)
            editor.setCurrentIndex(0)

    def setModelData(self, editor: QComboBox, model, index: QModelIndex) -> None:
        model.setData(index, editor.currentData(), Qt.ItemDataRole.EditRole)


class CheckedTextDelegate(QStyledItemDelegate):
    """Line editor that tells, as you type, whether the importer would read the text."""

    def createEditor(self, parent: QWidget, option, index: QModelIndex) -> QWidget:
        editor = QLineEdit(parent)
        editor.setFrame(False)
        parser = cell_parser(TABLE_COLUMNS[index.column()])
        if parser is not None:
            editor.textEdited.connect(lambda text: _show_check(editor, parser, text))
        return editor

    def setEditorData(self, editor: QLineEdit, index: QModelIndex) -> None:
        editor.setText(str(index.data(Qt.ItemDataRole.EditRole) or ""))

    def setModelData(self, editor: QLineEdit, model, index: QModelIndex) -> None:
        model.setData(index, editor.text().strip(), Qt.ItemDataRole.EditRole)


def _show_check(editor: QLineEdit, parser: Callable[[str], object], text: str) -> None:
    problem = ""
    if text.strip():
        try:
            parser(text)
        except ValueError as bad:
            problem = str(bad)
    editor.setToolTip(problem)
    editor.setProperty("invalid", bool(problem))
    editor.setStyleSheet("QLineEdit { border: 2px dashed #b35806; }" if problem else "")
    if problem:
        QToolTip.showText(editor.mapToGlobal(editor.rect().bottomLeft()), problem, editor)
    else:
        QToolTip.hideText()
