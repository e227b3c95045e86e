"""Hostile, broken and odd input files: each gives an estimate with its problems named, or a
one-line `UnreadableFile` saying what to do; never a traceback, a hang or a memory blow-up.

Every file is built here in tmp_path, most of them byte by byte, since the point is files no
spreadsheet program would write.
"""

from __future__ import annotations

import io
import math
import struct
import zipfile
from pathlib import Path

import openpyxl.xml
import pytest
from openpyxl import Workbook

import fileio.safety as safety
import fileio.xlsx_reader as xlsx_reader
from cli.main import main
from engine import analyze
from fileio.readers import preview_table, read_estimate
from fileio.safety import MAX_ITEM_ROWS, MAX_MAGNITUDE, UnreadableFile, UnsafeFile

HEADER = ["Item", "Low", "Most likely", "High"]


def one_line_error(path: Path, kind: type[Exception] = UnreadableFile) -> str:
    with pytest.raises(kind) as caught:
        read_estimate(path)
    message = str(caught.value)
    assert message and "\n" not in message and "Traceback" not in message
    return message


def workbook_parts(tmp_path: Path, rows: list[list[object]] | None = None) -> dict[str, bytes]:
    """The parts of a small valid workbook, to be tampered with."""
    wb = Workbook()
    for row in rows or [HEADER, ["Scaffolding", 10, 12, 20]]:
        wb.active.append(row)
    path = tmp_path / "valid.xlsx"
    wb.save(path)
    with zipfile.ZipFile(path) as archive:
        return {name: archive.read(name) for name in archive.namelist()}


def write_parts(path: Path, parts: dict[str, bytes], level: int = 6) -> Path:
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED, compresslevel=level) as archive:
        for name, data in parts.items():
            archive.writestr(name, data)
    return path


# A "billion laughs" DTD: ten levels of ten-fold references, 10**9 copies of "lol" when expanded.
LAUGHS = (
    '<!DOCTYPE worksheet [<!ENTITY l0 "lol">'
    + "".join(f'<!ENTITY l{k} "{f"&l{k - 1};" * 10}">' for k in range(1, 10))
    + "]>"
)


def with_entity_bomb(xml: bytes) -> str:
    text = xml.decode("utf-8")
    body = text[text.index("?>") + 2 :] if text.startswith("<?xml") else text
    body = body.replace("<t>Scaffolding</t>", "<t>&l9;</t>")
    return '<?xml version="1.0" encoding="UTF-8"?>' + LAUGHS + body


@pytest.mark.parametrize("part", ["xl/worksheets/sheet1.xml", "xl/workbook.xml"])
def test_entity_bomb_is_refused_before_parsing(tmp_path, part):
    parts = workbook_parts(tmp_path)
    parts[part] = with_entity_bomb(parts[part]).encode("utf-8")
    path = write_parts(tmp_path / "laughs.xlsx", parts)
    message = one_line_error(path, UnsafeFile)
    assert "declares XML entities" in message and part in message


def test_entity_bomb_the_byte_scan_cannot_see_is_stopped_by_defusedxml(tmp_path):
    """A UTF-16 sheet hides `<!DOCTYPE` from the byte scan; openpyxl parses with defusedxml
    (installed, a declared dependency), which forbids entity declarations outright."""
    assert openpyxl.xml.DEFUSEDXML
    parts = workbook_parts(tmp_path)
    bomb = with_entity_bomb(parts["xl/worksheets/sheet1.xml"]).replace("UTF-8", "UTF-16")
    parts["xl/worksheets/sheet1.xml"] = bomb.encode("utf-16")
    path = write_parts(tmp_path / "laughs16.xlsx", parts)
    message = one_line_error(path, UnsafeFile)
    assert "declares XML entities" in message


def central_entry(data: bytearray, name: str) -> int:
    """Offset of a member's central directory header (signature PK\\x01\\x02, its name at
    offset 46; PKWARE APPNOTE.TXT 4.3.12)."""
    at = data.index(b"PK\x01\x02")
    while data[at + 46 : at + 46 + len(name)] != name.encode():
        at = data.index(b"PK\x01\x02", at + 4)
    return at


