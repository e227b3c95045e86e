"""File ▸ Compare with…: the estimate on screen (before) beside another file (after, e.g.
after a risk response plan), analysed with the same settings and seed on a worker thread:
S-curves overlaid, the levels with their differences, contingency before and after, where
it sits by group, and the items added, removed or changed."""

from __future__ import annotations

import threading
from pathlib import Path

from PySide6.QtCore import QObject, QRunnable, Qt, QThreadPool, Signal
from PySide6.QtWidgets import (
    QAbstractItemView,
    QDialog,
    QFileDialog,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QMessageBox,
    QProgressBar,
    QPushButton,
    QTableWidget,
    QTableWidgetItem,
    QTabWidget,
    QVBoxLayout,
)

from charts import numbers
from engine import Cancelled, InputError, analyze
from engine.allocation import allocate
from engine.comparison import Comparison, compare
from gui.chart_canvas import ChartCanvas
from gui.document import ESTIMATE_FILTER
from gui.recompute import Outcome

SAVE_FILTERS = {"PDF (*.pdf)": ".pdf", "Workbook (*.xlsx)": ".xlsx", "JSON data (*.json)": ".json"}


class _Signals(QObject):
    finished = Signal(object)  # Comparison
    failed = Signal(str)
    progress = Signal(float)


class _CompareJob(QRunnable):
    def __init__(self, before: Outcome, path: Path, signals: _Signals):
        super().__init__()
        self.before, self.path, self.signals = before, path, signals
        self.stop = threading.Event()

    def run(self) -> None:
        from fileio.project import PROJECT_SUFFIX, load_project
        from fileio.readers import read_estimate

        try:
            if self.path.suffix.lower() == PROJECT_SUFFIX:
                after, _ = load_project(self.path)
            else:
                after = read_estimate(self.path)
            if not after.title:
                after.title = self.path.stem
            before = self.before
            kwargs = before.settings.analyze_kwargs()
            analysis = analyze(
                after,
                **kwargs,
                progress=lambda f: self.signals.progress.emit(0.6 * f),
                cancel=self.stop.is_set,
            )
            first = allocate(before.estimate, before.analysis, cancel=self.stop.is_set)
            self.signals.progress.emit(0.8)
            second = allocate(after, analysis, cancel=self.stop.is_set)
            result = compare(before.estimate, before.analysis, first, after, analysis, second)
        except Cancelled:
            return
        except InputError as bad:
            lines = "\n".join(str(p) for p in bad.problems[:12])
            self.signals.failed.emit(f"{self.path.name} cannot be analysed:\n{lines}")
        except (OSError, ValueError) as bad:
            self.signals.failed.emit(f"{self.path.name}: {bad}")
        except Exception as bad:  # a worker must report, never die silently
            self.signals.failed.emit(f"{type(bad).__name__}: {bad}")
        else:
            self.signals.finished.emit(result)


