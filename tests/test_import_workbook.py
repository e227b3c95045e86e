"""Importing workbooks as analysts keep them: title blocks, own column names, currency text,
spacer and totals rows, merged cells, formulas, percentile headers, a Correlations sheet.

Every workbook is built here with openpyxl; the expected values are the numbers typed into it.
"""

from __future__ import annotations

import re
import zipfile
from pathlib import Path

import pytest
from openpyxl import Workbook

from engine import CorrelationPair, analyze
from fileio.readers import preview_table, read_estimate


def save(wb: Workbook, path: Path) -> Path:
    wb.save(path)
    return path


def add_cached_value(path: Path, cell: str, value: str) -> None:
    """Give one formula cell a saved result, as a spreadsheet program does on save (openpyxl
    writes formulas with an empty <v/>, i.e. no result)."""
    with zipfile.ZipFile(path) as src:
        parts = {name: src.read(name) for name in src.namelist()}
    sheet = "xl/worksheets/sheet1.xml"
    xml = parts[sheet].decode()
    xml, count = re.subn(rf'(<c r="{cell}"[^>]*><f>[^<]*</f>)<v\s*/>', rf"\g<1><v>{value}</v>", xml)
    assert count == 1
    parts[sheet] = xml.encode()
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as dst:
        for name, data in parts.items():
            dst.writestr(name, data)


@pytest.fixture
def office_workbook(tmp_path: Path) -> Path:
    """Title block (merged), own column names, currency strings, a spacer and a totals row."""
    wb = Workbook()
    ws = wb.active
    ws.title = "Costs"
    ws["A1"] = "Harbour kiosk refurbishment"
    ws.merge_cells("A1:F1")
    ws["A2"] = "Prepared for the steering group; currency: EUR"
    ws.append([])
    ws.append(["Description", "Optimistic", "Likely", "Pessimistic", "Chance", "Category"])
    ws.append(["Demolition", "€12,500", "EUR 14,000", "19,000 EUR", None, "Site"])
    ws.append(["Roof repair", 8000, 9500, 15000, None, "Building"])
    ws.append([])
    ws.append(["Counter joinery", "12 500 €", "13 000 €", "€16.250,50", None, "Fit-out"])
    ws.append(["Flood damage", "(1,000)", 20000, 45000, "25%", "Risk"])
    ws.append(["Total", 31500, 56500, 95250.5, None, None])
    return save(wb, tmp_path / "kiosk.xlsx")


def test_title_block_own_names_currency_spacers_totals(office_workbook: Path) -> None:
    estimate = read_estimate(office_workbook)
    summary = estimate.summary
    assert summary["sheet"] == "Costs"
    assert summary["header_row"] == 4
    assert summary["mapping"] == {
        "Item": "Description",
        "Low": "Optimistic",
        "Most likely": "Likely",
        "High": "Pessimistic",
        "Probability": "Chance",
        "Group": "Category",
    }
    assert estimate.title == "Harbour kiosk refurbishment"
    assert estimate.unit == "EUR"
    names = [i.name for i in estimate.items]
    assert names == ["Demolition", "Roof repair", "Counter joinery", "Flood damage"]
    demolition, _, joinery, flood = estimate.items
    assert (demolition.low, demolition.most_likely, demolition.high) == (12500, 14000, 19000)
    assert (joinery.low, joinery.most_likely, joinery.high) == (12500, 13000, 16250.5)
    assert flood.low == -1000 and flood.probability == pytest.approx(0.25)
    assert demolition.row == 5 and flood.group == "Risk"
    assert summary["rows_read"] == 6
    assert summary["items_taken"] == 4
    assert summary["rows_skipped"] == [
        {"sheet": "Costs", "row": 7, "reason": "blank row"},
        {
            "sheet": "Costs",
            "row": 10,
            "reason": "subtotal row 'Total' (its label says it is a total)",
            "subtotal": True,
            "confirm": False,
        },
    ]
    assert summary["rows_read"] == summary["items_taken"] + len(summary["rows_skipped"])
    # Flood damage's Low below 0 is a valid range (a saving) but triangular needs Low <= ML:
    # no read problems at all, and the engine's validation has none either.
    assert summary["drafts"] == 0 and estimate.problems == []


