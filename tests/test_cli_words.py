"""`rangefold report --title --unit` (a CSV carries neither) and `--help` pointing to the user
guide (issue 16)."""

from __future__ import annotations

import json

import pytest

from cli.main import build_parser, main
from engine import analyze
from fileio.demo import SAMPLE_DIR
from fileio.readers import read_estimate
from gui.help_menu import USER_GUIDE
from reports.caution import CAUTION


@pytest.fixture
def csv_file():
    """The demo schedule as a CSV: like any CSV it carries neither a title nor a unit."""
    return SAMPLE_DIR / "pump_station_schedule_skewed.csv"


def test_title_and_unit_reach_the_report(csv_file, tmp_path, capsys):
    out = tmp_path / "r.json"
    options = ["--method", "exact", "--title", "Depot roof renewal", "--unit", "GBP"]
    code = main(["report", str(csv_file), "-o", str(out), *options])
    assert code == 0
    about = json.loads(out.read_text("utf-8"))
    text = json.dumps(about)
    assert "Depot roof renewal" in text and "GBP" in text


def test_without_title_the_file_name_is_used(csv_file, tmp_path):
    out = tmp_path / "r.json"
    assert main(["report", str(csv_file), "-o", str(out), "--method", "exact"]) == 0
    assert "pump_station_schedule_skewed" in out.read_text("utf-8")


LEVEL_STARTS = {f"P{d}" for d in range(1, 10)}


def test_terminal_summary_uses_the_unit_and_explains_the_shortcut(csv_file, capsys):
    assert main(["report", str(csv_file), "--method", "exact", "--unit", "working days"]) == 0
    printed = capsys.readouterr().out
    base = analyze(read_estimate(csv_file), method="exact").base_estimate
    assert f"base estimate: {base:.3g} working days" in printed
    assert "normal shortcut" in printed.splitlines()[3]
    assert "add the items' means and variances" in printed
    assert CAUTION in printed
    # Thousands separators and one number of decimals in the level table.
    # One number of decimals for every figure of the level table (durations near 300 days:
    # one decimal, charts.numbers.decimals_for).
    # (level rows only: a group such as 'Procurement' also starts with a P)
    rows = [line.split() for line in printed.splitlines() if line.strip()[:2] in LEVEL_STARTS]
    assert rows and all(len(figure.split(".")[1]) == 1 for row in rows for figure in row[1:4])


def test_help_points_to_the_user_guide(capsys):
    for argv in (["--help"], ["report", "--help"]):
        with pytest.raises(SystemExit):
            build_parser().parse_args(argv)
        text = " ".join(capsys.readouterr().out.split())
        assert "docs/user_guide.md" in text
    assert USER_GUIDE.is_file()
    help_text = build_parser()._subparsers._group_actions[0].choices["report"].format_help()
    assert "--title" in help_text and "--unit" in help_text
