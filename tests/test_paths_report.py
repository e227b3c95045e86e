"""The report of a schedule of parallel paths: a Paths sheet, PDF pages and the JSON block
carry the same numbers as the analysis; `rangefold report` needs nothing new."""

from __future__ import annotations

import dataclasses
import json
import re
import subprocess
import sys
from pathlib import Path

import pytest
from openpyxl import load_workbook

from engine import Settings, analyze
from fileio.demo import SAMPLE_DIR
from fileio.readers import read_estimate
from reports import write_report

DEMO = SAMPLE_DIR / "heat_plant_parallel_paths.xlsx"
ROOT = Path(__file__).resolve().parents[1]


@pytest.fixture(scope="module")
def demo():
    estimate = read_estimate(DEMO)
    settings = Settings(unit=estimate.unit, trials=20_000, seed=3)
    return estimate, settings, analyze(estimate, **settings.analyze_kwargs())


def test_workbook_has_a_paths_sheet_with_the_analysis_numbers(demo, tmp_path: Path) -> None:
    estimate, settings, analysis = demo
    out = write_report(tmp_path / "r.xlsx", estimate, analysis, settings, source_path=DEMO)
    sheet = load_workbook(out)["Paths"]
    cells = [[c.value for c in row] for row in sheet.iter_rows()]
    merge = next(i for i, row in enumerate(cells) if row[0] == "Level")
    for k, level in enumerate(analysis.paths.levels):
        row = cells[merge + 1 + k]
        assert row[0] == level and row[1] == pytest.approx(analysis.paths.finish[k])
        assert row[3] == pytest.approx(analysis.paths.merge_bias[k])
    names = next(i for i, row in enumerate(cells) if row[0] == "Path")
    assert [cells[names + 1 + k][0] for k in range(4)] == [r.name for r in analysis.paths.rows]
    assert len(sheet._charts) == 1


def test_pdf_gains_the_paths_pages(demo, tmp_path: Path) -> None:
    estimate, settings, analysis = demo
    with_paths = write_report(tmp_path / "a.pdf", estimate, analysis, settings, source_path=DEMO)
    without = dataclasses.replace(analysis, paths=None)
    plain = write_report(tmp_path / "b.pdf", estimate, without, settings, source_path=DEMO)
    # A schedule's report has the two paths pages and none on where the contingency sits
    # (a finish is not the sum of its activities: engine.allocation.shares_add_up).
    from engine.allocation import allocate
    from reports.allocation_pdf import allocation_pages

    shares = len(allocation_pages(allocate(estimate, without), "", "a4", ""))
    assert page_count(with_paths.read_bytes()) == page_count(plain.read_bytes()) - shares + 2


def page_count(data: bytes) -> int:
    # matplotlib writes page dictionaries uncompressed (as tests/test_report_pdf.py reads them)
    return len(re.findall(rb"/Type\s*/Page\b(?!s)", data))


def test_cli_report_json_carries_the_paths(tmp_path: Path) -> None:
    out = tmp_path / "r.json"
    done = subprocess.run(
        [sys.executable, "-m", "cli", "report", str(DEMO), "-o", str(out), "--seed", "4"],
        cwd=ROOT,
        capture_output=True,
        text=True,
        timeout=300,
    )
    assert done.returncode == 0, done.stderr
    data = json.loads(out.read_text("utf-8"))
    paths = data["paths"]
    assert paths["shared"] == ["Site mobilisation and setting-out"]
    assert len(paths["paths"]) == 4
    assert sum(p["criticality"] for p in paths["paths"]) == pytest.approx(1.0)
    assert all(b > 0 for b in paths["merge_bias"])


def test_a_budget_on_a_schedule_gets_its_chance(capsys) -> None:
    from cli.main import main
    from engine.allocation import NOT_A_SUM

    assert main(["report", str(DEMO), "--budget", "120", "--seed", "3"]) == 0
    printed = capsys.readouterr().out
    assert "chance the finish stays within the budget 120.0" in printed
    assert NOT_A_SUM in printed
