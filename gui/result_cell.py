"""One cell of a read-only results table, the same in every tab: the first column is a name
that keeps its full text in the tooltip (the column may elide it in the middle); the others
are figures, right-aligned so their digits line up."""

from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtWidgets import QTableWidgetItem


def result_cell(text: str, column: int) -> QTableWidgetItem:
    cell = QTableWidgetItem(text)
    if column == 0:
        cell.setToolTip(text)
    else:
        cell.setTextAlignment(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
    return cell
