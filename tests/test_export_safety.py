"""Exports never carry executable content: user text that a spreadsheet would run as a formula
(it begins with =, +, -, @, tab or CR; OWASP, "CSV Injection") is stored as text in the
workbook report and prefixed with a single quote in the CSV item export."""

from __future__ import annotations

import csv
import zipfile

import pytest
from openpyxl import load_workbook

from engine import Estimate, LineItem, Settings, analyze
from fileio.cells import FORMULA_STARTS
from fileio.readers import read_estimate
from reports import write_report
from reports.csv_items import CSV_COLUMNS, write_items_csv

HOSTILE = [
    '=HYPERLINK("http://example.invalid","open")',
    "+1+1",
    "-2+3",
    "@SUM(A1:A2)",
    "\t=1+1",
    "\r=1+1",
]


def hostile_estimate() -> Estimate:
    items = [
        LineItem(name, "triangular", 10.0 + k, 12.0 + k, 20.0 + k, group=HOSTILE[-1 - k])
        for k, name in enumerate(HOSTILE)
    ]
    items.append(LineItem("Bell\x07 and NUL\x00 in a name", "uniform", 1.0, None, 2.0))
    items.append(LineItem("Refund", "triangular", -50.0, -20.0, -5.0, group="Credits"))
    return Estimate(items=items, title="=cmd|' /C calc'!A0", unit="EUR")


@pytest.fixture(scope="module")
def report_book(tmp_path_factory):
    estimate = hostile_estimate()
    path = tmp_path_factory.mktemp("export") / "report.xlsx"
    write_report(path, estimate, analyze(estimate, method="exact"), Settings(unit="EUR"))
    return path


def test_workbook_report_has_no_formula_cell(report_book):
    book = load_workbook(report_book)
    strings = 0
    for sheet in book.worksheets:
        for row in sheet.iter_rows():
            for cell in row:
                assert cell.data_type != "f", (sheet.title, cell.coordinate, cell.value)
                if isinstance(cell.value, str) and cell.value.startswith(FORMULA_STARTS):
                    assert cell.data_type == "s"
                    strings += 1
    assert strings >= len(HOSTILE) * 2  # every hostile name and group, stored as text
    with zipfile.ZipFile(report_book) as archive:
        for name in archive.namelist():
            if name.startswith("xl/worksheets/sheet"):
                xml = archive.read(name)
                assert b"<f>" not in xml and b"<f " not in xml


def test_control_characters_do_not_break_the_workbook(report_book):
    items = load_workbook(report_book)["Items"]
    names = [items.cell(row=r, column=1).value for r in range(2, items.max_row + 1)]
    assert "Bell\ufffd and NUL\ufffd in a name" in names


def test_csv_export_neutralises_formula_text(tmp_path):
    estimate = hostile_estimate()
    path = write_items_csv(tmp_path / "items.csv", estimate)
    with path.open(encoding="utf-8-sig", newline="") as handle:
        rows = list(csv.reader(handle))
    assert tuple(rows[0]) == CSV_COLUMNS
    text_columns = [CSV_COLUMNS.index(c) for c in ("Item", "Distribution", "Group")]
    number_columns = [CSV_COLUMNS.index(c) for c in ("Low", "Most likely", "High")]
    for row, item in zip(rows[1:], estimate.items, strict=True):
        for k in text_columns:
            assert not row[k].startswith(FORMULA_STARTS), row[k]
        for k in number_columns:  # a negative amount is a number, written as one
            assert row[k] == "" or float(row[k]) == getattr(
                item, ("low", "most_likely", "high")[number_columns.index(k)]
            )
    assert rows[1][0] == "'" + HOSTILE[0]
    assert rows[-1][2:5] == ["-50.0", "-20.0", "-5.0"]


def test_csv_export_imports_back(tmp_path):
    """The export's columns are the importer's: amounts come back exactly; a drafted cell is
    written as the text the user gave, so nothing is lost."""
    draft = LineItem("Piling", "triangular", 10.0, None, 30.0, raw={"Most likely": "about 20"})
    estimate = Estimate(items=[LineItem("Roofing", "pert", 5.0, 7.5, 12.25, shape=3.0), draft])
    path = write_items_csv(tmp_path / "items.csv", estimate)
    back = read_estimate(path)
    roofing, piling = back.items
    assert (roofing.family, roofing.low, roofing.most_likely, roofing.high) == (
        "pert",
        5.0,
        7.5,
        12.25,
    )
    assert roofing.shape == 3.0
    assert piling.raw == {"Most likely": "about 20"} and piling.read_problems


def test_formula_like_names_survive_export_and_import(tmp_path):
    """The apostrophe that neutralises '=Q3 allowance' in the CSV is dropped on import."""
    estimate = Estimate(
        items=[LineItem("=Q3 allowance", "fixed", None, 100.0, None, group="@site")]
    )
    back = read_estimate(write_items_csv(tmp_path / "items.csv", estimate))
    assert (back.items[0].name, back.items[0].group) == ("=Q3 allowance", "@site")


def test_csv_export_keeps_the_notes_columns_and_they_import_back(tmp_path):
    """Columns the import did not map travel as notes; the CSV export writes them under their
    own headers (formula-like text neutralised), and reading it back gives the same notes."""
    estimate = Estimate(
        items=[
            LineItem("Piling", "fixed", None, 100.0, None, notes={"Basis": "=quote 2291"}),
            LineItem("Roof", "fixed", None, 50.0, None, notes={"Owner": "site team"}),
        ]
    )
    path = write_items_csv(tmp_path / "items.csv", estimate)
    with path.open(encoding="utf-8-sig", newline="") as handle:
        rows = list(csv.reader(handle))
    assert rows[0][-2:] == ["Basis", "Owner"] and rows[1][-2] == "'=quote 2291"
    back = read_estimate(path)
    assert [i.notes for i in back.items] == [{"Basis": "=quote 2291"}, {"Owner": "site team"}]
