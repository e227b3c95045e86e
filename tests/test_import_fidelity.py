"""Estimators' workbooks and CSV files read as the estimator means them.

Subtotals are never items (by label, by formula with or without a saved result, by arithmetic
to confirm), several sheets combine, chart and empty sheets are skipped and said, a CSV quote
that never closes does not swallow the rows after it, and columns not mapped stay with the
items as notes. Every file is built here; expected totals are the typed numbers' closed-form
means: triangular (a + m + b) / 3 (Johnson, Kotz & Balakrishnan, Continuous Univariate
Distributions vol. 2, ch. 26), a risk event p times its impact's mean.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest
from estimator_workbooks import (
    PLAN_ITEMS,
    REGISTER,
    add_cached_values,
    cost_plan_workbook,
    triangular_mean,
    workbook,
)
from openpyxl import Workbook, load_workbook
from openpyxl.chart import BarChart, Reference

from cli.main import main
from engine import analyze
from fileio.project import load_project, save_project
from fileio.readers import read_estimate
from reports import write_report


@pytest.fixture
def cost_plan(tmp_path: Path) -> Path:
    return cost_plan_workbook(tmp_path / "depot.xlsx")


def run(argv: list[str], capsys) -> tuple[int, str, str]:
    code = main(argv)
    out, err = capsys.readouterr()
    return code, out, err


def test_report_total_is_the_sum_of_the_real_items(cost_plan: Path, capsys) -> None:
    """The issue's acceptance case: subtotals left out, the register added."""
    code, out, _ = run(["report", str(cost_plan), "--sheet", "all", "--json"], capsys)
    assert code == 0
    data = json.loads(out)
    expected = sum(triangular_mean(lo, ml, hi) for _, _, lo, ml, hi, _ in PLAN_ITEMS)
    expected += sum(p * triangular_mean(lo, ml, hi) for _, p, lo, ml, hi, _ in REGISTER)
    assert data["total"]["mean"] == pytest.approx(expected, rel=1e-9)
    items = data["report"]["items"]
    assert [(i["sheet"], i["row"]) for i in items] == [
        *(("Cost plan", r[0]) for r in PLAN_ITEMS),
        ("Risk register", 2),
        ("Risk register", 3),
    ]
    assert items[0]["notes"] == {"Ref": "1.1", "Basis": "rock allowance"}
    assert items[-1]["notes"] == {"Risk ID": "R2", "Owner": "Cost manager"}
    skipped = data["report"]["import_summary"]["rows_skipped"]
    assert {(s["sheet"], s["row"]) for s in skipped if s.get("subtotal")} == {
        ("Cost plan", 8),
        ("Cost plan", 12),
        ("Cost plan", 13),
    }


def test_report_summary_says_which_sheets_and_how_many_subtotals(cost_plan: Path, capsys):
    code, out, _ = run(["report", str(cost_plan)], capsys)
    assert code == 0
    assert out.startswith("sheets combined: 'Cost plan' (4 items), 'Risk register' (2 items")
    assert "3 subtotal rows left out of the items; rangefold check lists them" in out


def test_the_default_reads_the_plan_and_its_register(cost_plan: Path) -> None:
    estimate = read_estimate(cost_plan)
    assert [s["name"] for s in estimate.summary["sheets_read"]] == ["Cost plan", "Risk register"]
    assert len(estimate.items) == 6 and estimate.problems == []
    assert estimate.unit == "USD"


def test_check_lists_every_row_sheet_and_column_not_read(cost_plan: Path, capsys) -> None:
    code, out, err = run(["check", str(cost_plan)], capsys)
    assert code == 0, err
    assert (
        "sheets combined: 'Cost plan' (4 items), 'Risk register' (2 items, a risk register)" in out
    )
    assert "row 8 skipped: subtotal row 'Subtotal groundworks' (its label says" in out
    assert "row 12 skipped: subtotal row 'Total building': cell C12 holds =SUM(C10:C11)" in out
    assert "row 13 skipped: subtotal row 'Carried forward' (its label says" in out
    assert "sheet 'Notes' not read: notes or instructions (by its name)" in out
    assert "columns not mapped in sheet 'Cost plan', kept as notes on each item: Ref, Basis" in out
    assert "in sheet 'Risk register', kept as notes on each item: Risk ID, Owner" in out


