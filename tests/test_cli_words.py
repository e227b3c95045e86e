"""`rangefold report --title --unit` (a CSV carries neither) and `--help` pointing to the user
guide (issue 16)."""

from __future__ import annotations

import json

import pytest

from cli.main import build_parser, main
from gui.help_menu import USER_GUIDE
from reports.caution import CAUTION

CSV = "Item,Distribution,Low,Most likely,High\n" + "".join(
    f"Uniform {k},uniform,0,,1000\n" for k in range(3)
)


@pytest.fixture
def csv_file(tmp_path):
    path = tmp_path / "three_uniforms.csv"
    path.write_text(CSV, encoding="utf-8")
    return path


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
    assert "three_uniforms" in out.read_text("utf-8")


def test_terminal_summary_uses_the_unit_and_explains_the_shortcut(csv_file, capsys):
    assert main(["report", str(csv_file), "--method", "exact", "--unit", "EUR"]) == 0
    printed = capsys.readouterr().out
    # Three uniform(0, 1000) items: a uniform has no mode, so its mean 500 is its point value.
    assert "base estimate: 1.5 k EUR" in printed
    assert "normal shortcut" in printed.splitlines()[3]
    assert "add the items' means and variances" in printed
    assert CAUTION in printed
    # Thousands separators and one number of decimals in the level table.
    rows = [line for line in printed.splitlines() if line.strip().startswith("P")]
    assert rows and all("," in row.split()[1] for row in rows)


def test_help_points_to_the_user_guide(capsys):
    for argv in (["--help"], ["report", "--help"]):
        with pytest.raises(SystemExit):
            build_parser().parse_args(argv)
        text = " ".join(capsys.readouterr().out.split())
        assert "docs/user_guide.md" in text
    assert USER_GUIDE.is_file()
    help_text = build_parser()._subparsers._group_actions[0].choices["report"].format_help()
    assert "--title" in help_text and "--unit" in help_text
