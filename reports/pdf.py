"""The contingency report as a vector PDF: summary, charts, items (and correlation when the
items are dependent). Figure objects only, no pyplot, so it runs headless and in the window's
process alike."""

from __future__ import annotations

import textwrap
from collections.abc import Callable
from typing import Any, BinaryIO

import matplotlib
from matplotlib.axes import Axes
from matplotlib.backends.backend_pdf import PdfPages
from matplotlib.figure import Figure
from matplotlib.text import Text

from charts import numbers
from charts.drivers import draw_drivers
from charts.gap import draw_gap_curve
from charts.style import TEXT, display_text, elide_middle
from charts.total import draw_density, draw_s_curve
from engine import Analysis, Estimate
from engine.allocation import Allocation
from reports import content
from reports.caution import CAUTION, NORMAL_SHORTCUT_GLOSS
from reports.compact_items import compact_item_pages
from reports.content import Kind, Table
from reports.import_provenance import import_lines
from reports.text_fonts import font_family, make_printable, substitution_notice

PAPER = {"a4": (8.27, 11.69), "letter": (8.5, 11.0)}  # inches
MARGIN = 0.6
ITEMS_PER_PAGE = 40
FOOTNOTE_SIZE = 7.0  # points: the lines under the item table
# Beyond this many items the appendix lists this many, the widest (reports/compact_items.py).
COMPACT_AFTER = 400
HEADER_FILL = "#dce7ec"
FOOTER_SIZE = 6.5
FOOTER_COLOUR = "#4b5563"
CHART_HEIGHT = 4.0  # inches at most: the decision page's S-curve


def _fit(text: str, inches: float, size: float) -> str:
    """Shorten text that would spill out of its cell, keeping both ends (the end often says
    which of several similar items it is); the workbook keeps it whole."""
    return elide_middle(text, max(4, int((inches - 0.06) * 72 / (size * 0.55))))


def cell_text(value: Any, kind: Kind, decimals: int = 0) -> str:
    """`decimals` is for money, chosen once a column so a column reads alike."""
    if value is None:
        return ""
    if isinstance(value, str):
        return display_text(value)
    if kind == "money":
        return numbers.money(value, decimals=decimals)
    if kind == "percent":
        return numbers.percent(value)
    if kind == "level":
        return numbers.level(value)
    if kind == "probability":
        return numbers.probability(value)
    if kind == "coefficient":
        return numbers.coefficient(value)
    if kind == "statistic":
        return numbers.statistic(value)
    if isinstance(value, int):
        return numbers.count(value)
    return f"{value:,g}"


