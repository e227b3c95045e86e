"""The Help menu: the user guide inside the program, and About (the version and the licences
of the libraries Rangefold ships with, read from their installed metadata)."""

from __future__ import annotations

from importlib import metadata
from pathlib import Path

from PySide6.QtGui import QKeySequence
from PySide6.QtWidgets import (
    QDialog,
    QDialogButtonBox,
    QMainWindow,
    QMessageBox,
    QTextBrowser,
    QVBoxLayout,
    QWidget,
)

from reports.caution import CAUTION
from reports.provenance import rangefold_version

USER_GUIDE = Path(__file__).resolve().parents[1] / "docs" / "user_guide.md"
# What the window runs on; PySide6 is published as PySide6-Essentials plus shiboken6.
SHIPPED = (
    "numpy",
    "scipy",
    "matplotlib",
    "openpyxl",
    "defusedxml",
    "threadpoolctl",
    "PySide6-Essentials",
    "shiboken6",
)


def guide_text() -> str:
    """The guide as Markdown; where it was not installed, where to read it instead."""
    if USER_GUIDE.is_file():
        return USER_GUIDE.read_text("utf-8")
    return (
        "# Rangefold user guide\n\nThe guide was not installed with this copy. "
        "It is docs/user_guide.md in Rangefold's source."
    )


def licence_of(distribution: str) -> str:
    """The licence a package declares: its SPDX expression, else a short License field,
    else its licence classifiers."""
    try:
        fields = metadata.metadata(distribution)
    except metadata.PackageNotFoundError:
        return "not installed"
    expression = fields.get("License-Expression")
    if expression:
        return expression
    declared = (fields.get("License") or "").strip()
    if declared and "\n" not in declared and len(declared) <= 60:
        return declared
    classifiers = [
        c.split(" :: ")[-1] for c in fields.get_all("Classifier") or [] if c.startswith("License")
    ]
    return ", ".join(classifiers) or "see the package's files"


def shipped_licences() -> list[tuple[str, str, str]]:
    """(package, version, licence) for each library the program ships with."""
    rows = []
    for name in SHIPPED:
        try:
            version = metadata.version(name)
        except metadata.PackageNotFoundError:
            version = "not installed"
        rows.append((name, version, licence_of(name)))
    return rows


def about_html() -> str:
    rows = "".join(
        f"<tr><td>{name}</td><td>{version}</td><td>{licence}</td></tr>"
        for name, version, licence in shipped_licences()
    )
    return (
        f"<h3>Rangefold {rangefold_version()}</h3>"
        "<p>Totals of uncertain line items beside the normal shortcut, and a contingency "
        f"report. Licence: {licence_of('rangefold')}.</p>"
        f"<p><i>{CAUTION}</i></p>"
        "<p>Libraries it runs on:</p>"
        "<table cellspacing='0' cellpadding='3'>"
        "<tr><th align='left'>Package</th><th align='left'>Version</th>"
        f"<th align='left'>Licence</th></tr>{rows}</table>"
    )


class GuideDialog(QDialog):
    def __init__(self, parent: QWidget | None = None):
        super().__init__(parent)
        self.setWindowTitle("Rangefold user guide")
        self.browser = QTextBrowser(objectName="user-guide")
        self.browser.setOpenExternalLinks(True)
        self.browser.setMarkdown(guide_text())
        buttons = QDialogButtonBox(QDialogButtonBox.StandardButton.Close)
        buttons.rejected.connect(self.close)
        layout = QVBoxLayout(self)
        layout.addWidget(self.browser)
        layout.addWidget(buttons)
        self.resize(760, 640)


def add_help_menu(window: QMainWindow) -> None:
    """Help ▸ User guide (F1) and About Rangefold, added to the window's menu bar."""
    menu = window.menuBar().addMenu("&Help")
    guide = menu.addAction("&User guide")
    guide.setShortcut(QKeySequence(QKeySequence.StandardKey.HelpContents))
    guide.setObjectName("help-guide")
    window.guide_dialog = None

    def show_guide() -> None:
        if window.guide_dialog is None:
            window.guide_dialog = GuideDialog(window)
        window.guide_dialog.show()
        window.guide_dialog.raise_()

    guide.triggered.connect(show_guide)
    about = menu.addAction("&About Rangefold")
    about.setObjectName("help-about")
    about.triggered.connect(lambda: QMessageBox.about(window, "About Rangefold", about_html()))
