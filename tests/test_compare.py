"""Before and after: items matched by name within group, `rangefold compare` as text, JSON
and report files, `rangefold report --budget` and the allocation in `report --json`."""

from __future__ import annotations

import json
import math
import zipfile

import pytest
from openpyxl import Workbook, load_workbook
from scipy import stats

from cli.main import main
from engine import Estimate, LineItem, analyze
from engine.allocation import allocate
from engine.comparison import compare, item_changes
from fileio.demo import SAMPLE_DIR
from fileio.readers import read_estimate

BEFORE = SAMPLE_DIR / "footbridge_before_response_plan.xlsx"
AFTER = SAMPLE_DIR / "footbridge_after_response_plan.xlsx"


def test_items_matched_by_name_within_group_case_and_spaces_aside() -> None:
    before = [
        LineItem("Piling", "triangular", low=1.0, most_likely=2.0, high=4.0, group="Civils"),
        LineItem("Flood", "fixed", most_likely=9.0, probability=0.2, group="Risks"),
        LineItem("Survey", "fixed", most_likely=3.0, group="Design"),
        LineItem("Cabling", "fixed", most_likely=5.0, group="M&E"),
    ]
    after = [
        LineItem(" piling ", "triangular", low=1.0, most_likely=2.0, high=3.5, group="civils"),
        LineItem("Flood", "fixed", most_likely=9.0, probability=0.05, group="Risks"),
        LineItem("Cabling", "fixed", most_likely=5.0, group="Electrical"),
        LineItem("Early works", "fixed", most_likely=1.0, group="Civils"),
    ]
    changes = {c.name.strip(): c for c in item_changes(before, after)}
    assert changes["piling"].kind == "changed" and changes["piling"].fields == {"high": (4.0, 3.5)}
    assert changes["Flood"].fields == {"probability": (0.2, 0.05)}
    assert changes["Survey"].kind == "removed"
    assert changes["Cabling"].kind == "moved"
    assert changes["Cabling"].fields == {"group": ("M&E", "Electrical")}
    assert changes["Early works"].kind == "added"
    assert len(changes) == 5


def test_comparison_of_normal_items_against_the_closed_form() -> None:
    # Normal items: P_q = M + z_q S (the normal sum's closed form), before and after.
    z = stats.norm.ppf(0.9)

    def normal(name: str, mean: float, sd: float) -> LineItem:
        return LineItem(
            name, "normal", low=mean - z * sd, high=mean + z * sd, low_pct=10, high_pct=90
        )

    before = Estimate(items=[normal("A", 100, 30), normal("B", 200, 40)], title="before")
    after = Estimate(items=[normal("A", 100, 10), normal("B", 200, 40)], title="after")
    runs = [analyze(e, method="exact", levels=(50, 90)) for e in (before, after)]
    allocations = [allocate(e, a) for e, a in zip((before, after), runs, strict=True)]
    result = compare(before, runs[0], allocations[0], after, runs[1], allocations[1])
    p90 = result.levels[1]
    assert p90.before == pytest.approx(300 + z * 50, abs=1e-3)
    assert p90.after == pytest.approx(300 + z * math.sqrt(1700), abs=1e-3)
    assert p90.contingency_difference == pytest.approx(p90.after - p90.before, abs=1e-9)
    # B's share at P90: s_B^2 / S^2 of the contingency (bivariate normal conditional mean)
    # (base values are the means here, so the share is the conditional mean less the mean)
    after_b = result.after_allocation.at(90).shares[1]
    assert after_b == pytest.approx(1600 / 1700 * (p90.after - 300), abs=1e-3)
    ((group, share_before, share_after),) = result.group_changes(90)
    assert group == "(no group)"
    assert share_before == pytest.approx(p90.contingency_before, abs=1e-6)
    assert share_after == pytest.approx(p90.contingency_after, abs=1e-6)
    assert [c.kind for c in result.changes] == ["changed"]
    json.dumps(result.to_dict(), allow_nan=False)