@pytest.mark.parametrize(
    "label",
    [
        "Subtotal",
        "Sub-total civils",
        "SUB TOTAL",
        "Section total",
        "Section Total: building",
        "Groundworks total",
        "Grand total",
        "Total",
        "Total for section 2",
        "Carried forward",
        "Brought fwd from page 1",
        "c/f",
        "Sum",
    ],
)
def test_totals_by_label_in_any_text_column(label: str, tmp_path: Path) -> None:
    rows = [
        ["Ref", "Item", "Low", "Most likely", "High"],
        ["1", "Excavation", 10, 12, 20],
        ["2", "Backfill", 5, 6, 9],
        [None, label, 15, 18, 29],
        [label, None, 15, 18, 29],  # the label left of an empty Item cell
    ]
    estimate = read_estimate(workbook(tmp_path / "labels.xlsx", {"Sheet": rows}))
    assert [i.name for i in estimate.items] == ["Excavation", "Backfill"]
    assert [s["row"] for s in estimate.summary["rows_skipped"] if s.get("subtotal")] == [4, 5]


def test_names_that_only_look_like_totals_stay_items(tmp_path: Path) -> None:
    rows = [
        ["Item", "Low", "Most likely", "High", "Notes"],
        ["Excavation", 10, 12, 20, "total of three pits"],
        ["Total station survey", 1, 2, 3, None],  # an instrument
        ["Preliminaries (lump sum)", 30, 35, 45, None],
        ["Totalising flow meters", 4, 5, 7, None],
    ]
    estimate = read_estimate(workbook(tmp_path / "names.xlsx", {"Sheet": rows}))
    assert len(estimate.items) == 4 and estimate.problems == []


def test_formula_subtotal_without_a_label_and_without_a_result(tmp_path: Path) -> None:
    """A formula adding other rows is a subtotal whether or not a result was saved; a formula
    within its own row (a High as a markup on Most likely) is an item's value."""
    rows = [
        ["Item", "Low", "Most likely", "High"],
        ["Excavation", 10, 12, "=C2*1.5"],
        ["Backfill", 5, 6, 9],
        ["Groundworks", "=B2+B3", "=SUM(C2:C3)", "=SUBTOTAL(9,D2:D3)"],
    ]
    path = workbook(tmp_path / "formulas.xlsx", {"Sheet": rows})
    add_cached_values(path, 1, {"D2": 18, "B4": 15, "C4": 18, "D4": 27})
    estimate = read_estimate(path)
    assert [(i.name, i.high) for i in estimate.items] == [("Excavation", 18), ("Backfill", 9)]
    (skipped,) = estimate.summary["rows_skipped"]
    assert skipped["row"] == 4 and "cell B4 holds =B2+B3, adding rows 2–3" in skipped["reason"]
    workbook(path, {"Sheet": rows})  # the same formulas, no saved results at all
    estimate = read_estimate(path)
    assert [i.name for i in estimate.items] == ["Excavation", "Backfill"]
    assert "no saved result" in str(estimate.problems[0])  # the markup's, not the subtotal's
    assert len(estimate.problems) == 1


def arithmetic_workbook(path: Path, distribution: str | None = None) -> Path:
    rows = [
        ["Item", "Distribution", "Low", "Most likely", "High"],
        ["Frame", "triangular", 3_000_000, 3_302_500, 3_900_000],
        ["Envelope", "triangular", 3_200_000, 3_648_900, 4_200_000],
        # 6,951,400 typed to the nearest 10,000: a subtotal by its arithmetic alone.
        ["Building works", distribution, None, "6,950,000", None],
        ["Design fee", "fixed", None, 410_000, None],
    ]
    return workbook(path, {"Sheet": rows})


