"""What the import read and left out, for the report: the rows skipped (subtotals among
them), the sheets and columns not read. The same lines `rangefold check` prints."""

from __future__ import annotations

from openpyxl import Workbook
from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE
from openpyxl.styles import Font

from engine import Estimate
from fileio.import_summary import summary_lines


def import_lines(estimate: Estimate) -> list[str]:
    """The import summary in words; a project file carries its import's summary inside."""
    summary = estimate.summary.get("import_summary") or estimate.summary
    return summary_lines(summary) if "rows_skipped" in summary else []


def write_import_sheet(book: Workbook, estimate: Estimate) -> None:
    lines = import_lines(estimate)
    if not lines:
        return
    sheet = book.create_sheet("Import")
    sheet["A1"] = "What the import read and left out"
    sheet["A1"].font = Font(bold=True, size=12)
    for r, line in enumerate(lines, start=3):
        # Text from the user's file: never a formula.
        cell = sheet.cell(row=r, column=1, value=ILLEGAL_CHARACTERS_RE.sub("\ufffd", line))
        cell.data_type = "s"
    sheet.column_dimensions["A"].width = 140
