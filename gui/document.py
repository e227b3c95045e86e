"""The document's life: open, import, save, save as, recent files, autosave, recovery, export.

All of it lives here so that failure handling lives in one place: every save, open, import and
export runs through `Document._attempt`, which catches any exception (a disk error, a damaged
file, a defect such as a RecursionError), tells the user in one line which file and why, and
returns nothing, so the window and its edits stay as they were. The window is reached through
`DocumentHost` and the user through `Prompts`, so tests drive the document without a window.
"""

from __future__ import annotations

import os
import sys
from collections.abc import Callable
from dataclasses import replace
from pathlib import Path
from typing import Any, Protocol, TypeVar

from PySide6.QtCore import QObject, QSettings, QTimer, Signal
from PySide6.QtGui import QUndoStack
from PySide6.QtWidgets import QFileDialog, QMainWindow, QMessageBox, QWidget

from engine import Estimate, Settings
from gui.background_save import BackgroundSave
from gui.estimate_copy import estimate_copy
from gui.recovery import RecoveryStore

ESTIMATE_FILTER = "Estimates (*.rangefold *.xlsx *.xlsm *.csv *.tsv *.txt)"
PROJECT_FILTER = "Rangefold project (*.rangefold)"
SPREADSHEET_FILTER = "Spreadsheet (*.xlsx *.xlsm *.csv *.tsv *.txt)"
REPORT_FILTERS = {
    "Workbook report (*.xlsx)": ".xlsx",
    "PDF report (*.pdf)": ".pdf",
    "JSON data (*.json)": ".json",
}
RECENT_LIMIT = 8
AUTOSAVE_MS = 60_000
AUTOSAVE_AFTER_EDIT_MS = 2_000

T = TypeVar("T")


class DocumentHost(Protocol):
    """What the document needs of the window."""

    undo_stack: QUndoStack
    last_outcome: Any  # gui.recompute.Outcome | None
    last_problem: str

    @property
    def estimate(self) -> Estimate: ...

    @property
    def settings(self) -> Settings: ...

    def show_document(self, estimate: Estimate, settings: Settings) -> None: ...

    def insert_imported(self, estimate: Estimate, path: Path) -> list[int]: ...

    def document_changed(self) -> None: ...

    def report_allocation(self, analysis: Any) -> Any:
        """The allocation the window computed (or is computing) for this analysis, so a
        report need not allocate again on the GUI thread; None lets the report allocate."""


class Prompts:
    """The questions the document asks and the messages it shows, as modal dialogs."""

    def __init__(self, parent: QWidget | None = None):
        self.parent = parent
        self.silent = False  # --screenshot: nobody is there to answer; never block

    def warn(self, title: str, message: str) -> None:
        if self.silent:
            print(" ".join(f"rangefold: {title}: {message}".split()), file=sys.stderr, flush=True)
            return
        QMessageBox.warning(self.parent, title, message)

    def status(self, text: str, milliseconds: int = 5000) -> None:
        if isinstance(self.parent, QMainWindow):
            self.parent.statusBar().showMessage(text, milliseconds)

    def ask_unsaved(self) -> str:
        """'save', 'discard' or 'cancel'."""
        if self.silent:
            return "discard"
        buttons = QMessageBox.StandardButton
        answer = QMessageBox.question(
            self.parent,
            "Unsaved changes",
            "This estimate has changes that are not saved. Save them first?",
            buttons.Save | buttons.Discard | buttons.Cancel,
            buttons.Save,
        )
        return {buttons.Save: "save", buttons.Discard: "discard"}.get(answer, "cancel")

    def ask_recover(self, where: str) -> bool:
        if self.silent:
            return False
        buttons = QMessageBox.StandardButton
        answer = QMessageBox.question(
            self.parent,
            "Recover unsaved work",
            f"Rangefold did not close cleanly last time. Work on {where} was kept. Restore it?",
            buttons.Yes | buttons.No,
            buttons.Yes,
        )
        return answer == buttons.Yes

    def open_name(self, title: str, folder: str, filters: str) -> str:
        return QFileDialog.getOpenFileName(self.parent, title, folder, filters)[0]

    def save_name(self, title: str, suggested: str, filters: str) -> tuple[str, str]:
        return QFileDialog.getSaveFileName(self.parent, title, suggested, filters)

    def import_spreadsheet(self, path: Path, sheets: list[str] | None = None) -> Estimate | None:
        """The import dialog: the user checks the columns and sheets; None when cancelled."""
        from gui.import_dialog import ImportDialog

        dialog = ImportDialog(path, self.parent, sheets)
        if dialog.exec() != ImportDialog.DialogCode.Accepted or dialog.estimate is None:
            return None
        return dialog.estimate


