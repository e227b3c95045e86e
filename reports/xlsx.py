"""The contingency report as a workbook: real numbers with number formats, native charts,
frozen headers, a one-page printable summary. Text from the user never runs as a formula."""

from __future__ import annotations

from typing import Any, BinaryIO

from openpyxl import Workbook
from openpyxl.cell import Cell
from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE
from openpyxl.chart import BarChart, Reference, ScatterChart, Series
from openpyxl.styles import Alignment, Font, PatternFill
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.worksheet import Worksheet

from engine import Analysis, Estimate
from engine.allocation import Allocation
from fileio.cells import FORMULA_STARTS
from reports import content
from reports.caution import NORMAL_SHORTCUT_GLOSS
from reports.content import Kind, Table
from reports.import_provenance import write_import_sheet
from reports.item_sources import with_sources

FORMATS: dict[Kind, str] = {
    "money": "#,##0",
    "percent": "0.0%",
    "level": '"P"0',
    "probability": "0.0%",
    "coefficient": "0.00",
    "statistic": "0.00",
    "number": "General",
}
HEADER_FILL = PatternFill("solid", fgColor="DCE7EC")
FACT_VALUE_COLUMN = 5  # past the longest label, which runs over the empty cells beside it
BOLD = Font(bold=True)


def money_format(decimals: int) -> str:
    """'#,##0' or '#,##0.0': one number of decimals a money column, as in the PDF."""
    return FORMATS["money"] + ("." + "0" * decimals if decimals else "")


def put(sheet: Worksheet, row: int, column: int, value: Any, kind: Kind = "text") -> Cell:
    """Write one cell: numbers as numbers with a format, text always as text (formula-like
    text is stored as a string with a quote prefix, so it never runs)."""
    cell = sheet.cell(row=row, column=column)
    if value is None:
        return cell
    if isinstance(value, str):
        # Control characters cannot be stored in a workbook's XML at all (openpyxl refuses
        # them); U+FFFD shows where one was instead of failing the whole report.
        cell.value = ILLEGAL_CHARACTERS_RE.sub("\ufffd", value)
        if value.startswith(FORMULA_STARTS):
            cell.data_type = "s"
            cell.quotePrefix = True
        return cell
    cell.value = value
    if kind in FORMATS and isinstance(value, int | float):
        cell.number_format = FORMATS[kind]
    return cell


def put_table(sheet: Worksheet, top: int, table: Table, left: int = 1) -> int:
    """Header and rows from `top`; returns the next free row."""
    for k, name in enumerate(table.headers):
        cell = put(sheet, top, left + k, name)
        cell.font = BOLD
        cell.fill = HEADER_FILL
        cell.alignment = Alignment(wrap_text=True, vertical="top")
    decimals = content.money_decimals(table)
    for r, row in enumerate(table.rows, start=top + 1):
        for k, (column, value) in enumerate(zip(table.columns, row, strict=True)):
            cell = put(sheet, r, left + k, value, column.kind)
            if column.kind == "money" and decimals and isinstance(value, int | float):
                cell.number_format = money_format(decimals)
    return top + 1 + len(table.rows)


def write_xlsx(
    target: BinaryIO,
    estimate: Estimate,
    analysis: Analysis,
    about: dict[str, Any],
    allocation: Allocation | None = None,
) -> None:
    book = Workbook()
    summary = book.active
    summary.title = "Summary"
    _summary_sheet(summary, analysis, about)
    _data_sheet(book, "Items", with_sources(content.item_table(estimate), estimate))
    drivers = _data_sheet(book, "Drivers", content.driver_table(analysis))
    percentiles = _data_sheet(book, "Percentiles", content.percentile_table(analysis))
    _charts_sheet(book, analysis, drivers, percentiles, about["unit"])
    if allocation is not None:
        from reports.allocation_xlsx import allocation_sheets

        allocation_sheets(book, allocation)
    write_import_sheet(book, estimate)
    dependence = content.dependence_of(analysis)
    if dependence is not None:
        _dependence_sheet(book, dependence)
    if getattr(analysis, "paths", None) is not None:
        from reports.paths_report import write_paths_sheet  # it builds on this module's cells

        write_paths_sheet(book, analysis, about["unit"])
    book.save(target)


