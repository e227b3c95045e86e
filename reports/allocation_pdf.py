"""The report's pages on where the contingency sits: the chance of the base estimate and of
each budget, the allocation by group (table and bars) and by item, the risk events ranked."""

from __future__ import annotations

from charts.allocation import draw_allocation
from engine.allocation import Allocation
from reports import allocation_content as said
from reports.pdf import Flow, Page

ITEMS_SHOWN = 30


def allocation_pages(allocation: Allocation, unit: str, paper: str, footer: str) -> list[Page]:
    flow = Flow(paper, footer)
    flow.text("Where the contingency sits", size=14, weight="bold")
    flow.gap()
    flow.text(said.RULE, size=8.5)
    flow.text(said.method_line(allocation), size=8.5)
    flow.gap()
    flow.text("Chance of the base estimate and of the budgets", size=10, weight="bold")
    flow.table(
        said.confidence_table(allocation),
        size=7.2,
        widths=[1.2, 1.0, 1.2, 1.2, 0.8][: len(said.confidence_table(allocation).columns)],
    )
    flow.gap()
    flow.text("By group", size=10, weight="bold")
    groups = said.group_table(allocation)
    flow.table(groups, size=6.8, widths=[2.4] + [1.0] * (len(groups.columns) - 1))
    flow.gap(0.08)
    for row in allocation.levels:
        flow.text("- " + row.note, size=8, indent=0.1)
    flow.gap()
    if flow.page.room < 3.4:
        flow.pages.append(Page(paper, footer))
    page = flow.page
    top = 1 - (page.y + 0.1) / page.height
    bottom = 1 - (page.y + 3.2) / page.height
    grid = page.figure.add_gridspec(1, 1, left=0.36, right=0.95, top=top, bottom=bottom)
    draw_allocation(
        page.figure.add_subplot(grid[0, 0]), allocation, allocation.levels[-1].level, "group", unit
    )
    page.y += 3.4
    flow.text(
        "By item"
        + (
            f" (the {ITEMS_SHOWN} largest at the highest level)"
            if len(allocation.names) > ITEMS_SHOWN
            else ""
        ),
        size=10,
        weight="bold",
    )
    items = said.item_table(allocation, limit=ITEMS_SHOWN)
    flow.table(items, size=6.2, widths=[2.6, 1.2, 0.9] + [0.8] * (len(items.columns) - 3))
    if allocation.risk_events:
        flow.gap()
        flow.text("Risk events ranked", size=10, weight="bold")
        risks = said.risk_table(allocation)
        flow.table(risks, size=6.2, widths=[2.6] + [0.8] * (len(risks.columns) - 1))
    return flow.pages