def failure_text(error: BaseException) -> str:
    """One line: the reason as the user can act on it."""
    if isinstance(error, RecursionError):
        return (
            "the estimate nests lists or tables too deeply to be written (a damaged or "
            "hand-edited project?)"
        )
    if isinstance(error, MemoryError):
        return "there is not enough memory for it"
    text = " ".join(str(error).split())
    if isinstance(error, OSError | ValueError):
        return text or type(error).__name__
    return f"an unexpected {type(error).__name__} ({text}); please report it with the file"


class Document(QObject):
    """Where the estimate on screen lives on disk, and whether it has unsaved changes."""

    recent_changed = Signal()

    def __init__(
        self,
        host: DocumentHost,
        prompts: Prompts,
        store: QSettings,
        recovery: RecoveryStore,
        parent: QObject | None = None,
    ):
        super().__init__(parent)
        self.host = host
        self.prompts = prompts
        self.store = store
        self.recovery = recovery
        self.path: Path | None = None  # the project file, once saved as one
        self.source: str = ""  # where the items came from, for the title and the report
        self.settings_dirty = False
        self.remember_recent = True  # off for --screenshot runs: they are not the user's
        self._saver = BackgroundSave(self)
        self._saver.failed.connect(self._autosave_failed)
        self._autosave_timer = QTimer(self, interval=AUTOSAVE_MS)
        self._autosave_timer.timeout.connect(self.autosave_in_background)
        self._autosave_timer.start()
        self._autosave_soon = QTimer(self, singleShot=True, interval=AUTOSAVE_AFTER_EDIT_MS)
        self._autosave_soon.timeout.connect(self.autosave_in_background)

    # --- state --------------------------------------------------------------------------
    def is_modified(self) -> bool:
        return self.settings_dirty or not self.host.undo_stack.isClean()

    def set_location(self, path: Path | None, source: str, estimate: Estimate) -> None:
        self.path = Path(path) if path else None
        self.source = source or (str(path) if path else estimate.source)
        self.settings_dirty = False

    def edited(self) -> None:
        """An edit happened: autosave shortly after the burst of edits ends."""
        self._autosave_soon.start()

    def display_name(self) -> str:
        name = self.path.name if self.path else (Path(self.source).name if self.source else "")
        return name or (self.host.estimate.title or "Untitled estimate")

    def _attempt(self, title: str, path: Path | str | None, work: Callable[[], T]) -> T | None:
        """Run `work`; on any failure tell the user in one line and return None."""
        try:
            return work()
        except Exception as error:  # every failure, so nothing the user made is lost
            named = path is None or Path(path).name in str(error)
            where = "" if named else f"{path}: "
            self.prompts.warn(title, f"{where}{failure_text(error)}")
            return None

    # --- opening ------------------------------------------------------------------------
    def new(self) -> None:
        if self.maybe_save():
            self._show(Estimate(title="New estimate"), Settings(), None, "")

    def _show(self, estimate: Estimate, settings: Settings, path: Path | None, source: str):
        self.set_location(path, source, estimate)
        self.host.show_document(estimate, settings)

    def open_dialog(self) -> None:
        if not self.maybe_save():
            return
        filters = f"{ESTIMATE_FILTER};;{PROJECT_FILTER};;{SPREADSHEET_FILTER}"
        path = self.prompts.open_name("Open an estimate", self.last_folder(), filters)
        if path:
            self.open_path(path)

    def open_path(
        self, path: str | Path, interactive: bool = True, sheets: list[str] | None = None
    ) -> bool:
        """Open a project file, or a spreadsheet through the import dialog (interactive)."""
        from fileio.project import PROJECT_SUFFIX, load_project

        path = Path(path)

        def read() -> tuple[Estimate, Settings, Path | None] | None:
            if path.suffix.lower() == PROJECT_SUFFIX:
                estimate, settings = load_project(path)
                return estimate, settings, path
            estimate = self._read_spreadsheet(path, interactive, sheets)
            if estimate is None:
                return None
            return estimate, Settings(unit=estimate.unit or ""), None

        opened = self._attempt(f"{path.name} could not be opened", path, read)
        if opened is None:
            return False
        estimate, settings, project = opened
        shown = self._attempt(
            f"{path.name} could not be shown",
            path,
            lambda: self._show(estimate, settings, project, str(path)) or True,
        )
        if not shown:
            return False
        self.add_recent(path)
        unused = estimate.summary.get("settings_problems") or []
        if unused:  # the defaults stand in for them: say so rather than replace them silently
            self.prompts.warn(
                f"Some settings in {path.name} were not used",
                " ".join(str(p) for p in unused),
            )
        return True

    def _read_spreadsheet(
        self, path: Path, interactive: bool, sheets: list[str] | None = None
    ) -> Estimate | None:
        """`sheets` as `rangefold gui --sheet` gives them; None lets the reader choose."""
        if interactive:
            return self.prompts.import_spreadsheet(path, sheets)
        from engine import read_estimate

        return read_estimate(path, sheet=sheets)

    def import_dialog(self) -> None:
        path = self.prompts.open_name("Import items", self.last_folder(), SPREADSHEET_FILTER)
        if path:
            self.import_items(path)

    def import_items(self, path: str | Path, interactive: bool = True) -> list[int]:
        """Add a spreadsheet's rows to this estimate, as one undoable step."""
        path = Path(path)
        estimate = self._attempt(
            f"{path.name} could not be imported",
            path,
            lambda: self._read_spreadsheet(path, interactive),
        )
        if estimate is None:
            return []
        return self.host.insert_imported(estimate, path)

    # --- saving -------------------------------------------------------------------------
    def save(self) -> bool:
        if self.path is None:
            return self.save_as()
        return self.save_to(self.path)

    def save_as(self) -> bool:
        from fileio.project import PROJECT_SUFFIX

        suggested = self.path or Path(self.last_folder()) / (
            (Path(self.source).stem if self.source else "estimate") + PROJECT_SUFFIX
        )
        path, _ = self.prompts.save_name("Save the estimate", str(suggested), PROJECT_FILTER)
        if not path:
            return False
        path = Path(path)
        if path.suffix.lower() != PROJECT_SUFFIX:
            path = path.with_name(path.name + PROJECT_SUFFIX)
        return self.save_to(path)

    def save_to(self, path: Path) -> bool:
        """Save; on failure the previous file, the window and its edits stay as they were."""
        from fileio.project import save_project

        path = Path(path)
        saved = self._attempt(
            "The estimate could not be saved",
            path,
            lambda: save_project(path, self.host.estimate, self.host.settings) or True,
        )
        if not saved:
            return False
        self.path = path
        self.source = str(path)
        self.settings_dirty = False
        self.host.undo_stack.setClean()
        self._attempt("The autosaved copy could not be removed", None, self.recovery.clear)
        self.add_recent(path)
        self.host.document_changed()
        self.prompts.status(f"Saved {path}", 5000)
        return True

    def maybe_save(self) -> bool:
        """True when it is fine to drop the current document (saved, discarded)."""
        if not self.is_modified():
            return True
        answer = self.prompts.ask_unsaved()
        if answer == "save":
            return self.save()
        return answer == "discard"

    # --- export -------------------------------------------------------------------------
    def export_dialog(self) -> None:
        if self.host.last_outcome is None:
            self.prompts.warn(
                "Nothing to export yet", self.host.last_problem or "The total is not computed yet."
            )
            return
        stem = Path(self.source).stem if self.source else "estimate"
        path, chosen = self.prompts.save_name(
            "Export the contingency report",
            str(Path(self.last_folder()) / f"{stem} contingency.xlsx"),
            ";;".join(REPORT_FILTERS),
        )
        if path:
            path = Path(path)
            if path.suffix.lower() not in REPORT_FILTERS.values():
                path = path.with_name(path.name + REPORT_FILTERS.get(chosen, ".xlsx"))
            self.export_report(path)

    def export_report(self, path: str | Path) -> Path | None:
        """Write the report of the figures on screen (the last finished analysis)."""
        from fileio.output_guard import refuse_overwriting_inputs
        from reports import write_report

        outcome = self.host.last_outcome
        if outcome is None:
            return None
        path = Path(path)

        def write() -> Path:
            refuse_overwriting_inputs(path, [self.path, self.source])
            return write_report(
                path,
                outcome.estimate,
                outcome.analysis,
                outcome.settings,
                source_path=self.path or (Path(self.source) if self.source else None),
                allocation=self.host.report_allocation(outcome.analysis),
            )

        written = self._attempt("The report could not be written", path, write)
        if written is None:
            return None
        self.prompts.status(f"Report written to {written}", 8000)
        return Path(written)

    # --- recent files -------------------------------------------------------------------
    def last_folder(self) -> str:
        recent = self.recent_files()
        return str(Path(recent[0]).parent) if recent else str(Path.home())

    def recent_files(self) -> list[str]:
        value = self.store.value("recent_files", [])
        if isinstance(value, str):
            value = [value]
        return [str(v) for v in value or []]

    def add_recent(self, path: Path) -> None:
        """Absolute paths, so a file opened from a shell's folder opens again from anywhere."""
        if not self.remember_recent:
            return
        entry = os.path.abspath(path)
        files = [entry] + [f for f in self.recent_files() if f != entry]
        self.store.setValue("recent_files", files[:RECENT_LIMIT])
        self.recent_changed.emit()

    def open_recent(self, path: str) -> bool:
        return self.maybe_save() and self.open_path(path)

    # --- autosave, recovery and close ---------------------------------------------------
    def autosave(self) -> None:
        if not self.is_modified():
            return
        self._saver.wait()  # never two writers of the recovery files
        try:
            self.recovery.save(self.host.estimate, self.host.settings, self.path)
        except Exception as error:  # a background copy: say so, never interrupt the user
            self._autosave_failed(error)

    def autosave_in_background(self) -> None:
        """The timers' autosave: a copy of the estimate written in a worker, so a large
        estimate never freezes the window."""
        if not self.is_modified():
            return
        estimate = estimate_copy(self.host.estimate)
        settings, path, recovery = replace(self.host.settings), self.path, self.recovery
        self._saver.start(lambda: recovery.save(estimate, settings, path))

    def _autosave_failed(self, error: Exception) -> None:
        self.prompts.status(f"Autosave failed: {failure_text(error)}", 8000)

    def offer_recovery(self) -> bool:
        """After a crash: offer the autosaved work back. True when it was restored."""
        found = self.recovery.find()
        if found is None:
            return False
        where = str(found.original) if found.original else "an unsaved estimate"
        if not self.prompts.ask_recover(where):
            self._attempt("The autosaved copy could not be removed", None, self.recovery.clear)
            return False
        loaded = self._attempt(
            "The recovered work could not be read",
            found.project,
            lambda: self.recovery.load(found),
        )
        if loaded is None:
            return False
        estimate, settings = loaded
        self._show(estimate, settings, found.original, "")
        self.settings_dirty = True  # recovered work is unsaved until the user saves it
        self.host.document_changed()
        return True

    def closed(self) -> None:
        """The window closed cleanly: stop autosaving and drop the recovery copy."""
        self._autosave_timer.stop()
        self._autosave_soon.stop()
        self._saver.wait()  # a late background write would bring the copy back
        self._attempt("The autosaved copy could not be removed", None, self.recovery.clear)
