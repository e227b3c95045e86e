"""Workbooks (.xlsx, .xlsm) as a `Table`, through openpyxl in read-only mode.

Read-only mode streams the sheet (large workbooks stay cheap) and gives each formula's cached
result, the value the user last saw. A formula saved without a result (files written by
scripts rather than by a spreadsheet program) has none: a second pass reads the formulas
themselves so such a cell can be named in a message instead of reading as blank. Read-only
mode does not expose merged ranges either, so they are read from the sheet's XML directly.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Callable, Iterator
from contextlib import closing, contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from defusedxml import DefusedXmlException

from engine import CorrelationSpec, Problem
from fileio.correlations import CORRELATION_SHEET, spec_from_grid
from fileio.headers import HEADER_SEARCH_ROWS, find_header
from fileio.safety import (
    MAX_SHEET_CELLS,
    UnreadableFile,
    UnsafeFile,
    bounded_grid,
    check_row,
    check_workbook,
    one_line,
)
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


class _NoItemSheet(UnreadableFile):
    """No sheet (or not the one asked for) holds line items."""


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
    check_workbook(path)
    with _open(path, data_only=True) as book:
        sheets = list(book.sheetnames)
        try:
            name = _choose_sheet(book, path, sheet, mapping)
        except _NoItemSheet:
            if not any_sheet or sheet is not None or not sheets:
                raise
            name = sheets[0]
        ws = _sheet(book, name, path)
        grid = _grid(ws, path)
        merged = _merged_cells(ws, path, grid)
        spec, problems = CorrelationSpec(), []
        corr_name = next((s for s in sheets if s.lower() == CORRELATION_SHEET.lower()), None)
        if corr_name is not None:
            spec, problems = spec_from_grid(_grid(_sheet(book, corr_name, path), path), corr_name)
    formulas = _formulas_without_results(path, name, grid)
    for (r, c), formula in formulas.items():
        grid[r][c] = formula
    table = Table(
        grid=grid,
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

    # Our own handle, closed even when openpyxl fails half-way through opening the book
    # (it then leaves its own handle open).
    with path.open("rb") as handle:
        try:
            book = openpyxl.load_workbook(handle, read_only=True, data_only=data_only)
        except Exception as why:  # openpyxl raises zipfile, KeyError and XML errors alike
            raise _damaged(path, why) from why
        with closing(book):
            yield book


def _sheet(book: Any, name: str, path: Path) -> Any:
    """A sheet of the book; opening it parses the start of its XML, which may be damaged."""
    try:
        return book[name]
    except Exception as why:
        raise _damaged(path, why, name) from why


def _damaged(path: Path, why: BaseException, sheet: str | None = None) -> UnreadableFile:
    where = f"sheet {sheet!r} of {path.name}" if sheet else path.name
    causes = [why]
    # openpyxl re-raises parser errors as a plain ValueError; look down the chain (bounded).
    while len(causes) < 10 and (causes[-1].__cause__ or causes[-1].__context__):
        causes.append(causes[-1].__cause__ or causes[-1].__context__)
    if any(isinstance(c, DefusedXmlException) for c in causes):
        return UnsafeFile(
            f"{where} declares XML entities, which spreadsheet programs never write and "
            "entity-expansion attacks use. Save the workbook again from your spreadsheet program."
        )
    detail = one_line(f"{type(why).__name__}: {why}", 160)
    return UnreadableFile(
        f"{where} could not be opened as a workbook ({detail}). "
        "Save it from your spreadsheet program as .xlsx and try again."
    )


def _cells(ws: Any, path: Path, last_row: int | None) -> Iterator[tuple[int, list[Any]]]:
    """(row number, cells holding a value) as stored in the sheet's XML.

    openpyxl's own row iterator pads every row to the sheet's declared extent (up to 16,384
    columns by 1,048,576 rows when formatting stretches it); its parser gives only the cells
    present, so the work follows what the file holds. Parser errors of a damaged sheet
    become an `UnreadableFile`.
    """
    from openpyxl.cell.read_only import ReadOnlyCell
    from openpyxl.worksheet._reader import WorkSheetParser

    book = ws.parent
    stored = 0
    try:
        with ws._get_source() as source:
            parser = WorkSheetParser(
                source,
                ws._shared_strings,
                data_only=book.data_only,
                epoch=book.epoch,
                date_formats=book._date_formats,
                timedelta_formats=book._timedelta_formats,
            )
            for number, row in parser.parse():
                if last_row is not None and number > last_row:
                    return
                stored += len(row)
                if stored > MAX_SHEET_CELLS:
                    raise UnsafeFile(
                        f"sheet {ws.title!r} of {path.name} stores more than "
                        f"{MAX_SHEET_CELLS:,} cells (formatted blanks included), Rangefold's "
                        "limit. Keep the line items in a sheet of their own."
                    )
                yield number, [ReadOnlyCell(ws, **c) for c in row if c["value"] is not None]
    except UnreadableFile:
        raise
    except Exception as why:  # a damaged sheet: XML, number and date errors alike
        raise _damaged(path, why, ws.title) from why


def _grid(
    ws: Any, path: Path, *, last_row: int | None = None, text: Callable[[Any], str] | None = None
) -> list[list[str]]:
    """A sheet's cell text, row i being sheet row i+1, checked against the size limits."""
    text = text or cell_text

    def rows() -> Iterator[tuple[int, list[str]]]:
        for number, cells in _cells(ws, path, last_row):
            width = max((c.column for c in cells), default=0)
            check_row(f"sheet {ws.title!r} of {path.name}", number, width)
            row = [""] * width
            for c in cells:
                row[c.column - 1] = text(c)
            yield number, row

    return bounded_grid(rows(), f"sheet {ws.title!r} of {path.name}")