def test_imported_estimate_analyses(office_workbook: Path) -> None:
    estimate = read_estimate(office_workbook)
    analysis = analyze(estimate, method="exact")
    # Triangular mean (a + c + b) / 3 (Johnson, Kotz & Balakrishnan, vol. 2, ch. 26);
    # a risk event's mean is p times its impact's mean.
    means = [(12500 + 14000 + 19000) / 3, (8000 + 9500 + 15000) / 3, (12500 + 13000 + 16250.5) / 3]
    expected = sum(means) + 0.25 * (-1000 + 20000 + 45000) / 3
    assert analysis.total.mean == pytest.approx(expected, rel=1e-6)


def test_unlabelled_totals_row_recognised_by_its_sums(tmp_path: Path) -> None:
    wb = Workbook()
    ws = wb.active
    ws.append(["Item", "Low", "Most likely", "High"])
    ws.append(["Excavation", 10, 12, 20])
    ws.append(["Backfill", 5, 6, 9])
    ws.append([None, 15, 18, 29])
    ws.append(["Total station survey", 1, 2, 3])  # an instrument, not a total
    estimate = read_estimate(save(wb, tmp_path / "t.xlsx"))
    assert [i.name for i in estimate.items] == ["Excavation", "Backfill", "Total station survey"]
    assert estimate.summary["rows_skipped"][0]["row"] == 4
    assert "sums of the items above" in estimate.summary["rows_skipped"][0]["reason"]


def test_section_headings_become_groups(tmp_path: Path) -> None:
    wb = Workbook()
    ws = wb.active
    ws.append(["Activity", "Min", "Mode", "Max"])
    ws.append(["Civil works"])
    ws.append(["Piling", 10, 12, 20])
    ws.append(["Substructure", 20, 25, 40])
    estimate = read_estimate(save(wb, tmp_path / "h.xlsx"))
    assert [(i.name, i.group) for i in estimate.items] == [
        ("Piling", "Civil works"),
        ("Substructure", "Civil works"),
    ]
    assert "section heading 'Civil works'" in estimate.summary["rows_skipped"][0]["reason"]


def test_merged_header_and_merged_cells(tmp_path: Path) -> None:
    wb = Workbook()
    ws = wb.active
    ws.title = "Estimate"
    ws["A1"] = "Depot extension"
    ws.merge_cells("A1:E1")
    # Two header rows: "Description" and "Group" merged down, "Cost" merged across.
    ws["A3"], ws["B3"], ws["E3"] = "Description", "Cost", "Group"
    ws.merge_cells("A3:A4")
    ws.merge_cells("B3:D3")
    ws.merge_cells("E3:E4")
    ws["B4"], ws["C4"], ws["D4"] = "Low", "Most likely", "High"
    rows = [
        ("Steel frame", 100, 120, 170, "Structure"),
        ("Cladding", 50, 60, 90, None),
        ("Drainage", 30, 40, 55, "External"),
        ("Paving", None, 25, 40, None),
    ]
    for r, values in enumerate(rows, start=5):
        for c, value in enumerate(values, start=1):
            if value is not None:
                ws.cell(r, c, value)
    ws.merge_cells("E5:E6")  # one group label for two rows
    ws.merge_cells("B7:B8")  # a Low value shared by merging: the row below lacks it
    estimate = read_estimate(save(wb, tmp_path / "m.xlsx"))
    assert estimate.summary["header_row"] == 4
    assert estimate.summary["mapping"]["Item"] == "Description"
    assert estimate.summary["mapping"]["Group"] == "Group"
    _, cladding, drainage, paving = estimate.items
    assert cladding.group == "Structure"  # filled down from the merged label
    assert drainage.read_problems == ()
    (problem,) = paving.read_problems
    assert problem.column == "Low" and problem.row == 8 and problem.sheet == "Estimate"
    assert "B8 is inside the merged cells B7:B8; only B7 holds a value" in problem.message
    assert estimate.summary["drafts"] == 1


