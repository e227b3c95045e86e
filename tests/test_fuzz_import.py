"""Fuzzing the importer: random CSV text, random workbook cells and randomly damaged workbook
bytes either import (an estimate, with its problems) or raise the documented one-line
`UnreadableFile`; never anything else. Seeded (derandomize) so a failure repeats in CI."""

from __future__ import annotations

import io
import tempfile
import zipfile
from pathlib import Path

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from openpyxl import Workbook
from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE

from engine import Estimate
from fileio.readers import preview_table, read_estimate
from fileio.safety import UnreadableFile

FUZZ = settings(
    derandomize=True,
    deadline=None,
    suppress_health_check=[HealthCheck.too_slow],
)
HEADERS = ["Item", "Distribution", "Low", "Most likely", "High", "Probability", "Group", "P10"]
# Text that looks like what analysts type, mixed with anything at all.
CELL_TEXT = st.one_of(
    st.sampled_from(
        [
            *("", "-", "1e300", "NaN", "inf", "12,5", "$1.2M", "(300)", "30%", "1 @ 20%; 2 @ 80%"),
            *("pert", "discrete", "Total", "=A1+1", "#N/A", "1 @", "@ 5%", "9" * 400, "\x00"),
        ]
    ),
    st.text(max_size=20),
    st.floats(allow_nan=True, allow_infinity=True).map(repr),
)


def import_or_refuse(path: Path) -> None:
    """The contract under test."""
    for read in (read_estimate, preview_table):
        try:
            result = read(path)
        except UnreadableFile as refused:
            message = str(refused)
            assert message and "\n" not in message
            continue
        if isinstance(result, Estimate):
            for problem in result.problems:  # validation runs on whatever was read
                assert problem.message
            assert result.summary["rows_read"] >= result.summary["items_taken"]


def in_temp(name: str, data: bytes) -> None:
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / name
        path.write_bytes(data)
        import_or_refuse(path)


@FUZZ
@given(
    header=st.lists(st.sampled_from(HEADERS), min_size=1, max_size=6),
    rows=st.lists(st.lists(CELL_TEXT, max_size=7), max_size=6),
    delimiter=st.sampled_from([",", ";", "\t", "|"]),
    newline=st.sampled_from(["\n", "\r\n", "\r"]),
    encoding=st.sampled_from(["utf-8", "utf-8-sig", "cp1252", "utf-16"]),
)
def test_random_csv_tables(header, rows, delimiter, newline, encoding):
    lines = [delimiter.join(header)] + [delimiter.join(row) for row in rows]
    text = newline.join(lines)
    in_temp("fuzz.csv", text.encode(encoding, errors="replace"))


@FUZZ
@given(st.binary(max_size=400))
def test_random_csv_bytes(data):
    in_temp("bytes.csv", b"Item,Low,Most likely,High\n" + data)


@settings(FUZZ, max_examples=60)
@given(
    rows=st.lists(
        st.lists(st.one_of(CELL_TEXT, st.floats(), st.integers(), st.none()), max_size=6),
        max_size=5,
    ),
    sheet=st.sampled_from(["Estimate", "Correlations", "Notes"]),
)
def test_random_workbook_cells(rows, sheet):
    wb = Workbook()
    ws = wb.active
    ws.title = sheet
    ws.append(["Item", "Low", "Most likely", "High", "Probability"])
    for row in rows:
        # openpyxl itself refuses control characters in cells; keep what it can store.
        ws.append([ILLEGAL_CHARACTERS_RE.sub("", v) if isinstance(v, str) else v for v in row])
    stream = io.BytesIO()
    wb.save(stream)
    in_temp("cells.xlsx", stream.getvalue())


def valid_workbook() -> bytes:
    wb = Workbook()
    ws = wb.active
    ws.append(["Item", "Low", "Most likely", "High"])
    ws.append(["Earthworks", 10, 12, 20])
    ws.append(["Drainage", 5, 6, 9])
    ws.merge_cells("A5:B6")
    corr = wb.create_sheet("Correlations")
    corr.append(["Item A", "Item B", "Coefficient"])
    corr.append(["Earthworks", "Drainage", 0.4])
    stream = io.BytesIO()
    wb.save(stream)
    return stream.getvalue()


VALID = valid_workbook()


@settings(FUZZ, max_examples=150)
@given(
    st.lists(
        st.tuples(st.integers(0, len(VALID) - 1), st.integers(0, 255)), min_size=1, max_size=8
    ),
    st.integers(len(VALID) // 3, len(VALID)),
)
def test_mutated_workbook_bytes(flips, keep):
    data = bytearray(VALID)
    for at, value in flips:
        data[at] = value
    in_temp("mutated.xlsx", bytes(data[:keep]))


with zipfile.ZipFile(io.BytesIO(VALID)) as _archive:
    PARTS = {name: _archive.read(name) for name in _archive.namelist()}


@settings(FUZZ, max_examples=150)
@given(
    part=st.sampled_from(sorted(PARTS)),
    flips=st.lists(st.tuples(st.floats(0, 1, exclude_max=True), st.binary(max_size=3)), max_size=6),
)
def test_mutated_workbook_parts(part, flips):
    """Damage inside a part, re-zipped with valid checksums, so the XML parsers see it."""
    data = bytearray(PARTS[part])
    for where, replacement in flips:
        at = int(where * len(data))
        data[at : at + len(replacement)] = replacement
    stream = io.BytesIO()
    with zipfile.ZipFile(stream, "w", zipfile.ZIP_DEFLATED) as archive:
        for name, content in PARTS.items():
            archive.writestr(name, bytes(data) if name == part else content)
    in_temp("parts.xlsx", stream.getvalue())