def test_a_subtotal_by_arithmetic_is_left_out_and_must_be_confirmed(tmp_path: Path, capsys):
    path = arithmetic_workbook(tmp_path / "sums.xlsx")
    estimate = read_estimate(path)
    assert [i.name for i in estimate.items] == ["Frame", "Envelope", "Design fee"]
    (problem,) = estimate.problems
    assert (problem.sheet, problem.row, problem.column) == ("Sheet", 4, "Most likely")
    assert "equals the sum of rows 2–3 above it (its section)" in problem.message
    assert "take it back as an item" in problem.fix
    code, out, err = run(["check", str(path)], capsys)
    assert code == 2 and "left out until you confirm" in out + err
    # Taken back (the import dialog's choice), or stated as an item: it counts.
    kept = read_estimate(path, keep_rows=[("Sheet", 4)])
    assert [i.name for i in kept.items][2] == "Building works" and kept.problems == []
    fixed = read_estimate(arithmetic_workbook(tmp_path / "fixed.xlsx", "fixed"))
    assert len(fixed.items) == 4 and fixed.problems == []


def test_a_named_row_whose_range_is_the_sums_above_is_to_confirm(tmp_path: Path) -> None:
    rows = [
        ["Item", "Low", "Most likely", "High"],
        ["Building"],
        ["Frame", 3_000_000, 3_300_000, 3_900_000],
        ["Envelope", 3_200_000, 3_650_000, 4_200_000],
        ["Building", "6.2M", "6.95M", "8.1M"],  # the section's name on its sums
        ["Fit-out", 1_000_000, 1_200_000, 1_500_000],
    ]
    estimate = read_estimate(workbook(tmp_path / "range.xlsx", {"Sheet": rows}))
    assert [i.name for i in estimate.items] == ["Frame", "Envelope", "Fit-out"]
    (problem,) = estimate.problems
    assert (
        "its amounts (Low 6,200,000, Most likely 6,950,000, High 8,100,000) equal the sums "
        "of rows 3–4 above it (its section)" in problem.message
    )


def chart_first(path: Path) -> Path:
    wb = Workbook()
    ws = wb.active
    ws.title = "Estimate"
    ws.append(["Item", "Low", "Most likely", "High"])
    ws.append(["Design", 10, 12, 16])
    ws.append(["Build", 40, 45, 60])
    chart = wb.create_chartsheet("Overview", 0)
    bars = BarChart()
    bars.add_data(Reference(ws, min_col=3, min_row=1, max_row=3), titles_from_data=True)
    chart.add_chart(bars)
    wb.create_sheet("Spare")
    old = wb.create_sheet("Old estimate")
    old.sheet_state = "hidden"
    old.append(["Item", "Low", "Most likely", "High"])
    old.append(["Design (2023)", 8, 10, 13])
    wb.save(path)
    return path


def test_chart_sheet_first_is_skipped_and_said(tmp_path: Path, capsys) -> None:
    path = chart_first(tmp_path / "chart.xlsx")
    estimate = read_estimate(path)
    assert [i.name for i in estimate.items] == ["Design", "Build"]
    code, out, _ = run(["check", str(path)], capsys)
    assert code == 0
    assert "sheet 'Overview' not read: a chart sheet (no cells)" in out
    assert "sheet 'Spare' not read: empty" in out
    assert (
        "sheet 'Old estimate' (hidden) holds 1 line item, not read: add --sheet 'Old estimate' "
        "(or --sheet all) to include it" in out
    )