def _choose_sheet(book: Any, path: Path, sheet: str | None, mapping: dict[str, str] | None) -> str:
    names = list(book.sheetnames)
    if sheet is not None:
        if sheet in names:
            return sheet
        matches = [n for n in names if n.lower() == sheet.strip().lower()]
        if matches:
            return matches[0]
        raise _NoItemSheet(
            f"{path.name} has no sheet {sheet!r}; its sheets are: {', '.join(names)}."
        )
    for name in names:
        if name.strip().lower() in _NOT_LINE_ITEMS:
            continue
        ws = _sheet(book, name, path)
        top = _grid(ws, path, last_row=HEADER_SEARCH_ROWS)
        if find_header(top, mapping) is not None:
            return name
    if mapping:
        wanted = ", ".join(repr(h) for h in mapping.values() if h.strip())
        raise _NoItemSheet(
            f"the mapping names headers ({wanted}) that no sheet of {path.name} has in one row; "
            "choose the columns again in the import dialog."
        )
    raise _NoItemSheet(
        f"no sheet of {path.name} looks like a list of line items (sheets: {', '.join(names)}): "
        "none has a header row naming an Item column and Low, Most likely or High columns. "
        "Choose the sheet and its columns in the import dialog."
    )


def _formulas_without_results(
    path: Path, sheet: str, grid: list[list[str]]
) -> dict[tuple[int, int], str]:
    found = {}
    with _open(path, data_only=False) as book:
        formulas = _grid(_sheet(book, sheet, path), path, text=_formula_text)
    for r, row in enumerate(formulas):
        for c, formula in enumerate(row):
            blank = r >= len(grid) or c >= len(grid[r]) or not grid[r][c]
            if formula.startswith("=") and blank:
                found[(r, c)] = formula
    for r, c in found:
        while len(grid) <= r:
            grid.append([])
        grid[r] += [""] * (c + 1 - len(grid[r]))
    return found


def _formula_text(cell: Any) -> str:
    return str(getattr(cell.value, "text", cell.value) or "")


def _merged_cells(
    ws: Any, path: Path, grid: list[list[str]]
) -> dict[tuple[int, int], tuple[tuple[int, int], str]]:
    """Covered cell (0-based) -> (top-left cell, range text), from the sheet's mergeCell list.

    Only cells inside the filled grid are listed: a merge may span a whole sheet
    (17 billion cells), and cells beyond the data change nothing.
    """
    from openpyxl.utils.cell import range_boundaries
    from openpyxl.xml.functions import iterparse

    rows, columns = len(grid), max((len(r) for r in grid), default=0)
    covered = {}
    try:
        # ReadOnlyWorksheet keeps its XML source private; it is the only way to the merges
        # without loading the whole workbook into memory.
        with ws._get_source() as source:
            for _, element in iterparse(source):
                if element.tag == _MERGE_TAG:
                    span = element.get("ref", "")
                    min_col, min_row, max_col, max_row = range_boundaries(span)
                    for r in range(min_row - 1, min(max_row, rows)):
                        for c in range(min_col - 1, min(max_col, columns)):
                            if (r, c) != (min_row - 1, min_col - 1):
                                covered[(r, c)] = ((min_row - 1, min_col - 1), span)
                element.clear()
    except Exception as why:  # a damaged sheet or a malformed range
        raise _damaged(path, why, ws.title) from why
    return covered
