"""Inputs within the documented limits finish with a result or a one-line refusal: cells of
120,000 characters above a CSV header, a 30 MB cell in a workbook, a 10,000-item PDF (a
compact appendix of the widest items; the workbook report keeps every item). Run as real
processes with a generous timeout; speed is measured in bench/, never asserted here."""

from __future__ import annotations

import os
import subprocess
import sys
import zipfile
from pathlib import Path

from openpyxl import Workbook, load_workbook

import reports.pdf as pdf
from engine import Estimate, LineItem, Settings, analyze
from reports import write_report

ROOT = Path(__file__).resolve().parents[1]


def run_cli(*args: str) -> subprocess.CompletedProcess:
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    return subprocess.run(
        [sys.executable, "-m", "cli", *args], capture_output=True, text=True, timeout=300, env=env
    )


def test_csv_with_huge_cells_above_the_header(tmp_path):
    path = tmp_path / "notes above.csv"
    note = "Scope notes " + "x" * 120_000
    with path.open("w", encoding="utf-8") as out:
        for _ in range(10):
            out.write(",".join([note] * 4) + "\n")
        out.write("Item,Low,Most likely,High\n")
        out.writelines(f"Package {k},10,12,20\n" for k in range(30))
    done = run_cli("check", str(path))
    assert done.returncode == 0, done.stderr
    assert "30 line items" in done.stdout


def test_workbook_with_a_30_mb_cell(tmp_path):
    plain = tmp_path / "plain.xlsx"
    book = Workbook()
    sheet = book.active
    sheet.append(["Cost estimate notes: MARKER"])
    sheet.append([])
    sheet.append(["Item", "Low", "Most likely", "High"])
    for k in range(30):
        sheet.append([f"Package {k}", 10, 12, 20])
    book.save(plain)
    # openpyxl cuts cells at 32,767 characters, so the long text goes into the part directly.
    path = tmp_path / "long note.xlsx"
    text = os.urandom(15_000_000).hex()  # 30 MB that does not compress like a zip bomb
    with zipfile.ZipFile(plain) as source, zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as out:
        for info in source.infolist():
            data = source.read(info.filename)
            if info.filename == "xl/worksheets/sheet1.xml":
                data = data.replace(b"MARKER", text.encode())
            out.writestr(info.filename, data)
    done = run_cli("check", str(path))
    assert done.returncode == 0, done.stderr
    assert "30 line items" in done.stdout


def items(n: int) -> list[LineItem]:
    return [
        LineItem(f"Work package {k}", "pert", 10.0, 12.0, 12.0 + (k % 97), group=f"Zone {k % 7}")
        for k in range(n)
    ]


def test_large_pdf_lists_the_widest_items_and_the_workbook_keeps_all(tmp_path, monkeypatch):
    monkeypatch.setattr(pdf, "COMPACT_AFTER", 20)
    estimate = Estimate(items=items(120), title="Compact", unit="EUR")
    analysis = analyze(estimate, method="exact")
    target = write_report(tmp_path / "c.pdf", estimate, analysis, Settings(unit="EUR"))
    text = subprocess.run(
        ["pdftotext", "-layout", str(target), "-"], capture_output=True, text=True
    )
    words = " ".join(text.stdout.split())
    assert "The 20 items with the widest spread (largest SD) of 120" in words
    # Highs 12 + k % 97: the widest are k = 96 (high 108) and k = 95; k = 0 is a point.
    assert "Work package 96 " in text.stdout and "Work package 0 " not in text.stdout
    book = write_report(tmp_path / "c.xlsx", estimate, analysis, Settings(unit="EUR"))
    names = {c.value for row in load_workbook(book).worksheets for c in row["A"]}
    assert {f"Work package {k}" for k in range(120)} <= names


def test_ten_thousand_item_pdf_finishes(tmp_path):
    code = (
        "import sys\n"
        "from engine import Estimate, LineItem, Settings, analyze\n"
        "from reports import write_report\n"
        "items = [LineItem(f'Package {k}', 'pert', 10.0, 12.0 + k % 5, 30.0) for k in range(10_000)]\n"
        "e = Estimate(items=items, title='Large', unit='EUR')\n"
        "write_report(sys.argv[1], e, analyze(e, method='exact'), Settings(unit='EUR'))\n"
    )
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    target = tmp_path / "large.pdf"
    done = subprocess.run(
        [sys.executable, "-c", code, str(target)],
        capture_output=True,
        text=True,
        timeout=300,
        env=env,
    )
    assert done.returncode == 0, done.stderr
    assert target.read_bytes().startswith(b"%PDF")
