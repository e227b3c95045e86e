"""The results side: the plain-language summary, the level table, the charts and the reasons.

Charts are redrawn only for the visible tab; the others are marked stale and drawn when
shown, because a burst of edits should not pay for four figures each time.
"""

from __future__ import annotations

import numpy as np
from PySide6.QtCore import Qt
from PySide6.QtWidgets import (
    QAbstractItemView,
    QHeaderView,
    QLabel,
    QTableWidget,
    QTableWidgetItem,
    QTabWidget,
    QVBoxLayout,
    QWidget,
)

from charts import numbers
from engine import Analysis
from engine.dependence.block_structure import correlated_counts as block_counts
from gui.allocation_panel import AllocationPanel
from gui.chart_canvas import ChartCanvas
from gui.level_table import LevelTable
from gui.paths_panel import PATHS_TAB, PathsPanel
from gui.repair_notice import RepairNotice
from reports.content import reasons_heading

LINKS_SHOWN = 25
LINKS_TAB = "Rank correlation with the total"
DRIVERS_TIP = (
    "Share of variance: how much of the total's spread each item brings. Share of skewness: "
    "each item's part of the total's third cumulant, i.e. how much it makes the total lean."
)


def _chart_functions():
    from charts.drivers import draw_drivers
    from charts.gap import draw_gap_curve
    from charts.total import SPREAD_TITLE, draw_density, draw_s_curve

    return (
        (SPREAD_TITLE, draw_density, True),
        ("S-curve", draw_s_curve, True),
        ("Shortcut gap", draw_gap_curve, True),
        ("What drives it", draw_drivers, False),
    )


def dependence_text(analysis: Analysis, unit: str = "") -> str:
    """What the correlation did: the repair in force, if any, and the headline level with
    and without the stated correlations."""
    dependence = analysis.dependence
    if dependence is None:
        return ""
    pairs, items = correlated_counts(dependence)
    rest = len(dependence.names) - items
    text = (
        f"{numbers.count(pairs, 'pair')} of items {'is' if pairs == 1 else 'are'} correlated, "
        f"among {numbers.count(items, 'item')}"
        + (f"; the other {numbers.count(rest, 'item')} are independent." if rest else ".")
    )
    if dependence.repaired:
        text += (
            " REPAIR IN FORCE: the stated coefficients contradict each other, so these "
            "figures use the nearest valid correlation matrix you accepted"
        )
        if dependence.largest_change:
            a, b, old, new = dependence.largest_change
            old, new = numbers.coefficient(old, sign=True), numbers.coefficient(new, sign=True)
            text += f" (largest change: {a} / {b}, {old} → {new})"
        text += "."
    row = headline_row(analysis)
    if row is not None and row.independent_value is not None:
        figures = (row.value, row.independent_value, row.normal_dependent)
        decimals = numbers.decimals_for(figures)
        value, independent, normal = (numbers.money(x, unit, decimals) for x in figures)
        text += (
            f" {numbers.level(row.level)} is {value} with correlation, {independent} if "
            f"independent; the normal shortcut with correlation gives {normal}."
        )
    text += (
        " Largest difference between stated and achieved rank correlation: "
        f"{numbers.statistic(dependence.achieved_max_deviation, 3)}"
    )
    summary = dependence.achieved_summary
    if summary is not None and summary.pairs:
        sample = " (a sample of the items)" if summary.items < len(dependence.names) else ""
        text += (
            f", {numbers.statistic(summary.mean_abs_deviation, 3)} on average over"
            f" {numbers.count(summary.pairs, 'pair')}{sample}"
        )
    return text + "."


def correlated_counts(dependence) -> tuple[int, int]:
    """Pairs with a non-zero coefficient in use, and the items they involve."""
    if dependence.used is None:  # block factors at scale: counted from the blocks
        return block_counts(dependence.structure)
    used = np.asarray(dependence.used)
    upper = np.triu(used != 0, k=1)
    return int(upper.sum()), int((upper | upper.T).any(axis=0).sum())


def headline_row(analysis: Analysis):
    """P80 when asked for (the usual funding level), else the highest level."""
    rows = analysis.levels
    if not rows:
        return None
    return next((r for r in rows if r.level == 80), rows[-1])


