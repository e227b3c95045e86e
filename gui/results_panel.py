"""The results side: the plain-language summary, the level table, the charts and the reasons.

Charts are redrawn only for the visible tab; the others are marked stale and drawn when
shown, because a burst of edits should not pay for four figures each time.
"""

from __future__ import annotations

from PySide6.QtWidgets import QLabel, QTabWidget, QVBoxLayout, QWidget

from engine import Analysis
from gui.chart_canvas import ChartCanvas
from gui.level_table import LevelTable


def _chart_functions():
    from charts.drivers import draw_drivers
    from charts.gap import draw_gap_curve
    from charts.total import draw_density, draw_s_curve

    return (
        ("Spread of the total", draw_density, True),
        ("S-curve", draw_s_curve, True),
        ("Shortcut gap", draw_gap_curve, True),
        ("What drives it", draw_drivers, False),
    )


def dependence_text(analysis: Analysis) -> str:
    """What the correlation did to the matrix, when the analysis carries one."""
    dependence = getattr(analysis, "dependence", None)
    if dependence is None:
        return ""
    names = getattr(dependence, "names", [])
    text = f"Correlation between {len(names)} items is included."
    if getattr(dependence, "repaired", False):
        change = getattr(dependence, "largest_change", None)
        text += " The stated coefficients were not a valid correlation matrix and were repaired"
        if change:
            a, b, old, new = change
            text += f"; the largest change is {a} / {b}: {old:+.2f} → {new:+.2f}"
        text += "."
    deviation = getattr(dependence, "achieved_max_deviation", None)
    if deviation is not None:
        text += (
            f" Largest difference between stated and achieved rank correlation: {deviation:.3f}."
        )
    return text


class ResultsPanel(QWidget):
    def __init__(self, parent=None):
        super().__init__(parent)
        self.summary = QLabel(objectName="summary", wordWrap=True)
        self.summary.setStyleSheet("font-size: 10.5pt; font-weight: 600;")
        self.method = QLabel(objectName="method", wordWrap=True)
        self.notice = QLabel(objectName="notice", wordWrap=True)
        self.notice.setStyleSheet(
            "background: #fde3a7; color: #3d2600; padding: 4px; border-left: 4px solid #b35806;"
        )
        self.notice.hide()
        self.table = LevelTable()
        self.tabs = QTabWidget()
        self.canvases: list[ChartCanvas] = []
        self._charts = _chart_functions()
        for title, _, _ in self._charts:
            canvas = ChartCanvas()
            self.canvases.append(canvas)
            self.tabs.addTab(canvas, title)
        self.tabs.currentChanged.connect(self._draw_current)
        self.reasons = QLabel(objectName="reasons", wordWrap=True)
        self.reasons.setTextFormat(self.reasons.textFormat().RichText)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(4, 4, 4, 4)
        layout.addWidget(self.summary)
        layout.addWidget(self.notice)
        layout.addWidget(self.table)
        layout.addWidget(self.tabs, 1)
        # How the figures were made and why the shortcut fails: placed by the window, beside
        # the settings that decide them.
        self.explanation = QWidget()
        side = QVBoxLayout(self.explanation)
        side.setContentsMargins(0, 0, 0, 0)
        side.addWidget(self.method)
        side.addWidget(self.reasons)
        side.addStretch(1)
        self.analysis: Analysis | None = None
        self._unit = ""
        self._stale = [True] * len(self.canvases)

    def show_analysis(self, analysis: Analysis, unit: str = "", notices: list[str] = ()) -> None:
        self.analysis, self._unit = analysis, unit
        self.summary.setText(analysis.summary)
        method = f"Method: {analysis.method} — {analysis.method_reason}."
        method += f" Base estimate {analysis.base_estimate:,.0f} ({analysis.base_basis})."
        self.method.setText(method)
        self.set_notices([*notices, dependence_text(analysis)])
        self.table.show_analysis(analysis)
        self.table.show()
        reasons = "".join(f"<li>{_escape(r)}</li>" for r in analysis.reasons)
        self.reasons.setText(
            f"<b>Why the shortcut misses</b><ul style='margin-top:0; margin-left:-20px'>{reasons}</ul>"
            if reasons
            else ""
        )
        self._stale = [True] * len(self.canvases)
        self._draw_current(self.tabs.currentIndex())

    def show_problem(self, message: str, notices: list[str] = ()) -> None:
        """No analysis could be made: say why in place of the results."""
        self.analysis = None
        self.summary.setText("No total yet.")
        self.method.setText(message)
        self.set_notices(list(notices))
        self.table.hide()
        self.reasons.setText("")
        for canvas in self.canvases:
            canvas.show_message("Nothing to show until the estimate can be computed.")

    def set_notices(self, notices: list[str]) -> None:
        shown = [n for n in notices if n]
        self.notice.setText("\n".join(shown))
        self.notice.setVisible(bool(shown))

    def _draw_current(self, index: int) -> None:
        if self.analysis is None or index < 0 or not self._stale[index]:
            return
        _, draw, takes_unit = self._charts[index]
        if takes_unit:
            self.canvases[index].show_chart(draw, self.analysis, unit=self._unit)
        else:
            self.canvases[index].show_chart(draw, self.analysis)
        self._stale[index] = False


def _escape(text: str) -> str:
    return text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")
