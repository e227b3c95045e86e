"""Import a spreadsheet: see its first rows, check or change which header feeds which column,
and see the problem rows before taking the items in."""

from __future__ import annotations

from pathlib import Path

from PySide6.QtWidgets import (
    QAbstractItemView,
    QComboBox,
    QDialog,
    QDialogButtonBox,
    QFormLayout,
    QGroupBox,
    QHBoxLayout,
    QLabel,
    QListWidget,
    QTableWidget,
    QTableWidgetItem,
    QVBoxLayout,
    QWidget,
)

from engine import COLUMNS, Estimate

MAPPED_COLUMNS = (*COLUMNS, "Shape")
NOT_USED = "(not in the file)"
REQUIRED = ("Item",)


class ImportDialog(QDialog):
    def __init__(self, path: str | Path, parent: QWidget | None = None):
        super().__init__(parent)
        from fileio.readers import preview_table

        self._preview_table = preview_table
        self.path = Path(path)
        self.setWindowTitle(f"Import items from {self.path.name}")
        self.resize(1000, 640)
        self.estimate: Estimate | None = None
        self.preview = preview_table(self.path)

        self.sheet = QComboBox(objectName="sheet")
        self.header_info = QLabel()
        self.combos: dict[str, QComboBox] = {}
        mapping_box = QGroupBox("Which header feeds which column")
        mapping_form = QFormLayout(mapping_box)
        for column in MAPPED_COLUMNS:
            combo = QComboBox(objectName=f"map-{column}")
            combo.currentIndexChanged.connect(self._mapping_changed)
            self.combos[column] = combo
            mapping_form.addRow(f"{column}:", combo)
        self.rows = QTableWidget(objectName="preview-rows")
        self.rows.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.counts = QLabel(objectName="counts", wordWrap=True)
        self.problems = QListWidget(objectName="problems")
        self.problems.setWordWrap(True)
        self.buttons = QDialogButtonBox(
            QDialogButtonBox.StandardButton.Ok | QDialogButtonBox.StandardButton.Cancel
        )
        self.buttons.button(QDialogButtonBox.StandardButton.Ok).setText("Import")
        self.buttons.accepted.connect(self.accept)
        self.buttons.rejected.connect(self.reject)

        top = QHBoxLayout()
        self.sheet_label = QLabel("Sheet:")
        top.addWidget(self.sheet_label)
        top.addWidget(self.sheet)
        top.addWidget(self.header_info, 1)
        middle = QHBoxLayout()
        middle.addWidget(mapping_box)
        right = QVBoxLayout()
        right.addWidget(QLabel("First rows of the file:"))
        right.addWidget(self.rows, 1)
        right.addWidget(self.counts)
        right.addWidget(QLabel("Rows with problems (imported as drafts and marked, or skipped):"))
        right.addWidget(self.problems, 1)
        middle.addLayout(right, 1)
        layout = QVBoxLayout(self)
        layout.addLayout(top)
        layout.addLayout(middle, 1)
        layout.addWidget(self.buttons)

        self._filling = False
        self._show_preview()
        self.sheet.currentTextChanged.connect(self._sheet_changed)

    # --- filling the widgets ------------------------------------------------------------
    def _show_preview(self) -> None:
        self._filling = True
        preview = self.preview
        self.sheet.clear()
        self.sheet.addItems(preview.sheets or [preview.sheet or ""])
        if preview.sheet:
            self.sheet.setCurrentText(preview.sheet)
        self.sheet.setEnabled(len(preview.sheets) > 1)
        self.sheet.setVisible(bool(preview.sheets))
        self.sheet_label.setVisible(bool(preview.sheets))
        self.header_info.setText(f"  Header row found: {preview.header_row}")
        for column, combo in self.combos.items():
            combo.clear()
            combo.addItem(NOT_USED, "")
            for header in preview.headers:
                if header:
                    combo.addItem(header, header)
            guessed = preview.mapping.get(column, "")
            combo.setCurrentIndex(max(combo.findData(guessed), 0))
        self.rows.setColumnCount(len(preview.headers))
        self.rows.setRowCount(len(preview.rows))
        for r, row in enumerate(preview.rows):
            for c, text in enumerate(row[: len(preview.headers)]):
                self.rows.setItem(r, c, QTableWidgetItem(text))
        self._filling = False
        self._mapping_changed()

    def _sheet_changed(self, sheet: str) -> None:
        if self._filling or not sheet:
            return
        self.preview = self._preview_table(self.path, sheet=sheet)
        self._show_preview()

    @property
    def mapping(self) -> dict[str, str]:
        return {c: combo.currentData() for c, combo in self.combos.items() if combo.currentData()}

    def set_mapping(self, column: str, header: str) -> None:
        combo = self.combos[column]
        combo.setCurrentIndex(max(combo.findData(header), 0))

    def _mapping_changed(self) -> None:
        if self._filling:
            return
        by_header = {h: c for c, h in self.mapping.items()}
        labels = [
            f"{h}\n→ {by_header[h]}" if h in by_header else f"{h}\n(not used)"
            for h in self.preview.headers
        ]
        self.rows.setHorizontalHeaderLabels(labels)
        self._read()

    def _read(self) -> None:
        """Read the file with the current mapping, to show what importing would give."""
        from fileio.readers import read_estimate

        self.problems.clear()
        missing = [c for c in REQUIRED if c not in self.mapping]
        ok = self.buttons.button(QDialogButtonBox.StandardButton.Ok)
        if missing:
            self.estimate = None
            self.counts.setText(f"Choose the header for: {', '.join(missing)}.")
            ok.setEnabled(False)
            return
        try:
            estimate = read_estimate(self.path, mapping=self.mapping, sheet=self._sheet())
        except (ValueError, OSError) as bad:
            self.estimate = None
            self.counts.setText(f"The file cannot be read with this mapping: {bad}")
            ok.setEnabled(False)
            return
        self.estimate = estimate
        summary = estimate.summary
        skipped = summary.get("rows_skipped", [])
        for entry in skipped:
            self.problems.addItem(f"row {entry['row']}: skipped: {entry['reason']}")
        for problem in estimate.problems:
            self.problems.addItem(str(problem))
        drafts = len(estimate.items) - len(estimate.valid_items())
        self.counts.setText(
            f"{summary.get('rows_read', len(estimate.items))} rows read: "
            f"{len(estimate.items)} items ({drafts} with problems, kept as marked drafts), "
            f"{len(skipped)} rows skipped."
        )
        ok.setEnabled(bool(estimate.items))

    def _sheet(self) -> str | None:
        return self.sheet.currentText() or None
