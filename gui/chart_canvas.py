"""A matplotlib Figure in the window, drawn by the same chart functions as the PDF report."""

from __future__ import annotations

from collections.abc import Callable

from matplotlib.backends.backend_qtagg import FigureCanvasQTAgg
from matplotlib.figure import Figure
from PySide6.QtWidgets import QSizePolicy


class ChartCanvas(FigureCanvasQTAgg):
    def __init__(self, parent=None, height: float = 3.2):
        figure = Figure(figsize=(5, height), layout="constrained")
        super().__init__(figure)
        self.setParent(parent)
        self.setSizePolicy(QSizePolicy.Policy.Expanding, QSizePolicy.Policy.Expanding)
        self.setMinimumHeight(160)

    def show_chart(self, draw: Callable[..., object], *args, **kwargs) -> None:
        """Clear and redraw with a chart function `draw(axes, *args, **kwargs)`.

        A chart that cannot be drawn shows why in its place, so the rest of the window
        stays usable.
        """
        self.figure.clear()
        axes = self.figure.add_subplot()
        try:
            draw(axes, *args, **kwargs)
        except Exception as bad:  # one broken chart must not stop the window
            self.show_message(f"This chart could not be drawn:\n{type(bad).__name__}: {bad}")
            return
        self.draw_idle()

    def show_message(self, text: str) -> None:
        self.figure.clear()
        axes = self.figure.add_subplot()
        axes.set_axis_off()
        axes.text(0.5, 0.5, text, ha="center", va="center", wrap=True, color="#333333")
        self.draw_idle()
