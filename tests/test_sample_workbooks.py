"""The demo workbooks: rebuilt by tools/make_sample_workbooks.py, read back by the importer
as the scenarios define them, and each still teaching what it claims."""

from __future__ import annotations

import csv
import dataclasses
import importlib.util
import sys
from pathlib import Path

import pytest
from openpyxl import load_workbook

from engine import COLUMNS, Settings, analyze
from fileio.demo import DEMO_WORKBOOK, SAMPLE_DIR
from fileio.readers import read_estimate
from reports import write_report

TOOL = Path(__file__).resolve().parents[1] / "tools" / "make_sample_workbooks.py"


def load_tool():
    spec = importlib.util.spec_from_file_location("make_sample_workbooks", TOOL)
    module = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = module
    spec.loader.exec_module(module)
    return module


tool = load_tool()
SCENARIOS = {s.stem: s for s in tool.SCENARIOS}


def without_row(items):
    return [dataclasses.replace(i, row=None, sheet=None) for i in items]


@pytest.mark.parametrize("stem", SCENARIOS)
def test_workbook_reads_as_the_scenario(stem):
    scenario = SCENARIOS[stem]
    got = read_estimate(SAMPLE_DIR / f"{stem}.xlsx")
    want = scenario.estimate()
    assert got.problems == []
    assert got.items == want.items  # rows too: the header sits below the title block
    assert got.summary["header_row"] == tool.header_row()
    # Only the cost plan's section headings and subtotals are left out.
    left_out = {(e["sheet"], e["row"]) for e in got.summary["rows_skipped"]}
    plan = tool.plan_rows(scenario)
    assert left_out == {(tool.ESTIMATE_SHEET, p.number) for p in plan if p.kind != "item"}
    assert got.title == scenario.title
    assert got.correlation.pairs == want.correlation.pairs
    assert got.correlation.groups == want.correlation.groups


def test_csv_copy_reads_as_its_scenario():
    scenario = tool.CSV_SCENARIO
    path = SAMPLE_DIR / f"{scenario.stem}.csv"
    with path.open(encoding="utf-8", newline="") as handle:
        assert next(csv.reader(handle)) == list(COLUMNS)
    got = read_estimate(path)
    assert got.problems == []
    assert without_row(got.items) == without_row(scenario.estimate().items)


def values(book, sheet: str) -> list[list]:
    return [[c.value for c in row] for row in book[sheet].iter_rows()]


def test_committed_files_are_what_the_tool_writes(tmp_path):
    for fresh in tool.main(tmp_path):
        committed = SAMPLE_DIR / fresh.name
        assert committed.is_file(), f"{committed.name} missing: run tools/make_sample_workbooks.py"
        if fresh.suffix == ".csv":
            assert fresh.read_text("utf-8") == committed.read_text("utf-8")
            continue
        new, old = load_workbook(fresh), load_workbook(committed)
        assert new.sheetnames == old.sheetnames
        for name in new.sheetnames:
            assert values(new, name) == values(old, name), f"{committed.name}!{name} is stale"


def test_template_explains_every_column_and_reads_empty():
    path = SAMPLE_DIR / "import_template.xlsx"
    book = load_workbook(path)
    assert [c.value for c in book["Estimate"][1]] == list(COLUMNS)
    explained = {row[0].value for row in book["Notes"].iter_rows(min_row=2) if row[0].value}
    assert set(COLUMNS) <= explained
    estimate = read_estimate(path)
    assert estimate.items == [] and estimate.problems == []