def test_sheet_option_repeatable_and_all(tmp_path: Path, capsys) -> None:
    path = chart_first(tmp_path / "chart.xlsx")
    code, out, _ = run(["check", str(path), "--sheet", "all"], capsys)
    assert code == 0 and "3 line items" in out and "hidden sheet 'Old estimate' read" in out
    estimate = read_estimate(path, sheet=["old estimate", "Estimate"])
    assert [(i.sheet, i.row) for i in estimate.items] == [
        ("Old estimate", 2),
        ("Estimate", 2),
        ("Estimate", 3),
    ]
    code, _, err = run(["report", str(path), "--sheet", "Nowhere"], capsys)
    assert code == 2 and "has no sheet 'Nowhere'; its sheets are: Overview, Estimate" in err
    code, _, err = run(["check", str(path), "--sheet", "Overview"], capsys)
    assert code == 2 and "holds no line items (a chart sheet (no cells))" in err


def test_a_summary_sheet_copying_other_sheets_is_not_counted_twice(tmp_path: Path) -> None:
    path = cost_plan_workbook(tmp_path / "depot.xlsx")
    book = load_workbook(path)
    summary = book.create_sheet("Summary", 0)
    summary.append(["Item", "Low", "Most likely", "High"])
    summary.append(["Groundworks", None, "='Cost plan'!D8"])
    summary.append(["Building", "='Cost plan'!C12", "='Cost plan'!D12", "='Cost plan'!E12"])
    summary.append(["Contingency allowance", 200_000, 250_000, 400_000])
    book.save(path)  # openpyxl drops the saved results; the copies are known by formula
    estimate = read_estimate(path, sheet="all")
    names = [i.name for i in estimate.items]
    assert names[0] == "Contingency allowance" and "Groundworks" not in names
    copies = [s for s in estimate.summary["rows_skipped"] if s["sheet"] == "Summary"]
    assert [s["row"] for s in copies] == [2, 3]
    assert (
        "takes cell C2 from sheet 'Cost plan' (='Cost plan'!D8), which is read too"
        in (copies[0]["reason"])
    )


def test_register_recognised_whatever_the_sheet_order(tmp_path: Path) -> None:
    sheets = {
        "Risks": [["Risk", "Probability", "Most likely"], ["Permit delay", "30%", 50]],
        "Plan": [["Item", "Low", "Most likely", "High"], ["Build", 40, 45, 60]],
        "Option B": [["Item", "Low", "Most likely", "High"], ["Build, option B", 50, 55, 70]],
    }
    estimate = read_estimate(workbook(tmp_path / "order.xlsx", sheets))
    assert [s["name"] for s in estimate.summary["sheets_read"]] == ["Plan", "Risks"]
    assert estimate.summary["other_sheets"] == [
        {"name": "Option B", "items": 1, "hidden": False, "option": "--sheet 'Option B'"}
    ]


def write(tmp_path: Path, name: str, text: str) -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def test_unclosed_quote_does_not_swallow_the_rows_after_it(tmp_path: Path, capsys) -> None:
    path = write(
        tmp_path,
        "quote.csv",
        "Item,Distribution,Low,Most likely,High\n"
        "A,triangular,1,2,3\n"
        '"B,triangular,1,2,3,G\n'
        "C,triangular,1,2,3\n"
        "D,triangular,1,2,3\n",
    )
    estimate = read_estimate(path)
    assert [i.name for i in estimate.items] == ["A", "B", "C", "D"]
    messages = [p.message for p in estimate.problems]
    assert any(m.startswith("line 3: a quote mark opens a field") for m in messages)
    assert any("row 3 has 6 fields but the header has 5" in m for m in messages)
    code, _, err = run(["check", str(path)], capsys)
    assert code == 2 and "close the quote on line 3" in err


def test_too_many_fields_is_a_problem_on_its_row(tmp_path: Path) -> None:
    path = write(
        tmp_path,
        "wide.csv",
        "Item,Low,Most likely,High\nPiling,1,200,1,500,1,900\nFrame,10,12,15\n",
    )
    estimate = read_estimate(path)
    piling, frame = estimate.items
    (problem,) = piling.read_problems
    assert problem.row == 2 and "'1', '900' past the last column" in problem.message
    assert not frame.read_problems


