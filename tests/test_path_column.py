"""The Path column: read from an estimator's workbook, kept by the project file, written to
the CSV export and shown in the window's table, so a schedule's paths survive every trip."""

from __future__ import annotations

import csv
import json
from pathlib import Path

import pytest
from openpyxl import Workbook

from engine import Estimate, LineItem, Settings, analyze
from engine.schedule.paths import path_names, path_text
from fileio.project import load_project, save_project
from fileio.readers import read_estimate
from gui.item_text import EDIT_COLUMNS, item_cells
from reports.csv_items import CSV_COLUMNS, write_items_csv


def schedule_workbook(path: Path, header: str) -> Path:
    """A planner's sheet: title block, merged title, working-day ranges, notes column."""
    book = Workbook()
    sheet = book.active
    sheet.title = "Programme"
    sheet["A1"] = "Invented depot extension - durations in working days"
    sheet.merge_cells("A1:F1")
    sheet["A2"] = "Prepared for the monthly risk review"
    sheet.append([])
    sheet.append(["Activity", "Optimistic", "Most likely", "Pessimistic", header, "Notes"])
    sheet.append(["Enabling works", 8, 10, 15, "North; South ; North", "shared start"])
    sheet.append(["Steel frame", 30, 36, 50, "North", ""])
    sheet.append(["Roof and cladding", 20, 24, 34, "North", "weather exposed"])
    sheet.append(["Yard surfacing", 40, 48, 70, "South", ""])
    sheet.append(["Gatehouse", 25, 30, 40, "", "no path named"])
    book.save(path)
    return path


@pytest.mark.parametrize("header", ["Path", "Paths", "Chain", "Schedule path"])
def test_path_header_synonyms_read_names_split_on_semicolons(tmp_path: Path, header: str) -> None:
    estimate = read_estimate(schedule_workbook(tmp_path / "depot.xlsx", header))
    assert estimate.problems == []
    by_name = {i.name: i.paths for i in estimate.items}
    assert by_name["Enabling works"] == ("North", "South")  # repeats and spaces dropped
    assert by_name["Yard surfacing"] == ("South",)
    assert by_name["Gatehouse"] == ()


def test_an_imported_schedule_reports_its_finish(tmp_path: Path) -> None:
    estimate = read_estimate(schedule_workbook(tmp_path / "depot.xlsx", "Path"))
    analysis = analyze(estimate, trials=20_000, seed=5)
    names = [r.name for r in analysis.paths.rows]
    assert names == ["North", "South", "(no path)"]
    assert analysis.paths.shared == ["Enabling works"]


def test_paths_round_trip_through_project_csv_and_table(tmp_path: Path) -> None:
    items = [
        LineItem("Enabling works", "triangular", 8, 10, 15, paths=("North", "South")),
        LineItem("Steel frame", "triangular", 30, 36, 50, paths=("North",)),
        LineItem("Loose end", "triangular", 1, 2, 3),
    ]
    estimate = Estimate(items, title="Depot", unit="working days")
    save_project(tmp_path / "depot.rangefold", estimate, Settings())
    loaded, _ = load_project(tmp_path / "depot.rangefold")
    assert [i.paths for i in loaded.items] == [i.paths for i in items]

    write_items_csv(tmp_path / "items.csv", estimate)
    with (tmp_path / "items.csv").open(encoding="utf-8-sig", newline="") as handle:
        rows = list(csv.reader(handle))
    assert rows[0] == list(CSV_COLUMNS) and rows[1][CSV_COLUMNS.index("Path")] == "North; South"
    again = read_estimate(tmp_path / "items.csv")
    assert [i.paths for i in again.items] == [i.paths for i in items]

    assert "Path" in EDIT_COLUMNS
    assert item_cells(items[0])["Path"] == "North; South"


def test_path_text_and_names_are_inverse() -> None:
    assert path_names(path_text(("A", "B c"))) == ("A", "B c")
    assert path_names(" ; ;") == ()


def test_project_paths_of_the_wrong_kind_make_a_draft(tmp_path: Path) -> None:
    path = tmp_path / "bad.rangefold"
    save_project(path, Estimate([LineItem("Dig", "triangular", 1, 2, 3, paths=("A",))]), Settings())
    document = json.loads(path.read_text("utf-8"))
    document["items"][0]["paths"] = "A; B"  # a string, not a list
    path.write_text(json.dumps(document), "utf-8")
    loaded, _ = load_project(path)
    problem = loaded.items[0].read_problems[0]
    assert problem.column == "Path" and loaded.items[0].raw["Path"] == "A; B"


def test_a_longer_header_with_path_in_it_is_not_the_path_column(tmp_path: Path) -> None:
    # A cost sheet's "On critical path?" (Y/N) must not turn the estimate into a schedule.
    book = Workbook()
    sheet = book.active
    sheet.append(["Item", "Low", "Most likely", "High", "On critical path?", "Drawing file path"])
    sheet.append(["Pumps", 10, 12, 15, "Y", "C:/drawings/p1.pdf"])
    sheet.append(["Valves", 4, 5, 7, "N", "C:/drawings/v1.pdf"])
    book.save(tmp_path / "cost.xlsx")
    estimate = read_estimate(tmp_path / "cost.xlsx")
    assert all(i.paths == () for i in estimate.items)
    assert analyze(estimate).paths is None
