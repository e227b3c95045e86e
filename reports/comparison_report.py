"""The before-and-after report as PDF, xlsx or JSON (by extension), written atomically."""

from __future__ import annotations

import io
import json
from pathlib import Path
from typing import Any, BinaryIO

from engine.comparison import Comparison
from reports import comparison_content as said
from reports.caution import CAUTION
from reports.json_report import _plain

FORMATS = (".xlsx", ".pdf", ".json")


def comparison_payload(comparison: Comparison, about: dict[str, Any]) -> dict[str, Any]:
    return _plain({"comparison": comparison.to_dict(), "report": about})


def comparison_json(comparison: Comparison, about: dict[str, Any]) -> str:
    data = comparison_payload(comparison, about)
    return json.dumps(data, indent=2, ensure_ascii=False, allow_nan=False)


def write_comparison(
    path: str | Path, comparison: Comparison, about: dict[str, Any], paper: str = "a4"
) -> Path:
    from fileio.atomic import write_atomic

    path = Path(path)
    suffix = path.suffix.lower()
    if suffix not in FORMATS:
        raise ValueError(
            f"cannot write a comparison as {suffix or 'a file without extension'!r}: "
            f"use {', '.join(FORMATS)}."
        )
    stream = io.BytesIO()
    if suffix == ".pdf":
        _write_pdf(stream, comparison, about, paper)
    elif suffix == ".xlsx":
        _write_xlsx(stream, comparison, about)
    else:
        stream.write((comparison_json(comparison, about) + "\n").encode("utf-8"))
    write_atomic(path, stream.getvalue(), backup=False)
    return path


def _write_pdf(target: BinaryIO, comparison: Comparison, about: dict[str, Any], paper: str) -> None:
    import matplotlib
    from matplotlib.backends.backend_pdf import PdfPages

    from charts.comparison import draw_before_after
    from reports.allocation_pdf import chart_block, titled_table
    from reports.pdf import Flow

    unit = about.get("unit", "")
    footer = f"Rangefold {about['rangefold_version']} - before and after - {about['created']}"
    flow = Flow(paper, footer)
    flow.text("Before and after", size=16, weight="bold")
    flow.text(
        f"{comparison.before_title}  →  {comparison.after_title}"
        + (f"  (amounts in {unit})" if unit else ""),
        size=11,
    )
    flow.gap()
    flow.text(comparison.summary, size=9.5, weight="bold")
    flow.gap()
    flow.table(said.level_table(comparison), size=7.2, widths=[0.6, 1, 1, 1, 1, 1, 1])
    flow.gap()
    flow.table(said.facts_table(comparison), size=7.2, widths=[2.4, 1, 1])
    flow.gap()
    draw_before_after(chart_block(flow, 3.8), comparison, unit)
    level = comparison.levels[-1].level
    title = f"Where the contingency sits at P{level:g}, by group"
    if comparison.shares_note:
        flow.text(title, size=10, weight="bold")
        flow.text(comparison.shares_note, size=8.5)
    else:
        titled_table(flow, title, said.group_table(comparison, level), 7, [2.4, 1, 1, 1])
    flow.gap()
    changes = said.change_table(comparison)
    if changes.rows:
        titled_table(flow, "What changed", changes, 6.5, [2.2, 1.0, 0.6, 4.0])
    else:
        flow.text("What changed", size=10, weight="bold")
        flow.text("No line item was added, removed or changed.")
    flow.gap()
    flow.text(CAUTION, size=8.5, style="italic")
    pages = flow.pages
    with matplotlib.rc_context({"pdf.fonttype": 42}), PdfPages(target) as pdf:
        for k, page in enumerate(pages, start=1):
            page.figure.text(
                0.93, 0.35 / page.height, f"page {k} of {len(pages)}", fontsize=7, ha="right"
            )
            pdf.savefig(page.figure)


def _write_xlsx(target: BinaryIO, comparison: Comparison, about: dict[str, Any]) -> None:
    import numpy as np
    from openpyxl import Workbook
    from openpyxl.chart import Reference, ScatterChart, Series
    from openpyxl.utils import get_column_letter

    from reports.content import Column, make_table
    from reports.xlsx import BOLD, put, put_table

    book = Workbook()
    sheet = book.active
    sheet.title = "Before and after"
    put(sheet, 1, 1, "Before and after").font = BOLD
    put(sheet, 2, 1, CAUTION)  # under the title, as on the report's Summary sheet
    put(sheet, 3, 1, f"{comparison.before_title} → {comparison.after_title}")
    put(sheet, 4, 1, comparison.summary)
    row = put_table(sheet, 6, said.level_table(comparison)) + 1
    row = put_table(sheet, row, said.facts_table(comparison)) + 1
    level = comparison.levels[-1].level
    if comparison.shares_note:
        put(sheet, row, 1, comparison.shares_note)
        row += 2
    else:
        row = put_table(sheet, row, said.group_table(comparison, level)) + 1
    put_table(sheet, row, said.change_table(comparison))
    sheet.column_dimensions["A"].width = 46
    for col in range(2, 9):
        sheet.column_dimensions[get_column_letter(col)].width = 16

    curves = book.create_sheet("S-curves")
    q = np.linspace(0.005, 0.995, 199)
    records = list(
        zip(100 * q, comparison.before.total.ppf(q), comparison.after.total.ppf(q), strict=True)
    )
    table = make_table(
        [
            Column("Confidence level (%)", "number", lambda r: float(r[0])),
            Column("Total before", "money", lambda r: float(r[1])),
            Column("Total after", "money", lambda r: float(r[2])),
        ],
        records,
    )
    put_table(curves, 1, table)
    chart = ScatterChart()
    chart.title = "S-curves before and after"
    chart.x_axis.title = "Total"
    chart.y_axis.title = "Confidence level (%)"
    levels = Reference(curves, min_col=1, min_row=2, max_row=len(records) + 1)
    for col, name in ((2, "Before"), (3, "After")):
        series = Series(
            levels,
            xvalues=Reference(curves, min_col=col, min_row=2, max_row=len(records) + 1),
            title=name,
        )
        series.marker.symbol = "none"
        chart.series.append(series)
    chart.width, chart.height = 18, 10
    curves.add_chart(chart, "E2")
    book.save(target)
