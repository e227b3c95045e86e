"""The contingency report as a vector PDF: summary, charts, items (and correlation when the
items are dependent). Figure objects only, no pyplot, so it runs headless and in the window's
process alike."""

from __future__ import annotations

import textwrap
from typing import Any, BinaryIO

import matplotlib
from matplotlib.backends.backend_pdf import PdfPages
from matplotlib.figure import Figure

from charts.drivers import draw_drivers
from charts.gap import draw_gap_curve
from charts.style import TEXT, display_text
from charts.total import draw_density, draw_s_curve
from engine import Analysis, Estimate
from reports import content
from reports.compact_items import compact_item_pages
from reports.content import Kind, Table
from reports.text_fonts import font_family, make_printable, substitution_notice

PAPER = {"a4": (8.27, 11.69), "letter": (8.5, 11.0)}  # inches
MARGIN = 0.6
ITEMS_PER_PAGE = 40
# Beyond this many items the appendix lists this many, the widest (reports/compact_items.py).
COMPACT_AFTER = 400
HEADER_FILL = "#dce7ec"


def _fit(text: str, inches: float, size: float) -> str:
    """Cut text that would spill out of its cell; the workbook keeps it whole."""
    chars = max(4, int((inches - 0.06) * 72 / (size * 0.55)))
    return text if len(text) <= chars else text[: chars - 1] + "…"


def cell_text(value: Any, kind: Kind) -> str:
    if value is None:
        return ""
    if isinstance(value, str):
        return display_text(value)
    if kind == "money":
        return f"{value:,.0f}" if abs(value) >= 100 else f"{value:,.2f}"
    if kind == "percent":
        return f"{100 * value:.1f}%"
    if kind == "level":
        return f"P{value:g}"
    if isinstance(value, int):
        return f"{value:,}"
    return f"{value:.4g}"


class Page:
    """One sheet of paper, filled top to bottom; positions are inches from the top left."""

    def __init__(self, paper: str, footer: str):
        self.width, self.height = PAPER[paper]
        self.figure = Figure(figsize=(self.width, self.height))
        self.y = MARGIN
        self.figure.text(
            MARGIN / self.width, 0.35 / self.height, footer, fontsize=7, color="#4b5563"
        )

    @property
    def usable(self) -> float:
        return self.width - 2 * MARGIN

    @property
    def room(self) -> float:
        return self.height - MARGIN - self.y

    def _lines(self, words: str, size: float, weight: str, indent: float):
        chars = int((self.usable - indent) * 72 / (size * (0.58 if weight == "bold" else 0.52)))
        return textwrap.wrap(display_text(words), chars) or [""], size * 1.35 / 72

    def text_height(
        self, words: str, size: float = 9, weight: str = "normal", indent: float = 0.0
    ) -> float:
        lines, line_height = self._lines(words, size, weight, indent)
        return len(lines) * line_height

    @staticmethod
    def table_height(table: Table, size: float = 6.8) -> float:
        return size * 1.9 / 72 * (2 + len(table.rows))

    def text(
        self,
        words: str,
        size: float = 9,
        weight: str = "normal",
        indent: float = 0.0,
        style: str = "normal",
    ) -> None:
        lines, line_height = self._lines(words, size, weight, indent)
        for line in lines:
            self.figure.text(
                (MARGIN + indent) / self.width,
                1 - (self.y + size / 72) / self.height,
                line,
                fontsize=size,
                fontweight=weight,
                fontstyle=style,
                color=TEXT,
            )
            self.y += line_height

    def gap(self, inches: float = 0.12) -> None:
        self.y += inches

    def table(self, table: Table, size: float = 6.8, widths: list[float] | None = None) -> None:
        """A ruled table; `widths` are relative column widths (header text wraps to fit)."""
        row_height = size * 1.9 / 72
        header_height = row_height * 2
        height = self.table_height(table, size)
        ax = self.figure.add_axes(
            (
                MARGIN / self.width,
                1 - (self.y + height) / self.height,
                self.usable / self.width,
                height / self.height,
            )
        )
        ax.axis("off")
        shares = widths or [1.0] * len(table.columns)
        inches = [self.usable * w / sum(shares) for w in shares]
        text = [
            [
                _fit(cell_text(v, c.kind), w, size)
                for c, v, w in zip(table.columns, row, inches, strict=True)
            ]
            for row in table.rows
        ]
        headers = [
            textwrap.fill(h, max(4, int(w * 72 / (size * 0.6))), break_long_words=False)
            for h, w in zip(table.headers, inches, strict=True)
        ]
        grid = ax.table(
            cellText=text or None,
            colLabels=headers,
            bbox=(0, 0, 1, 1),
            colWidths=[w / self.usable for w in inches],
            cellLoc="right",
            colLoc="center",
        )
        grid.auto_set_font_size(False)
        grid.set_fontsize(size)
        for (r, c), cell in grid.get_celld().items():
            cell.set_edgecolor("#9aa5b1")
            cell.set_linewidth(0.4)
            kind = table.columns[c].kind
            if r == 0:
                cell.set_facecolor(HEADER_FILL)
                cell.set_height(header_height / height)
                cell.get_text().set_fontweight("bold")
                cell.get_text().set_fontsize(size - 0.4)
            else:
                cell.set_height(row_height / height)
                if kind == "text":
                    cell.get_text().set_horizontalalignment("left")
                    cell.PAD = 0.03
        self.y += height


