"""Checks made before a file is parsed, and the limits they enforce.

An estimate arrives from e-mail and shared folders, so a file may be damaged, mislabelled or
built to exhaust memory (a zip bomb, an XML entity bomb, a million rows). The reader refuses
such a file with one line saying why and what to do, before the parser can hang or crash.
The limits are far above any estimate analysts keep and are stated here so that the user
documentation (docs/robustness.md) can quote them.
"""

from __future__ import annotations

import zipfile
import zlib
from collections.abc import Iterable
from pathlib import Path

from fileio.headers import HEADER_SEARCH_ROWS, column_letter

MAX_FILE_BYTES = 100 * 2**20  # a file on disk (a CSV, or a workbook before unzipping)
MAX_UNCOMPRESSED_BYTES = 200 * 2**20  # all parts of a workbook, unzipped
MAX_COMPRESSION_RATIO = 100  # unzipped : zipped, for parts above RATIO_CHECKED_FROM
RATIO_CHECKED_FROM = 2**20  # small XML parts compress far better than 100:1, harmlessly
MAX_ZIP_MEMBERS = 10_000
MAX_ITEM_ROWS = 100_000  # rows of line items in one sheet or CSV file
MAX_SHEET_ROWS = MAX_ITEM_ROWS + HEADER_SEARCH_ROWS  # the title block and header come on top
MAX_SHEET_CELLS = 5_000_000  # cells stored in one sheet's XML, blank formatted cells included
MAX_COLUMNS = 500  # the last filled column of a row (header matching grows with it)
MAX_MAGNITUDE = 1e15  # larger amounts overflow the moments (x**4) or lose all precision

OLE_SIGNATURE = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"  # .xls and encrypted workbooks (OLE CFB)
ZIP_SIGNATURES = (b"PK\x03\x04", b"PK\x05\x06")  # a local file header; an empty archive
_CHUNK = 2**20
# A DTD is how entity bombs are declared; workbooks written by spreadsheet programs have none.
_DTD_MARKS = (b"<!DOCTYPE", b"<!ENTITY")


class UnreadableFile(ValueError):
    """The file cannot be imported; the one-line message says why and what to do."""

    def __init__(self, message: str):
        super().__init__(one_line(message))


class UnsafeFile(UnreadableFile):
    """The file is refused before parsing: it is not what its name says, or reading it could
    exhaust memory or time."""


def one_line(text: str, limit: int = 400) -> str:
    """Whitespace squeezed to single spaces and long text cut, so a message fits one line."""
    line = " ".join(str(text).split())
    return line if len(line) <= limit else line[: limit - 1] + "…"


def size_text(n: int) -> str:
    return f"{n / 2**20:,.1f} MB" if n >= 2**20 else f"{n:,} bytes"


def check_file_size(path: Path) -> int:
    """The file's size; an empty or oversized file is refused here, before it is read."""
    size = path.stat().st_size
    if size == 0:
        raise UnreadableFile(
            f"{path.name} is empty (0 bytes). Choose the file that holds the estimate."
        )
    if size > MAX_FILE_BYTES:
        raise UnsafeFile(
            f"{path.name} is {size_text(size)}, above Rangefold's limit of "
            f"{size_text(MAX_FILE_BYTES)} for one estimate. Split the estimate into smaller files."
        )
    return size


def check_workbook(path: Path) -> None:
    """Refuse a .xlsx/.xlsm that is not a zip archive, is encrypted or old .xls, or whose parts
    would unzip beyond the limits or declare XML entities; openpyxl never sees such a file."""
    check_file_size(path)
    with path.open("rb") as handle:
        head = handle.read(8)
    if head.startswith(OLE_SIGNATURE):
        raise UnsafeFile(
            f"{path.name} is password-protected (or in the old .xls format), which Rangefold "
            "cannot read. Save it unprotected as .xlsx from your spreadsheet program."
        )
    if not head.startswith(ZIP_SIGNATURES):
        raise UnreadableFile(
            f"{path.name} could not be opened as a workbook: an .xlsx file is a zip archive, "
            "and this file is not one (another format renamed, or damaged). Save it as .xlsx "
            "from your spreadsheet program."
        )
    try:
        with zipfile.ZipFile(path) as archive:
            members = archive.infolist()
            _check_directory(path, members)
            _read_bounded(path, archive, members)
    except (zipfile.BadZipFile, zlib.error, EOFError, NotImplementedError, RuntimeError) as why:
        # RuntimeError: an encrypted member; NotImplementedError: an unknown compression.
        raise UnreadableFile(
            f"{path.name} could not be opened as a workbook: it is damaged or incomplete "
            f"(a truncated download or copy?): {one_line(why, 160)}. "
            "Copy or download it again, or save it again as .xlsx."
        ) from why


