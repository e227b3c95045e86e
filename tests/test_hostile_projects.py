"""A corpus of hostile project files: each gives exit 0 or 2 (never 1, never a traceback) from
both `check` and `report`, the two agree, a refusal names the key, and whatever loads saves."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

from cli.main import main
from engine import Estimate, LineItem, Settings
from fileio.project import FORMAT_NAME, ProjectError, load_project, save_project

ROOT = Path(__file__).resolve().parents[1]


def good() -> dict:
    return {
        "format": FORMAT_NAME,
        "schema_version": 1,
        "estimate": {"title": "Pump station", "unit": "EUR", "source": ""},
        "settings": {"levels": [50, 80, 90], "method": "auto", "extra": {"rates": "2026"}},
        "items": [
            {"name": "Pumps", "family": "triangular", "low": 10, "most_likely": 12, "high": 20},
            {"name": "Civils", "family": "pert", "low": 30, "most_likely": 35, "high": 60},
        ],
        "correlation": {"pairs": [], "groups": {}, "default": 0},
        "problems": [],
    }


def nested(depth: int) -> dict:
    value: dict = {}
    for _ in range(depth):
        value = {"x": value}
    return value


def with_change(path: tuple, value) -> str:
    document = good()
    target = document
    for key in path[:-1]:
        target = target[key]
    target[path[-1]] = value
    return json.dumps(document)


# name -> (file text, the key the refusal must name, or None when it loads)
CASES: dict[str, tuple[str, str | None]] = {
    "valid": (json.dumps(good()), None),
    "nan_in_extra": (
        with_change(("settings", "extra", "rate"), float("nan")),
        "settings.extra.rate",
    ),
    "infinity_in_import_summary": (
        with_change(("import_summary",), {"rows": float("inf")}),
        "import_summary.rows",
    ),
    "lone_surrogate_in_a_name": (
        json.dumps(good()).replace("Pumps", "Pumps \\ud800"),
        "items[0].name",
    ),
    "lone_surrogate_in_a_key": (
        with_change(("settings", "extra"), {"\ud801": 1}),
        "lone surrogate",
    ),
    "pairs_is_a_number": (with_change(("correlation", "pairs"), 5), "correlation.pairs"),
    "groups_is_a_list": (with_change(("correlation", "groups"), [1]), "correlation.groups"),
    "problems_is_a_number": (with_change(("problems",), 5), "problems"),
    "items_is_a_table": (with_change(("items",), {}), "items"),
    "estimate_is_a_number": (with_change(("estimate",), 5), "estimate"),
    "extra_800_deep": (with_change(("settings", "extra"), nested(800)), "settings.extra"),
    "a_million_brackets": ('{"format": "rangefold-project", "a": ' + "[" * 10**6, "nests"),
    "huge_integer": (
        '{"format": "rangefold-project", "schema_version": 1, "items": [], "x": '
        + "9" * 10**5
        + "}",
        "not a readable",
    ),
    "overflowing_float": (json.dumps(good()).replace('"low": 10', '"low": 1e400'), "items[0].low"),
    "nan_level": (with_change(("settings", "levels"), ["nan"]), "levels"),
    "level_150": (with_change(("settings", "levels"), [50, 150]), "levels"),
    "no_levels": (with_change(("settings", "levels"), []), "levels"),
    "unknown_method": (with_change(("settings", "method"), "fast"), "method"),
    "negative_trials": (with_change(("settings", "trials"), -5), "trials"),
    "trials_beyond_memory": (with_change(("settings", "trials"), 10**12), "trials"),
    "negative_seed": (with_change(("settings", "seed"), -1), "seed"),
    "tolerance_two": (with_change(("settings", "tolerance"), 2), "tolerance"),
    "unknown_sampling": (with_change(("settings", "sampling"), "sobol"), "sampling"),
    "unknown_setting": (with_change(("settings", "colour"), "red"), "colour"),
}


@pytest.fixture(scope="module")
def corpus(tmp_path_factory) -> Path:
    folder = tmp_path_factory.mktemp("hostile_projects")
    for name, (text, _key) in CASES.items():
        (folder / f"{name}.rangefold").write_text(text, encoding="utf-8")
    return folder


@pytest.mark.parametrize("name", list(CASES))
def test_check_and_report_agree_and_name_the_key(corpus, name, capsys, tmp_path):
    path = corpus / f"{name}.rangefold"
    key = CASES[name][1]
    checked = main(["check", str(path)])
    check_err = capsys.readouterr().err
    reported = main(["report", str(path), "-o", str(tmp_path / "out.json")])
    report_err = capsys.readouterr().err
    assert checked == reported, (check_err, report_err)
    if key is None:
        assert checked == 0 and (tmp_path / "out.json").exists()
        return
    assert checked == 2
    assert key in check_err and key in report_err
    assert "Traceback" not in check_err + report_err and "internal error" not in report_err


@pytest.mark.parametrize("name", list(CASES))
def test_what_loads_saves(corpus, name, tmp_path):
    try:
        estimate, settings = load_project(corpus / f"{name}.rangefold")
    except ProjectError as refused:
        assert "\n" not in str(refused)
        return
    copy = tmp_path / "copy.rangefold"
    save_project(copy, estimate, settings)
    again, _ = load_project(copy)
    assert [i.name for i in again.items] == [i.name for i in estimate.items]


def test_the_corpus_in_a_real_process_never_exits_1(corpus):
    """The whole corpus through the command in one process each, with a generous timeout."""
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    for name in CASES:
        done = subprocess.run(
            [sys.executable, "-m", "cli", "check", str(corpus / f"{name}.rangefold")],
            capture_output=True,
            text=True,
            timeout=60,
            env=env,
        )
        assert done.returncode in (0, 2), (name, done.stderr)
        assert "Traceback" not in done.stderr


def test_a_window_save_of_a_surrogate_name_typed_in_is_refused_in_words(tmp_path):
    """A lone surrogate that reaches an item by another way (not a file) is still told."""
    estimate = Estimate(items=[LineItem("Pumps \ud800", "uniform", 0.0, None, 1.0)])
    with pytest.raises(
        ProjectError, match=r"cannot be saved: items\[0\]\.name holds a lone surrogate"
    ):
        save_project(tmp_path / "p.rangefold", estimate, Settings())
