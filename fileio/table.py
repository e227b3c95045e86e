"""From a grid of cell text (a sheet or a CSV file) to an estimate, with its import summary.

Every row below the header ends up somewhere the user can see it: as a line item (a draft
when something in it could not be read) or in `summary["rows_skipped"]` with the reason
(blank, a totals row, a section heading). `rows_read == items_taken + len(rows_skipped)`.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from typing import Any

from engine import CorrelationSpec, Estimate, LineItem, Problem
from engine.validation import item_problems
from fileio.headers import (
    AMOUNT_COLUMNS,
    HEADER_SEARCH_ROWS,
    MAX_HEADER_CHARS,
    HeaderRow,
    column_letter,
    find_header,
    header_percentile,
    says_percent,
)
from fileio.rows import is_totals_name, item_from_cells
from fileio.safety import UnreadableFile

# Columns whose merged cells mean "the same for every row" (a group label down a section);
# anywhere else a merged cell hides a value the rows below it lack.
_FILL_DOWN_COLUMNS = ("Group", "Distribution")


@dataclass
class Table:
    """A sheet or CSV file as cell text, before its header is known; row i is sheet row i+1."""

    grid: list[list[str]]
    source: str
    sheet: str | None = None
    decimal: str | None = None
    # Cells (row index, column index) holding a formula with no saved result.
    formulas: set[tuple[int, int]] = field(default_factory=set)
    # Cells covered by a merge (not its top-left cell) -> (top-left cell, range text).
    merged: dict[tuple[int, int], tuple[tuple[int, int], str]] = field(default_factory=dict)
    # Whether messages name cells as a spreadsheet does ("C5"); CSV rows are named by number.
    cell_references: bool = False
    notes: dict[str, Any] = field(default_factory=dict)

    def header(self, mapping: dict[str, str] | None) -> HeaderRow:
        found = find_header(self.grid, mapping)
        if found is not None:
            return found
        where = f"sheet {self.sheet!r} of {self.source}" if self.sheet else self.source
        if mapping:
            raise UnreadableFile(
                f"no row in the first {HEADER_SEARCH_ROWS} rows of {where} has the headers "
                f"the mapping names ({', '.join(h for h in mapping.values() if h)})."
            )
        raise UnreadableFile(
            f"no header row found in the first {HEADER_SEARCH_ROWS} rows of {where}: expected a "
            "row naming an Item (or Description) column and Low, Most likely or High columns. "
            "Rename the headers, or choose the columns in the import dialog."
        )


def estimate_from_table(
    table: Table, mapping: dict[str, str] | None = None, correlation: CorrelationSpec | None = None
) -> Estimate:
    header = table.header(mapping)
    columns = {column: header.headers.index(h) for column, h in header.mapping.items()}
    percent_probability = "Probability" in header.mapping and says_percent(
        header.mapping["Probability"]
    )
    implied_pct = _implied_percentiles(header.mapping)
    grid = table.grid
    last = max((i for i, row in enumerate(grid) if any(row)), default=header.index)
    items: list[LineItem] = []
    skipped: list[dict[str, Any]] = []
    heading = ""
    for index in range(header.index + 1, last + 1):
        row_number = index + 1
        cells_row = grid[index]
        cells = {
            c: _cell(table, index, i, fill_down=c in _FILL_DOWN_COLUMNS) for c, i in columns.items()
        }
        if not any(cells_row):
            skipped.append({"row": row_number, "reason": "blank row"})
            continue
        if not any(cells.values()):
            others = ", ".join(
                header.headers[i]
                for i, text in enumerate(cells_row)
                if text and i < len(header.headers)
            )
            skipped.append(
                {"row": row_number, "reason": f"text only in columns not read ({others})"}
            )
            continue
        if set(k for k, v in cells.items() if v) == {"Item"}:
            heading = cells["Item"]
            skipped.append(
                {
                    "row": row_number,
                    "reason": f"section heading {heading!r} (no values); used as the group of the items below it that have none",
                }
            )
            continue
        for column, pct in implied_pct.items():
            cells.setdefault(column, pct)
        item = item_from_cells(
            cells,
            row_number,
            table.sheet,
            decimal=table.decimal,
            percent_probability=percent_probability,
            formulas={c for c, i in columns.items() if (index, i) in table.formulas},
            cell_names=(
                {c: f"{column_letter(i)}{row_number}" for c, i in columns.items()}
                if table.cell_references
                else None
            ),
        )
        if _is_totals_row(item, items):
            reason = (
                f"totals row {item.name!r}"
                if item.name
                else "totals row (no label; its amounts are the sums of the items above it)"
            )
            skipped.append({"row": row_number, "reason": reason})
            continue
        if heading and not item.group:
            item = item.with_changes(group=heading)
        hidden = _merged_problems(table, index, columns, item)
        if hidden:
            item = item.with_changes(read_problems=item.read_problems + hidden)
        items.append(item)

    summary: dict[str, Any] = {
        "source": table.source,
        "sheet": table.sheet,
        "header_row": header.index + 1,
        "rows_read": last - header.index,
        "items_taken": len(items),
        "rows_skipped": skipped,
        "drafts": sum(1 for i in items if i.read_problems or item_problems(i)),
        "mapping": dict(header.mapping),
        "columns_ignored": _ignored(header, grid, last),
        **table.notes,
    }
    return Estimate(
        items=items,
        title=_title(grid, header.index),
        unit=_unit(header.mapping) or _unit_in_title_block(grid[: header.index]),
        source=table.source,
        summary=summary,
        correlation=correlation or CorrelationSpec(),
    )


def _cell(table: Table, index: int, column: int, *, fill_down: bool) -> str:
    covered = table.merged.get((index, column))
    if fill_down and covered is not None:
        index, column = covered[0]
    row = table.grid[index]
    return row[column] if column < len(row) else ""


def _implied_percentiles(mapping: dict[str, str]) -> dict[str, str]:
    """Low %/High % read off headers such as `P10` or `High (P90)` when no such column exists."""
    implied = {}
    for end, pct_column in (("Low", "Low %"), ("High", "High %")):
        if end in mapping and pct_column not in mapping:
            pct = header_percentile(mapping[end])
            if pct is not None:
                implied[pct_column] = f"{pct:g}"
    return implied


def _is_totals_row(item: LineItem, taken: list[LineItem]) -> bool:
    """A totals row by its label, or an unlabelled (or "Total ...") row whose amounts are the
    sums of the items above it."""
    if is_totals_name(item.name):
        return True
    if (item.name and not item.name.lower().startswith("total")) or len(taken) < 2:
        return False
    pairs = [
        (getattr(item, f), sum(getattr(i, f) or 0.0 for i in taken))
        for f in ("low", "most_likely", "high")
        if getattr(item, f) is not None
    ]
    return bool(pairs) and all(abs(v - s) <= 1e-9 * max(1.0, abs(s)) for v, s in pairs)


def _merged_problems(
    table: Table, index: int, columns: dict[str, int], item: LineItem
) -> tuple[Problem, ...]:
    problems = []
    for column, i in columns.items():
        covered = table.merged.get((index, i))
        if covered is None or column in _FILL_DOWN_COLUMNS:
            continue
        (top_row, top_col), span = covered
        anchor = f"{column_letter(top_col)}{top_row + 1}"
        problems.append(
            Problem(
                f"cell {column_letter(i)}{index + 1} is inside the merged cells {span}; only {anchor} holds a value.",
                "unmerge the cells and enter the value on each row.",
                item=item.name,
                row=index + 1,
                column=column,
                sheet=table.sheet,
            )
        )
    return tuple(problems)


def _ignored(header: HeaderRow, grid: list[list[str]], last: int) -> list[str]:
    """Headers of columns that hold data but are not read, so the summary can say so."""
    read = set(header.mapping.values())
    ignored = []
    for i, name in enumerate(header.headers):
        if name in read:
            continue
        if any(i < len(row) and row[i] for row in grid[header.index + 1 : last + 1]):
            ignored.append(name)
    return ignored


_UNIT_LABEL = re.compile(r"\b(?:unit|currency)\s*[:=]\s*(\S.*?)\s*$", re.IGNORECASE)
_UNIT_IN = re.compile(
    r"\bin ([A-Z]{3}\b|(?i:working days|calendar days|days|weeks|months|hours)\b)"
)


def _unit_in_title_block(rows: list[list[str]]) -> str:
    """A unit stated above the header: "Currency: EUR", "Cost estimate in EUR", "in working days"."""
    for row in rows:
        for text in row:
            if len(text) > MAX_HEADER_CHARS:
                continue  # a note, not a unit statement; the expressions would crawl over it
            found = _UNIT_LABEL.search(text) or _UNIT_IN.search(text)
            if found:
                return found.group(1)
    return ""


def _title(grid: list[list[str]], header_index: int) -> str:
    for row in grid[:header_index]:
        for text in row:
            if text:
                return text
    return ""


def _unit(mapping: dict[str, str]) -> str:
    """A unit in an amount header's brackets: `Low (EUR)`, `Most likely [days]`."""
    for column in AMOUNT_COLUMNS:
        found = re.search(r"[(\[]\s*([^()\[\]]+?)\s*[)\]]", mapping.get(column, ""))
        if found and header_percentile(found.group(1)) is None:
            return found.group(1)
    return ""
