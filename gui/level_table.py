"""The confidence-level table: the total beside each shortcut, the gap and the contingency.

Columns for simulation error and for correlation appear only when the analysis has them.
"""

from __future__ import annotations

from collections.abc import Callable

from PySide6.QtCore import Qt
from PySide6.QtGui import QBrush, QColor, QFont
from PySide6.QtWidgets import QAbstractItemView, QHeaderView, QTableWidget, QTableWidgetItem

from charts import numbers
from engine import Analysis, LevelRow

# Verdicts differ by a leading symbol and weight as well as by colour.
VERDICT_LOOK = {
    "holds": ("✓ holds", QColor("#17607a"), False),
    "understates": ("▼ understates", QColor("#8c2d6b"), True),
    "overstates": ("▲ overstates", QColor("#8a4b08"), True),
}


# A column: header, the row's value, its kind ("money", "percent" or "text"), tooltip.
Column = tuple[str, Callable[[LevelRow], object], str, str]

BASE_COLUMNS: tuple[Column, ...] = (
    ("Level", lambda r: numbers.level(r.level), "text", "confidence level"),
    ("Total", lambda r: r.value, "money", "the total at this level, computed from the items"),
    ("Contingency", lambda r: r.contingency, "money", "total at this level minus base estimate"),
    (
        "Contingency %",
        lambda r: r.contingency_pct,
        "percent",
        "contingency as a share of the base estimate",
    ),
    (
        "Normal shortcut",
        lambda r: r.normal,
        "money",
        "the items' means and variances added, read off a normal curve",
    ),
    # The verdict beside the shortcut it judges, seen without scrolling on a laptop screen.
    ("Verdict", lambda r: VERDICT_LOOK[r.verdict][0], "text", "does the shortcut hold here"),
    ("Gap", lambda r: r.gap, "money", "normal shortcut minus the total: negative understates"),
    ("Gap %", lambda r: r.gap_pct, "percent", "gap as a share of the total"),
    (
        "Cornish–Fisher",
        lambda r: r.cornish_fisher,
        "money",
        "normal shortcut corrected for skewness and kurtosis (Cornish–Fisher)",
    ),
    (
        "Sum of item percentiles",
        lambda r: r.sum_of_items,
        "money",
        "each item's own percentile, added up (overstates spread)",
    ),
)
SIMULATION_COLUMN: Column = (
    "Standard error",
    lambda r: r.standard_error,
    "money",
    "simulation standard error of the total at this level",
)
DEPENDENT_COLUMNS: tuple[Column, ...] = (
    (
        "Normal with correlation",
        lambda r: r.normal_dependent,
        "money",
        "normal shortcut with the stated correlations in its variance (covariances added)",
    ),
    (
        "If independent",
        lambda r: r.independent_value,
        "money",
        "the total of the same items with every correlation set to 0 (exact convolution)",
    ),
)


def cell_text(value: object, kind: str, decimals: int) -> str:
    if value is None:
        return ""
    if kind == "money":
        return numbers.money(value, decimals=decimals)
    if kind == "percent":
        return numbers.percent(value / 100, sign=True)
    return str(value)


def money_decimals(analysis: Analysis, columns: list[Column]) -> int:
    """One number of decimals for every sum in the table, from the largest."""
    return numbers.decimals_for(
        value(r) for _, value, kind, _ in columns if kind == "money" for r in analysis.levels
    )


def columns_for(analysis: Analysis) -> list[Column]:
    columns = list(BASE_COLUMNS)
    if any(r.standard_error is not None for r in analysis.levels):
        columns.append(SIMULATION_COLUMN)
    for column in DEPENDENT_COLUMNS:
        value = column[1]
        if any(value(r) is not None for r in analysis.levels):
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
        decimals = money_decimals(analysis, columns)
        for k, (name, _, _, tip) in enumerate(columns):
            header = QTableWidgetItem(two_lines(name))
            header.setToolTip(tip)
            self.setHorizontalHeaderItem(k, header)
        bold = QFont()
        bold.setBold(True)
        for r, row in enumerate(analysis.levels):
            for k, (name, value, kind, _) in enumerate(columns):
                cell = QTableWidgetItem(cell_text(value(row), kind, decimals))
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
        return [
            self.horizontalHeaderItem(k).text().replace("\n", " ")
            for k in range(self.columnCount())
        ]


def two_lines(name: str) -> str:
    """A long header on two lines, broken at the space nearest its middle: the columns then
    take their numbers' width, not their words'."""
    spaces = [k for k, c in enumerate(name) if c == " "]
    if len(name) < 12 or not spaces:
        return name
    k = min(spaces, key=lambda k: abs(2 * k - len(name)))
    return name[:k] + "\n" + name[k + 1 :]
