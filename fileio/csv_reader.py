"""CSV, TSV and text exports as a `Table`: the encoding, delimiter and decimal mark guessed
from the file itself, since spreadsheet programs write all three by the user's locale."""

from __future__ import annotations

import codecs
import csv
import io
import re
from collections import Counter
from pathlib import Path

from fileio.table import Table

DELIMITERS = ("\t", ";", ",")  # order breaks ties: the rarer delimiter is the likelier intent
_SNIFF_LINES = 100
_DELIMITER_NAMES = {"\t": "tab", ";": "semicolon", ",": "comma"}
# Cells that show which decimal mark the file uses: `12,5` or `1.234,56` versus `12.5` or
# `1,234.56`; a lone `12,500` or `12.500` proves nothing.
_DECIMAL_COMMA = re.compile(r"^[^\d]*\d+,(\d{1,2}|\d{4,})\D*$|\d\.\d{3},\d")
_NUMERIC_LOOKING = re.compile(r"[^a-jl-z]*\d[^a-jl-z]*")  # no lower-case words, only k
_DECIMAL_POINT = re.compile(r"^[^\d]*\d+\.(\d{1,2}|\d{4,})\D*$|\d,\d{3}\.\d")


def read_csv_table(path: Path) -> Table:
    text, encoding = decode(path.read_bytes())
    delimiter = sniff_delimiter(text)
    rows = list(csv.reader(io.StringIO(text, newline=""), delimiter=delimiter))
    grid = [[cell.strip() for cell in row] for row in rows]
    decimal = guess_decimal_mark(grid, delimiter)
    return Table(
        grid=grid,
        source=str(path),
        decimal=decimal,
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
    for encoding in ("utf-8", "cp1252", "latin-1"):
        try:
            return data.decode(encoding), encoding
        except UnicodeDecodeError:
            continue
    raise AssertionError("latin-1 decodes every byte")


def sniff_delimiter(text: str) -> str:
    """The delimiter that splits the most lines into the same number (at least two) of fields."""
    sample = "\n".join(text.splitlines()[:_SNIFF_LINES])
    best, best_score = ",", -1
    for delimiter in DELIMITERS:
        counts = [len(r) for r in csv.reader(io.StringIO(sample), delimiter=delimiter) if any(r)]
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
