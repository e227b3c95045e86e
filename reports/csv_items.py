"""The line items as a CSV file, in the columns the importer reads, so the file opens in any
spreadsheet program and imports back. Text from the user is neutralised: a spreadsheet runs a
field beginning with `=`, `+`, `-`, `@`, tab or CR as a formula (CSV injection), so such a
field gets a leading single quote, as the OWASP CSV-injection guidance recommends."""

from __future__ import annotations

import csv
import io
from pathlib import Path

from engine import COLUMNS, Estimate, LineItem
from engine.schedule.paths import path_text
from fileio.cells import FORMULA_STARTS
from reports.content import discrete_text
from reports.item_sources import note_headers

# The importer's columns; "PERT shape" because a bare "Shape" header reads as the family.
CSV_COLUMNS = (*COLUMNS, "PERT shape")


def neutralise(text: str) -> str:
    """User text that cannot run as a formula when the CSV file is opened."""
    return "'" + text if text.startswith(FORMULA_STARTS) else text


def write_items_csv(path: str | Path, estimate: Estimate) -> Path:
    """Write every item, drafts included (a cell that could not be read is written as the
    text the user gave), atomically; UTF-8 with a byte-order mark, which spreadsheet programs
    need to show non-ASCII text rightly (common practice, no source)."""
    from fileio.atomic import write_atomic

    path = Path(path)
    notes = note_headers(estimate)  # unmapped columns travel back under their own headers
    out = io.StringIO(newline="")
    writer = csv.writer(out, lineterminator="\r\n")
    writer.writerow([*CSV_COLUMNS, *notes])
    for item in estimate.items:
        writer.writerow(
            [_field(item, column) for column in CSV_COLUMNS]
            + [neutralise(item.notes.get(h, "")) for h in notes]
        )
    write_atomic(path, out.getvalue().encode("utf-8-sig"), backup=False)
    return path


def _field(item: LineItem, column: str) -> str:
    raw_column = "Shape" if column == "PERT shape" else column  # `raw` uses engine columns
    if raw_column in item.raw:
        return neutralise(item.raw[raw_column])
    value = {
        "Item": item.name,
        "Distribution": item.family,
        "Low": item.low,
        "Most likely": discrete_text(item.values)
        if item.family == "discrete"
        else item.most_likely,
        "High": item.high,
        "Low %": item.low_pct,
        "High %": item.high_pct,
        "Probability": item.probability,
        "Group": item.group,
        "Path": path_text(item.paths),
        "PERT shape": item.shape if item.family == "pert" else None,
    }[column]
    if value is None:
        return ""
    if isinstance(value, str):
        return neutralise(value)
    return repr(float(value))  # numbers exactly; a minus sign here is a number's, not a formula
