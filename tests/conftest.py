"""Qt fixtures for the window tests: offscreen rendering, and a window whose settings and
recovery files live in the test's own folder."""

from __future__ import annotations

import os

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")

import pytest


@pytest.fixture
def make_window(qtbot, tmp_path):
    """Build main windows that keep their settings and recovery files under tmp_path."""
    from PySide6.QtCore import QSettings

    from gui.main_window import MainWindow

    made = []

    def make(recovery_dir=None):
        store = QSettings(str(tmp_path / "window.ini"), QSettings.Format.IniFormat)
        window = MainWindow(store=store, recovery_dir=recovery_dir or tmp_path / "recovery")
        made.append(window)
        return window

    yield make
    for window in made:
        # Closed here, not by qtbot, so that nothing is left to ask about at close.
        window.undo_stack.setClean()
        window.document.settings_dirty = False
        window.close()
        window.deleteLater()


@pytest.fixture(autouse=True)
def no_modal_dialogs(monkeypatch):
    """A message box nobody answers would hang the run: fail instead. Tests that expect a
    question patch QMessageBox.question themselves."""
    from PySide6.QtWidgets import QMessageBox

    def unexpected(*args, **kwargs):
        raise AssertionError(f"unexpected dialog: {args[1:3]}")

    for name in ("question", "warning", "critical", "information"):
        monkeypatch.setattr(QMessageBox, name, unexpected)
