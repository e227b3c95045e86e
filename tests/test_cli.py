"""The `rangefold` command: exit 0 when all is well, 2 for input problems listed one a line
on stderr, never a traceback; --json output parses."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest
from openpyxl import Workbook
from report_fixtures import irwin_hall_ppf

from cli.main import main
from fileio.demo import SAMPLE_DIR

ROOT = Path(__file__).resolve().parents[1]
GOOD_CSV = "Item,Distribution,Low,Most likely,High\n" + "".join(
    f"Uniform {k},uniform,0,,1\n" for k in range(3)
)


@pytest.fixture
def good_csv(tmp_path):
    path = tmp_path / "three.csv"
    path.write_text(GOOD_CSV, encoding="utf-8")
    return path


@pytest.fixture
def bad_csv(tmp_path):
    path = tmp_path / "bad.csv"
    path.write_text(
        "Item,Distribution,Low,Most likely,High\nWalls,triangular,10,5,20\nRoof,pert,ten,12,30\n",
        encoding="utf-8",
    )
    return path


def contradictory_workbook(path: Path) -> Path:
    """A-B and B-C strongly positive but A-C strongly negative: no valid correlation matrix."""
    book = Workbook()
    sheet = book.active
    sheet.title = "Estimate"
    sheet.append(["Item", "Distribution", "Low", "Most likely", "High"])
    for name in "ABC":
        sheet.append([f"Item {name}", "triangular", 10, 12, 20])
    corr = book.create_sheet("Correlations")
    corr.append(["Item A", "Item B", "Coefficient"])
    corr.append(["Item A", "Item B", 0.9])
    corr.append(["Item B", "Item C", 0.9])
    corr.append(["Item A", "Item C", -0.9])
    book.save(path)
    return path


def test_report_json_parses_and_matches_closed_form(good_csv, capsys):
    assert main(["report", str(good_csv), "--json", "--method", "exact"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert [r["level"] for r in data["levels"]] == [50.0, 80.0, 90.0]
    # Irwin–Hall n = 3 (Johnson, Kotz & Balakrishnan vol. 2), within the grid error.
    assert data["levels"][2]["value"] == pytest.approx(irwin_hall_ppf(0.9, 3), abs=2e-3)
    assert data["report"]["input_file"] == "three.csv"


def test_report_options_reach_the_engine(good_csv, capsys):
    argv = [
        "report",
        str(good_csv),
        "--json",
        "--levels",
        "70,95",
        "--method",
        "simulation",
        "--trials",
        "5000",
        "--seed",
        "11",
        "--sampling",
        "random",
        "--tolerance",
        "0.02",
    ]
    assert main(argv) == 0
    data = json.loads(capsys.readouterr().out)
    assert [r["level"] for r in data["levels"]] == [70.0, 95.0]
    assert (data["method"], data["trials"], data["seed"]) == ("simulation", 5000, 11)
    assert (data["sampling"], data["tolerance"]) == ("random", 0.02)


def test_report_writes_each_format(good_csv, tmp_path, capsys):
    for suffix in (".xlsx", ".pdf", ".json"):
        out = tmp_path / f"report{suffix}"
        assert main(["report", str(good_csv), "-o", str(out)]) == 0
        assert out.stat().st_size > 100
    assert "report written" in capsys.readouterr().out


def test_report_without_output_prints_a_summary(capsys):
    demo = SAMPLE_DIR / "office_fitout_holds.xlsx"
    assert main(["report", str(demo)]) == 0
    out = capsys.readouterr().out
    assert "holds at P50, P80 and P90" in out
    assert out.count("holds\n") == 3


def test_check_good_file(good_csv, capsys):
    assert main(["check", str(good_csv)]) == 0
    captured = capsys.readouterr()
    assert "3 line items" in captured.out and "no problems found" in captured.out
    assert captured.err == ""


def test_check_lists_each_problem_on_one_line(bad_csv, capsys):
    assert main(["check", str(bad_csv)]) == 2
    lines = capsys.readouterr().err.splitlines()
    assert len(lines) == 2
    assert lines[0].startswith("row 2, column 'Most likely'") and "Fix:" in lines[0]
    assert lines[1].startswith("row 3, column 'Low'")


def test_report_refuses_bad_input(bad_csv, capsys):
    assert main(["report", str(bad_csv), "-o", str(bad_csv.with_suffix(".xlsx"))]) == 2
    assert len(capsys.readouterr().err.splitlines()) == 2
    assert not bad_csv.with_suffix(".xlsx").exists()


@pytest.mark.parametrize(
    "argv, message",
    [
        (["report", "missing.csv"], "no such file"),
        (["report", "{good}", "--levels", "50,abc"], "--levels"),
        (["report", "{good}", "--levels", "50,120"], "strictly between 0 and 100"),
        (["report", "{good}", "--trials", "10"], "too few"),
        (["report", "{good}", "-o", "out.docx"], "use .xlsx, .pdf, .json"),
        (["report", "{good}", "--method", "fast"], "invalid choice"),
        (["report"], "required"),
        (["frobnicate"], "invalid choice"),
    ],
)
def test_usage_problems_are_one_line_and_exit_2(argv, message, good_csv, capsys):
    argv = [a.replace("{good}", str(good_csv)) for a in argv]
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert len(err.splitlines()) == 1 and message in err


def test_unreadable_workbook_is_an_input_problem(tmp_path, capsys):
    path = tmp_path / "broken.xlsx"
    path.write_bytes(b"not a workbook")
    assert main(["check", str(path)]) == 2
    assert len(capsys.readouterr().err.splitlines()) == 1


def test_contradictory_correlations_need_the_repair_accepted(tmp_path, capsys):
    path = contradictory_workbook(tmp_path / "corr.xlsx")
    assert main(["check", str(path)]) == 2
    assert "positive semi-definite" in capsys.readouterr().err
    assert main(["report", str(path), "--trials", "5000"]) == 2
    capsys.readouterr()
    assert main(["report", str(path), "--trials", "5000", "--json", "--accept-repair"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["dependence"]["repaired"] is True


def test_gui_is_called_lazily(monkeypatch):
    import gui.app

    calls = []
    monkeypatch.setattr(
        gui.app,
        "run",
        lambda path, screenshot, sheets=None: calls.append((path, screenshot, sheets)) or 0,
    )
    assert main([]) == 0
    assert main(["gui", "estimate.xlsx", "--screenshot", "shot.png"]) == 0
    assert main(["gui", "estimate.xlsx", "--sheet", "Plan", "--sheet", "Risks"]) == 0
    assert calls == [
        (None, None, None),
        ("estimate.xlsx", "shot.png", None),
        ("estimate.xlsx", None, ["Plan", "Risks"]),
    ]


def test_module_entry_point_never_shows_a_traceback(tmp_path):
    """As a user runs it: a separate process, exit code and stderr only."""
    run = subprocess.run(
        [sys.executable, "-m", "cli", "report", str(tmp_path / "nothing.xlsx")],
        cwd=ROOT,
        capture_output=True,
        text=True,
        timeout=60,
        check=False,
    )
    assert run.returncode == 2
    assert "Traceback" not in run.stderr and len(run.stderr.splitlines()) == 1
