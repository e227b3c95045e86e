"""From a grid of cell text (a sheet or a CSV file) to an estimate, with its import summary.

Every row below the header ends up somewhere the user can see it: as a line item (a draft
when something in it could not be read) or in `summary["rows_skipped"]` with the reason
(blank, a subtotal by label, formula or arithmetic — see `fileio.subtotals` —, a section
heading). `rows_read == items_taken + len(rows_skipped)`. Every cell of a row that no field
takes travels with its item as a note, by header (`fileio.column_checks`).
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from typing import Any

from engine import CorrelationSpec, Estimate, LineItem, Problem
from engine.validation import item_problems
from fileio.column_checks import (
    currency_in_text,
    currency_problem,
    duplicate_headers,
    duplicate_problem,
    extra_fields_problem,
    notes_of,
    stated_currency,
)
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
from fileio.rows import item_from_cells
from fileio.safety import UnreadableFile
from fileio.subtotals import (
    SectionSums,
    adding_formula,
    row_span,
    sheets_referenced,
    single_amount,
    totals_label,
)

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
    # Every formula cell (row index, column index) -> its formula text, results or not.
    formula_text: dict[tuple[int, int], str] = field(default_factory=dict)
    # Sheet rows the user took back as items although they read as subtotals.
    keep_rows: frozenset[int] = frozenset()
    # The other sheets read into the same estimate: a row copying their cells is not an item.
    read_with: frozenset[str] = frozenset()
    # Cells covered by a merge (not its top-left cell) -> (top-left cell, range text).
    merged: dict[tuple[int, int], tuple[tuple[int, int], str]] = field(default_factory=dict)
    # Rows (0-based) the user hid in the sheet: read like the rest, and said so.
    hidden_rows: frozenset[int] = frozenset()
    # Whether messages name cells as a spreadsheet does ("C5"); CSV rows are named by number.
    cell_references: bool = False
    notes: dict[str, Any] = field(default_factory=dict)
    # Faults of the file's structure found while reading it (a CSV quote that never closes).
    problems: list[Problem] = field(default_factory=list)

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
    read_problems: list[Problem] = list(table.problems)
    heading = ""
    sums = SectionSums()
    unit = _unit(header) or _unit_in_title_block(grid[: header.index])
    currency = stated_currency(unit)
    read_problems += _duplicate_problems(table, header, mapping)
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
            sums.new_section()
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
        total = (
            None if row_number in table.keep_rows else _subtotal(table, index, columns, item, sums)
        )
        if total is not None:
            reason, confirm = total
            skipped.append(
                {"row": row_number, "reason": reason, "subtotal": True, "confirm": confirm}
            )
            if confirm:
                read_problems.append(_confirm_problem(table, row_number, item, reason))
            sums.add_subtotal(row_number, item)
            continue
        sums.add_item(row_number, item)
        if heading and not item.group:
            item = item.with_changes(group=heading)
        extra = _merged_problems(table, index, columns, item) + _cell_doubts(
            table, index, columns, item, len(header.headers), currency
        )
        notes = notes_of(cells_row, header.headers, set(columns.values()))
        if extra or notes:
            item = item.with_changes(read_problems=item.read_problems + extra, notes=notes)
        items.append(item)

    summary: dict[str, Any] = {
        "source": table.source,
        "sheet": table.sheet,
        "header_row": header.index + 1,
        "rows_read": last - header.index,
        "items_taken": len(items),
        "rows_skipped": skipped,
        "rows_hidden": [
            i.row for i in items if i.row is not None and i.row - 1 in table.hidden_rows
        ],
        "drafts": sum(1 for i in items if i.read_problems or item_problems(i)),
        "mapping": dict(header.mapping),
        "columns_ignored": _ignored(header, grid, last),
        **table.notes,
    }
    return Estimate(
        items=items,
        title=_title(grid, header.index),
        unit=unit,
        source=table.source,
        read_problems=read_problems,
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


def _subtotal(
    table: Table, index: int, columns: dict[str, int], item: LineItem, sums: SectionSums
) -> tuple[str, bool] | None:
    """(reason, to confirm) when the row is a total or subtotal (see fileio.subtotals)."""
    row_number = index + 1
    label = totals_label(table.grid[index], columns.get("Item", 0))
    if label is not None and label[1]:
        return f"subtotal row {label[0]!r} (its label says it is a total)", False
    for column in ("Low", "Most likely", "High"):
        i = columns.get(column)
        formula = table.formula_text.get((index, i)) if i is not None else None
        copied = {s.lower() for s in sheets_referenced(formula or "")}
        linked = sorted(s for s in table.read_with if s.lower() in copied)
        if linked:
            cell = f"{column_letter(i)}{row_number}"
            return (
                f"row {item.name or '(no label)'!r} takes cell {cell} from sheet {linked[0]!r} "
                f"({formula}), which is read too: counting both would count it twice",
                False,
            )
        rows = adding_formula(formula, row_number) if formula else None
        if rows:
            cell = f"{column_letter(i)}{row_number}"
            return (
                f"subtotal row {item.name or '(no label)'!r}: cell {cell} holds {formula}, "
                f"adding {row_span(rows)}",
                False,
            )
    summed = sums.rows_summed_by(item)
    if label is not None and (summed or sums.all_amounts_summed(item)):
        return f"subtotal row {label[0]!r} (a Total label, and its amounts are sums)", False
    if not item.name and sums.all_amounts_summed(item):
        return "totals row (no label; its amounts are the sums of the items above it)", False
    if summed and "Distribution" not in {c for c in columns if _text(table, index, columns[c])}:
        what, rows, given = summed
        if len(given) == 1:
            amounts = f"its one amount, {next(iter(given.values())):,.10g}, equals the sum"
        else:
            listed = ", ".join(f"{_FIELD_COLUMNS[f]} {v:,.10g}" for f, v in given.items())
            amounts = f"its amounts ({listed}) equal the sums"
        return (
            f"row {item.name!r} looks like a subtotal: {amounts} of {row_span(rows)} above it "
            f"({what}); left out until you confirm",
            True,
        )
    return None


def _text(table: Table, index: int, column: int) -> str:
    row = table.grid[index]
    return row[column].strip() if column < len(row) else ""


def _confirm_problem(table: Table, row_number: int, item: LineItem, reason: str) -> Problem:
    return Problem(
        reason[0].upper() + reason[1:] + ".",
        "if it is a subtotal, put Subtotal in its label or delete the row; if it is a line "
        "item, state its Distribution (e.g. fixed) or a Low and High, or take it back as an "
        "item in the import dialog.",
        item=item.name,
        row=row_number,
        column=_FIELD_COLUMNS[single_amount(item)[0]] if single_amount(item) else None,
        sheet=table.sheet,
    )


_FIELD_COLUMNS = {"low": "Low", "most_likely": "Most likely", "high": "High"}


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


def _cell_doubts(
    table: Table,
    index: int,
    columns: dict[str, int],
    item: LineItem,
    width: int,
    currency: str | None,
) -> tuple[Problem, ...]:
    """An amount in another currency than the sheet states; a CSV row wider than its header."""
    problems = []
    row = table.grid[index]
    if currency:
        for column in AMOUNT_COLUMNS:
            i = columns.get(column)
            if i is None:
                continue
            text = row[i] if i < len(row) else ""
            cell = (
                f"cell {column_letter(i)}{index + 1}"
                if table.cell_references
                else f"the {column} cell"
            )
            found = currency_problem(
                text, currency, cell, column, index + 1, item.name, table.sheet
            )
            if found:
                problems.append(found)
    if not table.cell_references:
        found = extra_fields_problem(row, width, index + 1, item.name)
        if found:
            problems.append(found)
    return tuple(problems)


def _duplicate_problems(
    table: Table, header: HeaderRow, mapping: dict[str, str] | None
) -> list[Problem]:
    """A read column whose header names another column too, unless the user chose it."""
    if mapping:
        return []
    read = {header.headers.index(h) for h in header.mapping.values()}
    return [
        duplicate_problem(
            name, cols, next(c for c in cols if c in read), table.sheet, header.index + 1
        )
        for name, cols in duplicate_headers(table.grid[header.index]).items()
        if read & set(cols)
    ]


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
    for row in rows:
        for text in row:
            code = currency_in_text(text)
            if code:
                return code
    return ""


def _title(grid: list[list[str]], header_index: int) -> str:
    for row in grid[:header_index]:
        for text in row:
            if text:
                return text
    return ""


def _unit(header: HeaderRow) -> str:
    """A unit in an amount header's brackets: `Low (EUR)`, `Most likely [days]`; not the
    column letter that tells two same-named headers apart (`High (E)`)."""
    for column in AMOUNT_COLUMNS:
        name = header.mapping.get(column, "")
        found = re.search(r"[(\[]\s*([^()\[\]]+?)\s*[)\]]", name)
        if not found or header_percentile(found.group(1)) is not None:
            continue
        if found.group(1) != column_letter(header.headers.index(name)):
            return found.group(1)
    return ""
