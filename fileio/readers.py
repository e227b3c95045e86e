"""Reading an estimate from a file, by its extension; and a preview for the import dialog."""

from __future__ import annotations

from collections.abc import Collection, Sequence
from dataclasses import dataclass
from pathlib import Path

from engine import Estimate
from fileio.csv_reader import read_csv_table
from fileio.headers import (
    HeaderRow,
    check_mapping_columns,
    find_header,
    guess_mapping,
    unique_headers,
)
from fileio.safety import UnreadableFile
from fileio.sheet_choice import read_workbook_estimate
from fileio.table import Table, estimate_from_table
from fileio.xlsx_reader import read_sheet_grid

CSV_SUFFIXES = (".csv", ".tsv", ".txt")
WORKBOOK_SUFFIXES = (".xlsx", ".xlsm")


@dataclass(frozen=True)
class TablePreview:
    """What the import dialog shows before the user confirms the columns."""

    sheets: list[str]  # empty for a CSV file
    sheet: str  # "" for a CSV file
    header_row: int  # 1-based
    headers: list[str]
    mapping: dict[str, str]  # guessed: engine column -> header
    rows: list[list[str]]  # cell text of the rows below the header


def read_estimate(
    path: str | Path,
    *,
    mapping: dict[str, str] | None = None,
    sheet: str | Sequence[str] | None = None,
    keep_rows: Collection[tuple[str, int]] = (),
) -> Estimate:
    """The estimate in a CSV file, a workbook or a project file.

    `sheet` names the workbook's sheet or sheets to read ("all" for every sheet of items;
    None for the first sheet of items and every risk register); `keep_rows` lists
    (sheet, row) pairs, sheet "" for a CSV file, to take as items although they read as
    subtotals. A project file's settings come back in `estimate.summary["settings"]`.
    """
    path = Path(path)
    suffix = path.suffix.lower()
    if mapping:
        check_mapping_columns(mapping)
    from fileio.project import PROJECT_SUFFIX, load_project

    if suffix == PROJECT_SUFFIX:
        estimate, settings = load_project(path)
        estimate.summary["settings"] = settings
        return estimate
    if suffix in WORKBOOK_SUFFIXES:
        sheets = [sheet] if isinstance(sheet, str) else sheet
        estimate = read_workbook_estimate(path, sheets, mapping, keep_rows)
    else:
        table = _csv_table(path)
        table.keep_rows = frozenset(r for s, r in keep_rows if not s)
        estimate = estimate_from_table(table, mapping)
    estimate.title = estimate.title or path.stem
    return estimate


def preview_table(
    path: str | Path, *, sheet: str | None = None, max_rows: int = 30
) -> TablePreview:
    path = Path(path)
    if path.suffix.lower() in WORKBOOK_SUFFIXES:
        sheets, table = read_sheet_grid(path, sheet or _default_sheet(path))
    else:
        table, sheets = _csv_table(path), []
    # A table whose header is not recognised still previews, from its first non-blank row,
    # so the user can map the columns by hand.
    header = find_header(table.grid) or _first_row_header(table.grid)
    rows = table.grid[header.index + 1 : header.index + 1 + max_rows]
    width = len(header.headers)
    return TablePreview(
        sheets=sheets,
        sheet=table.sheet or "",
        header_row=header.index + 1,
        headers=header.headers,
        mapping=header.mapping,
        rows=[(list(row) + [""] * width)[: max(width, len(row))] for row in rows],
    )


def _default_sheet(path: Path) -> str | None:
    """The sheet the estimate would be read from first, when any sheet holds items."""
    try:
        return read_workbook_estimate(path).summary["sheet"]
    except UnreadableFile:
        return None


def _first_row_header(grid: list[list[str]]) -> HeaderRow:
    index = next((i for i, row in enumerate(grid) if any(row)), 0)
    headers = unique_headers(grid[index] if grid else [])
    return HeaderRow(index, headers, guess_mapping(headers))


def _csv_table(path: Path) -> Table:
    suffix = path.suffix.lower()
    if suffix in CSV_SUFFIXES:
        return read_csv_table(path)
    if suffix == ".xls":
        raise UnreadableFile(
            f"{path.name} is an old-style .xls workbook, which Rangefold does not read. "
            "Save it as .xlsx (or .csv) from your spreadsheet program."
        )
    raise UnreadableFile(
        f"{path.name}: Rangefold reads {', '.join(CSV_SUFFIXES + WORKBOOK_SUFFIXES)} and "
        ".rangefold files. Save the estimate in one of these formats."
    )
