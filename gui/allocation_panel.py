"""Where the contingency sits, in the window: at a chosen level, each group's or item's
share by conditional expectation beside the naive share (table and bars), the chance of
the base estimate, and the confidence of a budget the user types."""

from __future__ import annotations

from PySide6.QtCore import QEventLoop, Qt, QTimer
from PySide6.QtWidgets import (
    QAbstractItemView,
    QComboBox,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QLineEdit,
    QSplitter,
    QTableWidget,
    QVBoxLayout,
    QWidget,
)

from charts import numbers
from engine import Analysis, Estimate
from engine.allocation import NOT_A_SUM, Allocation, shares_add_up
from engine.allocation.confidence import confidence_of
from gui.allocation_worker import AllocationWorker
from gui.chart_canvas import ChartCanvas
from gui.result_cell import result_cell

NARROW = 760  # px: a narrower tab puts the chart under the table, not beside it
CHART_FRAME_PX = 110  # title, legend and axis of the allocation chart
BAR_PAIR_PX = 18  # one name's pair of bars, legible
HEADERS = ["Name", "Share", "% of contingency", "Naive share", "Naive %", "Standard error"]


def allocation_rows(allocation: Allocation, level_index: int, by: str) -> list[tuple]:
    """(name, share, share of contingency, naive, naive share, standard error) rows,
    largest share first."""
    row = allocation.levels[level_index]
    c = row.contingency
    if by == "group":
        names = list(row.groups)
        shares = [row.groups[g] for g in names]
        naive = [None if row.naive_groups is None else row.naive_groups[g] for g in names]
        errors: list[float | None] = [
            None if row.group_errors is None else row.group_errors[g] for g in names
        ]
    else:
        names, shares = list(allocation.names), list(row.shares)
        naive = [None] * len(names) if row.naive is None else list(row.naive)
        errors = [None] * len(names) if row.standard_errors is None else list(row.standard_errors)
    if by == "risk event":  # the ranking's figures beside each event's name
        decimals = numbers.decimals_for([allocation.base_confidence.amount])
        said = {
            r.name: f"{r.name}  (chance {numbers.probability(r.probability)}, "
            f"expected {numbers.money(r.expected_value, decimals=decimals)})"
            for r in allocation.risk_events
        }
        kept = [k for k, n in enumerate(names) if n in said]
        names = [said[names[k]] for k in kept]
        shares, naive, errors = ([v[k] for k in kept] for v in (shares, naive, errors))
    out = [
        (n, s, s / c if c > 0 else None, v, None if v is None or c <= 0 else v / c, e)
        for n, s, v, e in zip(names, shares, naive, errors, strict=True)
    ]
    return sorted(out, key=lambda r: -abs(r[1]))


