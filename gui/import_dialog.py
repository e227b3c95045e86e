"""Import a spreadsheet: see its first rows, check or change which header feeds which column,
choose the sheets to combine, and see every row left out (a subtotal can be taken back as an
item) and every problem before taking the items in. The words are `rangefold check`'s."""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

from PySide6.QtCore import Qt
from PySide6.QtWidgets import (
    QAbstractItemView,
    QCheckBox,
    QComboBox,
    QDialog,
    QDialogButtonBox,
    QFormLayout,
    QGroupBox,
    QHBoxLayout,
    QLabel,
    QListWidget,
    QListWidgetItem,
    QTableWidget,
    QTableWidgetItem,
    QVBoxLayout,
    QWidget,
)

from engine import COLUMNS, Estimate
from fileio.import_summary import column_lines, hidden_row_lines, sheet_lines, skipped_row_line

MAPPED_COLUMNS = (*COLUMNS, "Shape")
# The form's labels; the PERT shape is the beta weight on the most likely value.
COLUMN_LABELS = {"Shape": "PERT shape"}
NOT_USED = "(not in the file)"
REQUIRED = ("Item",)
ALL_SHEETS = "all"
_ROW_KEY = Qt.ItemDataRole.UserRole


class ImportDialog(QDialog):
    def __init__(
        self,
        path: str | Path,
        parent: QWidget | None = None,
        sheets: Sequence[str] | None = None,
    ):
        super().__init__(parent)
        from fileio.readers import preview_table

        self._preview_table = preview_table
        self.path = Path(path)
        self.setWindowTitle(f"Import items from {self.path.name}")
        self.resize(1100, 760)
        self.estimate: Estimate | None = None
        # The sheets to read: None for the default (the first sheet of items and every risk
        # register) until the user ticks a box; then the chosen sheet and the ticked ones.
        self._sheets: list[str] | None = list(sheets) if sheets else None
        first = sheets[0] if sheets and sheets[0].strip().lower() != ALL_SHEETS else None
        self.preview = preview_table(self.path, sheet=first)
        # Rows the user took back as items: (sheet, row) -> why they read as subtotals.
        self.taken_back: dict[tuple[str, int], str] = {}

        self.sheet = QComboBox(objectName="sheet")
        self.header_info = QLabel()
        self.other_sheets_box = QGroupBox("Also read these sheets (they are added to the estimate)")
        self.other_sheets_layout = QHBoxLayout(self.other_sheets_box)
        self.other_sheets: dict[str, QCheckBox] = {}
        self.combos: dict[str, QComboBox] = {}
        mapping_box = QGroupBox("Which header feeds which column")
        mapping_form = QFormLayout(mapping_box)
        for column in MAPPED_COLUMNS:
            combo = QComboBox(objectName=f"map-{column}")
            combo.currentIndexChanged.connect(self._mapping_changed)
            self.combos[column] = combo
            mapping_form.addRow(f"{COLUMN_LABELS.get(column, column)}:", combo)
        self.rows = QTableWidget(objectName="preview-rows")
        self.rows.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.counts = QLabel(objectName="counts", wordWrap=True)
        self.summary = QLabel(objectName="import-summary", wordWrap=True)
        self.left_out = QListWidget(objectName="left-out")
        self.left_out.setWordWrap(True)
        self.left_out.itemChanged.connect(self._take_back_changed)
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
        right.addWidget(QLabel("First rows of the sheet, numbered as in the sheet:"))
        right.addWidget(self.rows, 2)
        right.addWidget(self.counts)
        right.addWidget(self.summary)
        right.addWidget(
            QLabel("Rows left out (tick a subtotal to take it back as an item if it is one):")
        )
        right.addWidget(self.left_out, 1)
        right.addWidget(QLabel("Problems (rows imported as marked drafts, or to confirm):"))
        right.addWidget(self.problems, 1)
        middle.addLayout(right, 1)
        layout = QVBoxLayout(self)
        layout.addLayout(top)
        layout.addWidget(self.other_sheets_box)
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
        self.rows.setVerticalHeaderLabels(
            [str(preview.header_row + 1 + r) for r in range(len(preview.rows))]
        )
        for r, row in enumerate(preview.rows):
            for c, text in enumerate(row[: len(preview.headers)]):
                self.rows.setItem(r, c, QTableWidgetItem(text))
        self._filling = False
        self._mapping_changed()

    def _sheet_changed(self, sheet: str) -> None:
        if self._filling or not sheet:
            return
        self.preview = self._preview_table(self.path, sheet=sheet)
        rest = self._sheets[1:] if self._sheets else []
        self._sheets = [sheet, *(s for s in rest if s != sheet)]
        self._show_preview()

    @property
    def mapping(self) -> dict[str, str]:
        return {c: combo.currentData() for c, combo in self.combos.items() if combo.currentData()}

    def set_mapping(self, column: str, header: str) -> None:
        combo = self.combos[column]
        combo.setCurrentIndex(max(combo.findData(header), 0))

    def set_other_sheet(self, name: str, read: bool) -> None:
        """Tick or clear another sheet's box, as the user would."""
        self.other_sheets[name].setChecked(read)

    def take_back(self, sheet: str, row: int, as_item: bool = True) -> None:
        """Take a row left out as a subtotal back as an item (or leave it out again)."""
        for k in range(self.left_out.count()):
            entry = self.left_out.item(k)
            key = entry.data(_ROW_KEY)
            if key is not None and (key[0], key[1]) == (sheet, row):
                entry.setCheckState(Qt.CheckState.Checked if as_item else Qt.CheckState.Unchecked)
                return
        raise KeyError(f"no row {row} of {sheet!r} to take back")

    def _mapping_changed(self) -> None:
        if self._filling:
            return
        by_header = {h: c for c, h in self.mapping.items()}
        labels = [
            f"{h}\n→ {COLUMN_LABELS.get(by_header[h], by_header[h])}"
            if h in by_header
            else f"{h}\n(kept as notes)"
            for h in self.preview.headers
        ]
        self.rows.setHorizontalHeaderLabels(labels)
        self._read()

    def _read(self) -> None:
        """Read the file with the current choices, to show what importing would give."""
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
            estimate = read_estimate(
                self.path,
                mapping=self.mapping,
                sheet=self._sheet_choice(),
                keep_rows=self.taken_back,
            )
        except (ValueError, OSError) as bad:
            self.estimate = None
            self.counts.setText(f"The file cannot be read with this mapping: {bad}")
            ok.setEnabled(False)
            return
        self.estimate = estimate
        summary = estimate.summary
        self._show_other_sheets(summary)
        self._show_left_out(summary)
        for problem in estimate.problems:
            self.problems.addItem(str(problem))
        drafts = len(estimate.items) - len(estimate.valid_items())
        self.counts.setText(
            f"{summary.get('rows_read', len(estimate.items))} rows read: "
            f"{len(estimate.items)} items ({drafts} with problems, kept as marked drafts), "
            f"{len(summary.get('rows_skipped', []))} rows left out."
        )
        lines = sheet_lines(summary) + column_lines(summary) + hidden_row_lines(summary)
        self.summary.setText("\n".join(line[0].upper() + line[1:] for line in lines))
        ok.setEnabled(bool(estimate.items))

    def _sheet_choice(self) -> list[str] | None:
        """What `read_estimate` is asked for: the default at first (or the command line's
        sheets), then the chosen sheet and the ticked ones."""
        return self._sheets if self.preview.sheets else None

    def _show_other_sheets(self, summary: dict) -> None:
        read = [s["name"] for s in summary.get("sheets_read", [])]
        others = [
            (s["name"], s["items"], s.get("register", False), s.get("hidden", False), True)
            for s in summary.get("sheets_read", [])[1:]
        ] + [
            (s["name"], s["items"], False, s.get("hidden", False), False)
            for s in summary.get("other_sheets", [])
        ]
        if read:
            self._sheets = read
        if [o[0] for o in others] != list(self.other_sheets):
            for box in self.other_sheets.values():
                box.hide()
                box.deleteLater()
            self.other_sheets = {}
            for name, *_ in others:
                box = QCheckBox(objectName=f"sheet-{name}")
                box.toggled.connect(lambda on, n=name: self._other_sheet_toggled(n, on))
                self.other_sheets_layout.addWidget(box)
                self.other_sheets[name] = box
        for name, count, register, hidden, ticked in others:
            words = f"{name} ({count} item{'s' if count != 1 else ''}"
            words += ", a risk register" if register else ""
            words += ", hidden" if hidden else ""
            box = self.other_sheets[name]
            box.blockSignals(True)
            box.setText(words + ")")
            box.setChecked(ticked)
            box.blockSignals(False)
        self.other_sheets_box.setVisible(bool(others))

    def _other_sheet_toggled(self, name: str, on: bool) -> None:
        chosen = self._sheets or [self.sheet.currentText()]
        chosen = [s for s in chosen if s != name] + ([name] if on else [])
        self._sheets = chosen
        self._read()

    def _show_left_out(self, summary: dict) -> None:
        several = len(summary.get("sheets_read") or []) > 1
        self.left_out.blockSignals(True)
        self.left_out.clear()
        for entry in summary.get("rows_skipped", []):
            item = QListWidgetItem(skipped_row_line(entry, several))
            if entry.get("subtotal"):
                key = (entry.get("sheet") or "", entry["row"])
                item.setFlags(item.flags() | Qt.ItemFlag.ItemIsUserCheckable)
                item.setCheckState(Qt.CheckState.Unchecked)
                item.setData(_ROW_KEY, key)
            self.left_out.addItem(item)
        for (sheet, row), reason in self.taken_back.items():
            where = f"sheet {sheet!r} " if several and sheet else ""
            item = QListWidgetItem(f"{where}row {row} taken back as an item (it read as: {reason})")
            item.setFlags(item.flags() | Qt.ItemFlag.ItemIsUserCheckable)
            item.setCheckState(Qt.CheckState.Checked)
            item.setData(_ROW_KEY, (sheet, row))
            self.left_out.addItem(item)
        self.left_out.blockSignals(False)

    def _take_back_changed(self, item: QListWidgetItem) -> None:
        key = item.data(_ROW_KEY)
        if key is None:
            return
        key = (key[0], key[1])
        if item.checkState() == Qt.CheckState.Checked:
            reason = item.text().split(" skipped: ", 1)[-1]
            self.taken_back[key] = reason
        else:
            self.taken_back.pop(key, None)
        self._read()
