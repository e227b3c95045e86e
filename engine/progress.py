"""Progress reports and cancellation for long computations, without any GUI.

The engine takes two plain callables: `progress(fraction)` and `cancel() -> bool`. The window
passes ones that post to its status bar and read its Cancel button; tests pass mocks.
"""

from __future__ import annotations

from collections.abc import Callable


class Cancelled(Exception):
    """The caller asked the computation to stop."""


class Progress:
    def __init__(
        self,
        progress: Callable[[float], None] | None = None,
        cancel: Callable[[], bool] | None = None,
        start: float = 0.0,
        span: float = 1.0,
    ):
        self._progress = progress
        self._cancel = cancel
        self._start = start
        self._span = span

    def report(self, fraction: float) -> None:
        """Pass on how far the work is (0..1) and stop if cancellation was asked for."""
        if self._cancel is not None and self._cancel():
            raise Cancelled
        if self._progress is not None:
            self._progress(self._start + self._span * min(max(fraction, 0.0), 1.0))

    def part(self, start: float, span: float) -> Progress:
        """A progress for a sub-task covering [start, start + span] of this one."""
        return Progress(
            self._progress, self._cancel, self._start + self._span * start, self._span * span
        )

    def silent(self) -> Progress:
        """The same cancellation without reports: for work running beside this one."""
        return Progress(None, self._cancel)
