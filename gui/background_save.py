"""The autosave's writing, off the GUI thread: a 100,000-row project takes seconds to write.

One save at a time; a save asked for while one runs is skipped (the periodic autosave writes
the newer state next). A failure comes back to the GUI thread as a signal.
"""

from __future__ import annotations

from collections.abc import Callable

from PySide6.QtCore import QObject, QThreadPool, Signal


class BackgroundSave(QObject):
    failed = Signal(object)  # the exception

    def __init__(self, parent: QObject | None = None):
        super().__init__(parent)
        self._pool = QThreadPool(self)
        self._pool.setMaxThreadCount(1)

    @property
    def busy(self) -> bool:
        return self._pool.activeThreadCount() > 0

    def start(self, write: Callable[[], None]) -> bool:
        """Write in the worker; False (nothing started) while a save is still running."""
        if self.busy:
            return False

        def run() -> None:
            try:
                write()
            except Exception as error:  # reported, never lost in the worker
                self.failed.emit(error)

        self._pool.start(run)
        return True

    def wait(self, msecs: int = 60_000) -> bool:
        return self._pool.waitForDone(msecs)