def test_compare_json_carries_levels_changes_and_allocations(capsys) -> None:
    assert main(["compare", str(BEFORE), str(AFTER), "--json"]) == 0
    data = json.loads(capsys.readouterr().out)["comparison"]
    kinds = sorted(c["kind"] for c in data["items"])
    assert kinds == ["added", "added", "changed", "changed", "changed", "removed"]
    before, after = read_estimate(BEFORE), read_estimate(AFTER)
    for row, want_b, want_a in zip(
        data["levels"], analyze(before).levels, analyze(after).levels, strict=True
    ):
        assert row["before"] == pytest.approx(want_b.value, rel=1e-12)
        assert row["after"] == pytest.approx(want_a.value, rel=1e-12)
    # the plan releases contingency at P80 (the scenario's point)
    p80 = next(r for r in data["levels"] if r["level"] == 80)
    assert p80["contingency_after"] < p80["contingency_before"]
    for side in ("before_allocation", "after_allocation"):
        for level in data[side]["levels"]:
            total = math.fsum(i["share"] for i in level["items"])
            assert total == pytest.approx(level["contingency"], abs=1e-6 * abs(level["total"]))
    assert 0 < data["base_confidence"]["before"] < data["base_confidence"]["after"] < 1


def test_compare_writes_pdf_xlsx_json_and_text(tmp_path, capsys) -> None:
    for suffix in (".pdf", ".xlsx", ".json"):
        out = tmp_path / f"c{suffix}"
        assert main(["compare", str(BEFORE), str(AFTER), "-o", str(out)]) == 0
        assert out.stat().st_size > 0
    assert (tmp_path / "c.pdf").read_bytes().startswith(b"%PDF-")
    assert load_workbook(tmp_path / "c.xlsx").sheetnames == ["Before and after", "S-curves"]
    with zipfile.ZipFile(tmp_path / "c.xlsx") as archive:
        assert any(n.startswith("xl/charts/chart") for n in archive.namelist())
    capsys.readouterr()
    assert main(["compare", str(BEFORE), str(AFTER)]) == 0
    text = capsys.readouterr().out
    assert "removed" in text and "Risk: gas main found in abutment, divert" in text
    assert main(["compare", str(BEFORE), str(tmp_path / "missing.xlsx")]) == 2


def test_report_json_and_budget(tmp_path, capsys) -> None:
    path = tmp_path / "three.csv"
    path.write_text(
        "Item,Distribution,Low,Most likely,High,Probability,Group\n"
        "Walls,triangular,90,100,130,,Build\nRoof,uniform,40,,60,,Build\n"
        "Strike,fixed,,80,,20%,Risks\n",
        encoding="utf-8",
    )
    assert main(["report", str(path), "--json", "--budget", "$200", "--budget", "0.25k"]) == 0
    data = json.loads(capsys.readouterr().out)
    alloc = data["allocation"]
    assert [b["amount"] for b in alloc["budgets"]] == [200.0, 250.0]
    estimate = read_estimate(path)
    total = analyze(estimate).total
    assert alloc["budgets"][0]["probability"] == pytest.approx(float(total.cdf(200.0)))
    assert alloc["base_confidence"]["amount"] == pytest.approx(150.0)  # 100 + 50, strike out
    assert [r["name"] for r in alloc["risk_events"]] == ["Strike"]
    for level in alloc["levels"]:
        # to rounding: a billionth of the total (the level sits at the edge of a gap here)
        assert math.fsum(i["share"] for i in level["items"]) == pytest.approx(
            level["contingency"], abs=1e-8 * level["total"]
        )
    assert main(["report", str(path), "--budget", "lots"]) == 2
    err = capsys.readouterr().err
    assert "--budget 'lots'" in err and "Fix:" in err
    assert main(["report", str(path), "--budget", "210"]) == 0
    assert "budget 210" in capsys.readouterr().out


