"""Reading an estimate from a file, by its extension; and a preview for the import dialog."""

from __future__ import annotations

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
from fileio.table import Table, estimate_from_table
from fileio.xlsx_reader import read_workbook

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
    path: str | Path, *, mapping: dict[str, str] | None = None, sheet: str | None = None
) -> Estimate:
    """The estimate in a CSV file, a workbook or a project file.

    A project file's settings come back in `estimate.summary["settings"]`.
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
        read = read_workbook(path, sheet, mapping)
        estimate = estimate_from_table(read.table, mapping, read.correlation)
        estimate.read_problems.extend(read.correlation_problems)
    else:
        estimate = estimate_from_table(_csv_table(path), mapping)
    estimate.title = estimate.title or path.stem
    return estimate


def preview_table(
    path: str | Path, *, sheet: str | None = None, max_rows: int = 30
) -> TablePreview:
    path = Path(path)
    if path.suffix.lower() in WORKBOOK_SUFFIXES:
        read = read_workbook(path, sheet, any_sheet=True)
        table, sheets = read.table, read.sheets
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
