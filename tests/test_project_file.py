"""The project file: every field survives a round trip, saves are atomic with a backup,
malformed items load as drafts, and files from a newer schema are refused."""

from __future__ import annotations

import json
import math
import os
from dataclasses import fields
from pathlib import Path

import pytest

from engine import CorrelationPair, CorrelationSpec, Estimate, LineItem, Problem, Settings
from fileio import atomic
from fileio.project import (
    FORMAT_NAME,
    SCHEMA_VERSION,
    ProjectError,
    load_project,
    save_project,
)
from fileio.readers import read_estimate


def full_estimate() -> tuple[Estimate, Settings]:
    draft_problem = Problem(
        "'about 5' is not a number.", "enter a number.", "Crane", 7, "Low", "Risks"
    )
    items = [
        LineItem(
            "Piling",
            "pert",
            10.0,
            12.5,
            20.0,
            10.0,
            90.0,
            1.0,
            "Civil",
            3.0,
            (),
            row=5,
        ),
        LineItem("Claims", "discrete", values=((100.0, 0.2), (150.0, 0.8)), probability=0.35),
        LineItem(
            "Crane",
            "triangular",
            None,
            6.0,
            math.inf,
            row=7,
            raw={"Low": "about 5"},
            read_problems=(draft_problem,),
        ),
    ]
    spec = CorrelationSpec(
        pairs=[CorrelationPair("Piling", "Claims", 0.4, row=2)],
        groups={"Civil": 0.3},
        default=0.1,
        accept_repair=True,
    )
    estimate = Estimate(
        items=items,
        title="Ferry terminal – phase 2",
        unit="EUR",
        source="terminal.xlsx",
        read_problems=[
            Problem("bad pair", "fix it", row=9, column="Coefficient", sheet="Correlations")
        ],
        summary={"source": "terminal.xlsx", "rows_skipped": [{"row": 4, "reason": "blank row"}]},
        correlation=spec,
    )
    settings = Settings(
        levels=(50.0, 70.0, 95.0),
        tolerance=0.02,
        method="simulation",
        trials=20_000,
        seed=None,
        sampling="random",
        unit="EUR",
        notes="Prices at Q3; excludes VAT.",
        extra={"window": {"split": [1, 2]}},
    )
    return estimate, settings


def test_round_trip_keeps_every_field(tmp_path: Path) -> None:
    estimate, settings = full_estimate()
    path = tmp_path / "terminal.rangefold"
    save_project(path, estimate, settings)
    loaded, loaded_settings = load_project(path)
    assert loaded_settings == settings
    assert len(loaded.items) == len(estimate.items)
    for before, after in zip(estimate.items, loaded.items, strict=True):
        for f in fields(LineItem):  # raw and read_problems are not part of ==, so check all
            assert getattr(after, f.name) == getattr(before, f.name), f.name
    assert loaded.correlation == estimate.correlation
    assert (loaded.title, loaded.unit, loaded.source) == (
        estimate.title,
        estimate.unit,
        estimate.source,
    )
    assert loaded.read_problems == estimate.read_problems
    assert loaded.summary["import_summary"]["rows_skipped"] == [{"row": 4, "reason": "blank row"}]
    assert loaded.summary["drafts"] == 1 and loaded.summary["settings_problems"] == []
    # Saving what was loaded gives the same file, so a project can live in version control.
    again = tmp_path / "again.rangefold"
    save_project(again, loaded, loaded_settings)
    assert again.read_bytes() == path.read_bytes()


def test_document_is_the_documented_json(tmp_path: Path) -> None:
    estimate, settings = full_estimate()
    path = tmp_path / "p.rangefold"
    save_project(path, estimate, settings)
    document = json.loads(path.read_text("utf-8"))  # strict JSON: no NaN or Infinity literals
    assert document["format"] == FORMAT_NAME and document["schema_version"] == SCHEMA_VERSION
    assert document["items"][2]["high"] == "inf"
    assert document["items"][1]["values"] == [[100.0, 0.2], [150.0, 0.8]]
    assert document["settings"]["levels"] == [50.0, 70.0, 95.0]
    doc = (Path(__file__).parents[1] / "fileio" / "PROJECT_FORMAT.md").read_text("utf-8")
    for key in [*document, *document["items"][0], *document["settings"], *document["correlation"]]:
        assert f"`{key}`" in doc, f"{key} is not documented"


