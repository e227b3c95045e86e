"""The confidence-level table: the total beside each shortcut, the gap and the contingency.

Columns for simulation error and for correlation appear only when the analysis has them.
"""

from __future__ import annotations

from collections.abc import Callable

from PySide6.QtCore import Qt
from PySide6.QtGui import QBrush, QColor, QFont
from PySide6.QtWidgets import QAbstractItemView, QHeaderView, QTableWidget, QTableWidgetItem

from engine import Analysis, LevelRow

# Verdicts differ by a leading symbol and weight as well as by colour.
VERDICT_LOOK = {
    "holds": ("✓ holds", QColor("#17607a"), False),
    "understates": ("▼ understates", QColor("#8c2d6b"), True),
    "overstates": ("▲ overstates", QColor("#8a4b08"), True),
}


def _money(value: float | None) -> str:
    """Whole units for sums of a hundred and more; four figures for small ones."""
    if value is None:
        return ""
    return f"{value:,.0f}" if abs(value) >= 100 else f"{value:,.4g}"


def _pct(value: float | None) -> str:
    return "" if value is None else f"{value:+.1f}%"


Column = tuple[str, Callable[[LevelRow], str], str]

BASE_COLUMNS: tuple[Column, ...] = (
    ("Level", lambda r: f"P{r.level:g}", "confidence level"),
    ("Total", lambda r: _money(r.value), "the total at this level, computed from the items"),
    ("Contingency", lambda r: _money(r.contingency), "total at this level minus base estimate"),
    ("Cont. %", lambda r: _pct(r.contingency_pct), "contingency as a share of the base estimate"),
    ("Normal", lambda r: _money(r.normal), "sum of means and variances on a normal curve"),
    ("Gap", lambda r: _money(r.gap), "normal shortcut minus the total: negative understates"),
    ("Gap %", lambda r: _pct(r.gap_pct), "gap as a share of the total"),
    ("Verdict", lambda r: VERDICT_LOOK[r.verdict][0], "does the shortcut hold at this level"),
    (
        "Cornish–Fisher",
        lambda r: _money(r.cornish_fisher),
        "normal shortcut corrected for skewness and kurtosis (Cornish–Fisher)",
    ),
    (
        "Sum of item P",
        lambda r: _money(r.sum_of_items),
        "each item's own percentile, added up (overstates spread)",
    ),
)
SIMULATION_COLUMN: Column = (
    "Std. error",
    lambda r: _money(r.standard_error),
    "simulation standard error of the total at this level",
)
DEPENDENT_COLUMNS: tuple[Column, ...] = (
    (
        "Normal with correlation",
        lambda r: _money(r.normal_dependent),
        "normal shortcut with the stated correlations in its variance (covariances added)",
    ),
    (
        "If independent",
        lambda r: _money(r.independent_value),
        "the total of the same items with every correlation set to 0 (exact convolution)",
    ),
)


def columns_for(analysis: Analysis) -> list[Column]:
    columns = list(BASE_COLUMNS)
    if any(r.standard_error is not None for r in analysis.levels):
        columns.append(SIMULATION_COLUMN)
    for column in DEPENDENT_COLUMNS:
        text = column[1]
        if any(text(r) for r in analysis.levels):
            columns.append(column)
    return columns


class LevelTable(QTableWidget):
    def __init__(self, parent=None):
        super().__init__(parent)
        self.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.verticalHeader().setVisible(False)
        self.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.Interactive)
        self.setVerticalScrollBarPolicy(Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        self.setAlternatingRowColors(True)
        self.setWordWrap(False)

    def show_analysis(self, analysis: Analysis) -> None:
        columns = columns_for(analysis)
        self.clear()
        self.setColumnCount(len(columns))
        self.setRowCount(len(analysis.levels))
        for k, (name, _, tip) in enumerate(columns):
            header = QTableWidgetItem(name)
            header.setToolTip(tip)
            self.setHorizontalHeaderItem(k, header)
        bold = QFont()
        bold.setBold(True)
        for r, row in enumerate(analysis.levels):
            for k, (name, text, _) in enumerate(columns):
                cell = QTableWidgetItem(text(row))
                align = (
                    Qt.AlignmentFlag.AlignLeft
                    if name in ("Level", "Verdict")
                    else (Qt.AlignmentFlag.AlignRight)
                )
                cell.setTextAlignment(align | Qt.AlignmentFlag.AlignVCenter)
                if name == "Verdict":
                    _, colour, strong = VERDICT_LOOK[row.verdict]
                    cell.setForeground(QBrush(colour))
                    if strong:
                        cell.setFont(bold)
                if name == "Total":
                    cell.setFont(bold)
                self.setItem(r, k, cell)
        self.resizeColumnsToContents()
        self.setFixedHeight(self._fitting_height())

    def _fitting_height(self) -> int:
        """Tall enough for every level and the header, plus a scroll bar if columns overflow."""
        rows = sum(self.rowHeight(r) for r in range(self.rowCount()))
        header = self.horizontalHeader().sizeHint().height()
        columns = sum(self.columnWidth(c) for c in range(self.columnCount()))
        scroll = (
            self.horizontalScrollBar().sizeHint().height()
            if columns > self.viewport().width()
            else 0
        )
        return rows + header + scroll + 2 * self.frameWidth() + 2

    def resizeEvent(self, event) -> None:
        super().resizeEvent(event)
        if self.rowCount():
            self.setFixedHeight(self._fitting_height())

    def column_names(self) -> list[str]:
        return [self.horizontalHeaderItem(k).text() for k in range(self.columnCount())]
