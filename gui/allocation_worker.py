"""Allocation off the GUI thread: one job at a time, a newer request cancels the older one,
and only the newest result reaches the panel (a correlated estimate re-runs its simulation,
a second or so)."""

from __future__ import annotations

import threading

from PySide6.QtCore import QObject, QRunnable, QThreadPool, Signal

from engine import Analysis, Cancelled, Estimate
from engine.allocation import allocate


class _Signals(QObject):
    finished = Signal(int, object)  # request id, Allocation
    failed = Signal(int, str)


class _Job(QRunnable):
    def __init__(self, request_id: int, estimate: Estimate, analysis: Analysis, signals):
        super().__init__()
        self.request_id, self.estimate, self.analysis = request_id, estimate, analysis
        self.signals = signals
        self.stop = threading.Event()

    def run(self) -> None:
        try:
            result = allocate(self.estimate, self.analysis, cancel=self.stop.is_set)
        except Cancelled:
            return
        except Exception as bad:  # a worker must report, never die silently
            self.signals.failed.emit(self.request_id, f"{type(bad).__name__}: {bad}")
        else:
            self.signals.finished.emit(self.request_id, result)


class AllocationWorker(QObject):
    finished = Signal(object)  # Allocation
    failed = Signal(str)

    def __init__(self, parent: QObject | None = None):
        super().__init__(parent)
        self._pool = QThreadPool(self)
        self._pool.setMaxThreadCount(1)
        self._signals = _Signals(self)
        self._signals.finished.connect(self._on_finished)
        self._signals.failed.connect(self._on_failed)
        self._job: _Job | None = None
        self.latest_id = 0

    @property
    def busy(self) -> bool:
        return self._job is not None

    def request(self, estimate: Estimate, analysis: Analysis) -> None:
        self.cancel()
        self.latest_id += 1
        self._job = _Job(self.latest_id, estimate, analysis, self._signals)
        self._pool.start(self._job)

    def cancel(self) -> None:
        """Stop the running job; a result it still sends is dropped (its id is old)."""
        self.latest_id += 1
        if self._job is not None:
            self._job.stop.set()
            self._job = None

    def wait(self, msecs: int = 30_000) -> bool:
        return self._pool.waitForDone(msecs)

    def _on_finished(self, request_id: int, result: object) -> None:
        if request_id == self.latest_id:
            self._job = None
            self.finished.emit(result)

    def _on_failed(self, request_id: int, message: str) -> None:
        if request_id == self.latest_id:
            self._job = None
            self.failed.emit(message)
