"""What the report says, read as a project board reads it (issue 16): page 1 is the decision
with the caution, the evidence is on page 2, every page carries the caution, "normal
shortcut" is explained once, and figures are written one way."""

from __future__ import annotations

import io
import re

import pytest
from openpyxl import load_workbook
from report_fixtures import correlated_normals, mixed_estimate, uniforms

from engine import Estimate, LineItem, Settings, analyze
from reports import content, write_report
from reports.caution import CAUTION, NORMAL_SHORTCUT_GLOSS
from reports.pdf import page_text, report_pages
from reports.provenance import provenance
from reports.xlsx import write_xlsx


def pages_for(estimate, analysis, unit="EUR"):
    about = provenance(estimate, Settings(unit=unit))
    return [page_text(p) for p in report_pages(estimate, analysis, about)]


@pytest.fixture(scope="module")
def mixed():
    estimate = mixed_estimate()
    analysis = analyze(estimate, method="exact")
    return estimate, analysis, pages_for(estimate, analysis)


def test_page_one_is_the_decision_with_the_caution(mixed):
    estimate, analysis, pages = mixed
    first = pages[0]
    # The caution is written right under the title, before any figure (the page's own
    # lines, in the order they were set; the first two are the footer).
    page = report_pages(estimate, analysis, provenance(estimate, Settings(unit="EUR")))[0]
    lines = [t.get_text() for t in page.figure.texts]
    assert lines[0] == CAUTION
    body = lines[2:]
    assert body[0] == "Contingency report"
    assert " ".join(body[2:5]).startswith(CAUTION[:60])
    for heading in ("Contingency", "Normal shortcut", "Verdict per level", "Why the shortcut"):
        assert heading in first
    for row in analysis.levels:
        assert f"P{row.level:g}" in first
    assert "S-curve of the total" in first  # the one chart
    for evidence in ("Evidence and method", "Kolmogorov", "Berry–Esseen", "Sum of item"):
        assert evidence not in first
    assert "Evidence and method" in pages[1]


def test_every_page_carries_the_caution_in_its_footer(mixed):
    _, _, pages = mixed
    assert len(pages) >= 4
    for k, text in enumerate(pages, start=1):
        assert CAUTION in text, f"page {k}"
        assert f"page {k} of {len(pages)}" in text


def test_normal_shortcut_is_explained_once(mixed):
    _, _, pages = mixed
    assert sum(text.count(NORMAL_SHORTCUT_GLOSS) for text in pages) == 1
    assert "add the items' means and variances" in NORMAL_SHORTCUT_GLOSS


def test_plain_meaning_first_then_the_statistics_name(mixed):
    _, analysis, pages = mixed
    gap = analysis.diagnostics.normal_gap
    points = f"{100 * gap.distance:.1f}"
    assert (
        f"Largest gap between the S-curve and the normal curve: {points} percentage points, "
        f"at P{round(gap.at_level)} (Kolmogorov distance)"
    ) in pages[1]
    assert "Theoretical guarantee (Berry–Esseen): " in pages[1]


def test_berry_esseen_says_none_when_the_bound_promises_nothing():
    # One rare risk event beside a fixed sum: its third moment dwarfs its variance.
    rare = Estimate(
        items=[
            LineItem("Fees", "fixed", most_likely=100.0),
            LineItem("Risk: flood", "uniform", 200.0, None, 400.0, probability=0.05),
        ]
    )
    analysis = analyze(rare, method="exact")
    assert analysis.diagnostics.berry_esseen_bound >= 1
    assert content.guarantee_text(analysis).startswith("none for this estimate")


def test_berry_esseen_bound_is_said_in_percentage_points():
    # Two standard uniforms: E|U - 1/2|^3 = 1/32 and var U = 1/12 (Johnson, Kotz &
    # Balakrishnan vol. 2), so the bound is C0 * 2/32 / (2/12)^1.5 with C0 = 0.56.
    analysis = analyze(uniforms(2), method="exact")
    bound = 0.56 * (2 / 32) / (2 / 12) ** 1.5
    assert analysis.diagnostics.berry_esseen_bound == pytest.approx(bound, rel=1e-9)
    assert content.guarantee_text(analysis).startswith(
        f"the gap cannot exceed {100 * bound:.1f} percentage points"
    )


def test_pert_is_written_in_capitals_and_no_negative_zero(mixed):
    _, _, pages = mixed
    items = next(text for text in pages if "Line items" in text)
    assert "PERT" in items and not re.search(r"\bpert\b", items)
    everything = "\n".join(pages)
    assert not re.search(r"-0(\.0+)?%", everything)
    assert not re.search(r"-0\.00\b", everything)


def test_achieved_correlation_of_zero_is_not_shown_as_a_miss():
    estimate = correlated_normals(0.5)
    analysis = analyze(estimate, trials=10_000, seed=5)
    dependence = analysis.dependence
    text = content.achieved_text(dependence)
    if round(dependence.achieved_max_deviation, 2) == 0:
        assert "aimed at" not in text
    assert "-0.00" not in text


def test_xlsx_summary_has_the_caution_under_the_title(mixed):
    estimate, analysis, _ = mixed
    stream = io.BytesIO()

    write_xlsx(stream, estimate, analysis, provenance(estimate, Settings(unit="EUR")))
    summary = load_workbook(io.BytesIO(stream.getvalue()))["Summary"]
    assert summary["A3"].value == CAUTION
    assert NORMAL_SHORTCUT_GLOSS in summary["A4"].value
    assert summary["A4"].value.startswith("Amounts in EUR.")


def test_report_written_to_disk_has_the_same_first_page(tmp_path, mixed):
    estimate, analysis, _ = mixed
    path = write_report(tmp_path / "r.pdf", estimate, analysis, Settings(unit="EUR"))
    assert path.read_bytes().startswith(b"%PDF-")


def test_reasons_are_not_called_a_miss_where_the_shortcut_holds(mixed):
    _, failing, _ = mixed
    assert content.reasons_heading(failing) == "Why the shortcut misses"
    # Forty uniform items: the total is close to normal, so every level holds at 1%
    # (Irwin–Hall n = 40 against its normal approximation, Johnson, Kotz & Balakrishnan vol. 2).
    holding = analyze(uniforms(40), method="exact")
    assert all(r.holds for r in holding.levels)
    assert content.reasons_heading(holding).startswith("What shapes the total")


def test_verdict_sentences_write_sums_with_the_tables_decimals(mixed):
    _, analysis, _ = mixed
    sentences = content.verdict_sentences(analysis, "EUR")
    assert len(sentences) == len(analysis.levels)
    # Totals near 500: one decimal for every sum, as in the level table.
    sums = [re.search(r", ([\d,]+\.?\d*) EUR", s).group(1) for s in sentences]
    assert all(len(text.split(".")[1]) == 1 for text in sums), sums


def test_discrete_values_read_with_separators_and_the_digits_typed():
    shown = content.discrete_shown(((1_234_567.0, 0.5), (2.5, 0.125), (100.0, 0.375)))
    assert shown == "1,234,567 @ 50%; 2.5 @ 12.5%; 100 @ 37.5%"
