"""The workbook's sheets on where the contingency sits: "Allocation" (the chance of the base
estimate and of each budget, groups and items at each level beside the naive allocation,
with a native bar chart) and "Risk events" (ranked)."""

from __future__ import annotations

from openpyxl import Workbook
from openpyxl.chart import BarChart, Reference
from openpyxl.utils import get_column_letter

from engine.allocation import Allocation
from reports import allocation_content as said
from reports.xlsx import BOLD, put, put_table


def allocation_sheets(book: Workbook, allocation: Allocation) -> None:
    sheet = book.create_sheet("Allocation")
    put(sheet, 1, 1, "Where the contingency sits").font = BOLD
    put(sheet, 2, 1, said.RULE)
    put(sheet, 3, 1, said.method_line(allocation))
    row = put_table(sheet, 5, said.confidence_table(allocation)) + 1
    put(sheet, row, 1, "By group").font = BOLD
    group_top = row + 1
    groups = said.group_table(allocation)
    row = put_table(sheet, group_top, groups) + 1
    for level in allocation.levels:
        put(sheet, row, 1, level.note)
        row += 1
    row += 1
    put(sheet, row, 1, "By item").font = BOLD
    put_table(sheet, row + 1, said.item_table(allocation))
    sheet.column_dimensions["A"].width = 46
    for col in range(2, 16):
        sheet.column_dimensions[get_column_letter(col)].width = 15

    # Bars of the groups at the highest level: its share and naive columns are the last two.
    last = len(groups.columns)
    bars = BarChart()
    bars.type = "bar"
    bars.title = f"Contingency at P{allocation.levels[-1].level:g} by group"
    data = Reference(
        sheet,
        min_col=last - 1,
        max_col=last,
        min_row=group_top,
        max_row=group_top + len(groups.rows) - 1,
    )
    bars.add_data(data, titles_from_data=True)
    bars.set_categories(
        Reference(sheet, min_col=1, min_row=group_top + 1, max_row=group_top + len(groups.rows) - 1)
    )
    bars.x_axis.scaling.orientation = "maxMin"
    bars.width, bars.height = 18, 10
    sheet.add_chart(bars, f"{get_column_letter(last + 2)}5")

    if allocation.risk_events:
        risks = book.create_sheet("Risk events")
        put_table(risks, 1, said.risk_table(allocation))
        risks.column_dimensions["A"].width = 46
        for col in range(2, 12):
            risks.column_dimensions[get_column_letter(col)].width = 15
