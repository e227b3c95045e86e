"""The JSON report: the analysis plus where it came from, strict JSON."""

from __future__ import annotations

import hashlib
import json

import pytest
from report_fixtures import irwin_hall_ppf, uniforms

from engine import Estimate, LineItem, Settings, analyze
from reports import write_report
from reports.caution import CAUTION
from reports.provenance import rangefold_version


def strict(text: str):
    def refuse(name):
        raise AssertionError(f"non-standard JSON constant {name}")

    return json.loads(text, parse_constant=refuse)


def test_json_has_analysis_and_provenance(tmp_path):
    source = tmp_path / "estimate.csv"
    source.write_text("Item,Distribution,Low,Most likely,High\n", encoding="utf-8")
    estimate = uniforms(3)
    settings = Settings(levels=(50.0, 90.0), unit="EUR")
    analysis = analyze(estimate, method="exact", levels=settings.levels)
    path = write_report(tmp_path / "r.json", estimate, analysis, settings, source_path=source)
    data = strict(path.read_text("utf-8"))
    assert data["method"] == "exact"
    # Irwin–Hall n = 3 (Johnson, Kotz & Balakrishnan vol. 2), within the grid error.
    assert data["levels"][1]["value"] == pytest.approx(irwin_hall_ppf(0.9, 3), abs=2e-3)
    report = data["report"]
    assert report["input_file"] == "estimate.csv"
    assert report["input_sha256"] == hashlib.sha256(source.read_bytes()).hexdigest()
    assert report["caution"] == CAUTION
    assert "add the items' means and variances" in report["normal_shortcut"]
    assert report["settings"]["levels"] == [50.0, 90.0]
    assert report["rangefold_version"] == rangefold_version() != "unknown"
    assert "T" in report["created"]


def test_no_spread_gives_null_not_infinity(tmp_path):
    estimate = Estimate(items=[LineItem("Lump sum", "fixed", most_likely=10.0)])
    analysis = analyze(estimate, method="exact")
    assert analysis.berry_esseen == float("inf")
    path = write_report(tmp_path / "r.json", estimate, analysis, Settings())
    data = strict(path.read_text("utf-8"))
    assert data["berry_esseen"] is None
    assert data["report"]["input_file"] is None