class Flow:
    """Pages filled in reading order: a block that does not fit starts a new page."""

    def __init__(self, paper: str, footer: str):
        self.paper, self.footer = paper, footer
        self.pages = [Page(paper, footer)]

    @property
    def page(self) -> Page:
        return self.pages[-1]

    def _room_for(self, inches: float) -> Page:
        if self.page.room < inches and self.page.y > MARGIN:
            self.pages.append(Page(self.paper, self.footer))
        return self.page

    def text(
        self,
        words: str,
        size: float = 9,
        weight: str = "normal",
        indent: float = 0.0,
        style: str = "normal",
    ) -> None:
        page = self._room_for(self.page.text_height(words, size, weight, indent))
        page.text(words, size, weight, indent, style)

    def table(self, table: Table, size: float = 6.8, widths: list[float] | None = None) -> None:
        self._room_for(Page.table_height(table, size)).table(table, size, widths)

    def gap(self, inches: float = 0.12) -> None:
        self.page.gap(inches)


def write_pdf(
    target: BinaryIO,
    estimate: Estimate,
    analysis: Analysis,
    about: dict[str, Any],
    paper: str = "a4",
) -> int:
    """Write the report; returns the number of pages."""
    if paper not in PAPER:
        raise ValueError(f"paper {paper!r} is unknown; use one of {', '.join(PAPER)}.")
    footer = f"Rangefold {about['rangefold_version']} - {about['title']} - {about['created']}"
    pages = [
        *_summary_pages(analysis, about, paper, footer),
        _chart_page(analysis, about, paper, footer),
    ]
    pages += _item_pages(estimate, paper, footer)
    dependence = content.dependence_of(analysis)
    if dependence is not None:
        pages.append(_dependence_page(dependence, paper, footer))
    metadata = {
        "Title": f"Contingency report: {about['title']}",
        "Creator": f"Rangefold {about['rangefold_version']}",
    }
    fonts = {"pdf.fonttype": 42, "font.family": font_family()}
    with matplotlib.rc_context(fonts), PdfPages(target, metadata=metadata) as pdf:
        for k, page in enumerate(pages, start=1):
            substituted = make_printable(page.figure)
            if substituted:
                page.figure.text(
                    MARGIN / page.width,
                    0.55 / page.height,
                    substitution_notice(substituted),
                    fontsize=6.5,
                    color="#b35806",
                )
            page.figure.text(
                1 - MARGIN / page.width,
                0.35 / page.height,
                f"page {k} of {len(pages)}",
                fontsize=7,
                ha="right",
                color="#4b5563",
            )
            pdf.savefig(page.figure)
    return len(pages)


