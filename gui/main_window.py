"""The main window: items on the left, the total on the right, settings at the side.

It wires the parts together; the document's life (open, save, recent files, autosave,
recovery, export) is gui/document.py, the items live in the ItemEditor's model, and the figures
come from the Recomputer.
"""

from __future__ import annotations

import os
from pathlib import Path

from PySide6.QtCore import QSettings, QStandardPaths, Qt, Signal
from PySide6.QtGui import QAction, QCloseEvent, QKeySequence
from PySide6.QtWidgets import (
    QDockWidget,
    QGroupBox,
    QHBoxLayout,
    QLabel,
    QMainWindow,
    QProgressBar,
    QPushButton,
    QSplitter,
    QToolButton,
    QVBoxLayout,
    QWidget,
)

from charts import numbers
from engine import Estimate, Settings
from gui.compare_dialog import compare_with
from gui.document import Document, Prompts
from gui.empty_state import empty_estimate_text
from gui.estimate_copy import estimate_copy
from gui.help_menu import add_help_menu
from gui.item_checks import UsableEstimate, usable_estimate
from gui.item_editor import ItemEditor
from gui.item_preview import ItemPreview
from gui.item_table import ItemTableView
from gui.pane_widths import keep_usable_widths
from gui.recompute import Outcome, Recomputer
from gui.recovery import RecoveryStore
from gui.results_panel import ResultsPanel
from gui.settings_panel import SettingsPanel
from gui.undo import SettingsUndoCommand

APP_TITLE = "Rangefold"
# Rows left unchecked past which their checks run in the recompute worker (about 30 µs
# each): typing stays synchronous, a large paste or file never freezes the window.
CHECKED_IN_WINDOW = 1_000
# Where autosaved work goes; tests and managed installations point it elsewhere.
RECOVERY_DIR_VARIABLE = "RANGEFOLD_RECOVERY_DIR"


def caution_text() -> str:
    from reports.caution import CAUTION

    return CAUTION


def default_recovery_dir() -> Path:
    chosen = os.environ.get(RECOVERY_DIR_VARIABLE, "").strip()
    if chosen:
        return Path(chosen)
    base = QStandardPaths.writableLocation(QStandardPaths.StandardLocation.AppDataLocation)
    return Path(base) / "recovery"


