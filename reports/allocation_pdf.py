"""The report's pages on where the contingency sits: the chance of the base estimate and of
each budget, the allocation by group (table and bars) and by item, the risk events ranked."""

from __future__ import annotations

from matplotlib.axes import Axes

from charts import numbers
from charts.allocation import draw_allocation
from engine.allocation import Allocation
from reports import allocation_content as said
from reports.content import Table
from reports.pdf import Flow, Page

ITEMS_SHOWN = 30
CHART_INCHES = 3.4


def titled_table(flow: Flow, title: str, table: Table, size: float, widths: list[float]) -> None:
    """A heading and its table on the same page (the heading never ends a page alone)."""
    needed = flow.page.text_height(title, 10, "bold") + min(Page.table_height(table, size), 3.0)
    if flow.page.room < needed:
        flow.pages.append(Page(flow.paper, flow.footer))
    flow.text(title, size=10, weight="bold")
    flow.table(table, size=size, widths=widths)


def chart_block(flow: Flow, inches: float = CHART_INCHES, left: float = 0.12) -> Axes:
    """Axes for one chart across the page below the flow's text, room kept for its title
    above and its axis label below."""
    if flow.page.room < inches:
        flow.pages.append(Page(flow.paper, flow.footer))
    page = flow.page
    top = 1 - (page.y + 0.6) / page.height  # room for the title and a legend row above
    bottom = 1 - (page.y + inches - 0.45) / page.height
    grid = page.figure.add_gridspec(1, 1, left=left, right=0.95, top=top, bottom=bottom)
    page.y += inches
    return page.figure.add_subplot(grid[0, 0])


def allocation_pages(allocation: Allocation, unit: str, paper: str, footer: str) -> list[Page]:
    flow = Flow(paper, footer)
    flow.text("Where the contingency sits", size=14, weight="bold")
    flow.gap()
    flow.text(said.RULE, size=8.5)
    flow.text(said.method_line(allocation), size=8.5)
    flow.gap()
    confidence = said.confidence_table(allocation)
    widths = [1.2, 1.0, 1.2, 1.2, 0.8][: len(confidence.columns)]
    titled_table(flow, "Chance of the base estimate and of the budgets", confidence, 7.2, widths)
    flow.gap()
    shown = said.shown_levels(allocation)
    groups = said.group_table(allocation, shown)
    widths = [2.4] + [1.0] * (len(groups.columns) - 1)
    titled_table(flow, "By group", groups, 6.8, widths)
    flow.gap(0.08)
    for j in shown:
        flow.text("- " + allocation.levels[j].note, size=8, indent=0.1)
    flow.gap()
    top = allocation.levels[-1].level
    draw_allocation(chart_block(flow, left=0.36), allocation, top, "group", unit)
    more = len(allocation.names) > ITEMS_SHOWN
    title = "By item" + (f" (the {ITEMS_SHOWN} largest at {numbers.level(top)})" if more else "")
    items = said.item_table(allocation, limit=ITEMS_SHOWN, shown=shown)
    titled_table(flow, title, items, 6.2, [3.0, 1.0, 0.9] + [0.8] * (len(items.columns) - 3))
    if allocation.risk_events:
        flow.gap()
        risks = said.risk_table(allocation, shown)
        widths = [3.0] + [0.8] * (len(risks.columns) - 1)
        titled_table(flow, "Risk events ranked", risks, 6.2, widths)
    return flow.pages
