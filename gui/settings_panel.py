"""The analysis settings as a form; emits a new engine.Settings when a valid change is made.

An unreadable levels list keeps the last good settings and says what to type instead.
"""

from __future__ import annotations

from dataclasses import replace

from PySide6.QtCore import Signal
from PySide6.QtWidgets import (
    QCheckBox,
    QComboBox,
    QDoubleSpinBox,
    QFormLayout,
    QHBoxLayout,
    QLabel,
    QLineEdit,
    QSizePolicy,
    QSpinBox,
    QWidget,
)

from engine import Settings

METHOD_CHOICES = (
    ("auto", "Automatic"),
    ("exact", "Exact (convolution)"),
    ("simulation", "Simulation"),
)
SAMPLING_CHOICES = (("lhs", "Latin hypercube"), ("random", "Plain random"))
MAX_TRIALS = 5_000_000


def parse_levels(text: str) -> tuple[float, ...]:
    """'50, 80, 90' or 'P50 P80' -> (50.0, 80.0); ValueError says what to type."""
    parts = [p for p in text.replace(";", ",").replace(" ", ",").split(",") if p.strip()]
    levels = []
    for part in parts:
        cleaned = part.strip().upper().removeprefix("P").removesuffix("%")
        try:
            value = float(cleaned)
        except ValueError:
            raise ValueError(
                f"'{part.strip()}' is not a confidence level. Fix: type levels between 0 and 100, "
                "separated by commas, e.g. 50, 80, 90."
            ) from None
        if not 0 < value < 100:
            raise ValueError(f"level {value:g} is outside 0 to 100. Fix: use e.g. 50, 80, 90.")
        levels.append(value)
    if not levels:
        raise ValueError("no levels given. Fix: type e.g. 50, 80, 90.")
    return tuple(sorted(set(levels)))


class SettingsPanel(QWidget):
    changed = Signal(object)  # Settings

    def __init__(self, parent=None):
        super().__init__(parent)
        self._settings = Settings()
        self.levels = QLineEdit(objectName="levels")
        self.levels.setToolTip("Confidence levels, e.g. 50, 80, 90")
        self.levels_problem = QLabel(wordWrap=True, objectName="levels-problem")
        self.levels_problem.setStyleSheet("color: #8c2d6b;")
        self.levels_problem.hide()
        self.tolerance = QDoubleSpinBox(objectName="tolerance")
        self.tolerance.setRange(0.1, 50.0)
        self.tolerance.setDecimals(1)
        self.tolerance.setSingleStep(0.5)
        self.tolerance.setSuffix(" %")
        self.tolerance.setToolTip(
            "Tolerance for the verdict: the normal shortcut is said to hold at a level when its "
            "gap from the total is within this share of the total"
        )
        self.method = QComboBox(objectName="method")
        for key, label in METHOD_CHOICES:
            self.method.addItem(label, key)
        self.trials = QSpinBox(objectName="trials")
        self.trials.setRange(1000, MAX_TRIALS)
        self.trials.setSingleStep(10_000)
        self.trials.setGroupSeparatorShown(True)
        self.fixed_seed = QCheckBox("fixed", objectName="fixed-seed")
        self.fixed_seed.setToolTip("A fixed seed repeats the same simulated figures")
        self.seed = QSpinBox(objectName="seed")
        self.seed.setRange(0, 2_000_000_000)
        seed_row = QHBoxLayout()
        seed_row.setContentsMargins(0, 0, 0, 0)
        seed_row.addWidget(self.fixed_seed)
        seed_row.addWidget(self.seed, 1)
        self.sampling = QComboBox(objectName="sampling")
        for key, label in SAMPLING_CHOICES:
            self.sampling.addItem(label, key)
        self.unit = QLineEdit(objectName="unit")
        self.unit.setPlaceholderText("e.g. EUR, k$, working days")

        # Fields as wide as their usual contents, so the panel leaves the results their room.
        for combo in (self.method, self.sampling):
            combo.setSizeAdjustPolicy(
                QComboBox.SizeAdjustPolicy.AdjustToMinimumContentsLengthWithIcon
            )
            combo.setMinimumContentsLength(8)
        self.seed.setMinimumWidth(60)
        self.seed.setSizePolicy(QSizePolicy.Policy.Ignored, QSizePolicy.Policy.Fixed)
        form = QFormLayout(self)
        # A narrow panel puts a field under its label instead of holding the window wide.
        form.setRowWrapPolicy(QFormLayout.RowWrapPolicy.WrapLongRows)
        form.setFieldGrowthPolicy(QFormLayout.FieldGrowthPolicy.AllNonFixedFieldsGrow)
        form.addRow("Levels (P):", self.levels)
        form.addRow("", self.levels_problem)
        form.addRow("Verdict tolerance:", self.tolerance)
        form.addRow("Method:", self.method)
        form.addRow("Trials:", self.trials)
        form.addRow("Seed:", seed_row)
        form.addRow("Sampling:", self.sampling)
        form.addRow("Unit:", self.unit)

        self._loading = False
        self.set_settings(self._settings)
        self.levels.editingFinished.connect(self._emit)
        self.tolerance.valueChanged.connect(self._emit)
        self.method.currentIndexChanged.connect(self._emit)
        self.trials.editingFinished.connect(self._emit)
        self.fixed_seed.toggled.connect(self._emit)
        self.seed.editingFinished.connect(self._emit)
        self.sampling.currentIndexChanged.connect(self._emit)
        self.unit.editingFinished.connect(self._emit)

    @property
    def settings(self) -> Settings:
        return self._settings

    def set_settings(self, settings: Settings) -> None:
        self._loading = True
        self._settings = settings
        self.levels.setText(", ".join(f"{lv:g}" for lv in settings.levels))
        self.levels_problem.hide()
        self.tolerance.setValue(100 * settings.tolerance)
        self.method.setCurrentIndex(max(self.method.findData(settings.method), 0))
        self.trials.setValue(int(settings.trials))
        self.fixed_seed.setChecked(settings.seed is not None)
        self.seed.setValue(int(settings.seed or 0))
        self.sampling.setCurrentIndex(max(self.sampling.findData(settings.sampling), 0))
        self.unit.setText(settings.unit)
        self._sync_enabled()
        self._loading = False

    def _sync_enabled(self) -> None:
        simulated = self.method.currentData() != "exact"
        for widget in (self.trials, self.fixed_seed, self.sampling):
            widget.setEnabled(simulated)
        self.seed.setEnabled(simulated and self.fixed_seed.isChecked())

    def _emit(self) -> None:
        if self._loading:
            return
        self._sync_enabled()
        try:
            levels = parse_levels(self.levels.text())
        except ValueError as bad:
            self.levels_problem.setText(str(bad))
            self.levels_problem.show()
            return
        self.levels_problem.hide()
        new = replace(
            self._settings,
            levels=levels,
            tolerance=round(self.tolerance.value(), 4) / 100,
            method=self.method.currentData(),
            trials=int(self.trials.value()),
            seed=int(self.seed.value()) if self.fixed_seed.isChecked() else None,
            sampling=self.sampling.currentData(),
            unit=self.unit.text().strip(),
        )
        if new != self._settings:
            self._settings = new
            self.changed.emit(new)