def test_formulas_cached_and_uncached(tmp_path: Path) -> None:
    wb = Workbook()
    ws = wb.active
    ws.title = "Sheet"
    ws.append(["Item", "Low", "Most likely", "High"])
    ws.append(["Formwork", 100, "=B2*1.2", "=B2*2"])
    ws.append(["Rebar", 40, 50, "=C3*1.5"])
    path = save(wb, tmp_path / "f.xlsx")
    add_cached_value(path, "C2", "120")
    add_cached_value(path, "D2", "200")
    estimate = read_estimate(path)
    formwork, rebar = estimate.items
    assert (formwork.low, formwork.most_likely, formwork.high) == (100, 120, 200)
    assert formwork.read_problems == ()
    assert rebar.high is None and rebar.raw == {"High": "=C3*1.5"}
    (problem,) = rebar.read_problems
    assert problem.column == "High" and problem.row == 3
    assert problem.message.startswith("cell D3: the formula '=C3*1.5' has no saved result")
    assert "recalculate" in problem.fix


def test_percentile_headers(tmp_path: Path) -> None:
    wb = Workbook()
    ws = wb.active
    ws.append(["Task", "P10", "Most likely", "P90", "Shape"])
    ws.append(["Commissioning", 20, 25, 40, "PERT"])
    wb.create_sheet("Other")
    wb["Other"].append(["Item", "Low (P20)", "ML", "High (P80)"])
    wb["Other"].append(["Testing", 5, 6, 9])
    path = save(wb, tmp_path / "p.xlsx")
    (item,) = read_estimate(path).items
    assert (item.low_pct, item.high_pct, item.family) == (10, 90, "pert")
    (other,) = read_estimate(path, sheet="other").items  # sheet names match case-blind
    assert (other.low, other.most_likely, other.high) == (5, 6, 9)
    assert (other.low_pct, other.high_pct) == (20, 80)


def test_problem_rows_kept_with_their_text(tmp_path: Path) -> None:
    wb = Workbook()
    ws = wb.active
    ws.title = "Risks"
    ws.append(["Item", "Distribution", "Low", "Most likely", "High", "Probability"])
    ws.append(["Permit delay", "triangle", 10, 20, 60, 0.3])
    ws.append(["Crane hire", "gamma", "about 5", 6, "n/a", "40"])
    ws.append(["Design change", None, 50, 40, 30, None])  # readable, but Low > High
    estimate = read_estimate(save(wb, tmp_path / "r.xlsx"))
    permit, crane, design = estimate.items
    assert permit.read_problems == () and permit.family == "triangular"
    assert crane.raw == {
        "Distribution": "gamma",
        "Low": "about 5",
        "High": "n/a",
        "Probability": "40",
    }
    columns = [p.column for p in crane.read_problems]
    assert columns == ["Distribution", "Low", "High", "Probability"]
    assert all(
        p.row == 3 and p.sheet == "Risks" and p.item == "Crane hire" for p in crane.read_problems
    )
    assert crane.read_problems[1].message.startswith("cell C3: ")
    # The validation problem comes from the engine, once, not from the importer.
    assert design.read_problems == ()
    design_problems = [p for p in estimate.problems if p.item == "Design change"]
    assert len(design_problems) == 1 and design_problems[0].column == "High"
    assert estimate.summary["drafts"] == 2 and estimate.summary["items_taken"] == 3


def test_percent_formatted_and_discrete_cells(tmp_path: Path) -> None:
    wb = Workbook()
    ws = wb.active
    ws.append(["Item", "Most likely", "Probability"])
    ws.append(["Ground conditions", "100 @ 20%; 150 @ 50%; 300 @ 30%", None])
    ws.append(["Licence fee", 2500, None])
    ws.append(["Strike", "40 @ 50%; 80 @ 50%", 0.15])
    ws["C4"].number_format = "0%"
    ground, licence, strike = read_estimate(save(wb, tmp_path / "d.xlsx")).items
    assert ground.family == "discrete" and ground.values == ((100, 0.2), (150, 0.5), (300, 0.3))
    assert licence.family == "fixed" and licence.most_likely == 2500
    assert strike.probability == pytest.approx(0.15) and strike.is_risk_event