def test_read_estimate_opens_projects_with_settings(tmp_path: Path) -> None:
    estimate, settings = full_estimate()
    path = tmp_path / "p.rangefold"
    save_project(path, estimate, settings)
    opened = read_estimate(path)
    assert opened.summary["settings"] == settings
    assert opened.summary["source"] == str(path)


def test_save_keeps_backup_and_permissions(tmp_path: Path) -> None:
    estimate, settings = full_estimate()
    path = tmp_path / "p.rangefold"
    save_project(path, estimate, settings)
    first = path.read_bytes()
    os.chmod(path, 0o640)
    settings.notes = "second save"
    save_project(path, estimate, settings)
    assert atomic.backup_path(path).read_bytes() == first
    assert load_project(path)[1].notes == "second save"
    assert (path.stat().st_mode & 0o777) == 0o640
    assert sorted(p.name for p in tmp_path.iterdir()) == ["p.rangefold", "p.rangefold.bak"]


def test_failed_rename_leaves_previous_file_intact(tmp_path: Path, monkeypatch) -> None:
    estimate, settings = full_estimate()
    path = tmp_path / "p.rangefold"
    save_project(path, estimate, settings)
    before = path.read_bytes()

    def refuse(src, dst):
        raise OSError("disk full")

    monkeypatch.setattr(os, "replace", refuse)
    settings.notes = "never written"
    with pytest.raises(OSError, match="disk full"):
        save_project(path, estimate, settings)
    assert path.read_bytes() == before
    assert [p.name for p in tmp_path.iterdir()] == ["p.rangefold"]  # no temporary file left


def test_write_atomic_without_backup(tmp_path: Path) -> None:
    path = tmp_path / "out.json"
    atomic.write_atomic(path, b"one", backup=False)
    atomic.write_atomic(path, b"two", backup=False)
    assert path.read_bytes() == b"two" and not atomic.backup_path(path).exists()


def test_newer_schema_refused(tmp_path: Path) -> None:
    path = tmp_path / "future.rangefold"
    path.write_text(json.dumps({"format": FORMAT_NAME, "schema_version": SCHEMA_VERSION + 1}))
    with pytest.raises(ProjectError, match=r"newer Rangefold.*Update Rangefold"):
        load_project(path)
    assert issubclass(ProjectError, ValueError)


@pytest.mark.parametrize(
    ("content", "why"),
    [
        ("{not json", "not a readable Rangefold project file"),
        ('{"format": "something-else", "schema_version": 1}', "not a Rangefold project file"),
        ('{"format": "rangefold-project"}', "no valid schema_version"),
        ('{"format": "rangefold-project", "schema_version": 1, "items": {}}', "not a list"),
    ],
)
def test_not_a_project_refused(tmp_path: Path, content: str, why: str) -> None:
    path = tmp_path / "bad.rangefold"
    path.write_text(content)
    with pytest.raises(ProjectError, match=why):
        load_project(path)


def test_malformed_items_become_drafts(tmp_path: Path) -> None:
    document = {
        "format": FORMAT_NAME,
        "schema_version": 1,
        "settings": {"trials": "lots", "levels": [50, 80]},
        "items": [
            {"name": "Good", "family": "triangular", "low": 1, "most_likely": 2, "high": 3},
            {"name": "Bad low", "family": "triangular", "low": "abc", "most_likely": 2, "high": 3},
            "not an item",
            {"name": "Odd", "colour": "red", "values": [[1, 2, 3]]},
        ],
        "correlation": {"pairs": [{"item_a": "Good"}], "default": 0},
    }
    path = tmp_path / "hand_edited.rangefold"
    path.write_text(json.dumps(document))
    estimate, settings = load_project(path)
    good, bad, junk, odd = estimate.items
    assert good.read_problems == () and (good.low, good.high) == (1, 3)
    assert bad.low is None and bad.raw == {"Low": "abc"}
    (problem,) = bad.read_problems
    assert problem.column == "Low" and "item 2 of the project file" in problem.message
    assert junk.read_problems and junk.raw == {"Item": '"not an item"'}
    assert {p.column for p in odd.read_problems} == {"Item", "Most likely"}
    assert settings.trials == Settings().trials and settings.levels == (50.0, 80.0)
    (setting_problem,) = estimate.summary["settings_problems"]
    assert "trials" in setting_problem.message
    (pair_problem,) = estimate.read_problems
    assert "pair 1" in pair_problem.message
    assert estimate.summary["drafts"] == 3