def _check_directory(path: Path, members: list[zipfile.ZipInfo]) -> None:
    """What the archive's directory declares: cheap, but the directory can lie (see
    `_read_bounded`)."""
    if len(members) > MAX_ZIP_MEMBERS:
        raise UnsafeFile(
            f"{path.name} holds {len(members):,} parts; a workbook has a few dozen "
            f"(limit {MAX_ZIP_MEMBERS:,}). It is not a workbook Rangefold can read safely."
        )
    declared = sum(m.file_size for m in members)
    if declared > MAX_UNCOMPRESSED_BYTES:
        raise UnsafeFile(
            f"{path.name} would unzip to {size_text(declared)}, above the limit of "
            f"{size_text(MAX_UNCOMPRESSED_BYTES)}. Split the estimate into smaller workbooks."
        )
    for member in members:
        ratio = member.file_size / max(member.compress_size, 1)
        if member.file_size >= RATIO_CHECKED_FROM and ratio > MAX_COMPRESSION_RATIO:
            raise UnsafeFile(
                f"{path.name}: the part {member.filename} unzips {ratio:,.0f} times larger than "
                f"it is stored (limit {MAX_COMPRESSION_RATIO}:1), as a zip bomb does. "
                "Save the workbook again from your spreadsheet program."
            )


def _read_bounded(path: Path, archive: zipfile.ZipFile, members: list[zipfile.ZipInfo]) -> None:
    """Unzip every part in chunks, counting the bytes that actually come out, and look for
    entity declarations in the XML parts. This also checks each part's CRC (truncation)."""
    total = 0
    for member in members:
        tail = b""
        with archive.open(member) as part:
            while chunk := part.read(_CHUNK):
                total += len(chunk)
                if total > MAX_UNCOMPRESSED_BYTES:
                    raise UnsafeFile(
                        f"{path.name} unzips to more than {size_text(MAX_UNCOMPRESSED_BYTES)} "
                        "(more than its directory declares). It is not a workbook Rangefold "
                        "can read safely."
                    )
                window = tail + chunk
                if member.filename.endswith((".xml", ".rels")) and any(
                    mark in window for mark in _DTD_MARKS
                ):
                    raise UnsafeFile(
                        f"{path.name}: the part {member.filename} declares XML entities "
                        "(a DTD), which spreadsheet programs never write and entity-expansion "
                        "attacks use. Save the workbook again from your spreadsheet program."
                    )
                tail = chunk[-16:]


def check_no_nul(text: str, path: Path) -> None:
    """Refuse text holding a NUL byte: text exports never do, so the file is binary or damaged
    (a UTF-16 export without its byte-order mark is decoded before this check)."""
    at = text.find("\x00")
    if at >= 0:
        line = len(text[:at].splitlines()) or 1
        raise UnreadableFile(
            f"{path.name}, line {line:,}: a NUL byte (character 0), which text exports never "
            "hold; the file is binary or damaged, not a CSV. Export the estimate as CSV again."
        )


def check_row(where: str, row: int, width: int) -> None:
    """Refuse a filled row beyond the row limit or a filled cell beyond the column limit, so a
    million-row sheet stops being read at the limit instead of filling memory."""
    if row > MAX_SHEET_ROWS:
        raise UnsafeFile(
            f"{where} has more than {MAX_ITEM_ROWS:,} rows of line items, Rangefold's limit "
            f"(reading stopped at row {row:,}). Split the estimate into parts of at most "
            f"{MAX_ITEM_ROWS:,} items, or delete the rows below the items."
        )
    if width > MAX_COLUMNS:
        raise UnsafeFile(
            f"{where}, row {row:,}: a filled cell in column {column_letter(width - 1)} "
            f"(column {width:,}), beyond Rangefold's limit of {MAX_COLUMNS:,} columns. Keep the "
            "line items in a sheet of their own, or delete the cells far to the right."
        )


def bounded_grid(rows: Iterable[tuple[int, list[str]]], where: str) -> list[list[str]]:
    """Cell text of (1-based row number, cells) pairs as a grid whose row i is row i+1:
    trailing blanks dropped, every filled row checked against the limits as it arrives."""
    grid: list[list[str]] = []
    for number, cells in rows:
        while cells and not cells[-1]:
            cells.pop()
        if not cells:
            continue
        check_row(where, number, len(cells))
        grid.extend([] for _ in range(number - 1 - len(grid)))
        grid.append(cells)
    return grid