def test_demo_keeps_typed_and_formula_subtotals_and_its_register_apart():
    """The demo shows the import leaving subtotals out and adding the register sheet."""
    values = load_workbook(DEMO_WORKBOOK, data_only=True)[tool.ESTIMATE_SHEET]
    formulas = load_workbook(DEMO_WORKBOOK)[tool.ESTIMATE_SHEET]
    subtotals = [p for p in tool.plan_rows(tool.PLANT) if "subtotal" in p.kind]
    assert {p.kind for p in subtotals} == {"typed subtotal", "formula subtotal"}
    for p in subtotals:
        assert values[f"D{p.number}"].value == p.value  # a saved result, formulas too
        if p.kind == "formula subtotal":
            assert formulas[f"D{p.number}"].value == p.formula
    estimate = read_estimate(DEMO_WORKBOOK)
    reasons = {e["row"]: e["reason"] for e in estimate.summary["rows_skipped"] if e.get("subtotal")}
    assert set(reasons) == {p.number for p in subtotals}
    for p in subtotals:
        assert ("holds =SUM(" in reasons[p.number]) == (p.kind == "formula subtotal")
    read = [s["name"] for s in estimate.summary["sheets_read"]]
    assert read == [tool.ESTIMATE_SHEET, tool.REGISTER_SHEET]
    register = [i for i in estimate.items if i.sheet == tool.REGISTER_SHEET]
    assert len(register) == 5 and all(i.is_risk_event for i in register)
    assert [i.notes["Owner"] for i in register] == list(tool.OWNERS)


def test_demo_is_the_one_that_fails_at_p90():
    assert DEMO_WORKBOOK.is_file()
    assert DEMO_WORKBOOK.parent == SAMPLE_DIR
    assert DEMO_WORKBOOK.stem == tool.PLANT.stem


def analysis_of(scenario):
    return analyze(read_estimate(SAMPLE_DIR / f"{scenario.stem}.xlsx"), levels=(50, 80, 90))


def test_fitout_shortcut_holds():
    analysis = analysis_of(tool.FITOUT)
    assert all(r.holds for r in analysis.levels)
    assert analysis.diagnostics.risk_event_count == 0
    assert len(analysis.levels) == 3 and analysis.diagnostics.item_count == 40
    assert analysis.diagnostics.largest_variance_share < 0.2


def test_plant_shortcut_understates_p90_because_of_rare_events():
    analysis = analysis_of(tool.PLANT)
    p90 = analysis.levels[2]
    assert not p90.holds and p90.verdict == "understates"
    assert p90.gap_pct < -2
    diag = analysis.diagnostics
    assert diag.risk_event_count == 5
    assert diag.risk_event_variance_share > 0.8
    events = [d for d in analysis.drivers if d.probability < 1]
    assert all(0.03 <= d.probability <= 0.10 for d in events)


def test_schedule_is_skewed_by_the_long_lead_item():
    analysis = analysis_of(tool.SCHEDULE)
    top = analysis.drivers[0]
    assert top.family == "lognormal" and "long-lead" in top.name
    assert top.skew_share > 0.9
    assert analysis.diagnostics.skewness > 1
    p50, p80 = analysis.levels[:2]
    assert p50.verdict == p80.verdict == "overstates"


@pytest.mark.parametrize("stem", SCENARIOS)
def test_report_for_each_demo(stem, tmp_path):
    path = SAMPLE_DIR / f"{stem}.xlsx"
    estimate = read_estimate(path)
    settings = Settings(unit=estimate.unit, trials=20_000)
    analysis = analyze(estimate, **settings.analyze_kwargs())
    for suffix in (".xlsx", ".pdf", ".json"):
        out = write_report(
            tmp_path / f"report{suffix}", estimate, analysis, settings, source_path=path
        )
        assert out.stat().st_size > 1000


def test_heat_plant_paths_merge_later_than_the_longest_path():
    analysis = analysis_of(tool.HEATING)
    paths = analysis.paths
    assert paths is not None and len(paths.rows) == 4
    assert paths.shared == ["Site mobilisation and setting-out"]
    assert analysis.method == "simulation"
    # the merge bias: the finish is later than the longest-mean path's normal shortcut
    assert all(r.verdict == "understates" for r in analysis.levels)
    assert all(b > 0 for b in paths.merge_bias)
    assert sum(r.criticality for r in paths.rows) == pytest.approx(1.0)
    assert all(r.criticality > 0.1 for r in paths.rows)
    assert analysis.reasons[0].startswith("4 paths within 5% of the longest mean")
