"""The window at 10 000 items against the same window at 200 items.

Prints, side by side with the ratio: loading the estimate into the item table (model reset,
first paint), scrolling to the last row and repainting, an edit's first result with the
exact method (the debounce skipped, so it is the work itself), and for the large case how
long Cancel takes to stop a 100 000-trial simulation. Offscreen; each size runs in a fresh
subprocess so one does not warm the other's caches.
Run: .venv/bin/python bench/bench_window.py [--quick]
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent

CASE = r"""
import json, os, sys, tempfile, time
os.environ["QT_QPA_PLATFORM"] = "offscreen"
sys.path.insert(0, {root!r})
import numpy as np
from PySide6.QtCore import QEventLoop, QSettings, QTimer
from PySide6.QtWidgets import QApplication
from engine import Estimate, LineItem, Settings
from gui.item_text import TABLE_COLUMNS
from gui.main_window import MainWindow

n, cancel_trials = {n}, {cancel_trials}
rng = np.random.default_rng(7)
items = []
for k in range(n):
    low = float(rng.uniform(1e3, 1e5)); ml = low * float(rng.uniform(1.05, 1.5))
    high = ml * float(rng.uniform(1.1, 2.5))
    items.append(LineItem(f"Package {{k}}", ("triangular", "pert")[k % 2], low, ml, high,
                          group=f"Area {{k % 7}}"))
app = QApplication([])


def measure():
    folder = tempfile.mkdtemp()
    window = MainWindow(store=QSettings(folder + "/w.ini", QSettings.Format.IniFormat),
                        recovery_dir=folder + "/recovery")
    window.resize(1440, 900); window.show(); app.processEvents()  # one pass, not a spin

    def until(done):
        # An event loop polled by a timer, not a processEvents() spin: with shiboken6 6.12
        # on Python 3.11 each processEvents() call loses a reference to None
        # (see gui/refcount_guard.py), a million a second in a spin.
        loop = QEventLoop()
        timer = QTimer(interval=2)
        timer.timeout.connect(lambda: done() and loop.quit())
        timer.start()
        if not done():
            loop.exec()
        timer.stop()

    out = {{}}
    exact = Settings(levels=(50.0, 80.0, 90.0), method="exact")
    results = []
    window.recomputer.finished.connect(results.append)
    window.settings_panel.set_settings(exact)
    start = time.perf_counter()
    window.editor.set_estimate(Estimate(items=items))
    window.table.viewport().repaint()
    out["load"] = time.perf_counter() - start

    start = time.perf_counter()
    window.table.scrollToBottom()
    window.table.viewport().repaint()
    app.processEvents()
    out["scroll"] = time.perf_counter() - start

    window.recompute_now(); until(lambda: results)  # the baseline result
    results.clear()
    high = TABLE_COLUMNS.index("High")
    start = time.perf_counter()
    window.editor.edit_cell(n - 1, high, str(round(items[-1].high * 1.2, 2)))
    window.recomputer.run_now()
    until(lambda: results)
    out["edit_exact"] = time.perf_counter() - start

    if cancel_trials:
        cancelled, fractions = [], []
        window.recomputer.cancelled.connect(lambda: cancelled.append(time.perf_counter()))
        window.recomputer.progress.connect(fractions.append)
        window.settings_panel.set_settings(Settings(levels=(50.0,), method="simulation",
                                                    trials=cancel_trials, seed=3))
        window.recompute_now()
        until(lambda: len(fractions) >= 3)
        clicked = time.perf_counter()
        window.cancel_button.click()
        until(lambda: cancelled)
        out["cancel"] = cancelled[0] - clicked
        out["cancel_at"] = fractions[-1]
    window.undo_stack.setClean(); window.close()
    print(json.dumps(out), flush=True)


measure()
"""


def run(n: int, cancel_trials: int) -> dict:
    done = subprocess.run(
        [sys.executable, "-c", CASE.format(root=str(ROOT), n=n, cancel_trials=cancel_trials)],
        capture_output=True,
        text=True,
        check=True,
        cwd=ROOT,
    )
    return json.loads(done.stdout.strip().splitlines()[-1])


def main() -> None:
    quick = "--quick" in sys.argv
    large = 2_000 if quick else 10_000
    small = run(200, 0)
    big = run(large, 100_000)
    print(f"{'window, offscreen':38s} {'200 items':>11s} {f'{large:,} items':>13s} {'ratio':>7s}")
    for key, label in (
        ("load", "load the model, first paint (s)"),
        ("scroll", "scroll to the last row, repaint (s)"),
        ("edit_exact", "edit to first exact result (s)"),
    ):
        ratio = big[key] / small[key] if small[key] else float("inf")
        print(f"{label:38s} {small[key]:11.3f} {big[key]:13.3f} {ratio:7.1f}")
    print(
        f"{'Cancel of 100 000 trials, to stopped (s)':38s} {'':11s} {big['cancel']:13.3f}"
        f"   (cancelled at {100 * big['cancel_at']:.1f}% done)"
    )


if __name__ == "__main__":
    main()