def test_compare_reads_a_workbook_with_title_block_and_amounts_as_text(tmp_path, capsys) -> None:
    # An estimator's sheet: title rows, a notes column, amounts typed as "$1,200k" and "15%".
    def write(path, strike_probability: str) -> None:
        book = Workbook()
        sheet = book.active
        sheet.append(["Depot roof renewal (invented)"])
        sheet.append(["Prepared for the options review"])
        sheet.append([])
        sheet.append(
            ["Item", "Distribution", "Low", "Most likely", "High", "Probability", "Group", "Notes"]
        )
        sheet.append(
            [
                "Strip and dispose",
                "triangular",
                "$100k",
                "$120k",
                "$170k",
                None,
                "Roof",
                "from survey",
            ]
        )
        sheet.append(["New deck", "pert", "$1,200k", "$1,300k", "$1,650k", None, "Roof", ""])
        sheet.append(
            ["Hail damage found", "fixed", None, "$400k", None, strike_probability, "Risks", ""]
        )
        book.save(path)

    write(tmp_path / "a.xlsx", "15%")
    write(tmp_path / "b.xlsx", "5%")
    assert main(["compare", str(tmp_path / "a.xlsx"), str(tmp_path / "b.xlsx"), "--json"]) == 0
    data = json.loads(capsys.readouterr().out)["comparison"]
    assert [c["kind"] for c in data["items"]] == ["changed"]
    assert data["items"][0]["fields"]["probability"] == {"before": 0.15, "after": 0.05}
    assert data["risk_exposure"]["before"] == pytest.approx(0.15 * 400_000)
    assert data["risk_exposure"]["after"] == pytest.approx(0.05 * 400_000)


def test_changes_read_as_the_window_writes_them() -> None:
    from engine.comparison.item_changes import item_changes

    before = [
        LineItem("Pier", "triangular", 1_200_000.0, 1_250_000.0, 1_400_000.0, probability=0.3)
    ]
    after = [LineItem("Pier", "triangular", 1_200_000.0, 1_250_000.0, 1_500_000.0, probability=0.1)]
    (change,) = item_changes(before, after)
    said = change.describe()
    assert "1,400,000 → 1,500,000" in said  # never '1.4e+06'
    assert "probability 30% → 10%" in said


def test_two_schedules_compare_finishes_without_sharing_them_out(tmp_path) -> None:
    # A finish is the latest path, not the sum of its activities: no group shares on either
    # side, the reason said in their place, and the chance of the base estimate still given.
    z = stats.norm.ppf(0.9)

    def activity(name: str, mean: float, sd: float, path: str) -> LineItem:
        return LineItem(
            name,
            "normal",
            low=mean - z * sd,
            high=mean + z * sd,
            low_pct=10,
            high_pct=90,
            paths=(path,),
        )

    before = Estimate(items=[activity("Dig", 100, 10, "P1"), activity("Lay", 100, 10, "P2")])
    after = Estimate(items=[activity("Dig", 100, 4, "P1"), activity("Lay", 100, 10, "P2")])
    runs = [analyze(e, method="exact", levels=(50, 90)) for e in (before, after)]
    allocations = [allocate(e, a) for e, a in zip((before, after), runs, strict=True)]
    result = compare(before, runs[0], allocations[0], after, runs[1], allocations[1])
    assert result.shares_note and result.group_changes(90) == []
    data = result.to_dict()
    assert data["groups_note"] == result.shares_note and data["groups"]["P90"] == []
    assert data["before_allocation"]["levels"] == [] and data["before_allocation"]["note"]
    # Finish of independent paths: the product of their CDFs (here normal CDFs at the base).
    base = runs[1].base_estimate
    expected = stats.norm.cdf(base, 100, 4) * stats.norm.cdf(base, 100, 10)
    assert result.after_allocation.base_confidence.probability == pytest.approx(expected, abs=1e-6)
    for suffix in (".pdf", ".xlsx"):
        from reports.comparison_report import write_comparison

        about = {"unit": "days", "created": "today", "rangefold_version": "test", "caution": ""}
        written = write_comparison(tmp_path / f"c{suffix}", result, about, paper="a4")
        assert written.stat().st_size > 0
    cells = [c.value for row in load_workbook(tmp_path / "c.xlsx").active.iter_rows() for c in row]
    assert result.shares_note in cells
