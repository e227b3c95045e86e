"""The window's life as a process: the screenshot mode never waits for a person, and a quit
that discards the edits ends without a traceback."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def run(code_or_args: list[str], tmp_path: Path, timeout: float = 120):
    env = {
        **os.environ,
        "PYTHONPATH": str(ROOT),
        "QT_QPA_PLATFORM": "offscreen",
        "HOME": str(tmp_path),
        "XDG_CONFIG_HOME": str(tmp_path / "config"),
        "RANGEFOLD_RECOVERY_DIR": str(tmp_path / "recovery"),
    }
    return subprocess.run(
        [sys.executable, *code_or_args],
        capture_output=True,
        text=True,
        timeout=timeout,
        env=env,
        cwd=tmp_path,
    )


def test_screenshot_of_an_empty_estimate_shows_the_start_and_exits_0(tmp_path):
    header_only = tmp_path / "header.csv"
    header_only.write_text("Item,Low,Most likely,High\n", encoding="utf-8")
    picture = tmp_path / "start.png"
    done = run(["-m", "cli", "gui", str(header_only), "--screenshot", str(picture)], tmp_path)
    assert done.returncode == 0, done.stderr
    assert picture.stat().st_size > 10_000
    assert "Traceback" not in done.stderr


def test_screenshot_of_an_unreadable_file_says_why_and_exits_2(tmp_path):
    damaged = tmp_path / "damaged.xlsx"
    damaged.write_bytes(b"\x00\x01 not a workbook")
    done = run(
        ["-m", "cli", "gui", str(damaged), "--screenshot", str(tmp_path / "x.png")], tmp_path
    )
    assert done.returncode == 2
    lines = [line for line in done.stderr.splitlines() if "propagateSizeHints" not in line]
    assert len(lines) == 1 and "damaged.xlsx" in lines[0] and "zip archive" in lines[0]


GIVE_UP = """
import sys
import gui.app
gui.app.SCREENSHOT_TIMEOUT_MS = 50
from engine import Estimate, LineItem, Settings
from fileio.project import save_project
items = [LineItem(f"Package {k}", "pert", 1.0, 2.0, 9.0) for k in range(3000)]
save_project("slow.rangefold", Estimate(items=items), Settings(method="simulation", trials=1_000_000))
sys.exit(gui.app.run("slow.rangefold", "slow.png"))
"""


def test_the_give_up_timer_exits_non_zero(tmp_path):
    done = run(["-c", GIVE_UP], tmp_path)
    assert done.returncode == 2, done.stderr
    assert "did not arrive within" in done.stderr
    assert (tmp_path / "slow.png").exists()


QUIT_DISCARDING = """
from PySide6.QtCore import QTimer
from PySide6.QtWidgets import QApplication, QMessageBox
from gui.main_window import MainWindow
app = QApplication([])
window = MainWindow()
window.show()
window.open_demo()
QMessageBox.question = lambda *a, **k: QMessageBox.StandardButton.Discard
def quit_discarding():
    window.editor.edit_cell(0, 1, "edited")
    assert window.close()
    app.quit()
QTimer.singleShot(500, quit_discarding)
app.exec()
print("closed")
"""


def test_quit_discarding_edits_ends_without_a_traceback(tmp_path):
    done = run(["-c", QUIT_DISCARDING], tmp_path)
    assert done.returncode == 0 and "closed" in done.stdout
    assert "Traceback" not in done.stderr and "already deleted" not in done.stderr