def test_field_across_many_lines_is_reported(tmp_path: Path) -> None:
    note = "\n".join(f"remark {k}" for k in range(12))
    path = write(
        tmp_path,
        "long.csv",
        f'Item,Low,Most likely,High,Notes\nA,1,2,3,"{note}"\nB,1,2,3,"two\nlines"\n',
    )
    estimate = read_estimate(path)
    assert [i.name for i in estimate.items] == ["A", "B"]
    (problem,) = estimate.problems
    assert problem.message.startswith("line 2: a quoted field runs across 12 lines, to line 13")
    assert estimate.items[1].notes == {"Notes": "two\nlines"}


def test_notes_columns_kept_saved_and_shown(cost_plan: Path, tmp_path: Path) -> None:
    estimate = read_estimate(cost_plan)
    assert estimate.items[1].notes == {"Ref": "1.2", "Basis": "quote 17"}
    assert estimate.items[2].notes == {"Ref": "2.1"}
    project = tmp_path / "depot.rangefold"
    from engine import Settings

    save_project(project, estimate, Settings())
    loaded, _ = load_project(project)
    assert [(i.sheet, i.row, i.notes) for i in loaded.items] == [
        (i.sheet, i.row, i.notes) for i in estimate.items
    ]
    report = write_report(
        tmp_path / "r.xlsx", estimate, analyze(estimate), Settings(), source_path=cost_plan
    )
    book = load_workbook(report)
    rows = list(book["Items"].iter_rows(values_only=True))
    header = rows[0]
    assert {"Sheet", "Row", "Ref", "Basis", "Risk ID", "Owner"} <= set(header)
    first = dict(zip(header, rows[1], strict=True))
    assert (first["Sheet"], first["Row"], first["Basis"]) == ("Cost plan", 6, "rock allowance")
    lines = [r[0] for r in book["Import"].iter_rows(min_row=3, values_only=True)]
    assert any("row 12 skipped: subtotal row 'Total building'" in line for line in lines)


def test_duplicate_headers_and_foreign_currency_are_problems(tmp_path: Path) -> None:
    rows = [
        ["Depot extension, all figures in USD"],
        ["Item", "Low", "Most likely", "High", "High", "Notes", "Notes"],
        ["Frame", "$3.0M", "$3.3M", "$3.9M", "$4.2M", "steel", "frame"],
        ["Envelope", "€400k", "USD 450k", "520k", "560k", None, None],
    ]
    path = workbook(tmp_path / "doubts.xlsx", {"Sheet": rows})
    estimate = read_estimate(path)
    assert estimate.unit == "USD"
    duplicate, currency = estimate.problems
    assert "the header 'High' names columns D, E; column D was read" in duplicate.message
    assert (currency.row, currency.column) == (4, "Low")
    assert "cell B4: '€400k' is not in USD" in currency.message
    assert estimate.items[0].notes == {"High (E)": "$4.2M", "Notes": "steel", "Notes (G)": "frame"}
    # Chosen in the import dialog, the column is no longer in doubt.
    mapping = {"Item": "Item", "Low": "Low", "Most likely": "Most likely", "High": "High (E)"}
    chosen = read_estimate(path, mapping=mapping)
    assert [p.column for p in chosen.problems] == ["Low"]
    assert chosen.items[0].high == 4_200_000


def test_sheets_stating_different_currencies_are_not_added_silently(tmp_path: Path) -> None:
    sheets = {
        "Plan": [["Item", "Low (EUR)", "Most likely (EUR)", "High (EUR)"], ["Build", 40, 45, 60]],
        "Risks": [["Risk", "Probability", "Most likely (GBP)"], ["Permit delay", "30%", 50]],
    }
    (problem,) = read_estimate(workbook(tmp_path / "units.xlsx", sheets)).problems
    assert "sheet 'Plan' states EUR, sheet 'Risks' states GBP" in problem.message


