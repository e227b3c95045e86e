"""Tab-separated blocks, the way spreadsheets put rows on the clipboard.

Copy writes a header line so the block pastes into a spreadsheet with its meaning attached;
paste reads a header line when the first row names known columns, and otherwise takes the
cells in the table's column order.
"""

from __future__ import annotations

import csv
import io
from collections.abc import Iterable

from engine import LineItem
from fileio.safety import MAX_ITEM_ROWS
from gui.item_text import EDIT_COLUMNS, item_cells

KNOWN_HEADERS = {c.lower(): c for c in (*EDIT_COLUMNS, "Shape")}
MAX_PASTE_ROWS = MAX_ITEM_ROWS  # the same limit as an imported sheet


def items_to_tsv(items: Iterable[LineItem]) -> str:
    lines = ["\t".join(EDIT_COLUMNS)]
    for item in items:
        cells = item_cells(item)
        lines.append("\t".join(_clean(cells[c]) for c in EDIT_COLUMNS))
    return "\r\n".join(lines) + "\r\n"


def _clean(text: str) -> str:
    return text.replace("\t", " ").replace("\r", " ").replace("\n", " ")


def tsv_rows(text: str) -> list[list[str]]:
    """Rows of cells; a trailing empty line (spreadsheets add one) is not a row.

    Spreadsheets quote a cell that holds a line break, a tab or a quote ("two\nlines"), so
    the block is read as CSV with tabs: a multi-line cell stays one cell of one row.
    """
    rows = list(csv.reader(io.StringIO(text, newline=""), delimiter="\t"))
    while rows and not any(cell.strip() for cell in rows[-1]):
        rows.pop()
    if len(rows) > MAX_PASTE_ROWS + 1:
        raise ValueError(
            f"the clipboard holds {len(rows):,} rows, more than Rangefold pastes at once "
            f"({MAX_PASTE_ROWS:,} line items). Fix: import the file with File ▸ Import items, "
            "or paste it in parts."
        )
    return rows


def tsv_to_cells(text: str) -> list[dict[str, str]]:
    """Each pasted row as {column: text}, keyed by the header line if there is one.

    Raises ValueError when a header line names a column the table does not have, so that
    nothing pasted is silently dropped.
    """
    rows = tsv_rows(text)
    if not rows:
        return []
    header = [c.strip().lower() for c in rows[0]]
    known = sum(1 for c in header if c in KNOWN_HEADERS)
    if known >= 2 or (known == 1 and len(header) == 1 and header[0] in KNOWN_HEADERS):
        unknown = [rows[0][k] for k, c in enumerate(header) if c and c not in KNOWN_HEADERS]
        if unknown:
            raise ValueError(
                f"the pasted header has column(s) the table does not know: {', '.join(unknown)}. "
                f"Fix: rename them to one of {', '.join(EDIT_COLUMNS)}, or leave them out."
            )
        columns = [KNOWN_HEADERS.get(c, "") for c in header]
        _refuse_repeated(columns)
        body = rows[1:]
    else:
        columns = list(EDIT_COLUMNS)
        body = rows
    cells = []
    for number, row in enumerate(body, start=1):
        if len(row) > len(columns) and any(x.strip() for x in row[len(columns) :]):
            raise ValueError(
                f"pasted row {number} has {len(row)} cells but only {len(columns)} columns are "
                f"known ({', '.join(c for c in columns if c)}). Fix: paste with a header line, "
                "or only the table's columns in its order."
            )
        if not any(x.strip() for x in row):
            continue
        cells.append({c: x.strip() for c, x in zip(columns, row, strict=False) if c})
    return cells


def _refuse_repeated(columns: list[str]) -> None:
    """Two header cells naming one column: which one holds the figure is a guess, so ask."""
    seen: dict[str, int] = {}
    for number, column in enumerate(columns, start=1):
        if column and column in seen:
            raise ValueError(
                f"the pasted header names {column} twice (columns {seen[column]} and {number}). "
                "Fix: rename or leave out one of them."
            )
        seen[column] = number
