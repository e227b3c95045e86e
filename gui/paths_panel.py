"""The Paths tab of a schedule: the path table, the S-curves of the paths and the finish, and
the criticality bars. Shown only when the estimate names two or more paths."""

from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtWidgets import (
    QAbstractItemView,
    QHeaderView,
    QLabel,
    QTableWidget,
    QTabWidget,
    QVBoxLayout,
    QWidget,
)

from charts import numbers
from engine import Analysis
from gui.chart_canvas import ChartCanvas
from gui.result_cell import result_cell

PATHS_TAB = "Paths"


def path_rows(analysis: Analysis) -> tuple[list[str], list[list[str]]]:
    """Headers and cell texts of the path table (Qt-free, so it is tested without a window)."""
    section = analysis.paths
    if section is None:
        return [], []
    levels = [numbers.level(lv) for lv in section.levels]
    headers = ["Path", "Activities", "Mean", "SD", *levels, "Latest in"]
    decimals = numbers.decimals_for([section.finish_mean, *section.finish])

    def days(values, sign: bool = False) -> list[str]:
        return [numbers.money(v, decimals=decimals, sign=sign) for v in values]

    rows = []
    for r in section.rows:
        share = numbers.percent(r.criticality)
        if r.criticality_se is not None:
            share += f" ± {numbers.percent(1.96 * r.criticality_se)}"
        name = r.name + (" (longest mean)" if r.longest_mean else "")
        rows.append([name, numbers.count(r.activities), *days((r.mean, r.sd, *r.values)), share])
    rows.append(
        ["Finish (latest path)", "", *days([section.finish_mean]), "", *days(section.finish), ""]
    )
    mean_bias = days([section.finish_mean - section.longest_mean], sign=True)
    rows.append(["Merge bias", "", *mean_bias, "", *days(section.merge_bias, sign=True), ""])
    return headers, rows


class PathsPanel(QWidget):
    def __init__(self, parent=None):
        super().__init__(parent)
        self.table = QTableWidget(0, 0, objectName="paths")
        self.table.verticalHeader().setVisible(False)
        self.table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.setTextElideMode(Qt.TextElideMode.ElideMiddle)
        self.table.verticalHeader().setDefaultSectionSize(22)
        self.curves = ChartCanvas()
        self.criticality = ChartCanvas()
        self.note = QLabel(objectName="paths-note", wordWrap=True)
        # One chart at a time, each the tab's full width: at 1280x800 the tab is about 440 px
        # wide, too narrow for two charts side by side and the S-curves' legend.
        self.charts = charts = QTabWidget(objectName="paths-charts")
        charts.setDocumentMode(True)
        charts.addTab(self.curves, "S-curves")
        charts.addTab(self.criticality, "Criticality")
        charts.setTabToolTip(1, "How often each path is the latest, and so sets the finish")
        layout = QVBoxLayout(self)
        layout.setContentsMargins(0, 0, 0, 0)
        layout.addWidget(self.note)
        layout.addWidget(self.table)
        layout.addWidget(charts, 1)
        self._to_draw: tuple[Analysis, str] | None = None  # a result not drawn yet

    def show_analysis(self, analysis: Analysis, unit: str = "") -> bool:
        """Fill the tab; False when the analysis has no paths (the tab is then hidden)."""
        headers, rows = path_rows(analysis)
        if not rows:
            return False
        self.table.setColumnCount(len(headers))
        self.table.setHorizontalHeaderLabels(headers)
        self.table.setRowCount(len(rows))
        for r, row in enumerate(rows):
            for c, text in enumerate(row):
                cell = result_cell(text, c)
                if r >= len(rows) - 2:
                    font = cell.font()
                    font.setBold(True)
                    cell.setFont(font)
                self.table.setItem(r, c, cell)
        header = self.table.horizontalHeader()
        # Whole names, scrolling sideways when the tab is narrow: a path is known by its name.
        for c in range(len(headers)):
            header.setSectionResizeMode(c, QHeaderView.ResizeMode.ResizeToContents)
        header.setStretchLastSection(True)
        self.table.setMaximumHeight(
            self.table.horizontalHeader().height()
            + self.table.horizontalScrollBar().sizeHint().height()
            + 4
            + sum(self.table.rowHeight(r) for r in range(len(rows)))
        )
        section = analysis.paths
        self.note.setText(
            f"The finish is the latest of {len(section.rows)} paths ({section.method}). "
            f"Reading only the path with the longest mean, '{section.longest}', misses the "
            "merge bias: the finish waits for whichever path is latest."
        )
        self._to_draw = (analysis, unit)  # drawn when the tab is shown: draw_pending()
        return True

    def draw_pending(self) -> None:
        """Draw the charts of the last result, once: called when the tab is shown, so a
        hidden tab does not redraw on every result."""
        if self._to_draw is None:
            return
        from charts.paths import draw_criticality, draw_path_s_curves

        analysis, unit = self._to_draw
        self._to_draw = None
        self.curves.show_chart(draw_path_s_curves, analysis, unit=unit)
        self.criticality.show_chart(draw_criticality, analysis)
