"""The selected item's distribution and numbers, to check a range reads as the analyst meant."""

from __future__ import annotations

import numpy as np
from PySide6.QtWidgets import QFormLayout, QHBoxLayout, QLabel, QWidget

from charts import numbers
from engine import LineItem
from gui.chart_canvas import ChartCanvas
from gui.item_checks import ItemCheck

FIGURES = ("Mean", "SD", "P10", "P50", "P90", "Probability")


class ItemPreview(QWidget):
    def __init__(self, parent=None):
        super().__init__(parent)
        self.canvas = ChartCanvas(height=2.2)
        self.values = {name: QLabel("—") for name in FIGURES}
        form = QFormLayout()
        form.setContentsMargins(6, 6, 6, 6)
        for name in FIGURES:
            self.values[name].setObjectName(f"preview-{name}")
            form.addRow(f"{name}:", self.values[name])
        numbers = QWidget()
        numbers.setLayout(form)
        numbers.setMinimumWidth(150)
        layout = QHBoxLayout(self)
        layout.setContentsMargins(0, 0, 0, 0)
        layout.addWidget(self.canvas, 1)
        layout.addWidget(numbers)
        self.clear()

    def clear(self, message: str = "Select a row to see its distribution.") -> None:
        for label in self.values.values():
            label.setText("—")
        self.canvas.show_message(message)

    def show_item(self, item: LineItem, check: ItemCheck, unit: str = "") -> None:
        dist = check.distribution
        if dist is None:
            self.clear(
                f"'{item.name}' cannot be used yet:\n"
                + "\n".join(f"{p.column or 'Item'}: {p.message}" for p in check.problems[:3])
            )
            return
        from charts.item import draw_item_preview

        p10, p50, p90 = (float(v) for v in dist.ppf(np.array([0.1, 0.5, 0.9])))
        figures = {"Mean": dist.mean, "SD": dist.sd, "P10": p10, "P50": p50, "P90": p90}
        decimals = numbers.decimals_for(figures.values())
        for name, value in figures.items():
            self.values[name].setText(numbers.money(value, unit, decimals))
        self.values["Probability"].setText(
            f"{numbers.probability(item.probability)} (risk event)"
            if item.is_risk_event
            else "certain"
        )
        self.canvas.show_chart(draw_item_preview, item, dist, unit=unit)
