"""Workbooks (.xlsx, .xlsm) as a `Table`, through openpyxl in read-only mode.

Read-only mode streams the sheet (large workbooks stay cheap) and gives each formula's cached
result, the value the user last saw. A formula saved without a result (files written by
scripts rather than by a spreadsheet program) has none: a second pass reads the formulas
themselves so such a cell can be named in a message instead of reading as blank. Read-only
mode does not expose merged ranges either, so they are read from the sheet's XML directly.
"""

from __future__ import annotations

import copy
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
_ROW_TAG = "{http://schemas.openxmlformats.org/spreadsheetml/2006/main}row"


@dataclass
class SheetRead:
    """One sheet of the workbook: what it holds and, when it has a header row, its table."""

    name: str
    hidden: bool
    # "items" (a header row of line items), "words" (a notes or help sheet by its name),
    # "correlations", "chart" (a chart sheet), "empty", or "no header".
    kind: str
    table: Table | None = None
    # The mapping given by the caller names headers this sheet has.
    mapped: bool = False


@dataclass
class WorkbookRead:
    sheets: list[SheetRead]
    correlation: CorrelationSpec
    correlation_problems: list[Problem]

    @property
    def names(self) -> list[str]:
        return [s.name for s in self.sheets]

    def find(self, name: str) -> SheetRead | None:
        """The sheet by its name; spaces around it and letter case do not matter."""
        exact = next((s for s in self.sheets if s.name == name), None)
        wanted = name.strip().lower()
        return exact or next((s for s in self.sheets if s.name.strip().lower() == wanted), None)


def read_workbook(path: Path, mapping: dict[str, str] | None = None) -> WorkbookRead:
    """Every sheet surveyed, every sheet with a header row read whole (formulas too), and the
    Correlations sheet. Chart sheets and empty sheets are listed, never fatal."""
    check_workbook(path)
    sheets: list[SheetRead] = []
    spec, problems = CorrelationSpec(), []
    with _open(path, data_only=True) as book, _open(path, data_only=False) as formula_book:
        for name in book.sheetnames:
            ws = _sheet(book, name, path)
            hidden = getattr(ws, "sheet_state", "visible") != "visible"
            if not hasattr(ws, "_get_source"):  # a chart sheet: a picture, no cells
                sheets.append(SheetRead(name, hidden, "chart"))
                continue
            top = _grid(ws, path, last_row=HEADER_SEARCH_ROWS)
            if name.lower() == CORRELATION_SHEET.lower():
                spec, problems = spec_from_grid(_grid(ws, path), name)
                sheets.append(SheetRead(name, hidden, "correlations"))
                continue
            if not any(any(row) for row in top):
                sheets.append(SheetRead(name, hidden, "empty" if not top else "no header"))
                continue
            words = name.strip().lower() in _NOT_LINE_ITEMS
            mapped = bool(mapping) and find_header(top, mapping) is not None
            if not mapped and find_header(top) is None:
                sheets.append(SheetRead(name, hidden, "words" if words else "no header"))
                continue
            kind = "words" if words else "items"
            table = _table(ws, _sheet(formula_book, name, path), path)
            sheets.append(SheetRead(name, hidden, kind, table, mapped))
    return WorkbookRead(sheets, spec, problems)


def read_sheet_grid(path: Path, sheet: str | None) -> tuple[list[str], Table]:
    """The sheet names and one sheet as a table, whether or not it has a header row (the
    import dialog's preview, where the user may map the columns by hand)."""
    check_workbook(path)
    with _open(path, data_only=True) as book, _open(path, data_only=False) as formula_book:
        names = list(book.sheetnames)
        worksheets = [n for n in names if hasattr(_sheet(book, n, path), "_get_source")]
        if not worksheets:
            raise UnreadableFile(f"{path.name} has no worksheet, only charts.")
        name = sheet if sheet in worksheets else worksheets[0]
        return names, _table(_sheet(book, name, path), _sheet(formula_book, name, path), path)


