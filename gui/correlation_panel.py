"""The correlation editor: named pairs, group coefficients, the default, and the matrix they
make, beside the repair notice when they contradict each other.

Every change goes through ItemEditor.change_correlation, so it is one undo step and the
window recomputes as after any other edit. The panel redraws only while it is visible (a
ten-thousand-item estimate should not pay for it on every keystroke) and catches up when
shown.
"""

from __future__ import annotations

from PySide6.QtCore import Qt, Signal
from PySide6.QtGui import QColor
from PySide6.QtWidgets import (
    QAbstractItemView,
    QComboBox,
    QCompleter,
    QDialog,
    QDialogButtonBox,
    QDoubleSpinBox,
    QFormLayout,
    QGroupBox,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QLineEdit,
    QPushButton,
    QStyledItemDelegate,
    QTableView,
    QTableWidget,
    QTableWidgetItem,
    QVBoxLayout,
    QWidget,
)

from charts.numbers import count
from engine.dependence.correlation import repair_preview, spec_problems
from gui import correlation_commands as commands
from gui.correlation_matrix import SCALE, MatrixModel
from gui.item_editor import ItemEditor
from gui.repair_notice import RepairNotice

PAIR_COLUMNS = ("Item A", "Item B", "Coefficient")
GROUP_COLUMNS = ("Group", "Items", "Coefficient")
PROBLEM_BACKGROUND = "#fde3a7"
# Above this many items the repair check (an eigen-decomposition) is left to the worker that
# runs the analysis; the window passes its finding on through show_repair.
PREVIEW_HERE_LIMIT = 400
INTRO = (
    "Coefficients are <b>rank (Spearman) correlations</b> between −1 and 1: +1 means two items "
    "always run high together, 0 that they are independent. A named pair overrides its "
    "group's coefficient, and a group's overrides the default."
)
DEFAULT_HELP = (
    "Applies to every pair not named above and not in a group with its own coefficient. "
    "0 treats them as independent. When nothing better is known, practitioners often assume "
    "a modest positive value such as 0.2 to 0.3, because items priced from the same market "
    "and managed by the same team tend to move together; which value to use is your call."
)


def _number(text: str) -> float:
    from fileio.cells import parse_number

    return parse_number(text)  # the importer's reading, so the editor accepts what it does


def _key(name: str) -> str:
    return name.strip().casefold()  # as engine.dependence.correlation matches names


class NameDelegate(QStyledItemDelegate):
    """Item names typed with completion from the estimate's items."""

    def __init__(self, names, parent=None):
        super().__init__(parent)
        self._names = names  # a callable, so the list is current when editing starts

    def createEditor(self, parent, option, index):
        editor = QLineEdit(parent)
        completer = QCompleter(self._names(), editor)
        completer.setCaseSensitivity(Qt.CaseSensitivity.CaseInsensitive)
        completer.setFilterMode(Qt.MatchFlag.MatchContains)
        editor.setCompleter(completer)
        return editor