def _summary_sheet(sheet: Worksheet, analysis: Analysis, about: dict[str, Any]) -> None:
    put(sheet, 1, 1, "Contingency report").font = Font(bold=True, size=14)
    put(sheet, 2, 1, about["title"]).font = Font(bold=True, size=12)
    put(sheet, 3, 1, about["caution"]).font = Font(italic=True)
    amounts = f"Amounts in {about['unit']}. " if about["unit"] else ""
    put(sheet, 4, 1, amounts + NORMAL_SHORTCUT_GLOSS)
    row = put_table(sheet, 5, content.level_table(analysis)) + 1
    put(sheet, row, 1, "Verdict").font = BOLD
    for text in content.verdict_sentences(analysis, about["unit"]):
        row += 1
        put(sheet, row, 1, text[0].upper() + text[1:] + ".")
    row += 2
    put(sheet, row, 1, content.reasons_heading(analysis)).font = BOLD
    for reason in analysis.reasons or ["no skew driver, dominant item or risk event stands out"]:
        row += 1
        put(sheet, row, 1, reason[0].upper() + reason[1:] + ".")
    row += 2
    for label, value, kind in content.facts(analysis, about):
        put(sheet, row, 1, label)
        put(sheet, row, FACT_VALUE_COLUMN, value, kind)
        row += 1
    sheet.column_dimensions["A"].width = 16
    sheet.column_dimensions["B"].width = 16
    for col in range(3, 15):
        sheet.column_dimensions[get_column_letter(col)].width = 15
    sheet.freeze_panes = "A6"
    _fit_to_one_page(sheet)


def _fit_to_one_page(sheet: Worksheet) -> None:
    sheet.page_setup.orientation = "landscape"
    sheet.page_setup.paperSize = sheet.PAPERSIZE_A4
    sheet.page_setup.fitToWidth = 1
    sheet.page_setup.fitToHeight = 1
    sheet.sheet_properties.pageSetUpPr.fitToPage = True


def _data_sheet(book: Workbook, title: str, table: Table) -> Worksheet:
    sheet = book.create_sheet(title)
    put_table(sheet, 1, table)
    sheet.freeze_panes = "B2"
    sheet.column_dimensions["A"].width = 46
    for col in range(2, len(table.columns) + 1):
        sheet.column_dimensions[get_column_letter(col)].width = 15
    sheet.page_setup.fitToWidth = 1
    sheet.page_setup.fitToHeight = 0
    sheet.sheet_properties.pageSetUpPr.fitToPage = True
    return sheet


def _charts_sheet(
    book: Workbook, analysis: Analysis, drivers: Worksheet, percentiles: Worksheet, unit: str
) -> None:
    sheet = book.create_sheet("Charts")
    n = percentiles.max_row
    s_curve = ScatterChart()
    s_curve.title = "S-curve of the total"
    s_curve.style = 2
    s_curve.x_axis.title = f"Total ({unit})" if unit else "Total"
    s_curve.y_axis.title = "Confidence level (%)"
    levels = Reference(percentiles, min_col=1, min_row=2, max_row=n)
    for col, name in ((2, "Total"), (3, "Normal shortcut")):
        values = Reference(percentiles, min_col=col, min_row=2, max_row=n)
        series = Series(levels, xvalues=values, title=name)  # money across, level up
        series.marker.symbol = "none"
        series.smooth = False
        s_curve.series.append(series)
    s_curve.series[1].graphicalProperties.line.dashStyle = "dash"
    s_curve.width, s_curve.height = 18, 10
    sheet.add_chart(s_curve, "A1")

    count = min(drivers.max_row - 1, 12)
    bars = BarChart()
    bars.type = "bar"
    bars.title = f"Drivers of the total (top {count})"
    bars.y_axis.title = "Share"
    bars.y_axis.numFmt = "0%"
    data = Reference(drivers, min_col=3, max_col=4, min_row=1, max_row=count + 1)
    bars.add_data(data, titles_from_data=True)
    bars.set_categories(Reference(drivers, min_col=1, min_row=2, max_row=count + 1))
    bars.x_axis.scaling.orientation = "maxMin"  # largest at the top, as in the PDF
    bars.width, bars.height = 18, 11
    sheet.add_chart(bars, "A22")


def _dependence_sheet(book: Workbook, dependence: Any) -> None:
    sheet = book.create_sheet("Correlation")
    row = 1
    for line in content.dependence_lines(dependence):
        put(sheet, row, 1, line)
        row += 1
    for title, matrix in (
        ("Rank correlations as stated (target)", dependence.target),
        ("Rank correlations used (after any repair)", dependence.used),
    ):
        if matrix is not None:  # None for many items: the pairs table summarises by group
            row += 1
            put(sheet, row, 1, title).font = BOLD
            row = put_table(sheet, row + 1, content.matrix_table(list(dependence.names), matrix))
    row += 1
    put(sheet, row, 1, "Pairs: stated, used and achieved in the trials").font = BOLD
    put_table(sheet, row + 1, content.pair_table(dependence))
    sheet.column_dimensions["A"].width = 46