def test_pdf_report_has_a_page_of_what_the_import_left_out(cost_plan: Path, tmp_path: Path):
    from engine import Settings
    from reports.import_provenance import import_lines

    estimate = read_estimate(cost_plan)
    lines = import_lines(estimate)
    assert any("row 12 skipped: subtotal row 'Total building'" in line for line in lines)
    analysis = analyze(estimate)

    def pages(estimate) -> int:
        path = write_report(tmp_path / "r.pdf", estimate, analysis, Settings())
        return len(re.findall(rb"/Type\s*/Page\b(?!s)", path.read_bytes()))

    with_import = pages(estimate)
    estimate.summary = {}
    assert with_import == pages(estimate) + 1


def test_the_dialogs_mapping_is_for_its_sheet_not_the_register(cost_plan: Path) -> None:
    """The plan has no Probability column: its mapping, applied to the register as well,
    would leave the register's probabilities unread and count every risk as certain."""
    book = load_workbook(cost_plan)
    book["Risk register"]["B1"] = "Description"  # every header the mapping names
    book.save(cost_plan)
    mapping = {"Item": "Description", "Low": "Low", "Most likely": "Most likely", "High": "High"}
    estimate = read_estimate(cost_plan, mapping=mapping, sheet=["Cost plan", "Risk register"])
    register = [i for i in estimate.items if i.sheet == "Risk register"]
    assert [i.probability for i in register] == [r[1] for r in REGISTER]
    default = read_estimate(cost_plan, mapping=mapping)
    assert [s["name"] for s in default.summary["sheets_read"]] == ["Cost plan", "Risk register"]


def test_line_separators_inside_a_cell_do_not_split_its_row(tmp_path: Path) -> None:
    """Only CR, LF and CRLF end a CSV line; a form feed or U+2028 (pasted from a word
    processor) stays inside its cell."""
    path = write(
        tmp_path,
        "separators.csv",
        "Item,Low,Most likely,High\r\nPiling\u2028(bored),1,2,3\rFrame\x0c,4,5,6\n",
    )
    estimate = read_estimate(path)
    assert [(i.name, i.high) for i in estimate.items] == [("Piling\u2028(bored)", 3), ("Frame", 6)]
    assert estimate.problems == []


def test_rows_hidden_in_a_sheet_are_read_and_said(tmp_path: Path, capsys) -> None:
    # A hidden row may be a superseded line or an option set aside: it is read like any
    # other (nothing dropped silently) and `check`, the report summary and the JSON name it.
    book = Workbook()
    plan = book.active
    plan.title = "Plan"
    plan.append(["Item", "Low", "Most likely", "High"])
    for k in range(4):
        plan.append([f"Line {k}", 10 + k, 12 + k, 20 + k])
    plan.row_dimensions[3].hidden = True  # sheet row 3: "Line 1"
    risks = book.create_sheet("Risks")
    risks.append(["Risk", "Probability", "Low", "Most likely", "High"])
    risks.append(["Flood", "10%", 5, 8, 20])
    risks.append(["Old risk", "5%", 1, 2, 3])
    risks.row_dimensions[3].hidden = True
    path = tmp_path / "hidden.xlsx"
    book.save(path)
    estimate = read_estimate(path)
    assert len(estimate.items) == 6  # hidden rows are items, as the values say
    assert estimate.summary["rows_hidden"] == [
        {"sheet": "Plan", "row": 3},
        {"sheet": "Risks", "row": 3},
    ]
    assert main(["check", str(path)]) == 0
    printed = capsys.readouterr().out
    assert "1 row hidden in sheet 'Plan' read as items: 3" in printed
    assert "1 row hidden in sheet 'Risks' read as items: 3" in printed
    one_sheet = read_estimate(path, sheet=["Plan"])
    assert one_sheet.summary["rows_hidden"] == [{"sheet": "Plan", "row": 3}]
