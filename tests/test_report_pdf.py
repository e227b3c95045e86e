"""The PDF report: A4 or Letter, summary, charts and item pages, vector text."""

from __future__ import annotations

import re

import pytest
from report_fixtures import correlated_normals, mixed_estimate, uniforms

from engine import Settings, analyze
from reports import write_report
from reports.pdf import ITEMS_PER_PAGE

# Page sizes in points: A4 210 x 297 mm (ISO 216), Letter 8.5 x 11 in; the report rounds
# A4 to 8.27 x 11.69 in.
A4 = (595.44, 841.68)
LETTER = (612.0, 792.0)


def pages_of(data: bytes) -> list[tuple[float, float]]:
    """MediaBox of every page object (matplotlib writes page dictionaries uncompressed)."""
    assert data.startswith(b"%PDF-")
    count = len(re.findall(rb"/Type\s*/Page\b(?!s)", data))
    boxes = re.findall(rb"/MediaBox\s*\[\s*0\s+0\s+([\d.]+)\s+([\d.]+)\s*\]", data)
    assert len(boxes) == count
    return [(float(w), float(h)) for w, h in boxes]


def test_a4_summary_charts_items(tmp_path):
    estimate = mixed_estimate()
    analysis = analyze(estimate, method="exact")
    path = write_report(tmp_path / "r.pdf", estimate, analysis, Settings(unit="EUR"))
    boxes = pages_of(path.read_bytes())
    assert len(boxes) == 6  # decision, evidence, charts, where the contingency sits (2), items
    assert all(b == pytest.approx(A4) for b in boxes)


def test_letter_and_items_over_several_pages(tmp_path):
    estimate = uniforms(ITEMS_PER_PAGE + 1)
    analysis = analyze(estimate, method="exact")
    path = write_report(tmp_path / "r.pdf", estimate, analysis, Settings(), paper="letter")
    boxes = pages_of(path.read_bytes())
    assert len(boxes) == 7  # decision, evidence, charts, allocation (2), two item pages
    assert all(b == pytest.approx(LETTER) for b in boxes)


def test_simulation_report_and_embedded_text(tmp_path):
    estimate = uniforms(3)
    analysis = analyze(estimate, method="simulation", trials=10_000, seed=3)
    path = write_report(tmp_path / "r.pdf", estimate, analysis, Settings(method="simulation"))
    data = path.read_bytes()
    assert len(pages_of(data)) == 5  # decision, evidence, charts, allocation, items
    assert b"/FontFile2" in data  # TrueType embedded (pdf.fonttype 42): text stays text


def test_unknown_paper_is_refused(tmp_path):
    estimate = uniforms(3)
    analysis = analyze(estimate, method="exact")
    with pytest.raises(ValueError, match="paper 'a3' is unknown"):
        write_report(tmp_path / "r.pdf", estimate, analysis, Settings(), paper="a3")


def test_correlated_items_add_a_correlation_page(tmp_path):
    estimate = correlated_normals(0.5)
    analysis = analyze(estimate, trials=10_000, seed=5)
    path = write_report(tmp_path / "r.pdf", estimate, analysis, Settings())
    # decision, evidence, charts, allocation, items, correlation
    assert len(pages_of(path.read_bytes())) == 6


def test_a_long_summary_continues_on_a_second_page(tmp_path):
    estimate = uniforms(3)
    levels = tuple(float(lv) for lv in range(5, 100, 5))  # 19 levels: two tables of 19 rows
    analysis = analyze(estimate, method="exact", levels=levels)
    path = write_report(tmp_path / "r.pdf", estimate, analysis, Settings(levels=levels))
    # decision over two pages (19 levels, 19 verdicts, the S-curve), evidence, charts,
    # allocation, items
    assert len(pages_of(path.read_bytes())) == 6


def test_item_notes_print_under_the_table_and_pages_never_overflow(tmp_path):
    """Columns the import kept as notes (a Basis column, say) are printed under the item
    table with the item's full name; with a long note on every item the table takes fewer
    rows a page, so nothing runs past the margin, and every note is printed."""
    import dataclasses
    import subprocess

    from reports.pdf import MARGIN, Page, _item_pages

    basis = "budget quote from the framework supplier, escalated to the midpoint of works " * 2
    estimate = uniforms(ITEMS_PER_PAGE)
    estimate.items = [
        dataclasses.replace(item, notes={"Basis": f"{basis}#{k}"})
        for k, item in enumerate(estimate.items)
    ]
    pages = _item_pages(estimate, "a4", "footer")
    assert len(pages) > 1
    assert all(isinstance(p, Page) and p.y <= p.height - MARGIN for p in pages)
    analysis = analyze(estimate, method="exact")
    path = write_report(tmp_path / "r.pdf", estimate, analysis, Settings())
    text = subprocess.run(["pdftotext", str(path), "-"], capture_output=True, text=True).stdout
    assert all(f"#{k}" in text for k in range(ITEMS_PER_PAGE))
