"""Test-run guards shared by every test folder.

Qt renders offscreen in tests, set before anything imports Qt. In CI a skipped test fails the
run: a suite that silently skips (no display, a missing tool) must not pass for a green run.
"""

from __future__ import annotations

import os

import pytest

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
os.environ.setdefault("MPLBACKEND", "Agg")


def pytest_sessionfinish(session: pytest.Session, exitstatus: int) -> None:
    reporter = session.config.pluginmanager.get_plugin("terminalreporter")
    skipped = len(reporter.stats.get("skipped", [])) if reporter else 0
    if os.environ.get("CI") and skipped and exitstatus == 0:
        session.exitstatus = pytest.ExitCode.TESTS_FAILED
        if reporter:
            reporter.write_line(
                f"CI: {skipped} test(s) skipped; a skipped test fails CI.", red=True
            )