def _summary_pages(
    analysis: Analysis, about: dict[str, Any], paper: str, footer: str
) -> list[Page]:
    page = Flow(paper, footer)
    unit = about["unit"]
    page.text("Contingency report", size=16, weight="bold")
    page.text(about["title"] + (f"  (amounts in {unit})" if unit else ""), size=11)
    page.gap()
    page.text(analysis.summary, size=9.5, weight="bold")
    page.gap()
    main, beside = _split_levels(content.level_table(analysis))
    page.table(main, size=7.2, widths=[0.6, 1.2, 1.1, 0.9, 1.2, 1.1, 0.8, 1.0])
    page.gap(0.08)
    page.table(beside, size=7.2)
    page.gap(0.15)
    page.text("Verdict per level", size=10, weight="bold")
    for level in analysis.levels:
        page.text(
            "- " + content.verdict_sentence(level, analysis.tolerance, unit) + ".", indent=0.1
        )
    page.gap()
    page.text("Why", size=10, weight="bold")
    for reason in analysis.reasons or ["no skew driver, dominant item or risk event stands out"]:
        page.text("- " + reason + ".", indent=0.1)
    page.gap()
    page.text("Evidence and method", size=10, weight="bold")
    for label, value, kind in content.facts(analysis, about):
        text = cell_text(value, kind)
        if kind == "money" and unit:
            text += f" {unit}"
        nested = 0.2 if label.startswith(" ") else 0.0
        page.text(f"{label.strip()}: {text}", size=8, indent=0.1 + nested)
    page.gap(0.15)
    page.text(about["caution"], size=8.5, style="italic")
    return page.pages


def _chart_page(analysis: Analysis, about: dict[str, Any], paper: str, footer: str) -> Page:
    page = Page(paper, footer)
    unit = about["unit"]
    page.text("Charts", size=14, weight="bold")
    top = 1 - (page.y + 0.3) / page.height
    grid = page.figure.add_gridspec(
        3, 2, left=0.1, right=0.95, top=top, bottom=0.08, hspace=0.5, wspace=0.3
    )
    draw_density(page.figure.add_subplot(grid[0, 0]), analysis, unit)
    draw_s_curve(page.figure.add_subplot(grid[0, 1]), analysis, unit)
    draw_gap_curve(page.figure.add_subplot(grid[1, :]), analysis, unit)
    # The drivers get their own left edge: item names need room that numbers do not.
    names = page.figure.add_gridspec(3, 1, left=0.38, right=0.95, top=top, bottom=0.08, hspace=0.5)
    draw_drivers(page.figure.add_subplot(names[2, 0]), analysis)
    return page


def _split_levels(table: Table) -> tuple[Table, Table]:
    """The verdict columns, then the alternatives beside them: all at once would not fit a
    portrait page at a readable size."""
    first = table.headers.index("Verdict") + 1
    columns = [0, *range(first, len(table.columns))]
    beside = Table(
        [table.columns[k] for k in columns], [[r[k] for k in columns] for r in table.rows]
    )
    return Table(table.columns[:first], [r[:first] for r in table.rows]), beside


def _item_pages(estimate: Estimate, paper: str, footer: str) -> list[Page]:
    table = content.item_table(estimate)
    if len(table.rows) > COMPACT_AFTER:
        return compact_item_pages(table, paper, footer, keep=COMPACT_AFTER)
    ml = table.headers.index("Most likely")
    widths = [2.2, 1.1, 0.75, 0.7, 0.85, 0.7, 0.38, 0.4, 0.6, 0.78, 0.72]
    pages = []
    for start in range(0, max(len(table.rows), 1), ITEMS_PER_PAGE):
        page = Page(paper, footer)
        page.text("Line items" + (" (continued)" if start else ""), size=14, weight="bold")
        page.gap()
        rows = table.rows[start : start + ITEMS_PER_PAGE]
        discrete = [r for r in rows if isinstance(r[ml], str)]
        # Value lists do not fit a printed cell: a numbered note under the table has them.
        shown = [_noted(r, discrete, ml) for r in rows]
        page.table(Table(table.columns, shown), size=6.2, widths=widths)
        page.gap()
        for k, row in enumerate(discrete, start=1):
            page.text(f"[{k}] {row[0]}: {row[ml]}", size=7)
        pages.append(page)
    return pages


def _noted(row: list[Any], discrete: list[list[Any]], ml: int) -> list[Any]:
    if not isinstance(row[ml], str):
        return row
    return [*row[:ml], f"values [{discrete.index(row) + 1}]", *row[ml + 1 :]]


def _dependence_page(dependence: Any, paper: str, footer: str) -> Page:
    page = Page(paper, footer)
    page.text("Correlation between items", size=14, weight="bold")
    page.gap()
    for line in content.dependence_lines(dependence):
        page.text(line)
    page.gap()
    page.text(
        "Pairs with a non-zero rank correlation: stated, used and achieved in the trials",
        size=10,
        weight="bold",
    )
    page.table(content.pair_table(dependence), size=6.8, widths=[3.0, 3.0, 0.8, 0.8, 0.8])
    return page
