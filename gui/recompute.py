"""Recompute the analysis off the GUI thread, debounced, newest request wins.

Edits come in bursts, so a request waits `delay_ms` for the next one (single-shot timer)
before a worker starts. Each start gets a larger request id and cancels the job before it;
a result, failure or cancellation reaches the window only if it carries the newest id.
"""

from __future__ import annotations

import threading
from collections.abc import Callable
from dataclasses import dataclass

from PySide6.QtCore import QObject, QRunnable, QThreadPool, QTimer, Signal

from engine import Analysis, Cancelled, Estimate, InputError, Settings, analyze

DEBOUNCE_MS = 300
PROGRESS_STEP = 0.01
PREPARE_SHARE = 0.2  # of the progress bar, for a request's preparation (checking its rows)

# Called in the worker before the analysis: (cancel, progress) -> (the estimate to analyse,
# what the window shows of it). Lets the checks of many rows run off the GUI thread.
Prepare = Callable[[Callable[[], bool], Callable[[float], None]], tuple[Estimate, object]]


@dataclass(frozen=True)
class Outcome:
    """A finished analysis with the exact inputs it was computed from."""

    request_id: int
    estimate: Estimate
    settings: Settings
    analysis: Analysis


class _JobSignals(QObject):
    # Created on the GUI thread, emitted from the worker: Qt queues them to the GUI thread.
    finished = Signal(int, object)
    failed = Signal(int, str, object)  # message, RepairPreview or None
    cancelled = Signal(int)
    progress = Signal(int, float)
    prepared = Signal(int, object, bool)  # what prepare found; True when nothing to analyse


class _AnalysisJob(QRunnable):
    def __init__(
        self,
        request_id: int,
        estimate: Estimate,
        settings: Settings,
        signals,
        prepare: Prepare | None = None,
    ):
        super().__init__()
        self.request_id = request_id
        self.estimate = estimate
        self.settings = settings
        self.signals = signals
        self.prepare = prepare
        self.stop = threading.Event()
        self._reported = -1.0

    def _progress(self, fraction: float) -> None:
        if fraction - self._reported >= PROGRESS_STEP or fraction >= 1:
            self._reported = fraction
            self.signals.progress.emit(self.request_id, fraction)

    def _repair_preview(self):
        """What repairing the stated matrix would change, found here, off the GUI thread,
        because for a large estimate the check is an eigen-decomposition of seconds."""
        spec = self.estimate.correlation
        if spec.is_independent or spec.accept_repair:
            return None
        from engine.dependence.correlation import repair_preview

        try:
            return repair_preview(self.estimate)
        except (ValueError, ArithmeticError):  # the failure message already says what is wrong
            return None

    def run(self) -> None:
        try:
            share = 0.0
            if self.prepare is not None:
                share = PREPARE_SHARE
                self.estimate, shown = self.prepare(
                    self.stop.is_set, lambda f: self._progress(share * f)
                )
                self.signals.prepared.emit(self.request_id, shown, not self.estimate.items)
                if not self.estimate.items:
                    return
            analysis = analyze(
                self.estimate,
                **self.settings.analyze_kwargs(),
                progress=lambda f: self._progress(share + (1 - share) * f),
                cancel=self.stop.is_set,
            )
        except Cancelled:
            self.signals.cancelled.emit(self.request_id)
        except InputError as bad:
            message = "\n".join(str(p) for p in bad.problems)
            self.signals.failed.emit(self.request_id, message, self._repair_preview())
        except Exception as bad:  # a worker must report, never die silently
            self.signals.failed.emit(self.request_id, f"{type(bad).__name__}: {bad}", None)
        else:
            self.signals.finished.emit(
                self.request_id, Outcome(self.request_id, self.estimate, self.settings, analysis)
            )


class Recomputer(QObject):
    started = Signal(int)
    finished = Signal(object)  # Outcome
    failed = Signal(str)
    # Before each failure: the repair the stated correlations would need, or None.
    repair_needed = Signal(object)
    cancelled = Signal()
    progress = Signal(float)
    # What a request's preparation found (the window's left-out notice); a request with
    # nothing to analyse ends with this signal.
    prepared = Signal(object)

    def __init__(self, delay_ms: int = DEBOUNCE_MS, parent: QObject | None = None):
        super().__init__(parent)
        self._pool = QThreadPool(self)
        self._pool.setMaxThreadCount(2)
        self._timer = QTimer(self)
        self._timer.setSingleShot(True)
        self._timer.setInterval(delay_ms)
        self._timer.timeout.connect(self.run_now)
        self._signals = _JobSignals(self)
        self._signals.finished.connect(self._on_finished)
        self._signals.failed.connect(self._on_failed)
        self._signals.cancelled.connect(self._on_cancelled)
        self._signals.progress.connect(self._on_progress)
        self._signals.prepared.connect(self._on_prepared)
        self._pending: tuple[Estimate, Settings, Prepare | None] | None = None
        self._job: _AnalysisJob | None = None
        self.latest_id = 0
        self.dropped = 0  # results that arrived after a newer request: discarded

    @property
    def busy(self) -> bool:
        return self._job is not None or self._timer.isActive()

    def request(
        self, estimate: Estimate, settings: Settings, prepare: Prepare | None = None
    ) -> None:
        """Ask for a recompute; a burst of requests starts one job after the last.
        With `prepare`, the worker first turns `estimate` into the one to analyse."""
        self._pending = (estimate, settings, prepare)
        self._timer.start()

    def run_now(self) -> int:
        """Start the pending request at once, superseding the running job."""
        self._timer.stop()
        if self._pending is None:
            return self.latest_id
        estimate, settings, prepare = self._pending
        self._pending = None
        if self._job is not None:
            self._job.stop.set()
        self.latest_id += 1
        self._job = _AnalysisJob(self.latest_id, estimate, settings, self._signals, prepare)
        self._pool.start(self._job)
        self.started.emit(self.latest_id)
        return self.latest_id

    def cancel(self) -> None:
        self._timer.stop()
        self._pending = None
        if self._job is not None:
            self._job.stop.set()

    def wait(self, msecs: int = 30_000) -> bool:
        """Block until the workers are done (closing the window, tests)."""
        return self._pool.waitForDone(msecs)

    def _current(self, request_id: int) -> bool:
        if request_id != self.latest_id:
            self.dropped += 1
            return False
        self._job = None
        return True

    def _on_finished(self, request_id: int, outcome: Outcome) -> None:
        if self._current(request_id):
            self.finished.emit(outcome)

    def _on_failed(self, request_id: int, message: str, preview: object) -> None:
        if self._current(request_id):
            self.repair_needed.emit(preview)
            self.failed.emit(message)

    def _on_cancelled(self, request_id: int) -> None:
        if self._current(request_id):
            self.cancelled.emit()

    def _on_prepared(self, request_id: int, shown: object, nothing_to_analyse: bool) -> None:
        if request_id != self.latest_id:
            return
        if nothing_to_analyse:
            self._job = None
        self.prepared.emit(shown)

    def _on_progress(self, request_id: int, fraction: float) -> None:
        if request_id == self.latest_id:
            self.progress.emit(fraction)
