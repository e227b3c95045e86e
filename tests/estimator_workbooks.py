"""Workbooks shaped like estimators' files, built for the import tests and the dialog's.

Invented figures; the cost plan has a title block, sections with a typed subtotal, a formula
subtotal and a carried-forward formula (with the results a spreadsheet program saves), a
Basis column, a risk register on its own sheet and a notes sheet.
"""

from __future__ import annotations

import re
import zipfile
from pathlib import Path

from openpyxl import Workbook

PLAN_ITEMS = [  # (row, name, low, most likely, high, basis)
    (6, "Excavation and disposal", 900_000, 1_000_000, 1_300_000, "rock allowance"),
    (7, "Piling", 2_400_000, 2_650_000, 3_100_000, "quote 17"),
    (10, "Frame", 3_000_000, 3_300_000, 3_900_000, None),
    (11, "Envelope", 3_200_000, 3_650_000, 4_200_000, "cost plan rates"),
]
REGISTER = [  # (name, probability, low, most likely, high, owner)
    ("Flooded excavation", 0.20, 100_000, 200_000, 500_000, "Site lead"),
    ("Steel price rise", 0.35, 150_000, 300_000, 600_000, "Cost manager"),
]


def triangular_mean(low: float, mode: float, high: float) -> float:
    return (low + mode + high) / 3  # Johnson, Kotz & Balakrishnan vol. 2, ch. 26


def add_cached_values(path: Path, sheet_number: int, results: dict[str, float]) -> None:
    """Give formula cells the saved results a spreadsheet program writes (openpyxl writes
    none: `<v/>`), so the file reads as one saved by hand."""
    with zipfile.ZipFile(path) as src:
        parts = [(info, src.read(info)) for info in src.infolist()]
    name = f"xl/worksheets/sheet{sheet_number}.xml"
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as dst:
        for info, data in parts:
            if info.filename == name:
                xml = data.decode()
                for cell, value in results.items():
                    xml, count = re.subn(
                        rf'(<c r="{cell}"[^>]*><f>[^<]*</f>)<v\s*/>', rf"\g<1><v>{value:g}</v>", xml
                    )
                    assert count == 1, cell
                data = xml.encode()
            dst.writestr(info, data)


def cost_plan_workbook(path: Path) -> Path:
    """Title block, sections with a typed subtotal, a formula subtotal (saved results) and a
    carried-forward formula, a Basis column, a risk register and a notes sheet."""
    wb = Workbook()
    ws = wb.active
    ws.title = "Cost plan"
    ws["A1"] = "Harbour depot extension - cost plan (USD)"
    ws["A2"] = "Prepared for the project board"
    ws.append([])
    ws.append(["Ref", "Description", "Low", "Most likely", "High", "Basis"])
    ws.append([None, "Groundworks"])
    for row, name, low, ml, high, basis in PLAN_ITEMS[:2]:
        ws.append([f"1.{row - 5}", name, low, ml, high, basis])
    ws.append([None, "Subtotal groundworks", None, "3,650,000", None])
    ws.append([None, "Building"])
    for row, name, low, ml, high, basis in PLAN_ITEMS[2:]:
        ws.append([f"2.{row - 9}", name, low, ml, high, basis])
    ws.append([None, "Total building", "=SUM(C10:C11)", "=SUM(D10:D11)", "=SUM(E10:E11)"])
    ws.append([None, "Carried forward", None, "=D8+D12"])
    register = wb.create_sheet("Risk register")
    register.append(["Risk ID", "Risk", "Probability", "Low", "Most likely", "High", "Owner"])
    for k, (name, p, low, ml, high, owner) in enumerate(REGISTER, start=1):
        register.append([f"R{k}", name, p, low, ml, high, owner])
        register.cell(row=k + 1, column=3).number_format = "0%"
    wb.create_sheet("Notes").append(["Rates at second quarter prices."])
    wb.save(path)
    add_cached_values(
        path, 1, {"C12": 6_200_000, "D12": 6_950_000, "E12": 8_100_000, "D13": 10_600_000}
    )
    return path


def workbook(path: Path, sheets: dict[str, list[list]]) -> Path:
    """A workbook of the given sheets, each a list of rows from row 1 (a blank row is [])."""
    book = Workbook()
    book.remove(book.active)
    for name, rows in sheets.items():
        sheet = book.create_sheet(name)
        for row in rows:
            sheet.append(row)
    book.save(path)
    return path
