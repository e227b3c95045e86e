"""Start the window: `run(path, screenshot)`, called by `rangefold gui`."""

from __future__ import annotations

import os
import sys

ORGANISATION = "Rangefold Project"
APPLICATION = "Rangefold"
SCREENSHOT_TIMEOUT_MS = 120_000


def no_display() -> bool:
    """On Linux without a display server Qt would abort with a trace; say what to do."""
    if not sys.platform.startswith("linux") or os.environ.get("QT_QPA_PLATFORM"):
        return False
    return not (os.environ.get("DISPLAY") or os.environ.get("WAYLAND_DISPLAY"))


def _without_offscreen_noise(mode: object, context: object, message: str) -> None:
    """Qt's messages, less the offscreen platform's note that it cannot pass size hints on."""
    if "propagateSizeHints" not in message:
        print(message, file=sys.stderr)


def run(path: str | None, screenshot: str | None, sheets: list[str] | None = None) -> int:
    """Open the window on `path` (the demo when None); with `screenshot`, save a PNG of the
    window once the first result is shown, and exit."""
    if screenshot:
        os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
    if no_display():
        print(
            "rangefold: no display found. Set QT_QPA_PLATFORM=offscreen, or use "
            "`rangefold gui --screenshot OUT.png` to render the window to a file.",
            file=sys.stderr,
        )
        return 2
    from PySide6.QtCore import QTimer, qInstallMessageHandler
    from PySide6.QtWidgets import QApplication

    from gui.main_window import MainWindow

    if screenshot:
        qInstallMessageHandler(_without_offscreen_noise)
    app = QApplication.instance() or QApplication([sys.argv[0] if sys.argv else APPLICATION])
    app.setOrganizationName(ORGANISATION)
    app.setApplicationName(APPLICATION)
    window = MainWindow()
    if screenshot:
        # Nobody is there to answer a dialog: messages go to stderr, and the files opened
        # here are not the user's, so they stay out of Open recent.
        window.document.prompts.silent = True
        window.document.remember_recent = False
        window.resize(1440, 900)  # the same picture whatever size was last used
    window.show()
    outcome = {"code": 0}
    if screenshot:

        def save() -> None:
            if not window.grab().save(screenshot):
                print(f"rangefold: {screenshot} could not be written.", file=sys.stderr)
                outcome["code"] = outcome["code"] or 2
            window.close()
            app.exit(outcome["code"])

        def give_up() -> None:
            print(
                f"rangefold: the first result did not arrive within "
                f"{SCREENSHOT_TIMEOUT_MS // 1000} s; the picture shows the window as it was.",
                file=sys.stderr,
            )
            outcome["code"] = 2
            window.recomputer.cancel()
            save()

        window.result_shown.connect(lambda: QTimer.singleShot(300, save))
        QTimer.singleShot(SCREENSHOT_TIMEOUT_MS, give_up)
    opened = (
        window.document.open_path(path, interactive=not screenshot, sheets=sheets) if path else None
    )
    if path and not opened and screenshot:
        window.close()
        return 2
    if not path:
        window.open_demo()
    if not screenshot:
        window.document.offer_recovery()
    code = app.exec()
    return outcome["code"] or code