def test_declared_size_beyond_the_limit(tmp_path):
    """The central directory's uncompressed size is checked before anything is unzipped."""
    path = write_parts(tmp_path / "big.xlsx", workbook_parts(tmp_path))
    data = bytearray(path.read_bytes())
    # The uncompressed size sits at offset 24 of a central directory header.
    at = central_entry(data, "xl/worksheets/sheet1.xml")
    struct.pack_into("<I", data, at + 24, 3 * safety.MAX_UNCOMPRESSED_BYTES // 2)
    path.write_bytes(bytes(data))
    message = one_line_error(path, UnsafeFile)
    assert "would unzip to 300.0 MB" in message and "200.0 MB" in message


def test_compression_ratio_of_a_zip_bomb(tmp_path):
    parts = workbook_parts(tmp_path)
    parts["xl/media/padding.bin"] = bytes(20 * 2**20)  # zeros deflate about 1000:1
    path = write_parts(tmp_path / "ratio.xlsx", parts)
    message = one_line_error(path, UnsafeFile)
    assert "xl/media/padding.bin" in message and "limit 100:1" in message


def test_actual_bytes_are_bounded_when_the_directory_lies(tmp_path, monkeypatch):
    """With the directory checks passed (as a lying directory would pass them), the bounded
    read still stops at the limit, counting the bytes that really come out."""
    parts = workbook_parts(tmp_path)
    parts["xl/media/padding.bin"] = bytes(3 * 2**20)
    path = write_parts(tmp_path / "liar.xlsx", parts)
    monkeypatch.setattr(safety, "_check_directory", lambda path, members: None)
    monkeypatch.setattr(safety, "MAX_UNCOMPRESSED_BYTES", 2 * 2**20)
    message = one_line_error(path, UnsafeFile)
    assert "more than its directory declares" in message


def test_understated_size_reads_as_damaged(tmp_path):
    """A member whose directory entry understates its size: unzipping stops at the stated size
    and the checksum fails, so the file is refused as damaged."""
    parts = workbook_parts(tmp_path)
    parts["xl/media/padding.bin"] = bytes(3 * 2**20)
    path = write_parts(tmp_path / "understated.xlsx", parts)
    data = bytearray(path.read_bytes())
    with zipfile.ZipFile(path) as archive:
        info = archive.getinfo("xl/media/padding.bin")
    struct.pack_into("<I", data, info.header_offset + 22, 1000)  # local header, offset 22
    struct.pack_into("<I", data, central_entry(data, info.filename) + 24, 1000)
    path.write_bytes(bytes(data))
    message = one_line_error(path)
    assert "damaged or incomplete" in message


def test_truncated_workbook(tmp_path):
    path = write_parts(tmp_path / "whole.xlsx", workbook_parts(tmp_path))
    cut = tmp_path / "cut.xlsx"
    cut.write_bytes(path.read_bytes()[: path.stat().st_size // 2])
    assert "could not be opened as a workbook" in one_line_error(cut)


@pytest.mark.parametrize(
    ("name", "content", "expected"),
    [
        ("renamed.xlsx", b"Item,Low,Most likely,High\n", "is not one"),
        ("random.xlsm", bytes(range(256)) * 4, "is not one"),
        ("empty.xlsx", b"", "is empty (0 bytes)"),
        # OLE compound file signature (MS-CFB 2.2): encrypted workbooks and old .xls files.
        ("locked.xlsx", b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + bytes(504), "password-protected"),
        ("old.xls", b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + bytes(504), "old-style .xls"),
        ("empty.csv", b"", "is empty (0 bytes)"),
        ("estimate.ods", b"PK\x03\x04", "Rangefold reads"),
    ],
)
def test_files_that_are_not_what_their_name_says(tmp_path, name, content, expected):
    path = tmp_path / name
    path.write_bytes(content)
    assert expected in one_line_error(path)
    with pytest.raises(UnreadableFile):
        preview_table(path)


def million_row_sheet() -> bytes:
    """Sheet XML of a header and a million item rows, via a shared string for the names."""
    out = io.StringIO()
    out.write(
        '<?xml version="1.0" encoding="UTF-8"?><worksheet xmlns="http://schemas.openxmlformats.'
        'org/spreadsheetml/2006/main"><dimension ref="A1:D1000001"/><sheetData>'
        '<row r="1"><c r="A1" t="inlineStr"><is><t>Item</t></is></c><c r="B1" t="inlineStr">'
        '<is><t>Low</t></is></c><c r="C1" t="inlineStr"><is><t>Most likely</t></is></c>'
        '<c r="D1" t="inlineStr"><is><t>High</t></is></c></row>'
    )
    for r in range(2, 1_000_002):
        out.write(
            f'<row r="{r}"><c r="A{r}" t="s"><v>0</v></c><c r="B{r}"><v>1</v></c>'
            f'<c r="C{r}"><v>2</v></c><c r="D{r}"><v>4</v></c></row>'
        )
    out.write("</sheetData></worksheet>")
    return out.getvalue().encode()


def test_a_million_rows_stop_at_the_row_limit(tmp_path, monkeypatch):
    parts = workbook_parts(tmp_path)
    parts["xl/worksheets/sheet1.xml"] = million_row_sheet()
    parts["xl/sharedStrings.xml"] = (
        b'<?xml version="1.0" encoding="UTF-8"?><sst xmlns="http://schemas.openxmlformats.org/'
        b'spreadsheetml/2006/main" count="1" uniqueCount="1"><si><t>Formwork</t></si></sst>'
    )
    parts["[Content_Types].xml"] = parts["[Content_Types].xml"].replace(
        b"</Types>",
        b'<Override PartName="/xl/sharedStrings.xml" ContentType="application/vnd.openxmlformats'
        b'-officedocument.spreadsheetml.sharedStrings+xml"/></Types>',
    )
    rels = "xl/_rels/workbook.xml.rels"
    parts[rels] = parts[rels].replace(
        b"</Relationships>",
        b'<Relationship Id="rIdS" Type="http://schemas.openxmlformats.org/officeDocument/2006/'
        b'relationships/sharedStrings" Target="sharedStrings.xml"/></Relationships>',
    )
    path = write_parts(tmp_path / "million.xlsx", parts, level=1)
    seen = []
    real = xlsx_reader.cell_text
    monkeypatch.setattr(xlsx_reader, "cell_text", lambda cell: seen.append(1) or real(cell))
    message = one_line_error(path, UnsafeFile)
    assert f"more than {MAX_ITEM_ROWS:,} rows of line items" in message
    assert f"row {safety.MAX_SHEET_ROWS + 1:,}" in message
    # Stopped at the limit: the cells of about 100,000 rows were read, not of a million.
    assert len(seen) < 4 * (safety.MAX_SHEET_ROWS + 40)


def test_a_million_csv_rows_stop_at_the_row_limit(tmp_path):
    path = tmp_path / "million.csv"
    path.write_text("Item,Low,Most likely,High\n" + "Formwork,1,2,4\n" * 1_000_000)
    message = one_line_error(path, UnsafeFile)
    assert f"more than {MAX_ITEM_ROWS:,} rows" in message


def test_rows_just_under_the_limit_are_all_read(tmp_path):
    path = tmp_path / "many.csv"
    path.write_text("Item,Low,Most likely,High\n" + "Formwork,1,2,4\n" * MAX_ITEM_ROWS)
    estimate = read_estimate(path)
    assert len(estimate.items) == MAX_ITEM_ROWS and not estimate.problems


def test_sheet_extent_stretched_by_formatting_reads_only_what_is_there(tmp_path):
    """A dimension of A1:XFD1048576 (formatting to the sheet's end) and a merge over the whole
    sheet: openpyxl's row iterator would pad to 17 billion cells; only the data is read."""
    parts = workbook_parts(tmp_path)
    sheet = parts["xl/worksheets/sheet1.xml"].decode()
    sheet = sheet.replace('<dimension ref="A1:D2" />', '<dimension ref="A1:XFD1048576" />')
    assert "XFD1048576" in sheet
    sheet = sheet.replace(
        "</sheetData>",
        '</sheetData><mergeCells count="1"><mergeCell ref="F1:XFD1048576"/></mergeCells>',
    )
    parts["xl/worksheets/sheet1.xml"] = sheet.encode()
    estimate = read_estimate(write_parts(tmp_path / "stretched.xlsx", parts))
    assert [(i.name, i.low, i.most_likely, i.high) for i in estimate.items] == [
        ("Scaffolding", 10, 12, 20)
    ]


def test_a_cell_far_to_the_right_is_refused(tmp_path):
    wb = Workbook()
    wb.active.append(HEADER)
    wb.active.cell(row=2, column=safety.MAX_COLUMNS + 1, value="stray note")
    wb.save(tmp_path / "wide.xlsx")
    message = one_line_error(tmp_path / "wide.xlsx", UnsafeFile)
    assert f"column {safety.MAX_COLUMNS + 1}" in message and "row 2" in message


def test_merged_header_cells_read_whole(tmp_path):
    wb = Workbook()
    ws = wb.active
    ws.append(["Item", "Amount (EUR)", None, None])
    ws.append([None, "Low", "Most likely", "High"])
    ws.merge_cells("A1:A2")
    ws.merge_cells("B1:D1")
    ws.append(["Piling", 100, 120, 180])
    wb.save(tmp_path / "merged.xlsx")
    estimate = read_estimate(tmp_path / "merged.xlsx")
    assert [(i.name, i.low, i.high) for i in estimate.items] == [("Piling", 100, 180)]


@pytest.mark.parametrize(
    "text", ["NaN", "nan", "inf", "-inf", "Infinity", "1e999", "twelve", "#VALUE!", "1e300"]
)
def test_not_a_usable_number_is_a_problem_on_its_cell(tmp_path, text):
    wb = Workbook()
    wb.active.append(HEADER)
    wb.active.append(["Cladding", 10, text, 30])
    wb.active.append(["Glazing", 5, 6, 9])
    wb.save(tmp_path / "cells.xlsx")
    estimate = read_estimate(tmp_path / "cells.xlsx")
    cladding, glazing = estimate.items
    assert cladding.most_likely is None and cladding.raw == {"Most likely": text}
    (problem,) = cladding.read_problems
    assert problem.row == 2 and problem.column == "Most likely" and "C2" in problem.message
    assert not glazing.read_problems


@pytest.mark.parametrize("value", [1e300, -1e300, 1e16])
def test_extreme_magnitudes_are_flagged_not_overflowed(tmp_path, value):
    """Stored as real numbers in the workbook: the engine's moments would overflow (x**4 of
    1e300 is inf), so the cell is flagged and the other items still analyse."""
    wb = Workbook()
    wb.active.append([*HEADER, "Distribution"])
    wb.active.append(["Tunnel boring", 1.0, value, 3.0, "triangular"])
    wb.active.append(["Uniform a", 0, None, 1, "uniform"])
    wb.active.append(["Uniform b", 0, None, 1, "uniform"])
    wb.save(tmp_path / "huge.xlsx")
    estimate = read_estimate(tmp_path / "huge.xlsx")
    (problem,) = estimate.items[0].read_problems
    assert f"{MAX_MAGNITUDE:g}" in problem.message and "C2" in problem.message
    rest = estimate.valid_items()
    assert [i.name for i in rest] == ["Uniform a", "Uniform b"]
    estimate.items = rest
    analysis = analyze(estimate, method="exact", levels=(50,))
    # Sum of two standard uniforms: triangular on [0, 2], median 1 (Irwin–Hall n = 2,
    # Johnson, Kotz & Balakrishnan, Continuous Univariate Distributions vol. 2).
    assert analysis.levels[0].value == pytest.approx(1.0, abs=1e-6)
    assert math.isfinite(analysis.total.sd)


def test_magnitude_just_under_the_limit_is_kept(tmp_path):
    path = tmp_path / "edge.csv"
    path.write_text("Item,Low,Most likely,High\nDam,9e14,9.5e14,1e15\n")
    (item,) = read_estimate(path).items
    assert item.high == MAX_MAGNITUDE and not item.read_problems


def csv_items(path: Path) -> list[tuple]:
    return [(i.name, i.low, i.most_likely, i.high) for i in read_estimate(path).items]


EXPECTED = [("Footings", 10.0, 12.0, 15.0), ("Walls", 20.0, 25.0, 40.0)]


def test_csv_with_bom_pipes_and_mixed_line_endings(tmp_path):
    path = tmp_path / "odd.csv"
    text = "Item|Low|Most likely|High\r\nFootings|10|12|15\nWalls|20|25|40\r"
    path.write_bytes(b"\xef\xbb\xbf" + text.encode())
    assert csv_items(path) == EXPECTED
    assert read_estimate(path).summary["delimiter"] == "pipe"


def test_utf16_without_byte_order_mark(tmp_path):
    path = tmp_path / "utf16.txt"
    text = "Item\tLow\tMost likely\tHigh\r\nFootings\t10\t12\t15\r\nWalls\t20\t25\t40\r\n"
    path.write_bytes(text.encode("utf-16-le"))
    assert csv_items(path) == EXPECTED


def test_csv_with_a_nul_byte(tmp_path):
    path = tmp_path / "nul.csv"
    path.write_bytes(b"Item,Low,Most likely,High\nFootings,10,12,15\nWa\x00lls,20,25,40\n")
    assert "line 3: a NUL byte" in one_line_error(path)


def test_huge_single_line(tmp_path):
    path = tmp_path / "line.csv"
    path.write_text('Item,Low,Most likely,High\n"Footings' + "x" * 300_000 + '",10,12,15\n')
    assert "field larger than field limit" in one_line_error(path, UnsafeFile)
    wide = tmp_path / "wide.csv"
    wide.write_text("Item,Low,Most likely,High\n" + ",".join(["1"] * 100_000) + "\n")
    assert f"limit of {safety.MAX_COLUMNS} columns" in one_line_error(wide, UnsafeFile)


def test_header_only_reads_as_an_empty_estimate(tmp_path):
    """A blank template is a valid start, not an error; the report then says what is missing."""
    path = tmp_path / "template.csv"
    path.write_text("Item,Low,Most likely,High\n")
    estimate = read_estimate(path)
    assert estimate.items == [] and not estimate.problems


def test_oversized_file_is_refused_before_reading(tmp_path, monkeypatch):
    monkeypatch.setattr(safety, "MAX_FILE_BYTES", 1000)
    path = tmp_path / "big.csv"
    path.write_text("Item,Low,Most likely,High\n" + "Footings,10,12,15\n" * 100)
    assert "above Rangefold's limit" in one_line_error(path, UnsafeFile)


@pytest.mark.parametrize(
    ("content", "expected"),
    [
        ("[" * 100_000 + "]" * 100_000, "too deeply"),
        ('{"format": "rangefold-project", "schema_version": ' + "9" * 5000 + "}", "backup"),
        ("", "is empty"),
    ],
)
def test_damaged_project_files(tmp_path, content, expected):
    path = tmp_path / "damaged.rangefold"
    path.write_text(content)
    assert expected in one_line_error(path)


def test_project_with_an_extreme_amount_keeps_it_as_a_draft(tmp_path):
    from engine import Estimate, LineItem, Settings
    from fileio.project import load_project, save_project

    path = tmp_path / "p.rangefold"
    save_project(path, Estimate(items=[LineItem("Silo", "uniform", 0.0, None, 1e300)]), Settings())
    estimate, _ = load_project(path)
    (item,) = estimate.items
    assert item.high is None and item.raw == {"High": "1e+300"}
    assert f"{MAX_MAGNITUDE:g}" in item.read_problems[0].message


@pytest.mark.parametrize("command", ["check", "report"])
def test_cli_prints_one_line_and_exits_2(tmp_path, capsys, command):
    parts = workbook_parts(tmp_path)
    parts["xl/worksheets/sheet1.xml"] = with_entity_bomb(parts["xl/worksheets/sheet1.xml"]).encode()
    path = write_parts(tmp_path / "laughs.xlsx", parts)
    assert main([command, str(path)]) == 2
    err = capsys.readouterr().err
    assert len(err.splitlines()) == 1 and "declares XML entities" in err