def fill_links(table: QTableWidget, analysis: Analysis) -> bool:
    """Each item's rank correlation with the total, strongest first; False when the analysis
    has none (independent items computed exactly)."""
    linked = [d for d in analysis.drivers if d.rank_correlation_with_total is not None]
    linked.sort(key=lambda d: -abs(d.rank_correlation_with_total))
    table.setRowCount(len(linked[:LINKS_SHOWN]))
    for r, driver in enumerate(linked[:LINKS_SHOWN]):
        cells = (
            driver.name,
            numbers.coefficient(driver.rank_correlation_with_total, sign=True),
            numbers.percent(driver.variance_share),
        )
        for c, text in enumerate(cells):
            cell = QTableWidgetItem(text)
            if c:
                cell.setTextAlignment(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
            table.setItem(r, c, cell)
    return bool(linked)


class ResultsPanel(QWidget):
    def __init__(self, parent=None):
        super().__init__(parent)
        self.summary = QLabel(objectName="summary", wordWrap=True)
        self.summary.setStyleSheet("font-size: 10.5pt; font-weight: 600;")
        self.method = QLabel(objectName="method", wordWrap=True)
        self.notice = QLabel(objectName="notice", wordWrap=True)
        self.notice.setStyleSheet(
            "background: #fde3a7; color: #3d2600; padding: 4px; border-left: 4px solid #b35806;"
        )
        self.notice.hide()
        self.table = LevelTable()
        self.tabs = QTabWidget()
        self.canvases: list[ChartCanvas] = []
        self._charts = _chart_functions()
        for title, _, _ in self._charts:
            canvas = ChartCanvas()
            self.canvases.append(canvas)
            self.tabs.addTab(canvas, title)
        # The drivers chart has no rank-correlation bars, so a simulated total lists each
        # item's rank correlation with it here.
        self.links = QTableWidget(0, 3, objectName="links")
        self.links.setHorizontalHeaderLabels(
            ["Item", "Rank correlation with the total", "Share of variance"]
        )
        self.links.verticalHeader().setVisible(False)
        self.links.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.links.horizontalHeader().setSectionResizeMode(0, QHeaderView.ResizeMode.Stretch)
        self.links.horizontalHeader().setSectionResizeMode(
            1, QHeaderView.ResizeMode.ResizeToContents
        )
        self.links.horizontalHeader().setSectionResizeMode(
            2, QHeaderView.ResizeMode.ResizeToContents
        )
        self._links_index = self.tabs.addTab(self.links, LINKS_TAB)
        self.tabs.setTabToolTip(
            self._links_index,
            "Each item's rank correlation with the simulated total: how closely the total "
            "rises and falls with it",
        )
        self.tabs.setTabToolTip(len(self._charts) - 1, DRIVERS_TIP)
        self.tabs.setTabVisible(self._links_index, False)
        self.paths = PathsPanel()
        self._paths_index = self.tabs.addTab(self.paths, PATHS_TAB)
        self.tabs.setTabVisible(self._paths_index, False)
        self.allocation = AllocationPanel()  # filled by its own worker: see compute()
        self.tabs.addTab(self.allocation, "Allocation")
        self.tabs.setTabToolTip(
            self.tabs.count() - 1, "Where the contingency sits, by group and by item"
        )
        self.tabs.currentChanged.connect(self._draw_current)
        self.repair = RepairNotice()
        self.reasons = QLabel(objectName="reasons", wordWrap=True)
        self.reasons.setTextFormat(self.reasons.textFormat().RichText)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(4, 4, 4, 4)
        layout.addWidget(self.summary)
        layout.addWidget(self.notice)
        layout.addWidget(self.repair)
        layout.addWidget(self.table)
        layout.addWidget(self.tabs, 1)
        # How the figures were made and why the shortcut fails: placed by the window, beside
        # the settings that decide them.
        self.explanation = QWidget()
        side = QVBoxLayout(self.explanation)
        side.setContentsMargins(0, 0, 0, 0)
        side.addWidget(self.method)
        side.addWidget(self.reasons)
        side.addStretch(1)
        self.analysis: Analysis | None = None
        self._unit = ""
        self._stale = [True] * len(self.canvases)

    def show_analysis(self, analysis: Analysis, unit: str = "", notices: list[str] = ()) -> None:
        self.analysis, self._unit = analysis, unit
        self.summary.setText(analysis.summary)
        method = f"Method: {analysis.method} — {analysis.method_reason}."
        base = numbers.money(
            analysis.base_estimate, unit, numbers.decimals_for([analysis.total.mean])
        )
        method += f" Base estimate {base} ({analysis.base_basis})."
        self.method.setText(method)
        self.set_notices([*notices, dependence_text(analysis, unit)])
        self.repair.show_preview(None)
        self.table.show_analysis(analysis)
        self.tabs.setTabVisible(self._links_index, fill_links(self.links, analysis))
        self.tabs.setTabVisible(self._paths_index, self.paths.show_analysis(analysis, unit))
        self.table.show()
        reasons = "".join(f"<li>{_escape(r)}</li>" for r in analysis.reasons)
        self.reasons.setText(
            f"<b>{reasons_heading(analysis)}</b>"
            f"<ul style='margin-top:0; margin-left:-20px'>{reasons}</ul>"
            if reasons
            else ""
        )
        self._stale = [True] * len(self.canvases)
        self._draw_current(self.tabs.currentIndex())

    def show_problem(
        self,
        message: str,
        notices: list[str] = (),
        chart_message: str = "Nothing to show until the estimate can be computed.",
    ) -> None:
        """No analysis could be made: say why in place of the results."""
        self.analysis = None
        self.summary.setText("No total yet.")
        self.method.setText(message)
        self.set_notices(list(notices))
        self.table.hide()
        self.tabs.setTabVisible(self._links_index, False)
        self.tabs.setTabVisible(self._paths_index, False)
        self.reasons.setText("")
        for canvas in self.canvases:
            canvas.show_message(chart_message)
        self.allocation.clear("Nothing to allocate until the estimate can be computed.")

    def set_notices(self, notices: list[str]) -> None:
        shown = [n for n in notices if n]
        self.notice.setText("\n".join(shown))
        self.notice.setVisible(bool(shown))

    def _draw_current(self, index: int) -> None:
        if index == self._paths_index:
            self.paths.draw_pending()
        if self.tabs.widget(index) is self.allocation:
            self.allocation.draw_pending()
        if self.analysis is None or not 0 <= index < len(self.canvases) or not self._stale[index]:
            return
        _, draw, takes_unit = self._charts[index]
        if takes_unit:
            self.canvases[index].show_chart(draw, self.analysis, unit=self._unit)
        else:
            self.canvases[index].show_chart(draw, self.analysis)
        self._stale[index] = False


def _escape(text: str) -> str:
    return text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")