def _table(headers: list[str], rows: list[list[str]], name: str) -> QTableWidget:
    table = QTableWidget(len(rows), len(headers), objectName=name)
    table.setHorizontalHeaderLabels(headers)
    table.verticalHeader().setVisible(False)
    table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
    header = table.horizontalHeader()
    header.setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
    header.setStretchLastSection(True)
    for r, row in enumerate(rows):
        for c, text in enumerate(row):
            item = QTableWidgetItem(text)
            if c and text[:1] in "+-0123456789":
                item.setTextAlignment(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
            table.setItem(r, c, item)
    return table


class CompareDialog(QDialog):
    def __init__(self, parent, before: Outcome, path: Path):
        super().__init__(parent)
        self.setWindowTitle(f"Compare with {path.name}")
        self.resize(1000, 760)
        self.before, self.path = before, path
        self.unit = before.settings.unit or before.estimate.unit
        self.comparison: Comparison | None = None
        self.summary = QLabel(
            "Analysing the other estimate…", objectName="compare-summary", wordWrap=True
        )
        self.summary.setStyleSheet("font-weight: 600;")
        self.progress = QProgressBar()
        self.cancel_button = QPushButton("Cancel")
        self.export_button = QPushButton("Export…", enabled=False)
        self.tabs = QTabWidget()
        buttons = QHBoxLayout()
        buttons.addWidget(self.progress, 1)
        buttons.addWidget(self.cancel_button)
        buttons.addWidget(self.export_button)
        layout = QVBoxLayout(self)
        layout.addWidget(self.summary)
        layout.addWidget(self.tabs, 1)
        layout.addLayout(buttons)
        self._pool = QThreadPool(self)
        self._signals = _Signals(self)
        self._signals.finished.connect(self.show_comparison)
        self._signals.failed.connect(self._failed)
        self._signals.progress.connect(lambda f: self.progress.setValue(round(100 * f)))
        self.cancel_button.clicked.connect(self._cancel)
        self.export_button.clicked.connect(self.export_dialog)
        self._job = _CompareJob(before, path, self._signals)
        self._pool.start(self._job)

    def wait(self, msecs: int = 60_000) -> bool:
        return self._pool.waitForDone(msecs)

    def _cancel(self) -> None:
        self._job.stop.set()
        self.reject()

    def _failed(self, message: str) -> None:
        self.progress.hide()
        self.cancel_button.setText("Close")
        self.summary.setText(message)

    def show_comparison(self, result: Comparison) -> None:
        from charts.comparison import draw_before_after

        self.comparison = result
        self.progress.hide()
        self.cancel_button.setText("Close")
        self.export_button.setEnabled(True)
        b, a = result.before_allocation.base_confidence, result.after_allocation.base_confidence
        self.summary.setText(
            f"{result.summary} Chance of the base estimate: {numbers.percent(b.probability)} → "
            f"{numbers.percent(a.probability)}."
        )
        decimals = numbers.decimals_for(v for r in result.levels for v in (r.before, r.after))

        def amount(x: float, sign: bool = False) -> str:
            return numbers.money(x, decimals=decimals, sign=sign)

        levels = [
            [
                numbers.level(r.level),
                amount(r.before),
                amount(r.after),
                amount(r.difference, sign=True),
                amount(r.contingency_before),
                amount(r.contingency_after),
                amount(r.contingency_difference, sign=True),
            ]
            for r in result.levels
        ]
        headers = [
            "Level",
            "Total before",
            "Total after",
            "Difference",
            "Contingency before",
            "Contingency after",
            "Contingency difference",
        ]
        chart = ChartCanvas(height=3.4)
        chart.show_chart(draw_before_after, result, self.unit)
        top = result.levels[-1].level
        groups = [
            [g, numbers.money(x, decimals=decimals), numbers.money(y, decimals=decimals)]
            for g, x, y in result.group_changes(top)
        ]
        changes = [[c.name, c.group, c.kind, c.describe()] for c in result.changes]
        self.tabs.addTab(chart, "S-curves")
        self.tabs.addTab(_table(headers, levels, "compare-levels"), "Levels")
        by_group = _table(
            ["Group", f"{numbers.level(top)} share before", f"{numbers.level(top)} share after"],
            groups,
            "compare-groups",
        )
        if result.shares_note:  # a schedule: no shares, and the reason where they would be
            by_group = QLabel(result.shares_note, wordWrap=True, objectName="compare-groups-note")
        self.tabs.addTab(by_group, "Contingency by group")
        self.tabs.addTab(
            _table(["Item", "Group", "Change", "What changed"], changes, "compare-items"),
            "Items changed",
        )

    def export_dialog(self) -> None:
        if self.comparison is None:
            return
        path, chosen = QFileDialog.getSaveFileName(
            self,
            "Export the comparison",
            str(self.path.with_name(f"{self.path.stem} comparison.pdf")),
            ";;".join(SAVE_FILTERS),
        )
        if path:
            target = Path(path)
            if target.suffix.lower() not in SAVE_FILTERS.values():
                target = target.with_name(target.name + SAVE_FILTERS.get(chosen, ".pdf"))
            self.export(target)

    def export(self, target: Path) -> Path | None:
        from reports.comparison_report import write_comparison
        from reports.provenance import provenance

        assert self.comparison is not None
        about = provenance(self.before.estimate, self.before.settings)
        try:
            return write_comparison(target, self.comparison, about)
        except (OSError, ValueError) as bad:
            QMessageBox.warning(self, "The comparison could not be written", f"{target}: {bad}")
            return None


def compare_with(window) -> CompareDialog | None:
    """Ask for the other estimate and open the comparison (non-modal)."""
    if window.last_outcome is None:
        QMessageBox.warning(
            window,
            "Nothing to compare yet",
            window.last_problem or "The total is not computed yet.",
        )
        return None
    path, _ = QFileDialog.getOpenFileName(
        window, "Compare with…", window.document.last_folder(), ESTIMATE_FILTER
    )
    if not path:
        return None
    dialog = CompareDialog(window, window.last_outcome, Path(path))
    dialog.show()
    return dialog