class AllocationPanel(QWidget):
    def __init__(self, parent=None):
        super().__init__(parent)
        self.allocation: Allocation | None = None
        self.analysis: Analysis | None = None
        self.unit = ""
        self.worker = AllocationWorker(self)
        self.worker.finished.connect(self.show_allocation)
        self.worker.failed.connect(lambda m: self.status.setText(f"Allocation failed: {m}"))

        self.level = QComboBox(objectName="allocation-level")
        self.by = QComboBox(objectName="allocation-by")
        self.by.addItems(["By group", "By item", "Risk events"])
        self.budget = QLineEdit(objectName="allocation-budget", placeholderText="e.g. 15.2M")
        self.budget.setMinimumWidth(90)
        self.budget.setMaximumWidth(140)
        self.budget_said = QLabel(objectName="allocation-budget-said", wordWrap=True)
        self.base_said = QLabel(objectName="allocation-base", wordWrap=True)
        self.status = QLabel(objectName="allocation-status", wordWrap=True)
        self.note = QLabel(objectName="allocation-note", wordWrap=True)
        self.table = QTableWidget(0, len(HEADERS), objectName="allocation-table")
        self.table.setHorizontalHeaderLabels(HEADERS)
        self.table.verticalHeader().setVisible(False)
        self.table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.setWordWrap(False)
        self.table.verticalHeader().setDefaultSectionSize(22)
        self.table.setTextElideMode(Qt.TextElideMode.ElideMiddle)
        header = self.table.horizontalHeader()
        header.setSectionResizeMode(0, QHeaderView.ResizeMode.Interactive)
        header.resizeSection(0, 170)
        for k in range(1, len(HEADERS)):
            header.setSectionResizeMode(k, QHeaderView.ResizeMode.ResizeToContents)
        self.chart = ChartCanvas(height=2.6)

        controls = QHBoxLayout()
        controls.addWidget(QLabel("Level"))
        controls.addWidget(self.level)
        controls.addWidget(self.by)
        controls.addSpacing(16)
        controls.addWidget(QLabel("Budget"))
        controls.addWidget(self.budget)
        controls.addWidget(self.budget_said, 1)
        self.split = split = QSplitter(Qt.Orientation.Horizontal)
        split.addWidget(self.table)
        split.addWidget(self.chart)
        split.setSizes([560, 440])
        layout = QVBoxLayout(self)
        layout.setContentsMargins(2, 2, 2, 2)
        layout.addLayout(controls)
        layout.addWidget(self.base_said)
        layout.addWidget(self.status)
        layout.addWidget(split, 1)
        layout.addWidget(self.note)
        self._chart_due = False  # figures shown whose chart is not drawn yet
        self.level.currentIndexChanged.connect(self._refresh)
        self.by.currentIndexChanged.connect(self._refresh)
        self.budget.textChanged.connect(self._show_budget)

    def resizeEvent(self, event) -> None:
        """Beside each other when there is room; at 1280x800 the tab is about 440 px wide,
        where a chart beside the table has no room for its bars."""
        super().resizeEvent(event)
        narrow = event.size().width() < NARROW
        wanted = Qt.Orientation.Vertical if narrow else Qt.Orientation.Horizontal
        if self.split.orientation() != wanted:
            self.split.setOrientation(wanted)
            self.split.setSizes([1, 1])
            self._refresh()  # the chart's height decides how many bars it shows

    def compute(self, estimate: Estimate, analysis: Analysis, unit: str = "") -> None:
        """Start the allocation of a new analysis; the old figures stay until it arrives."""
        self.analysis, self.unit = analysis, unit
        if not shares_add_up(analysis):
            self._no_shares(analysis)
            return
        self.status.setText("Allocating the contingency…")
        self.worker.request(estimate, analysis)
        self._show_budget()

    def _no_shares(self, analysis: Analysis) -> None:
        """A schedule's finish: no shares, but its base estimate's chance and the budget."""
        self.clear(NOT_A_SUM)
        self.chart.show_message("No shares for a schedule of parallel paths (see above).")
        self.analysis = analysis
        base = confidence_of(analysis.total, analysis.base_estimate, analysis.base_estimate, "base")
        self.base_said.setText(
            f"Chance of the base estimate ({self._money(base.amount)}): "
            f"{numbers.percent(base.probability)}."
        )
        self._show_budget()

    def clear(self, message: str) -> None:
        """No analysis to allocate: drop the figures of an earlier one and say why."""
        self.worker.cancel()
        self.allocation = self.analysis = None
        self.table.setRowCount(0)
        self.level.clear()
        self.base_said.setText("")
        self.budget_said.setText("")
        self.note.setText("")
        self.status.setText(message)
        self.chart.show_message(message)

    def allocation_for(self, analysis: Analysis) -> Allocation | None:
        """The allocation shown, if it is of this analysis (for the report)."""
        shown = self.allocation
        if shown is None or self.analysis is not analysis or self.worker.busy:
            return None
        return shown

    def allocation_when_ready(self, analysis: Analysis) -> Allocation | None:
        """`allocation_for`, after waiting for a running allocation of this analysis: the
        report then need not allocate again on the GUI thread. The window keeps responding
        while it waits (a local event loop), and a newer result ends the wait."""
        if self.worker.busy and self.analysis is analysis:
            loop = QEventLoop()
            poll = QTimer(interval=50)
            poll.timeout.connect(lambda: None if self.worker.busy else loop.quit())
            poll.start()
            loop.exec()
            poll.stop()
        return self.allocation_for(analysis)

    def show_allocation(self, allocation: Allocation) -> None:
        self.allocation = allocation
        chosen = self.level.currentText()
        self.level.blockSignals(True)
        self.level.clear()
        self.level.addItems([f"P{row.level:g}" for row in allocation.levels])
        index = self.level.findText(chosen)
        self.level.setCurrentIndex(index if index >= 0 else len(allocation.levels) - 1)
        self.level.blockSignals(False)
        base = allocation.base_confidence
        how = "exact" if allocation.method == "exact" else "from the trials near the level"
        self.base_said.setText(
            f"Chance of the base estimate ({self._money(base.amount)}): "
            f"{numbers.percent(base.probability)}. Each share is what the item is expected to "
            f"cost when the total is at the level, less its base value ({how}; Euler "
            "allocation by conditional expectation)."
        )
        self.status.setText("")
        self._refresh()

    def _refresh(self) -> None:
        allocation = self.allocation
        if allocation is None or self.level.currentIndex() < 0:
            return
        j = self.level.currentIndex()
        by = ("group", "item", "risk event")[self.by.currentIndex()]
        rows = allocation_rows(allocation, j, by)
        decimals = numbers.decimals_for([allocation.base_confidence.amount])  # the total's
        self.table.setRowCount(len(rows))
        for r, row in enumerate(rows):
            cells = (
                row[0],
                numbers.money(row[1], decimals=decimals),
                numbers.percent(row[2]),
                numbers.money(row[3], decimals=decimals),
                numbers.percent(row[4]),
                numbers.money(row[5], decimals=decimals),
            )
            for c, text in enumerate(cells):
                self.table.setItem(r, c, result_cell(text, c))
        self.table.setColumnHidden(5, allocation.method == "exact")
        self.note.setText(allocation.levels[j].note)
        self._chart_due = True
        if self.isVisible():
            self.draw_pending()

    def draw_pending(self) -> None:
        """Draw the chart of the figures shown, once: not while the tab is hidden."""
        allocation = self.allocation
        if not self._chart_due or allocation is None or self.level.currentIndex() < 0:
            return
        from charts.allocation import draw_allocation

        self._chart_due = False
        level = allocation.levels[self.level.currentIndex()].level
        by = ("group", "item", "risk event")[self.by.currentIndex()]
        self.chart.show_chart(draw_allocation, allocation, level, by, self.unit, self._bars())

    def _bars(self) -> int:
        """As many names as the chart's height keeps legible (a pair of bars each), 12 at most."""
        room = self.chart.height() - CHART_FRAME_PX
        return max(3, min(12, room // BAR_PAIR_PX))

    def _show_budget(self) -> None:
        text = self.budget.text().strip()
        if not text or self.analysis is None:
            self.budget_said.setText("")
            return
        from fileio.cells import CellError, parse_number

        try:
            amount = parse_number(text)
        except CellError as bad:
            self.budget_said.setText(f"{bad.message} {bad.fix}")
            return
        said = confidence_of(self.analysis.total, amount, self.analysis.base_estimate, "budget")
        error = (
            "" if said.standard_error is None else f" ± {numbers.percent(said.standard_error, 2)}"
        )
        self.budget_said.setText(
            f"Chance of staying within it: {numbers.percent(said.probability)}{error}; "
            f"contingency {self._money(said.contingency)}"
        )

    def _money(self, x: float) -> str:
        """An amount in the unit, in the decimals of the total it is part of."""
        total = self.analysis.total.mean if self.analysis is not None else x
        return numbers.money(x, self.unit, numbers.decimals_for([total]))