class Page:
    """One sheet of paper, filled top to bottom; positions are inches from the top left."""

    def __init__(self, paper: str, footer: str):
        self.width, self.height = PAPER[paper]
        self.figure = Figure(figsize=(self.width, self.height))
        self.y = MARGIN
        # The caution travels with every page, since pages are forwarded one at a time.
        self.figure.text(
            MARGIN / self.width,
            0.47 / self.height,
            CAUTION,
            fontsize=FOOTER_SIZE,
            fontstyle="italic",
            color=FOOTER_COLOUR,
        )
        self.figure.text(
            MARGIN / self.width,
            0.33 / self.height,
            footer,
            fontsize=FOOTER_SIZE,
            color=FOOTER_COLOUR,
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
        decimals = content.money_decimals(table)
        text = [
            [
                _fit(cell_text(v, c.kind, decimals), w, size)
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

    def chart(self, height: float, draw: Callable[[Axes], object]) -> None:
        """An axes `height` inches tall across the text width; room is left above it for
        the title and legend, and below it for the tick and axis labels."""
        top, bottom = self.y + 0.55, self.y + height - 0.45
        ax = self.figure.add_axes(
            (
                (MARGIN + 0.55) / self.width,
                1 - bottom / self.height,
                (self.usable - 0.75) / self.width,
                (bottom - top) / self.height,
            )
        )
        draw(ax)
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

    def chart(self, height: float, draw: Callable[[Axes], object]) -> None:
        self._room_for(height).chart(height, draw)

    def gap(self, inches: float = 0.12) -> None:
        self.page.gap(inches)


def write_pdf(
    target: BinaryIO,
    estimate: Estimate,
    analysis: Analysis,
    about: dict[str, Any],
    paper: str = "a4",
    allocation: Allocation | None = None,
) -> int:
    """Write the report; returns the number of pages."""
    pages = report_pages(estimate, analysis, about, paper, allocation)
    metadata = {
        "Title": f"Contingency report: {about['title']}",
        "Creator": f"Rangefold {about['rangefold_version']}",
    }
    fonts = {"pdf.fonttype": 42, "font.family": font_family()}
    with matplotlib.rc_context(fonts), PdfPages(target, metadata=metadata) as pdf:
        for page in pages:
            substituted = make_printable(page.figure)
            if substituted:
                page.figure.text(
                    MARGIN / page.width,
                    0.55 / page.height,
                    substitution_notice(substituted),
                    fontsize=FOOTER_SIZE,
                    color="#b35806",
                )
            pdf.savefig(page.figure)
    return len(pages)


def report_pages(
    estimate: Estimate,
    analysis: Analysis,
    about: dict[str, Any],
    paper: str = "a4",
    allocation: Allocation | None = None,
) -> list[Page]:
    """The pages in reading order, numbered: the decision first, then the evidence, the
    charts, the items and the correlation."""
    if paper not in PAPER:
        raise ValueError(f"paper {paper!r} is unknown; use one of {', '.join(PAPER)}.")
    footer = f"Rangefold {about['rangefold_version']} - {about['title']} - {about['created']}"
    pages = [
        *_decision_pages(analysis, about, paper, footer),
        *_evidence_pages(analysis, about, paper, footer),
        _chart_page(analysis, about, paper, footer),
    ]
    if getattr(analysis, "paths", None) is not None:
        from reports.paths_report import paths_pages  # it builds on this module's pages

        pages += paths_pages(analysis, about, paper, footer)
    if allocation is not None:
        from reports.allocation_pdf import allocation_pages

        pages += allocation_pages(allocation, about["unit"], paper, footer)
    pages += _item_pages(estimate, paper, footer)
    pages += _import_pages(estimate, paper, footer)
    dependence = content.dependence_of(analysis)
    if dependence is not None:
        pages.append(_dependence_page(dependence, paper, footer))
    for k, page in enumerate(pages, start=1):
        page.figure.text(
            1 - MARGIN / page.width,
            0.33 / page.height,
            f"page {k} of {len(pages)}",
            fontsize=FOOTER_SIZE,
            ha="right",
            color=FOOTER_COLOUR,
        )
    return pages


def page_text(page: Page) -> str:
    """Every word on a page, tables, chart titles and legends included, in drawing order;
    wrapped lines joined by spaces, so a sentence reads as one."""
    texts = [t for t in page.figure.findobj(Text) if t.get_visible() and t.get_text()]
    for ax in page.figure.axes:
        for table in ax.tables:
            texts += [cell.get_text() for _, cell in sorted(table.get_celld().items())]
    return " ".join(" ".join(t.get_text() for t in texts).split())


def _decision_pages(
    analysis: Analysis, about: dict[str, Any], paper: str, footer: str
) -> list[Page]:
    """What a project board decides on: the levels and contingency, the verdict, the
    reasons in plain words and the S-curve; the caution under the title."""
    page = Flow(paper, footer)
    unit = about["unit"]
    page.text("Contingency report", size=16, weight="bold")
    page.text(about["title"] + (f"  (amounts in {unit})" if unit else ""), size=11)
    page.text(about["caution"], size=8.5, style="italic")
    page.gap()
    page.text(analysis.summary, size=9.5, weight="bold")
    page.gap(0.06)
    page.text(NORMAL_SHORTCUT_GLOSS, size=8)
    page.gap()
    main, _ = _split_levels(content.level_table(analysis))
    page.table(main, size=7.2, widths=[0.6, 1.2, 1.1, 0.9, 1.2, 1.1, 0.8, 1.0])
    page.gap(0.15)
    page.text("Verdict per level", size=10, weight="bold")
    for sentence in content.verdict_sentences(analysis, unit):
        page.text("- " + sentence + ".", indent=0.1)
    page.gap()
    page.text(content.reasons_heading(analysis), size=10, weight="bold")
    for reason in analysis.reasons or ["no skew driver, dominant item or risk event stands out"]:
        page.text("- " + reason + ".", indent=0.1)
    page.gap()
    height = min(CHART_HEIGHT, max(page.page.room, 2.6))
    page.chart(height, lambda ax: draw_s_curve(ax, analysis, unit))
    return page.pages


def _evidence_pages(
    analysis: Analysis, about: dict[str, Any], paper: str, footer: str
) -> list[Page]:
    """For the analyst: the other quick methods beside the total, and how it was computed."""
    page = Flow(paper, footer)
    unit = about["unit"]
    page.text("Evidence and method", size=14, weight="bold")
    page.gap()
    page.text("Other quick methods beside the total", size=10, weight="bold")
    _, beside = _split_levels(content.level_table(analysis))
    page.table(beside, size=7.2)
    page.gap(0.2)
    decimals = numbers.decimals_for([analysis.total.mean, analysis.total.sd])
    for label, value, kind in content.facts(analysis, about):
        text = cell_text(value, kind, decimals)
        if kind == "money" and unit:
            text += f" {unit}"
        page.text(f"{label}: {text}", size=8.5, indent=0.1)
    return page.pages


def _chart_page(analysis: Analysis, about: dict[str, Any], paper: str, footer: str) -> Page:
    page = Page(paper, footer)
    unit = about["unit"]
    page.text("Charts", size=14, weight="bold")
    top = 1 - (page.y + 0.5) / page.height
    grid = page.figure.add_gridspec(3, 1, left=0.12, right=0.95, top=top, bottom=0.12, hspace=0.75)
    draw_density(page.figure.add_subplot(grid[0, 0]), analysis, unit)
    draw_gap_curve(page.figure.add_subplot(grid[1, 0]), analysis, unit)
    # The drivers get their own left edge: item names need room that numbers do not.
    names = page.figure.add_gridspec(3, 1, left=0.38, right=0.95, top=top, bottom=0.12, hspace=0.75)
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
    items = list(estimate.items)
    pages: list[Page] = []
    start = 0
    while start < len(table.rows) or not pages:
        page = Page(paper, footer)
        page.text("Line items" + (" (continued)" if start else ""), size=14, weight="bold")
        page.gap()
        end = start + 1
        while end < min(start + ITEMS_PER_PAGE, len(table.rows)) and _fits(
            page, table, items, ml, start, end + 1
        ):
            end += 1
        rows = table.rows[start:end]
        discrete = [r for r in rows if isinstance(r[ml], str)]
        # Value lists and notes do not fit a printed cell: lines under the table have them.
        shown = [_noted(r, discrete, ml) for r in rows]
        page.table(Table(table.columns, shown), size=6.2, widths=widths)
        page.gap()
        for line in _footnotes(table.rows[start:end], items[start:end], ml):
            page.text(line, size=FOOTNOTE_SIZE)
        pages.append(page)
        start = end
    return pages


def _fits(page: Page, table: Table, items: list, ml: int, start: int, end: int) -> bool:
    """Whether rows start..end, their table and their lines under it, fit the page."""
    rows = table.rows[start:end]
    below = sum(page.text_height(t, FOOTNOTE_SIZE) for t in _footnotes(rows, items[start:end], ml))
    return page.table_height(Table(table.columns, rows), 6.2) + 0.12 + below <= page.room


def _footnotes(rows: list[list[Any]], items: list, ml: int) -> list[str]:
    """The discrete items' value lists, numbered as their cells say, then each item's notes
    (columns the import kept but did not read: a Basis or Notes column)."""
    discrete = [r for r in rows if isinstance(r[ml], str)]
    lines = [f"[{k}] {row[0]}: {row[ml]}" for k, row in enumerate(discrete, start=1)]
    noted = [(item.name, item.notes) for item in items if item.notes]
    if noted:
        lines.append("Notes kept from the estimate's other columns:")
    lines += [f"{name}: " + "; ".join(f"{h}: {t}" for h, t in n.items()) for name, n in noted]
    return lines


def _import_pages(estimate: Estimate, paper: str, footer: str) -> list[Page]:
    """The rows, sheets and columns the import left out, in `rangefold check`'s words."""
    lines = import_lines(estimate)
    if not lines:
        return []
    flow = Flow(paper, footer)
    flow.text("What the import read and left out", size=14, weight="bold")
    flow.gap()
    for line in lines:
        flow.text(line[0].upper() + line[1:], size=8)
    return flow.pages


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
