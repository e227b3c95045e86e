"""Workbooks (.xlsx, .xlsm) as a `Table`, through openpyxl in read-only mode.

Read-only mode streams the sheet (large workbooks stay cheap) and gives each formula's cached
result, the value the user last saw. A formula saved without a result (files written by
scripts rather than by a spreadsheet program) has none: a second pass reads the formulas
themselves so such a cell can be named in a message instead of reading as blank. Read-only
mode does not expose merged ranges either, so they are read from the sheet's XML directly.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Iterator
from contextlib import closing, contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from engine import CorrelationSpec, Problem
from fileio.correlations import CORRELATION_SHEET, spec_from_grid
from fileio.headers import HEADER_SEARCH_ROWS, find_header
from fileio.table import Table

# Sheets that hold words about the estimate rather than line items.
_NOT_LINE_ITEMS = frozenset(
    {
        "correlations",
        "notes",
        "instructions",
        "readme",
        "read me",
        "help",
        "about",
        "cover",
        "guide",
    }
)
_MERGE_TAG = "{http://schemas.openxmlformats.org/spreadsheetml/2006/main}mergeCell"


@dataclass
class WorkbookRead:
    table: Table
    sheets: list[str]
    correlation: CorrelationSpec
    correlation_problems: list[Problem]


def read_workbook(
    path: Path,
    sheet: str | None = None,
    mapping: dict[str, str] | None = None,
    *,
    any_sheet: bool = False,
) -> WorkbookRead:
    """The chosen sheet (or the first that looks like line items) and the Correlations sheet.

    `any_sheet` falls back to the first sheet when none looks like line items (the import
    dialog's preview, where the user then maps the columns by hand).
    """
    with _open(path, data_only=True) as book:
        sheets = list(book.sheetnames)
        try:
            name = _choose_sheet(book, path, sheet, mapping)
        except ValueError:
            if not any_sheet or sheet is not None or not sheets:
                raise
            name = sheets[0]
        ws = book[name]
        grid = [[cell_text(c) for c in row] for row in ws.iter_rows()]
        merged = _merged_cells(ws)
        spec, problems = CorrelationSpec(), []
        corr_name = next((s for s in sheets if s.lower() == CORRELATION_SHEET.lower()), None)
        if corr_name is not None:
            corr_grid = [[cell_text(c) for c in row] for row in book[corr_name].iter_rows()]
            spec, problems = spec_from_grid(corr_grid, corr_name)
    formulas = _formulas_without_results(path, name, grid)
    for (r, c), formula in formulas.items():
        grid[r][c] = formula
    table = Table(
        grid=_trim(grid),
        source=str(path),
        sheet=name,
        formulas=set(formulas),
        merged=merged,
        cell_references=True,
    )
    return WorkbookRead(table, sheets, spec, problems)


def cell_text(cell: Any) -> str:
    """A cell's value as the text the importer parses: numbers exactly, percent-formatted
    numbers with their % sign (a cell showing 30% holds 0.3), dates as ISO text."""
    value = cell.value
    if value is None:
        return ""
    if isinstance(value, bool):
        return "TRUE" if value else "FALSE"
    if isinstance(value, int | float):
        if "%" in (getattr(cell, "number_format", None) or ""):
            return f"{value * 100:.15g}%"
        if isinstance(value, float) and value.is_integer() and abs(value) < 1e15:
            return str(int(value))
        return repr(value)
    if isinstance(value, dt.datetime):
        return value.isoformat(sep=" ")
    if isinstance(value, dt.date | dt.time):
        return value.isoformat()
    return str(value).strip()


@contextmanager
def _open(path: Path, *, data_only: bool) -> Iterator[Any]:
    import openpyxl

    try:
        book = openpyxl.load_workbook(path, read_only=True, data_only=data_only)
    except Exception as why:  # openpyxl raises zipfile, KeyError and XML errors alike
        raise ValueError(
            f"{path.name} could not be opened as a workbook ({type(why).__name__}: {why}). "
            "Save it from your spreadsheet program as .xlsx and try again."
        ) from why
    with closing(book):
        yield book


def _choose_sheet(book: Any, path: Path, sheet: str | None, mapping: dict[str, str] | None) -> str:
    names = list(book.sheetnames)
    if sheet is not None:
        if sheet in names:
            return sheet
        matches = [n for n in names if n.lower() == sheet.strip().lower()]
        if matches:
            return matches[0]
        raise ValueError(f"{path.name} has no sheet {sheet!r}; its sheets are: {', '.join(names)}.")
    for name in names:
        if name.strip().lower() in _NOT_LINE_ITEMS:
            continue
        ws = book[name]
        top = [[cell_text(c) for c in row] for row in ws.iter_rows(max_row=HEADER_SEARCH_ROWS)]
        if find_header(top, mapping) is not None:
            return name
    if mapping:
        wanted = ", ".join(repr(h) for h in mapping.values() if h.strip())
        raise ValueError(
            f"the mapping names headers ({wanted}) that no sheet of {path.name} has in one row; "
            "choose the columns again in the import dialog."
        )
    raise ValueError(
        f"no sheet of {path.name} looks like a list of line items (sheets: {', '.join(names)}): "
        "none has a header row naming an Item column and Low, Most likely or High columns. "
        "Choose the sheet and its columns in the import dialog."
    )


def _formulas_without_results(
    path: Path, sheet: str, grid: list[list[str]]
) -> dict[tuple[int, int], str]:
    found = {}
    with _open(path, data_only=False) as book:
        for r, row in enumerate(book[sheet].iter_rows(values_only=True)):
            for c, value in enumerate(row):
                formula = str(getattr(value, "text", value) or "")
                blank = r >= len(grid) or c >= len(grid[r]) or not grid[r][c]
                if formula.startswith("=") and blank:
                    found[(r, c)] = formula
    for r, c in found:
        while len(grid) <= r:
            grid.append([])
        grid[r] += [""] * (c + 1 - len(grid[r]))
    return found


def _merged_cells(ws: Any) -> dict[tuple[int, int], tuple[tuple[int, int], str]]:
    """Covered cell (0-based) -> (top-left cell, range text), from the sheet's mergeCell list."""
    from openpyxl.utils.cell import range_boundaries
    from openpyxl.xml.functions import iterparse

    covered = {}
    # ReadOnlyWorksheet keeps its XML source private; it is the only way to the merges
    # without loading the whole workbook into memory.
    with ws._get_source() as source:
        for _, element in iterparse(source):
            if element.tag == _MERGE_TAG:
                span = element.get("ref", "")
                min_col, min_row, max_col, max_row = range_boundaries(span)
                for r in range(min_row - 1, max_row):
                    for c in range(min_col - 1, max_col):
                        if (r, c) != (min_row - 1, min_col - 1):
                            covered[(r, c)] = ((min_row - 1, min_col - 1), span)
            element.clear()
    return covered


def _trim(grid: list[list[str]]) -> list[list[str]]:
    """Drop trailing blank rows and cells (formatting often stretches a sheet's extent)."""
    rows = [list(row) for row in grid]
    for row in rows:
        while row and not row[-1]:
            row.pop()
    while rows and not rows[-1]:
        rows.pop()
    return rows
