"""The notice shown when the stated correlations contradict each other.

Nothing is computed on a repaired matrix until the user has seen what the repair would change
and accepted it, so the notice lists the largest changes pair by pair and offers the two ways
on: accept the repair, or go and fix the coefficients.
"""

from __future__ import annotations

from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import (
    QAbstractItemView,
    QFrame,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QPushButton,
    QTableWidget,
    QTableWidgetItem,
    QVBoxLayout,
)

from charts.numbers import count
from engine.dependence.correlation import RepairPreview

CHANGES_SHOWN = 5
NOTICE_STYLE = (
    "QFrame#repair-notice { background: #f3e8f0; border-left: 5px solid #8c2d6b; }"
    " QLabel { color: #2b0f22; }"
)


def explanation(preview: RepairPreview) -> str:
    return (
        "<b>These correlations cannot all hold at once.</b> Taken together they contradict "
        "each other (the matrix is not positive semi-definite: smallest eigenvalue "
        f"{preview.smallest_eigenvalue:.3f}), so nothing was computed. Either lower the "
        "coefficients that clash, or accept the nearest valid matrix (Higham 2002); the "
        f"repair would change {count(len(preview.changes), 'pair')}, most of all:"
    )


class RepairNotice(QFrame):
    accept_requested = Signal()
    fix_requested = Signal(str, str)  # the pair that would change most

    def __init__(self, fix_text: str = "Fix the coefficients…", parent=None):
        super().__init__(parent, objectName="repair-notice")
        self.setStyleSheet(NOTICE_STYLE)
        self.text = QLabel(wordWrap=True, objectName="repair-text")
        self.text.setTextFormat(Qt.TextFormat.RichText)
        self.changes = QTableWidget(0, 4, objectName="repair-changes")
        self.changes.setHorizontalHeaderLabels(["Item A", "Item B", "Stated", "After repair"])
        self.changes.verticalHeader().setVisible(False)
        self.changes.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.changes.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.Stretch)
        self.changes.setVerticalScrollBarPolicy(Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        self.accept_button = QPushButton("Accept repair", objectName="accept-repair")
        self.accept_button.setToolTip(
            "Compute with the nearest valid matrix instead of the coefficients as stated "
            "(undoable; the report says the repair was used)"
        )
        self.fix_button = QPushButton(fix_text, objectName="fix-coefficients")
        buttons = QHBoxLayout()
        buttons.addWidget(self.accept_button)
        buttons.addWidget(self.fix_button)
        buttons.addStretch(1)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(10, 6, 6, 6)
        layout.addWidget(self.text)
        layout.addWidget(self.changes)
        layout.addLayout(buttons)
        self.preview: RepairPreview | None = None
        self.accept_button.clicked.connect(self.accept_requested)
        self.fix_button.clicked.connect(self._fix)
        self.hide()

    def show_preview(self, preview: RepairPreview | None) -> None:
        self.preview = preview
        if preview is None:
            self.hide()
            return
        self.text.setText(explanation(preview))
        shown = preview.changes[:CHANGES_SHOWN]
        self.changes.setRowCount(len(shown))
        for r, change in enumerate(shown):
            cells = (
                change.item_a,
                change.item_b,
                f"{change.stated:+.2f}",
                f"{change.repaired:+.2f}",
            )
            for c, text in enumerate(cells):
                cell = QTableWidgetItem(text)
                if c >= 2:
                    cell.setTextAlignment(
                        Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter
                    )
                self.changes.setItem(r, c, cell)
        height = sum(self.changes.rowHeight(r) for r in range(len(shown)))
        self.changes.setFixedHeight(
            height + self.changes.horizontalHeader().sizeHint().height() + 4
        )
        self.show()

    def _fix(self) -> None:
        if self.preview is not None and self.preview.changes:
            worst = self.preview.largest_change
            self.fix_requested.emit(worst.item_a, worst.item_b)
