"""CSV records with their line numbers, and the structure faults that swallow rows.

One stray quote mark (`"B,triangular,1,2,3` with no closing quote) makes a CSV reader take
every line after it as one cell: the estimate then loses its remaining rows without an
error. Here a quoted field that runs across lines which themselves look like rows (as many
delimiters as a row has) is reported with the line where it starts, that line is read with
its quote marks taken as text, and reading starts again on the next line, so the rows around
it are still read. A quoted field running across many lines is reported too.
"""

from __future__ import annotations

import csv
import io
from collections.abc import Iterator

from engine import Problem

# A quoted cell over more lines than this is not a note with line breaks but a quote that
# never closed (common practice, no source).
MAX_FIELD_LINES = 10


class FieldTooLarge(csv.Error):
    """A cell above the csv module's size limit, on a line that holds no unclosed quote."""

    def __init__(self, line: int, why: csv.Error):
        self.line = line
        super().__init__(str(why))


def csv_records(
    text: str, delimiter: str, problems: list[Problem]
) -> Iterator[tuple[int, list[str]]]:
    """(record number, stripped fields), numbered from 1; faults appended to `problems`.

    A field above the csv module's size limit raises `FieldTooLarge` when the fault is not
    an unclosed quote on a line of its own.
    """
    # Lines end at \r\n, \n or \r only, as csv reads them: str.splitlines would also break
    # at a form feed or U+2028 inside a cell.
    lines = io.StringIO(text, newline="").readlines()
    start = 0  # index of the line the current reader began at
    number = 0
    width = 0
    while start < len(lines):
        reader = csv.reader(iter(lines[start:]), delimiter=delimiter)
        consumed = 0
        restart = None
        while True:
            first = start + consumed  # 0-based index of the record's first line
            try:
                fields = next(reader)
            except StopIteration:
                break
            except csv.Error as why:
                if not _opens_a_quote(lines[first]):
                    raise FieldTooLarge(first + 1, why) from why
                restart = first
                problems.append(_unclosed(first + 1, None, number + 1))
                break
            consumed = reader.line_num
            last = start + consumed - 1
            if last > first and _swallows_rows(lines[first + 1 : last + 1], delimiter, width):
                restart = first
                problems.append(_unclosed(first + 1, last + 1, number + 1))
                break
            if last - first + 1 > MAX_FIELD_LINES:
                problems.append(_long_field(first + 1, last + 1, number + 1))
            number += 1
            width = max(width, sum(1 for f in fields if f.strip()))
            yield number, [f.strip() for f in fields]
        if restart is None:
            return
        number += 1
        yield number, _without_quotes(lines[restart], delimiter)
        start = restart + 1


def _opens_a_quote(line: str) -> bool:
    return line.count('"') % 2 == 1


def _swallows_rows(inner: list[str], delimiter: str, width: int) -> bool:
    """The lines inside one quoted field look like rows of the table."""
    needed = max(width - 1, 2)
    return any(line.count(delimiter) >= needed for line in inner)


def _without_quotes(line: str, delimiter: str) -> list[str]:
    fields = next(csv.reader([line.rstrip("\r\n")], delimiter=delimiter, quoting=csv.QUOTE_NONE))
    return [f.replace('"', "").strip() for f in fields]


def _unclosed(line: int, until: int | None, record: int) -> Problem:
    swallowed = (
        f"the {until - line} line(s) after it, to line {until}, would have been one cell"
        if until
        else "every line after it would have been one cell"
    )
    return Problem(
        f"line {line}: a quote mark opens a field that does not close on its line; "
        f"{swallowed}. The line is read with the quote mark as text, and the lines after it "
        "as rows of their own.",
        f"close the quote on line {line} or remove it, or export the estimate as CSV again.",
        row=record,
    )


def _long_field(line: int, until: int, record: int) -> Problem:
    return Problem(
        f"line {line}: a quoted field runs across {until - line + 1} lines, to line {until}; "
        "it was read as one cell, which may hold rows that belong to the table.",
        f"check the quote marks on line {line}: close the field where it should end.",
        row=record,
    )
