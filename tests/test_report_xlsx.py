"""The workbook report opens back with numbers as numbers, user text as text (never a
formula), native charts, frozen headers and a one-page summary."""

from __future__ import annotations

import math
import zipfile

import pytest
from openpyxl import load_workbook
from report_fixtures import correlated_normals, irwin_hall_ppf, mixed_estimate, uniforms
from scipy import special

from engine import Settings, analyze
from reports import write_report
from reports.caution import CAUTION


@pytest.fixture(scope="module")
def mixed_report(tmp_path_factory):
    estimate = mixed_estimate()
    analysis = analyze(estimate, method="exact")
    path = tmp_path_factory.mktemp("xlsx") / "report.xlsx"
    assert write_report(path, estimate, analysis, Settings(unit="EUR")) == path
    return estimate, analysis, load_workbook(path), path


def test_formula_like_text_stays_text(mixed_report):
    estimate, _, book, _ = mixed_report
    items = book["Items"]
    names = [items.cell(row=r, column=1).value for r in range(2, 2 + len(estimate.items))]
    assert names == [i.name for i in estimate.items]
    for r in range(2, 2 + len(estimate.items)):
        for column in (1, 2):
            cell = items.cell(row=r, column=column)
            assert cell.data_type != "f", cell.value
    formula_like = [items.cell(row=r, column=1) for r in (2, 3, 4)]
    assert all(c.data_type == "s" and c.quotePrefix for c in formula_like)
    assert book["Summary"]["A2"].value == "=Mixed estimate"
    assert book["Summary"]["A2"].data_type == "s"


def test_no_formula_anywhere_in_the_file(mixed_report):
    *_, path = mixed_report
    with zipfile.ZipFile(path) as archive:
        sheets = [n for n in archive.namelist() if n.startswith("xl/worksheets/sheet")]
        assert sheets
        assert not any(b"<f>" in archive.read(n) or b"<f " in archive.read(n) for n in sheets)


def test_numbers_are_numbers_with_formats(mixed_report):
    _, analysis, book, _ = mixed_report
    summary = book["Summary"]
    headers = [c.value for c in summary[5]]
    assert headers[:3] == ["Level", "Total (exact)", "Contingency"]
    for k, row in enumerate(analysis.levels):
        level, total, contingency, share = (summary.cell(row=6 + k, column=c) for c in range(1, 5))
        assert level.value == row.level and level.number_format == '"P"0'
        # Totals near 500: four significant figures, one decimal (reports.content.money_decimals).
        assert total.value == pytest.approx(row.value) and total.number_format == "#,##0.0"
        assert contingency.value == pytest.approx(row.value - analysis.base_estimate)
        assert share.value == pytest.approx(row.contingency_pct / 100)
        assert share.number_format == "0.0%"
    values = [c.value for c in book["Items"]["J"][1:]]  # Mean column
    assert values and all(isinstance(v, int | float) for v in values)
    assert any(c.value == CAUTION for row in summary.iter_rows() for c in row)


def test_summary_prints_on_one_page_and_headers_are_frozen(mixed_report):
    _, _, book, _ = mixed_report
    summary = book["Summary"]
    assert summary.sheet_properties.pageSetUpPr.fitToPage
    assert (summary.page_setup.fitToWidth, summary.page_setup.fitToHeight) == (1, 1)
    assert summary.freeze_panes == "A6"
    assert book["Items"].freeze_panes == "B2"


def test_native_scatter_and_bar_charts(mixed_report):
    *_, path = mixed_report
    with zipfile.ZipFile(path) as archive:
        charts = [archive.read(n) for n in archive.namelist() if n.startswith("xl/charts/chart")]
    assert len(charts) == 3  # S-curve, drivers, contingency by group
    assert any(b"scatterChart" in c for c in charts)
    assert any(b"barChart" in c for c in charts)


def test_levels_match_the_closed_form(tmp_path):
    estimate = uniforms(3)
    analysis = analyze(estimate, method="exact", levels=(50, 80, 90))
    path = write_report(tmp_path / "u.xlsx", estimate, analysis, Settings())
    summary = load_workbook(path)["Summary"]
    for k, q in enumerate((0.5, 0.8, 0.9)):
        # Irwin–Hall n = 3 (Johnson, Kotz & Balakrishnan vol. 2), within the grid error.
        assert summary.cell(row=6 + k, column=2).value == pytest.approx(
            irwin_hall_ppf(q, 3), abs=2e-3
        )


def test_unknown_extension_is_refused(tmp_path):
    estimate = uniforms(3)
    analysis = analyze(estimate, method="exact")
    with pytest.raises(ValueError, match=r"use \.xlsx, \.pdf, \.json"):
        write_report(tmp_path / "report.docx", estimate, analysis, Settings())
    assert not list(tmp_path.iterdir())


def test_correlation_section_and_what_if_columns(tmp_path):
    estimate = correlated_normals(0.5)
    analysis = analyze(estimate, trials=20_000, seed=5)
    path = write_report(tmp_path / "c.xlsx", estimate, analysis, Settings())
    book = load_workbook(path)
    assert "Correlation" in book.sheetnames
    summary = book["Summary"]
    headers = [c.value for c in summary[5]]
    dependent = headers.index("Normal with correlation") + 1
    independent = headers.index("If independent") + 1
    s = 10 / special.ndtri(0.9)  # each item: P10 90, P90 110
    r = 2 * math.sin(math.pi * 0.5 / 6)  # rank 0.5 to Pearson (Pearson 1907)
    z90 = special.ndtri(0.9)
    # Sum of correlated normals: variance s1^2 + s2^2 + 2 r s1 s2 (REFERENCES.md).
    assert summary.cell(row=8, column=dependent).value == pytest.approx(
        200 + z90 * s * math.sqrt(2 + 2 * r), rel=1e-9
    )
    # Independent normals: the exact total is normal with variance 2 s^2.
    assert summary.cell(row=8, column=independent).value == pytest.approx(
        200 + z90 * s * math.sqrt(2), abs=0.05
    )
    pairs = [
        row for row in book["Correlation"].iter_rows(values_only=True) if row[0] == "Steelwork"
    ]
    assert pairs and pairs[-1][2:4] == (0.5, 0.5)