class CorrelationPanel(QWidget):
    # Something to tell the user that is not a problem of the stated correlations.
    message = Signal(str)

    def __init__(self, editor: ItemEditor, parent=None):
        super().__init__(parent)
        self.editor = editor
        self._loading = False
        self._stale = True
        self._names: list[str] = []
        self._worker_preview = None

        intro = QLabel(INTRO, wordWrap=True, objectName="correlation-intro")

        self.pairs = QTableWidget(0, len(PAIR_COLUMNS), objectName="pairs")
        self.pairs.setHorizontalHeaderLabels(PAIR_COLUMNS)
        self.pairs.verticalHeader().setVisible(False)
        self.pairs.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        header = self.pairs.horizontalHeader()
        header.setSectionResizeMode(0, QHeaderView.ResizeMode.Stretch)
        header.setSectionResizeMode(1, QHeaderView.ResizeMode.Stretch)
        header.setSectionResizeMode(2, QHeaderView.ResizeMode.ResizeToContents)
        names = NameDelegate(lambda: self._names, self.pairs)
        self.pairs.setItemDelegateForColumn(0, names)
        self.pairs.setItemDelegateForColumn(1, names)
        self.pick_a = self._name_box("pick-a")
        self.pick_b = self._name_box("pick-b")
        self.pick_coefficient = QDoubleSpinBox(objectName="pick-coefficient")
        self.pick_coefficient.setRange(-1.0, 1.0)
        self.pick_coefficient.setSingleStep(0.05)
        self.pick_coefficient.setDecimals(2)
        self.add_button = QPushButton("Add pair", objectName="add-pair")
        self.remove_button = QPushButton("Remove selected", objectName="remove-pairs")
        picker = QHBoxLayout()
        picker.addWidget(self.pick_a, 3)
        picker.addWidget(QLabel("with"))
        picker.addWidget(self.pick_b, 3)
        picker.addWidget(self.pick_coefficient, 1)
        picker.addWidget(self.add_button)
        pairs_box = QGroupBox("Pairs of items")
        pairs_layout = QVBoxLayout(pairs_box)
        pairs_layout.addWidget(self.pairs, 1)
        pairs_layout.addLayout(picker)
        remove_row = QHBoxLayout()
        remove_row.addStretch(1)
        remove_row.addWidget(self.remove_button)
        pairs_layout.addLayout(remove_row)

        self.groups = QTableWidget(0, len(GROUP_COLUMNS), objectName="groups")
        self.groups.setHorizontalHeaderLabels(GROUP_COLUMNS)
        self.groups.verticalHeader().setVisible(False)
        gheader = self.groups.horizontalHeader()
        gheader.setSectionResizeMode(0, QHeaderView.ResizeMode.Stretch)
        gheader.setSectionResizeMode(1, QHeaderView.ResizeMode.ResizeToContents)
        gheader.setSectionResizeMode(2, QHeaderView.ResizeMode.ResizeToContents)
        groups_box = QGroupBox("Within a group (from the items' Group column)")
        groups_layout = QVBoxLayout(groups_box)
        groups_layout.addWidget(self.groups)
        groups_layout.addWidget(
            QLabel(
                "A group's coefficient applies to every pair of items in that group. Leave it "
                "empty and those pairs take the coefficient under 'Every other pair'.",
                wordWrap=True,
                objectName="group-help",
            )
        )

        self.default = QDoubleSpinBox(objectName="default-coefficient")
        self.default.setRange(-1.0, 1.0)
        self.default.setSingleStep(0.05)
        self.default.setDecimals(2)
        self.default.setMaximumWidth(90)
        default_box = QGroupBox("Every other pair")
        default_form = QFormLayout(default_box)
        default_form.addRow("Default coefficient:", self.default)
        default_form.addRow(QLabel(DEFAULT_HELP, wordWrap=True, objectName="default-help"))

        self.problems = QLabel(wordWrap=True, objectName="correlation-problems")
        self.problems.setStyleSheet(
            f"background: {PROBLEM_BACKGROUND}; color: #3d2600; padding: 4px;"
            " border-left: 4px solid #b35806;"
        )
        self.problems.hide()

        left = QVBoxLayout()
        left.addWidget(intro)
        left.addWidget(pairs_box, 3)
        left.addWidget(groups_box, 2)
        left.addWidget(default_box)
        left.addWidget(self.problems)

        self.repair = RepairNotice("Show the pair that changes most")
        self.accepted = QLabel(wordWrap=True, objectName="repair-accepted")
        self.accepted.setStyleSheet(
            "background: #f3e8f0; color: #2b0f22; padding: 4px; border-left: 5px solid #8c2d6b;"
        )
        self.withdraw_button = QPushButton("Withdraw the acceptance", objectName="withdraw-repair")
        accepted_row = QHBoxLayout()
        accepted_row.addWidget(self.accepted, 1)
        accepted_row.addWidget(self.withdraw_button)
        self.accepted_box = QWidget()
        self.accepted_box.setLayout(accepted_row)
        self.accepted_box.hide()

        self.matrix_model = MatrixModel(self)
        self.matrix = QTableView(objectName="matrix")
        self.matrix.setModel(self.matrix_model)
        self.matrix.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.matrix.horizontalHeader().setDefaultSectionSize(46)
        self.matrix.horizontalHeader().setMinimumSectionSize(30)
        self.matrix.verticalHeader().setDefaultSectionSize(24)
        self.matrix_caption = QLabel(wordWrap=True, objectName="matrix-caption")
        legend = QLabel(_legend_html(), objectName="matrix-legend", wordWrap=True)
        matrix_box = QGroupBox("The resulting matrix (as stated, before any repair)")
        matrix_layout = QVBoxLayout(matrix_box)
        matrix_layout.addWidget(self.matrix_caption)
        matrix_layout.addWidget(self.matrix, 1)
        matrix_layout.addWidget(legend)

        right = QVBoxLayout()
        right.addWidget(self.repair)
        right.addWidget(self.accepted_box)
        right.addWidget(matrix_box, 1)

        layout = QHBoxLayout(self)
        layout.addLayout(left, 5)
        layout.addLayout(right, 6)

        self.add_button.clicked.connect(self._add_from_picker)
        self.remove_button.clicked.connect(self.remove_selected)
        self.pairs.itemChanged.connect(self._pair_cell_changed)
        self.groups.itemChanged.connect(self._group_cell_changed)
        self.default.valueChanged.connect(self._default_changed)
        self.repair.accept_requested.connect(self.accept_repair)
        self.repair.fix_requested.connect(self.select_pair)
        self.withdraw_button.clicked.connect(lambda: self._accept(False))
        editor.correlation_changed.connect(self.refresh_if_visible)
        editor.model.items_changed.connect(self.refresh_if_visible)

    @property
    def spec(self):
        return self.editor.model.estimate.correlation

    # --- edits --------------------------------------------------------------------------
    def add_pair(self, item_a: str, item_b: str, coefficient: float) -> bool:
        return self._change(
            lambda: commands.add_pair(self.spec, item_a, item_b, coefficient),
            f"correlate {item_a} with {item_b}",
        )

    def set_pair_cell(self, row: int, column: int, text: str) -> bool:
        """Same path as typing in the pairs table (tests, paste)."""
        self.pairs.item(row, column).setText(text)
        return not self.problems.property("edit-refused")

    def set_group_text(self, group: str, text: str) -> bool:
        for row in range(self.groups.rowCount()):
            if _key(self.groups.item(row, 0).text()) == _key(group):
                self.groups.item(row, 2).setText(text)
                return not self.problems.property("edit-refused")
        raise KeyError(group)

    def remove_selected(self) -> None:
        rows = sorted({i.row() for i in self.pairs.selectedIndexes()})
        if rows:
            self._change(
                lambda: commands.remove_pairs(self.spec, rows), f"remove {count(len(rows), 'pair')}"
            )

    def accept_repair(self) -> None:
        self._accept(True)

    def _accept(self, accepted: bool) -> None:
        self._change(
            lambda: commands.set_accept_repair(self.spec, accepted),
            "accept the correlation repair" if accepted else "withdraw the correlation repair",
        )

    def _change(self, build, text: str, merge_key: object = None) -> bool:
        """Build a command (ValueError: refuse it and say why) and push it."""
        try:
            command = build()
        except ValueError as bad:
            self._refuse(str(bad))
            return False
        self.problems.setProperty("edit-refused", False)
        self.editor.change_correlation(command, text, merge_key)
        return True

    def _refuse(self, message: str) -> None:
        self.problems.setProperty("edit-refused", True)
        self.refresh()  # puts the refused cell back as it was
        self.problems.setText(f"Not changed: {message}\n" + self.problems.text())
        self.problems.show()

    def _add_from_picker(self) -> None:
        a, b = self.pick_a.currentText().strip(), self.pick_b.currentText().strip()
        if not a or not b or _key(a) == _key(b):
            self._refuse("choose two different items to correlate.")
            return
        self.add_pair(a, b, self.pick_coefficient.value())

    def _pair_cell_changed(self, cell: QTableWidgetItem) -> None:
        if self._loading:
            return
        row, column, text = cell.row(), cell.column(), cell.text().strip()
        if column == 2:

            def build():
                return commands.edit_pair(self.spec, row, coefficient=_number(text))
        else:
            field = "item_a" if column == 0 else "item_b"

            def build():
                if not text:
                    raise ValueError("an item name is empty. Fix: choose an item of the estimate.")
                return commands.edit_pair(self.spec, row, **{field: text})

        self._change(build, f"edit pair {row + 1}", ("pair", row, column))

    def _group_cell_changed(self, cell: QTableWidgetItem) -> None:
        if self._loading or cell.column() != 2:
            return
        shown = self.groups.item(cell.row(), 0).text()
        key = next((g for g in self.spec.groups if _key(g) == _key(shown)), shown)
        text = cell.text().strip()
        self._change(
            lambda: commands.set_group(self.spec, key, _number(text) if text else None),
            f"correlation within {shown}",
            ("group", _key(shown)),
        )

    def _default_changed(self, value: float) -> None:
        if not self._loading:
            self._change(
                lambda: commands.set_default(self.spec, round(value, 4)),
                "default correlation",
                "default",
            )

    # --- showing ------------------------------------------------------------------------
    def show_repair(self, preview) -> None:
        """The analysis worker's finding for estimates too large to check here."""
        self._worker_preview = preview
        if len(self.editor.model.items) > PREVIEW_HERE_LIMIT:
            self.repair.show_preview(preview)

    def select_pair(self, item_a: str, item_b: str) -> None:
        """Put the selection on the stated pair (or the items' group) the repair moves most."""
        both = {_key(item_a), _key(item_b)}
        for row, pair in enumerate(self.spec.pairs):
            if {_key(pair.item_a), _key(pair.item_b)} == both:
                self.pairs.selectRow(row)
                self.pairs.setFocus()
                return
        self.message.emit(
            f"{item_a} and {item_b} are not a named pair: their coefficient comes from their "
            "group or the default. Add the pair with a lower coefficient, or change those."
        )

    def refresh_if_visible(self) -> None:
        self._stale = True
        if self.isVisible():
            self.refresh()

    def showEvent(self, event) -> None:
        super().showEvent(event)
        if self._stale:
            self.refresh()

    def refresh(self) -> None:
        self._stale = False
        self._loading = True
        try:
            estimate = self.editor.model.estimate
            self._fill_names([i.name for i in estimate.items])
            self._fill_pairs(estimate)
            self._fill_groups(estimate)
            self.default.setValue(float(self.spec.default))
            self.matrix_caption.setText(self.matrix_model.show_estimate(estimate))
            self.matrix.resizeColumnsToContents()
            self.matrix.verticalHeader().setMaximumWidth(240)
        finally:
            self._loading = False
        problems = spec_problems(estimate)
        self.problems.setText("\n".join(f"• {p}" for p in problems))
        self.problems.setVisible(bool(problems))
        preview = self._worker_preview
        if len(estimate.items) <= PREVIEW_HERE_LIMIT and not self.spec.is_independent:
            preview = None if self.spec.accept_repair else repair_preview(estimate)
        self.repair.show_preview(None if self.spec.accept_repair else preview)
        self.accepted.setText(
            "<b>Repair accepted.</b> The figures use the nearest valid matrix, not the "
            "coefficients as stated; the results and the report say so."
        )
        self.accepted_box.setVisible(bool(self.spec.accept_repair))

    def _fill_names(self, names: list[str]) -> None:
        if names == self._names:
            return
        self._names = names
        for box in (self.pick_a, self.pick_b):
            box.clear()
            box.addItems(names)
        if len(names) > 1:
            self.pick_b.setCurrentIndex(1)

    def _fill_pairs(self, estimate) -> None:
        known = {_key(n) for n in self._names}
        self.pairs.setRowCount(len(self.spec.pairs))
        for r, pair in enumerate(self.spec.pairs):
            texts = (pair.item_a, pair.item_b, f"{pair.coefficient:g}")
            for c, text in enumerate(texts):
                cell = QTableWidgetItem(text)
                if c == 2:
                    cell.setTextAlignment(
                        Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter
                    )
                if c < 2 and _key(text) not in known:
                    cell.setBackground(QColor(PROBLEM_BACKGROUND))
                    cell.setToolTip(
                        f"{text!r} is not an item of the estimate. Fix: choose one from the list."
                    )
                self.pairs.setItem(r, c, cell)

    def _fill_groups(self, estimate) -> None:
        members: dict[str, tuple[str, int]] = {}
        for item in estimate.items:
            if item.group.strip():
                shown, count = members.get(_key(item.group), (item.group.strip(), 0))
                members[_key(item.group)] = (shown, count + 1)
        for group in self.spec.groups:  # stated for a group no item has: kept and shown
            members.setdefault(_key(group), (group, 0))
        stated = {_key(g): c for g, c in self.spec.groups.items()}
        self.groups.setRowCount(len(members))
        for r, (key, (shown, count)) in enumerate(members.items()):
            name = QTableWidgetItem(shown)
            name.setFlags(name.flags() & ~Qt.ItemFlag.ItemIsEditable)
            size = QTableWidgetItem(f"{count:,}" if count else "none")
            size.setFlags(size.flags() & ~Qt.ItemFlag.ItemIsEditable)
            size.setTextAlignment(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
            value = QTableWidgetItem("" if key not in stated else f"{stated[key]:g}")
            value.setTextAlignment(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
            value.setToolTip("Rank correlation between any two items of this group")
            if not count:
                for cell in (name, size):
                    cell.setBackground(QColor(PROBLEM_BACKGROUND))
                    cell.setToolTip("No item has this group: type it as in the Group column.")
            for c, cell in enumerate((name, size, value)):
                self.groups.setItem(r, c, cell)

    def _name_box(self, name: str) -> QComboBox:
        box = QComboBox(objectName=name, editable=True)
        box.setInsertPolicy(QComboBox.InsertPolicy.NoInsert)
        box.completer().setFilterMode(Qt.MatchFlag.MatchContains)
        box.completer().setCaseSensitivity(Qt.CaseSensitivity.CaseInsensitive)
        box.setMinimumContentsLength(16)
        box.setSizeAdjustPolicy(QComboBox.SizeAdjustPolicy.AdjustToMinimumContentsLengthWithIcon)
        # Long names keep both ends readable in the list; the chosen name shows from its
        # start, with the whole of it in the tooltip.
        box.view().setTextElideMode(Qt.TextElideMode.ElideMiddle)
        box.currentTextChanged.connect(box.setToolTip)
        box.currentIndexChanged.connect(lambda _index, box=box: _show_start(box))
        return box


def _show_start(box: QComboBox) -> None:
    if not box.lineEdit().hasFocus():
        box.lineEdit().setCursorPosition(0)


def _legend_html() -> str:
    swatch = "<span style='background:{0}; color:{0};'>&nbsp;&nbsp;&nbsp;&nbsp;</span>"
    steps = "".join(swatch.format(c) for c in SCALE)
    return (
        f"−1 {steps} +1 &nbsp; orange: one runs high when the other runs low; purple: both "
        "run high together. Columns are numbered as the rows."
    )


class CorrelationDialog(QDialog):
    """The panel in its own window, kept open beside the estimate while editing."""

    def __init__(self, editor: ItemEditor, parent=None):
        super().__init__(parent)
        self.setWindowTitle("Correlations between items")
        self.setModal(False)
        self.panel = CorrelationPanel(editor, self)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(6, 6, 6, 6)
        layout.addWidget(self.panel)
        buttons = QDialogButtonBox(QDialogButtonBox.StandardButton.Close, objectName="close")
        buttons.rejected.connect(self.close)
        # Edits apply as they are made (each one undoable), so Close is all the dialog needs.
        layout.addWidget(buttons)
        self.resize(1180, 720)