class MainWindow(QMainWindow):
    # Figures or the message in their place are on screen (--screenshot waits for this).
    result_shown = Signal()

    def __init__(
        self,
        store: QSettings | None = None,
        recovery_dir: Path | None = None,
        parent: QWidget | None = None,
    ):
        super().__init__(parent)
        self.store = store or QSettings()
        self.last_outcome: Outcome | None = None
        self.last_problem = ""

        self.editor = ItemEditor(parent=self)
        self.model = self.editor.model
        self.undo_stack = self.editor.undo_stack
        self.table = ItemTableView(self.editor)
        self.preview = ItemPreview()
        self.results = ResultsPanel()
        self.settings_panel = SettingsPanel()
        self._applied = self.settings_panel.settings  # the settings in force, for undo
        self.recomputer = Recomputer(parent=self)
        self.correlation_dialog = None  # made when first opened
        self.document = Document(
            self,
            Prompts(self),
            self.store,
            RecoveryStore(recovery_dir or default_recovery_dir()),
            parent=self,
        )

        self._build_layout()
        self._build_status_bar()
        self._build_actions()
        self._connect()

        self.resize(1440, 900)
        geometry = self.store.value("window/geometry")
        if geometry is not None:
            self.restoreGeometry(geometry)
        self._update_title()

    # --- building -----------------------------------------------------------------------
    def _build_layout(self) -> None:
        row_bar = QHBoxLayout()
        row_bar.setContentsMargins(0, 0, 0, 0)
        self.row_buttons: dict[str, QToolButton] = {}
        for key, label, tip in (
            ("add", "+ Row", "Add a row after the selection"),
            ("duplicate", "Duplicate", "Copy the selected rows below them"),
            ("delete", "Delete", "Delete the selected rows (Del)"),
            ("up", "↑ Up", "Move the selected rows up"),
            ("down", "↓ Down", "Move the selected rows down"),
            ("correlations", "Correlations…", "State which items move together (Ctrl+K)"),
        ):
            button = QToolButton(text=label, toolTip=tip, objectName=f"row-{key}")
            button.setToolButtonStyle(Qt.ToolButtonStyle.ToolButtonTextOnly)
            row_bar.addWidget(button)
            self.row_buttons[key] = button
        row_bar.addStretch(1)
        # On a line of its own and wrapped: a long notice must not widen the items pane.
        self.left_out = QLabel(objectName="left-out", wordWrap=True)
        self.left_out.setStyleSheet(
            "background: #fde3a7; color: #3d2600; padding: 2px 6px; border-left: 4px solid #b35806;"
        )
        self.left_out.hide()

        items_box = QWidget()
        items_layout = QVBoxLayout(items_box)
        items_layout.setContentsMargins(4, 4, 4, 4)
        title = QLabel("<b>Line items</b>")
        items_layout.addWidget(title)
        items_layout.addLayout(row_bar)
        items_layout.addWidget(self.left_out)
        items_layout.addWidget(self.table, 1)

        preview_box = QGroupBox("Selected item")
        preview_layout = QVBoxLayout(preview_box)
        preview_layout.setContentsMargins(4, 4, 4, 4)
        preview_layout.addWidget(self.preview)

        left = QSplitter(Qt.Orientation.Vertical)
        left.addWidget(items_box)
        left.addWidget(preview_box)
        left.setStretchFactor(0, 3)
        left.setStretchFactor(1, 2)

        results_box = QWidget()
        results_layout = QVBoxLayout(results_box)
        results_layout.setContentsMargins(4, 4, 4, 4)
        results_layout.addWidget(QLabel("<b>Total</b>"))
        results_layout.addWidget(self.results, 1)

        self.splitter = QSplitter(Qt.Orientation.Horizontal)
        self.splitter.addWidget(left)
        self.splitter.addWidget(results_box)
        keep_usable_widths(self.splitter, left, results_box)
        self.splitter.setStretchFactor(0, 1)
        self.splitter.setStretchFactor(1, 1)
        self.splitter.setSizes([580, 620])  # the typed figures, and the verdict in view at 1280 px

        self.caution = QLabel(caution_text(), objectName="caution", wordWrap=True)
        self.caution.setStyleSheet("color: #3a4750; font-style: italic; padding: 2px 6px;")
        central = QWidget()
        central_layout = QVBoxLayout(central)
        central_layout.setContentsMargins(2, 2, 2, 0)
        central_layout.addWidget(self.splitter, 1)
        central_layout.addWidget(self.caution)
        self.setCentralWidget(central)

        side = QWidget()
        side_layout = QVBoxLayout(side)
        side_layout.setContentsMargins(4, 8, 4, 4)
        settings_box = QGroupBox("Settings")
        QVBoxLayout(settings_box).addWidget(self.settings_panel)
        explanation_box = QGroupBox("How these figures were made")
        QVBoxLayout(explanation_box).addWidget(self.results.explanation)
        side_layout.addWidget(settings_box)
        side_layout.addWidget(explanation_box, 1)
        self.settings_dock = QDockWidget("Analysis panel", self, objectName="settings-dock")
        self.settings_dock.setWidget(side)
        self.settings_dock.setFeatures(
            QDockWidget.DockWidgetFeature.DockWidgetMovable
            | QDockWidget.DockWidgetFeature.DockWidgetClosable
        )
        self.addDockWidget(Qt.DockWidgetArea.RightDockWidgetArea, self.settings_dock)
        self.resizeDocks([self.settings_dock], [292], Qt.Orientation.Horizontal)

    def _build_status_bar(self) -> None:
        bar = self.statusBar()
        self.compute_label = QLabel(objectName="compute")
        self.progress = QProgressBar(objectName="progress", maximumWidth=180)
        self.progress.setRange(0, 100)
        self.cancel_button = QPushButton("Cancel", objectName="cancel")
        self.cancel_button.setToolTip("Stop the running computation")
        bar.addPermanentWidget(self.compute_label)
        bar.addPermanentWidget(self.progress)
        bar.addPermanentWidget(self.cancel_button)
        self.progress.hide()
        self.cancel_button.hide()

    def _action(self, text: str, slot, shortcut=None, menu=None, tip: str = "") -> QAction:
        action = QAction(text, self)
        if shortcut is not None:
            action.setShortcut(QKeySequence(shortcut))
        if tip:
            action.setStatusTip(tip)
        action.triggered.connect(slot)
        if menu is not None:
            menu.addAction(action)
        return action

    def _build_actions(self) -> None:
        menus = self.menuBar()
        file_menu = menus.addMenu("&File")
        document = self.document
        self._action("&New estimate", document.new, QKeySequence.StandardKey.New, file_menu)
        self._action("&Open…", document.open_dialog, QKeySequence.StandardKey.Open, file_menu)
        self._action(
            "&Import items…",
            document.import_dialog,
            "Ctrl+I",
            file_menu,
            "Add the rows of a spreadsheet to this estimate",
        )
        self.recent_menu = file_menu.addMenu("Open &recent")
        file_menu.addSeparator()
        self._action("&Save", document.save, QKeySequence.StandardKey.Save, file_menu)
        self._action("Save &as…", document.save_as, QKeySequence.StandardKey.SaveAs, file_menu)
        self._action("&Export report…", document.export_dialog, "Ctrl+E", file_menu)
        self._action("Co&mpare with…", lambda: compare_with(self), None, file_menu)
        file_menu.addSeparator()
        self._action("&Quit", self.close, QKeySequence.StandardKey.Quit, file_menu)

        edit_menu = menus.addMenu("&Edit")
        undo = self.undo_stack.createUndoAction(self, "&Undo")
        undo.setShortcut(QKeySequence.StandardKey.Undo)
        redo = self.undo_stack.createRedoAction(self, "&Redo")
        redo.setShortcut(QKeySequence.StandardKey.Redo)
        edit_menu.addActions([undo, redo])
        edit_menu.addSeparator()
        table_actions = [
            self._action("&Copy rows", self.table.copy, QKeySequence.StandardKey.Copy, edit_menu),
            self._action(
                "&Paste rows", self.table.paste, QKeySequence.StandardKey.Paste, edit_menu
            ),
        ]
        edit_menu.addSeparator()
        rows_menu = menus.addMenu("&Rows")
        table_actions += [
            self._action("&Add row", self.table.add_row, "Ctrl+Shift+N", rows_menu),
            self._action("D&uplicate rows", self.table.duplicate_rows, "Ctrl+D", rows_menu),
            self._action(
                "&Delete rows", self.table.delete_rows, QKeySequence.StandardKey.Delete, rows_menu
            ),
            self._action("Move &up", lambda: self.table.move_rows(-1), "Alt+Up", rows_menu),
            self._action("Move d&own", lambda: self.table.move_rows(1), "Alt+Down", rows_menu),
        ]
        for action in table_actions:
            # Row keys act on the table only, so Delete and Ctrl+C keep working in text fields.
            action.setShortcutContext(Qt.ShortcutContext.WidgetWithChildrenShortcut)
            self.table.addAction(action)
        buttons = self.row_buttons
        buttons["add"].clicked.connect(self.table.add_row)
        buttons["duplicate"].clicked.connect(self.table.duplicate_rows)
        buttons["delete"].clicked.connect(self.table.delete_rows)
        buttons["up"].clicked.connect(lambda: self.table.move_rows(-1))
        buttons["down"].clicked.connect(lambda: self.table.move_rows(1))
        buttons["correlations"].clicked.connect(self.open_correlations)

        view_menu = menus.addMenu("&View")
        settings_toggle = self.settings_dock.toggleViewAction()
        settings_toggle.setText("Analysis &panel")
        settings_toggle.setShortcut(QKeySequence("Ctrl+,"))
        view_menu.addAction(settings_toggle)
        self._action("&Recompute now", self.recompute_now, "F5", view_menu)
        self._action(
            "&Correlations between items…",
            self.open_correlations,
            "Ctrl+K",
            rows_menu,
            "Pairs, groups and a default coefficient for items that move together",
        )
        self._update_recent_menu()
        add_help_menu(self)

    def _connect(self) -> None:
        self.model.items_changed.connect(self._items_changed)
        # Bound methods, not lambdas: Qt drops them when the window is deleted, while a lambda
        # would still run on the undo stack's last signal at exit and meet a deleted window.
        self.undo_stack.cleanChanged.connect(self._update_title)
        self.settings_panel.changed.connect(self._settings_changed)
        self.table.selectionModel().currentRowChanged.connect(self._show_preview)
        self.table.paste_failed.connect(self._paste_failed)
        self.recomputer.started.connect(self._compute_started)
        self.recomputer.progress.connect(self._compute_progress)
        self.recomputer.finished.connect(self._compute_finished)
        self.recomputer.failed.connect(self._compute_failed)
        self.recomputer.cancelled.connect(self._compute_cancelled)
        self.recomputer.prepared.connect(self._show_usable)
        self.cancel_button.clicked.connect(self.recomputer.cancel)
        self.editor.correlation_changed.connect(self._correlation_changed)
        self.recomputer.repair_needed.connect(self._repair_needed)
        self.results.repair.accept_requested.connect(self.accept_repair)
        self.results.repair.fix_requested.connect(self._fix_correlations)
        self.document.recent_changed.connect(self._update_recent_menu)

    # --- the document -------------------------------------------------------------------
    @property
    def estimate(self) -> Estimate:
        return self.model.estimate

    @property
    def settings(self) -> Settings:
        return self.settings_panel.settings

    def is_modified(self) -> bool:
        return self.document.is_modified()

    def set_document(
        self, estimate: Estimate, settings: Settings, path: Path | None, source: str = ""
    ) -> None:
        self.document.set_location(path, source, estimate)
        self.show_document(estimate, settings)

    def show_document(self, estimate: Estimate, settings: Settings) -> None:
        self.settings_panel.set_settings(settings)
        self._applied = settings
        self.editor.set_estimate(estimate)
        self._update_correlation_button()
        if self.model.rowCount():
            self.table.select_rows([0])
        self._update_title()
        self.recompute_now()

    def document_changed(self) -> None:
        self._update_title()

    def open_demo(self) -> None:
        from fileio.demo import DEMO_WORKBOOK

        self.document.open_path(DEMO_WORKBOOK, interactive=False)

    def insert_imported(self, estimate: Estimate, path: Path) -> list[int]:
        rows = self.editor.insert_items(
            estimate.items,
            None,
            f"import {numbers.count(len(estimate.items), 'item')} from {path.name}",
        )
        self.table.select_rows(rows)
        return rows

    def report_allocation(self, analysis):
        return self.results.allocation.allocation_when_ready(analysis)

    # --- recompute ----------------------------------------------------------------------
    def _items_changed(self) -> None:
        self._update_title()
        self._show_preview()
        self.document.edited()
        self.schedule_recompute()

    def _correlation_changed(self) -> None:
        self._update_title()
        self._update_correlation_button()
        self.document.edited()
        self.schedule_recompute()

    def _update_correlation_button(self) -> None:
        spec = self.estimate.correlation
        stated = len(spec.pairs) + sum(1 for c in spec.groups.values() if c) + bool(spec.default)
        self.row_buttons["correlations"].setText(
            f"Correlations ({stated})…" if stated else "Correlations…"
        )

    def open_correlations(self):
        """Show the correlation editor (non-modal, beside the estimate)."""
        if self.correlation_dialog is None:
            from gui.correlation_panel import CorrelationDialog

            self.correlation_dialog = CorrelationDialog(self.editor, self)
            panel = self.correlation_dialog.panel
            panel.message.connect(lambda text: self.statusBar().showMessage(text, 10_000))
            panel.show_repair(self.results.repair.preview)
        self.correlation_dialog.show()
        self.correlation_dialog.raise_()
        self.correlation_dialog.activateWindow()
        return self.correlation_dialog

    def accept_repair(self) -> None:
        from gui.correlation_commands import set_accept_repair

        self.editor.change_correlation(
            set_accept_repair(self.estimate.correlation, True), "accept the correlation repair"
        )

    def _fix_correlations(self, item_a: str, item_b: str) -> None:
        self.open_correlations().panel.select_pair(item_a, item_b)

    def _repair_needed(self, preview) -> None:
        self.results.repair.show_preview(preview)
        if self.correlation_dialog is not None:
            self.correlation_dialog.panel.show_repair(preview)

    def _settings_changed(self, settings: Settings) -> None:
        """A change the user made in the panel: one undo step (merged with the next)."""
        self.document.settings_dirty = True
        self.undo_stack.push(SettingsUndoCommand(self._apply_settings, self._applied, settings))

    def _apply_settings(self, settings: Settings) -> None:
        self._applied = settings
        if self.settings_panel.settings != settings:
            self.settings_panel.set_settings(settings)
        self._update_title()
        self.document.edited()
        self.schedule_recompute()
        self._show_preview()

    def analysed_estimate(self) -> tuple[Estimate, int, int]:
        """The estimate made of the valid rows only, and how many rows and correlation
        pairs were left out (`gui.item_checks.usable_estimate`)."""
        usable = usable_estimate(self._estimate_snapshot(), self.model.checks)
        return usable.estimate, usable.left_out, usable.pairs_left_out

    def _estimate_snapshot(self) -> Estimate:
        full = self.estimate
        unit, source = self.settings.unit or full.unit, full.source or self.document.source
        return estimate_copy(full, unit, source)

    def schedule_recompute(self, now: bool = False) -> None:
        full = self.estimate
        if full.items and self.model.checks.unchecked(full.items) > CHECKED_IN_WINDOW:
            # Many new rows (a large paste or file): their checks run in the worker.
            checks, copy = self.model.checks, self._estimate_snapshot()

            def prepare(cancel, progress) -> tuple[Estimate, UsableEstimate]:
                usable = usable_estimate(copy, checks, cancel, progress)
                return usable.estimate, usable

            self.compute_label.setText(f"Checking {numbers.count(len(full.items), 'row')}…")
            self.recomputer.request(copy, self.settings, prepare)
        else:
            usable = usable_estimate(self._estimate_snapshot(), self.model.checks)
            if not usable.estimate.items:
                self.recomputer.cancel()
            if not self._show_usable(usable):
                return
            self.recomputer.request(usable.estimate, self.settings)
        if now:
            self.recomputer.run_now()

    def _show_usable(self, usable: UsableEstimate) -> bool:
        """Say which rows are left out; False (and the reason shown) when none is usable."""
        left_out, pairs_left_out = usable.left_out, usable.pairs_left_out
        pairs = (
            f" with {numbers.count(pairs_left_out, 'correlation pair')} naming them"
            if pairs_left_out
            else ""
        )
        self.left_out.setText(
            f"⚠ {numbers.count(left_out, 'row')}{pairs} left out of the total "
            "(marked cells; hover for the fix)"
        )
        self.left_out.setVisible(left_out > 0)
        if usable.estimate.items:
            return True
        self._compute_done()
        self.last_outcome = None
        if self.estimate.items:
            self.last_problem = "No row can be used yet: add line items or fix the marked cells."
            self.results.show_problem(self.last_problem)
        else:
            self.last_problem = empty_estimate_text()
            self.results.show_problem(self.last_problem, chart_message=self.last_problem)
        self.compute_label.setText("")
        self.result_shown.emit()
        return False

    def recompute_now(self) -> None:
        self.schedule_recompute(now=True)

    def _compute_started(self, _request_id: int) -> None:
        count = len(self.model.items)
        self.compute_label.setText(f"Computing the total of {numbers.count(count, 'item')}…")
        self.progress.setValue(0)
        self.progress.show()
        self.cancel_button.show()

    def _compute_progress(self, fraction: float) -> None:
        self.progress.setValue(round(100 * fraction))

    def _compute_done(self) -> None:
        self.progress.hide()
        self.cancel_button.hide()

    def _compute_finished(self, outcome: Outcome) -> None:
        self._compute_done()
        self.last_outcome = outcome
        self.last_problem = ""
        analysis = outcome.analysis
        left_out = outcome.estimate.summary.get("drafts", 0)
        notices = (
            [f"{numbers.count(left_out, 'row')} left out of the total: fix the marked cells."]
            if left_out
            else []
        )
        self.results.show_analysis(analysis, outcome.settings.unit, notices)
        self.results.allocation.compute(outcome.estimate, analysis, outcome.settings.unit)
        if self.correlation_dialog is not None:
            self.correlation_dialog.panel.show_repair(None)
        self.compute_label.setText(compute_text(analysis))
        self.result_shown.emit()

    def _compute_failed(self, message: str) -> None:
        self._compute_done()
        self.last_outcome = None
        self.last_problem = message
        self.results.show_problem(message)
        self.compute_label.setText("Not computed: see the message above the charts")
        self.result_shown.emit()

    def _compute_cancelled(self) -> None:
        self._compute_done()
        self.compute_label.setText("Cancelled: the figures shown are from before the last change")

    # --- small parts --------------------------------------------------------------------
    def _show_preview(self, *_changed) -> None:
        current = self.table.currentIndex()
        if not current.isValid() or current.row() >= self.model.rowCount():
            self.preview.clear()
            return
        row = current.row()
        self.preview.show_item(self.model.items[row], self.model.check(row), self.settings.unit)

    def _paste_failed(self, message: str) -> None:
        self.document.prompts.warn("The clipboard could not be pasted", message)

    def _update_title(self, *_clean) -> None:
        self.setWindowTitle(f"{self.document.display_name()}[*] — {APP_TITLE}")
        self.setWindowModified(self.is_modified())

    def _update_recent_menu(self) -> None:
        self.recent_menu.clear()
        files = self.document.recent_files()
        for f in files:
            action = self.recent_menu.addAction(f)
            action.triggered.connect(lambda _=False, f=f: self.document.open_recent(f))
        self.recent_menu.setEnabled(bool(files))

    # --- close -------------------------------------------------------------------------
    def closeEvent(self, event: QCloseEvent) -> None:
        if not self.document.maybe_save():
            event.ignore()
            return
        self.store.setValue("window/geometry", self.saveGeometry())
        self.recomputer.cancel()
        self.recomputer.wait()
        self.document.closed()
        event.accept()


def compute_text(analysis) -> str:
    """The status bar's account of how the figures were made."""
    if analysis.method == "simulation":
        sampling = "Latin hypercube" if analysis.sampling == "lhs" else "plain random"
        text = f"Simulation · {analysis.trials:,} trials · {sampling} · seed {analysis.seed}"
    else:
        text = "Exact convolution"
    if analysis.dependence is not None and analysis.dependence.repaired:
        text += " · correlation repair in force"
    return f"{text} · {analysis.compute_seconds:.2f} s"
