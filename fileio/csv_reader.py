"""CSV, TSV and text exports as a `Table`: the encoding, delimiter and decimal mark guessed
from the file itself, since spreadsheet programs write all three by the user's locale."""

from __future__ import annotations

import codecs
import csv
import io
import re
from collections import Counter
from pathlib import Path

from engine import Problem
from fileio.csv_structure import FieldTooLarge, csv_records
from fileio.safety import UnsafeFile, bounded_grid, check_file_size, check_no_nul
from fileio.table import Table

DELIMITERS = ("\t", "|", ";", ",")  # order breaks ties: the rarer delimiter is the likelier intent
_SNIFF_LINES = 100
_DELIMITER_NAMES = {"\t": "tab", "|": "pipe", ";": "semicolon", ",": "comma"}
# Cells that show which decimal mark the file uses: `12,5` or `1.234,56` versus `12.5` or
# `1,234.56`; a lone `12,500` or `12.500` proves nothing.
_DECIMAL_COMMA = re.compile(r"^[^\d]*\d+,(\d{1,2}|\d{4,})\D*$|\d\.\d{3},\d")
_NUMERIC_LOOKING = re.compile(r"[^a-jl-z]*\d[^a-jl-z]*")  # no lower-case words, only k
_DECIMAL_POINT = re.compile(r"^[^\d]*\d+\.(\d{1,2}|\d{4,})\D*$|\d,\d{3}\.\d")


def read_csv_table(path: Path) -> Table:
    """The file as a grid; an `UnreadableFile` when it is empty, binary, or beyond the limits
    of `fileio.safety` (checked record by record, so a huge file stops at the limit)."""
    check_file_size(path)
    text, encoding = decode(path.read_bytes())
    check_no_nul(text, path)
    delimiter = sniff_delimiter(text)
    problems: list[Problem] = []
    try:
        grid = bounded_grid(csv_records(text, delimiter, problems), path.name)
    except FieldTooLarge as why:
        # The one error csv raises on decoded text: a cell longer than its field size limit.
        raise UnsafeFile(
            f"{path.name}, line {why.line:,}: {why}; a cell that long is not part "
            "of an estimate (an unclosed quote mark?). Close the quotes, or export the "
            "estimate as CSV again."
        ) from why
    decimal = guess_decimal_mark(grid, delimiter)
    return Table(
        grid=grid,
        source=str(path),
        decimal=decimal,
        problems=problems,
        notes={
            "encoding": encoding,
            "delimiter": _DELIMITER_NAMES[delimiter],
            "decimal": decimal,
        },
    )


def decode(data: bytes) -> tuple[str, str]:
    """Text and the encoding it was read with: a BOM wins, then UTF-8, then Windows-1252
    (what spreadsheet programs on Western-European Windows write), then Latin-1 so that no
    byte is refused."""
    if data.startswith(codecs.BOM_UTF8):
        return data[len(codecs.BOM_UTF8) :].decode("utf-8"), "utf-8-sig"
    if data.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        return data.decode("utf-16"), "utf-16"
    unmarked = _utf16_without_bom(data)
    if unmarked:
        return data.decode(unmarked), unmarked
    for encoding in ("utf-8", "cp1252", "latin-1"):
        try:
            return data.decode(encoding), encoding
        except UnicodeDecodeError:
            continue
    raise AssertionError("latin-1 decodes every byte")


def _utf16_without_bom(data: bytes) -> str | None:
    """UTF-16 written without its byte-order mark: text mostly in ASCII then has a NUL in
    every other byte. Anything else with NULs is left for `check_no_nul` to refuse."""
    if len(data) < 2 or len(data) % 2 or b"\x00" not in data:
        return None
    for encoding, high_bytes in (("utf-16-le", data[1::2]), ("utf-16-be", data[0::2])):
        if high_bytes.count(0) > 0.5 * len(high_bytes):
            try:
                data.decode(encoding)
            except UnicodeDecodeError:
                continue
            return encoding
    return None


def sniff_delimiter(text: str) -> str:
    """The delimiter that splits the most lines into the same number (at least two) of fields."""
    sample = "\n".join(text.splitlines()[:_SNIFF_LINES])
    best, best_score = ",", -1
    for delimiter in DELIMITERS:
        try:
            rows = list(csv.reader(io.StringIO(sample), delimiter=delimiter))
        except csv.Error:  # a line too long to be one field: not this delimiter
            continue
        counts = [len(r) for r in rows if any(r)]
        widths = Counter(c for c in counts if c >= 2)
        if not widths:
            continue
        modal, lines = widths.most_common(1)[0]
        score = lines * 1000 + modal
        if score > best_score:
            best, best_score = delimiter, score
    return best


def guess_decimal_mark(grid: list[list[str]], delimiter: str) -> str:
    """ "," when the file's numbers show a decimal comma, or when it is ;-delimited and its
    numbers show neither (spreadsheet programs write ; exactly where the comma is decimal)."""
    comma = point = 0
    for row in grid:
        for cell in row:
            if not _NUMERIC_LOOKING.fullmatch(cell):
                continue
            comma += bool(_DECIMAL_COMMA.search(cell))
            point += bool(_DECIMAL_POINT.search(cell))
    if comma != point:
        return "," if comma > point else "."
    return "," if delimiter == ";" else "."
