"""The PDF's item appendix for large estimates: the items with the widest spread, one block of
fixed-width lines a page. Printing costs about a millisecond a character (each glyph is laid
out and tracked for embedding): 10,000 items as table pages took 103 s and 900 MB. The
workbook report keeps every item as a full table, and the appendix says so."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from reports.content import Table
from reports.text_fonts import font_family

if TYPE_CHECKING:
    from reports.pdf import Page

LINES_PER_PAGE = 100
SIZE = 5.6  # points: 100 lines and a heading fit an A4 or letter page
# (header, characters, align left) for each column, in the item table's order.
LAYOUT = {
    "Item": 34,
    "Group": 12,
    "Distribution": 12,
    "Low": 11,
    "Most likely": 11,
    "High": 11,
    "Low %": 5,
    "High %": 6,
    "Probability": 11,
    "Mean": 11,
    "SD": 10,
}
LEFT = ("Item", "Group", "Distribution")


def compact_item_pages(table: Table, paper: str, footer: str, keep: int) -> list[Page]:
    """The `keep` items with the largest standard deviation, widest first."""
    from reports.pdf import Page, cell_text

    kinds = [c.kind for c in table.columns]
    header = _line(table.headers, table.headers)
    sd = table.headers.index("SD")
    widest = sorted(table.rows, key=lambda row: -_number(row[sd]))[:keep]
    lines = [
        _line([cell_text(v, k) for v, k in zip(row, kinds, strict=True)], table.headers)
        for row in widest
    ]
    pages = []
    for start in range(0, len(lines), LINES_PER_PAGE):
        page = Page(paper, footer)
        page.text("Line items" + (" (continued)" if start else ""), size=14, weight="bold")
        if not start:
            page.text(
                f"The {len(lines):,} items with the widest spread (largest SD) of "
                f"{len(table.rows):,}; long texts are cut. The workbook report (.xlsx) lists "
                "every item in full.",
                size=8,
            )
        page.gap(0.05)
        block = "\n".join([header, *lines[start : start + LINES_PER_PAGE]])
        page.figure.text(
            _x(page),
            1 - page.y / page.height,
            block,
            fontsize=SIZE,
            family=["DejaVu Sans Mono", *font_family()],
            va="top",
            linespacing=1.25,
        )
        pages.append(page)
    return pages


def _number(value: Any) -> float:
    """For sorting: a missing or undefined SD sorts last."""
    if isinstance(value, int | float) and value == value:
        return float(value)
    return float("-inf")


def _x(page: Any) -> float:
    from reports.pdf import MARGIN

    return MARGIN / page.width


def _line(cells: list[str], headers: list[str]) -> str:
    parts = []
    for text, name in zip(cells, headers, strict=True):
        width = LAYOUT.get(name, 10)
        text = " ".join(str(text).split())
        if len(text) > width:
            text = text[: width - 1] + "…"
        parts.append(text.ljust(width) if name in LEFT else text.rjust(width))
    return " ".join(parts)