# The last workbook's sheets as tables, by (file, its modification time and size, sheet).
# The import dialog reads one file again at each change of a column's mapping and for its
# preview; parsing a 10,000-row sheet takes seconds, the copy of its table milliseconds.
_last_tables: dict[tuple[str, int, int, str], Table] = {}


def _table(ws: Any, formula_ws: Any, path: Path) -> Table:
    stat = path.stat()
    key = (str(path.resolve()), stat.st_mtime_ns, stat.st_size, ws.title)
    if key not in _last_tables:
        if any(k[:3] != key[:3] for k in _last_tables):  # another file, or this one changed
            _last_tables.clear()
        _last_tables[key] = _parsed_table(ws, formula_ws, path)
    return copy.deepcopy(_last_tables[key])  # callers may change theirs


def _parsed_table(ws: Any, formula_ws: Any, path: Path) -> Table:
    grid = _grid(ws, path)
    merged, hidden_rows = _sheet_layout(ws, path, grid)
    formula_text = _formulas(formula_ws, path)
    formulas = _without_results(formula_text, grid)
    for r, c in formulas:
        grid[r][c] = formula_text[(r, c)]
    return Table(
        grid=grid,
        source=str(path),
        sheet=ws.title,
        formulas=formulas,
        formula_text=formula_text,
        merged=merged,
        hidden_rows=hidden_rows,
        cell_references=True,
    )


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


def _formulas(formula_ws: Any, path: Path) -> dict[tuple[int, int], str]:
    """Every formula of the sheet by cell: the value view shows only results, and a subtotal
    is known by its formula (=SUM(D5:D9)) whether or not a result was saved."""
    grid = _grid(formula_ws, path, text=_formula_text)
    return {
        (r, c): text
        for r, row in enumerate(grid)
        for c, text in enumerate(row)
        if text.startswith("=")
    }


def _without_results(
    formulas: dict[tuple[int, int], str], grid: list[list[str]]
) -> set[tuple[int, int]]:
    """Formula cells with no saved result; the grid is widened to hold their text."""
    found = {(r, c) for (r, c) in formulas if r >= len(grid) or c >= len(grid[r]) or not grid[r][c]}
    for r, c in found:
        while len(grid) <= r:
            grid.append([])
        grid[r] += [""] * (c + 1 - len(grid[r]))
    return found


def _formula_text(cell: Any) -> str:
    return str(getattr(cell.value, "text", cell.value) or "")


def _sheet_layout(
    ws: Any, path: Path, grid: list[list[str]]
) -> tuple[dict[tuple[int, int], tuple[tuple[int, int], str]], frozenset[int]]:
    """From the sheet's XML: each covered cell (0-based) -> (top-left cell, range text) of
    its merge, and the rows (0-based) the user hid.

    Only cells inside the filled grid are listed: a merge may span a whole sheet
    (17 billion cells), and cells beyond the data change nothing.
    """
    from openpyxl.utils.cell import range_boundaries
    from openpyxl.xml.functions import iterparse

    rows, columns = len(grid), max((len(r) for r in grid), default=0)
    covered = {}
    hidden = set()
    try:
        # ReadOnlyWorksheet keeps its XML source private; it is the only way to the merges
        # and hidden rows without loading the whole workbook into memory.
        with ws._get_source() as source:
            for _, element in iterparse(source):
                if element.tag == _ROW_TAG:
                    if element.get("hidden") in ("1", "true") and element.get("r"):
                        hidden.add(int(element.get("r")) - 1)
                elif element.tag == _MERGE_TAG:
                    span = element.get("ref", "")
                    min_col, min_row, max_col, max_row = range_boundaries(span)
                    for r in range(min_row - 1, min(max_row, rows)):
                        for c in range(min_col - 1, min(max_col, columns)):
                            if (r, c) != (min_row - 1, min_col - 1):
                                covered[(r, c)] = ((min_row - 1, min_col - 1), span)
                element.clear()
    except Exception as why:  # a damaged sheet or a malformed range
        raise _damaged(path, why, ws.title) from why
    return covered, frozenset(r for r in hidden if r < rows)