def test_mapping_override(tmp_path: Path) -> None:
    wb = Workbook()
    ws = wb.active
    ws.append(["Ref", "Scope", "Type", "Floor", "Expected", "Ceiling"])
    ws.append(["1.1", "Lift upgrade", "capex", 70, 80, 120])
    path = save(wb, tmp_path / "o.xlsx")
    # "Type" would be guessed as the distribution; the user says it is the group.
    mapping = {
        "Item": "Scope",
        "Low": "floor",
        "Most likely": "Expected",
        "High": "Ceiling",
        "Group": "Type",
        "Distribution": "",
    }
    estimate = read_estimate(path, mapping=mapping)
    (item,) = estimate.items
    assert (item.name, item.low, item.most_likely, item.high) == ("Lift upgrade", 70, 80, 120)
    assert item.group == "capex" and item.family == "triangular"
    assert estimate.summary["columns_ignored"] == ["Ref"]
    with pytest.raises(ValueError, match=r"'Nope'.* that no sheet of o\.xlsx has"):
        read_estimate(path, mapping={"Item": "Nope"})
    with pytest.raises(ValueError, match="not a column Rangefold reads"):
        read_estimate(path, mapping={"Cost": "Scope"})


def test_sheet_choice_skips_notes_and_correlations(tmp_path: Path) -> None:
    wb = Workbook()
    wb.active.title = "Instructions"
    wb.active.append(["Item", "Low", "High"])  # looks like a header, but it is the notes sheet
    corr = wb.create_sheet("Correlations")
    corr.append(["Item A", "Item B", "Coefficient"])
    corr.append(["Piling", "Substructure", 0.5])
    corr.append(["Group", "Civil", 0.3])
    corr.append(["Default", None, 0.1])
    corr.append(["Piling", "Roofing", "strong"])
    data = wb.create_sheet("Line items")
    data.append(["Item", "Low", "Most likely", "High", "Group"])
    data.append(["Piling", 10, 12, 20, "Civil"])
    data.append(["Substructure", 20, 25, 40, "Civil"])
    path = save(wb, tmp_path / "c.xlsx")
    estimate = read_estimate(path)
    assert estimate.summary["sheet"] == "Line items"
    spec = estimate.correlation
    assert spec.pairs == [CorrelationPair("Piling", "Substructure", 0.5, row=2)]
    assert spec.groups == {"Civil": 0.3} and spec.default == 0.1
    (bad,) = estimate.read_problems
    assert (bad.sheet, bad.row, bad.column) == ("Correlations", 5, "Coefficient")
    with pytest.raises(ValueError, match="no sheet 'Missing'; its sheets are: Instructions"):
        read_estimate(path, sheet="Missing")


def test_no_line_item_sheet_is_a_clear_error(tmp_path: Path) -> None:
    wb = Workbook()
    wb.active.append(["Just some notes"])
    with pytest.raises(ValueError, match="looks like a list of line items"):
        read_estimate(save(wb, tmp_path / "n.xlsx"))


def test_not_a_workbook(tmp_path: Path) -> None:
    path = tmp_path / "broken.xlsx"
    path.write_text("not a zip")
    with pytest.raises(ValueError, match="could not be opened as a workbook"):
        read_estimate(path)


def test_preview(office_workbook: Path) -> None:
    preview = preview_table(office_workbook, max_rows=3)
    assert preview.sheets == ["Costs"] and preview.sheet == "Costs"
    assert preview.header_row == 4
    assert preview.headers == [
        "Description",
        "Optimistic",
        "Likely",
        "Pessimistic",
        "Chance",
        "Category",
    ]
    assert preview.mapping["High"] == "Pessimistic"
    assert preview.rows[0] == ["Demolition", "€12,500", "EUR 14,000", "19,000 EUR", "", "Site"]
    assert len(preview.rows) == 3 and preview.rows[2] == [""] * 6


def test_a_workbook_read_again_is_the_file_as_it_is_now(tmp_path: Path) -> None:
    # The last workbook's tables are kept between reads (the import dialog reads one file at
    # every mapping change): a save in between, even of the same size, is read afresh, and
    # what one read's caller changes is not seen by the next read.
    import os

    from fileio.xlsx_reader import read_workbook

    def write(high: int) -> Path:
        wb = Workbook()
        wb.active.append(["Item", "Low", "Most likely", "High"])
        wb.active.append(["Roof", 10, 20, high])
        return save(wb, tmp_path / "plan.xlsx")

    path = write(30)
    first = read_estimate(path)
    assert first.items[0].high == 30
    table = read_workbook(path).sheets[0].table
    table.grid[1][3] = "999"  # a caller's change to its copy
    assert read_estimate(path).items[0].high == 30
    stat = path.stat()
    write(40)
    os.utime(path, ns=(stat.st_atime_ns, stat.st_mtime_ns + 1_000_000))
    assert read_estimate(path).items[0].high == 40
