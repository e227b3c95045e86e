"""The paths section of the PDF (a page) and of the workbook (a sheet with a chart), for an
analysis whose total is the finish of parallel paths."""

from __future__ import annotations

from typing import Any

from openpyxl import Workbook
from openpyxl.chart import BarChart, Reference

from charts.paths import draw_criticality, draw_path_s_curves
from engine import Analysis
from reports.paths_content import activity_table, merge_table, path_lines, path_table
from reports.pdf import Flow, Page
from reports.xlsx import BOLD, put, put_table


def paths_pages(analysis: Analysis, about: dict[str, Any], paper: str, footer: str) -> list[Page]:
    unit = about["unit"]
    flow = Flow(paper, footer)
    flow.text("Parallel paths: the finish is the latest path", size=14, weight="bold")
    flow.gap()
    for line in path_lines(analysis, unit):
        flow.text(line, size=8.5)
    flow.gap()
    flow.table(merge_table(analysis), size=7.2, widths=[0.6, 1.2, 1.2, 1.2, 0.9])
    flow.gap(0.1)
    paths = path_table(analysis)
    flow.table(paths, size=6.8, widths=[2.0] + [1.0] * (len(paths.columns) - 1))
    flow.gap()
    flow.text("Why the finish is later than the longest path", size=10, weight="bold")
    for reason in analysis.paths.reasons:
        flow.text("- " + reason + ".", size=8, indent=0.1)
    flow.gap()
    flow.text(
        "Activities: their paths and how often they are on the latest", size=10, weight="bold"
    )
    flow.table(activity_table(analysis), size=6.8, widths=[3.0, 2.4, 1.6])
    charts = Page(paper, footer)
    charts.text("Parallel paths: charts", size=14, weight="bold")
    top = 1 - (charts.y + 0.3) / charts.height
    grid = charts.figure.add_gridspec(
        # right: room for the S-curves' legend, which stands beside the plot
        2,
        1,
        left=0.12,
        right=0.74,
        top=top,
        bottom=0.08,
        hspace=0.3,
        height_ratios=[3, 2],
    )
    draw_path_s_curves(charts.figure.add_subplot(grid[0]), analysis, unit)
    draw_criticality(charts.figure.add_subplot(grid[1]), analysis)
    return [*flow.pages, charts]


def write_paths_sheet(book: Workbook, analysis: Analysis, unit: str) -> None:
    sheet = book.create_sheet("Paths")
    row = 1
    for line in path_lines(analysis, unit):
        put(sheet, row, 1, line)
        row += 1
    row += 1
    put(sheet, row, 1, "The finish beside the longest path's normal shortcut").font = BOLD
    row = put_table(sheet, row + 1, merge_table(analysis)) + 1
    put(sheet, row, 1, "Each path").font = BOLD
    top = row + 1
    row = put_table(sheet, top, path_table(analysis)) + 1
    count = len(analysis.paths.rows)
    bars = BarChart()
    bars.type = "bar"
    bars.title = "Criticality: probability each path is the latest"
    bars.y_axis.numFmt = "0%"
    criticality = path_table(analysis).headers.index("Latest in (criticality)") + 1
    bars.add_data(
        Reference(sheet, min_col=criticality, min_row=top, max_row=top + count),
        titles_from_data=True,
    )
    bars.set_categories(Reference(sheet, min_col=1, min_row=top + 1, max_row=top + count))
    bars.x_axis.scaling.orientation = "maxMin"
    bars.width, bars.height = 16, 7
    put(sheet, row, 1, "Why the finish is later than the longest path").font = BOLD
    for reason in analysis.paths.reasons:
        row += 1
        put(sheet, row, 1, reason[0].upper() + reason[1:] + ".")
    row += 2
    put(sheet, row, 1, "Activities: their paths and how often they are on the latest").font = BOLD
    row = put_table(sheet, row + 1, activity_table(analysis))
    sheet.add_chart(bars, f"A{row + 2}")
    sheet.column_dimensions["A"].width = 34
    for col in "BCDEFGHIJ":
        sheet.column_dimensions[col].width = 15
