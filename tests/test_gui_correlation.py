"""The correlation editor: undoable edits, the matrix view, the repair notice, the results
with and without correlation, and the round trip through the project file."""

from __future__ import annotations

import math

import numpy as np
import pytest
from gui_fixtures import two_uniforms
from scipy import stats

from engine import CorrelationPair, CorrelationSpec, Estimate, LineItem, Settings
from engine.dependence.correlation import build_matrix, repair_preview
from gui import correlation_commands as commands
from gui.correlation_matrix import SCALE, MatrixModel, scale_colour, shown_items

TIMEOUT_MS = 30_000
pytestmark = pytest.mark.qt_log_ignore(
    "This plugin does not support propagateSizeHints", "This plugin does not support raise"
)


def clashing() -> Estimate:
    """Three items whose stated pairs cannot hold together: a and b, b and c strongly
    together, a and c strongly apart."""
    items = [
        LineItem(name, "triangular", 10.0, 20.0, 40.0)
        for name in ("Quay piling", "Dredging", "Rock armour")
    ]
    spec = CorrelationSpec(
        pairs=[
            CorrelationPair("Quay piling", "Dredging", 0.9),
            CorrelationPair("Dredging", "Rock armour", 0.9),
            CorrelationPair("Quay piling", "Rock armour", -0.7),
        ]
    )
    return Estimate(items=items, title="Clash", correlation=spec)


def simulation(trials: int = 20_000) -> Settings:
    return Settings(levels=(50.0, 80.0), method="auto", trials=trials, seed=7)


def open_estimate(window, qtbot, estimate, settings) -> None:
    with qtbot.waitSignal(window.recomputer.finished, timeout=TIMEOUT_MS):
        window.set_document(estimate, settings, None)


def row_at(window, level: float):
    return next(r for r in window.last_outcome.analysis.levels if r.level == level)


def shown(window, column: str, row: int) -> float:
    table = window.results.table
    return float(table.item(row, table.column_names().index(column)).text().replace(",", ""))


# --- the commands, without Qt -------------------------------------------------------------
def test_each_command_returns_its_inverse_and_withdraws_an_accepted_repair():
    estimate = two_uniforms()
    estimate.correlation = CorrelationSpec(accept_repair=True)
    before = estimate.correlation
    steps = [
        lambda s: commands.add_pair(s, "Crane hire", "Scaffold rental", 0.5),
        lambda s: commands.edit_pair(s, 0, coefficient=-0.25),
        lambda s: commands.edit_pair(s, 0, item_b="Crane hire"),
        lambda s: commands.set_group(s, "Access", 0.4),
        lambda s: commands.set_group(s, "Access", None),
        lambda s: commands.set_default(s, 0.2),
        lambda s: commands.remove_pairs(s, [0]),
    ]
    history = []
    for step in steps:
        spec = estimate.correlation
        history.append((spec, step(spec).apply(estimate)))
        assert estimate.correlation is not spec  # a new value; the old one is untouched
        assert estimate.correlation.accept_repair is False
    assert estimate.correlation.default == 0.2 and estimate.correlation.pairs == []
    for spec, inverse in reversed(history):
        inverse.apply(estimate)
        assert estimate.correlation is spec
    assert estimate.correlation is before and before.accept_repair and before.pairs == []
    accepted = commands.set_accept_repair(before, False)
    assert accepted.spec.accept_repair is False


@pytest.mark.parametrize("value", [1.5, -1.01, math.nan])
def test_a_coefficient_outside_minus_one_to_one_is_refused_with_the_fix(value):
    with pytest.raises(ValueError, match="between -1 and 1"):
        commands.add_pair(CorrelationSpec(), "a", "b", value)


# --- the matrix view ----------------------------------------------------------------------
def test_matrix_view_shows_only_linked_items_and_caps_large_estimates(qtbot):
    items = [LineItem(f"Package {k}", "uniform", 0.0, None, 1.0) for k in range(100)]
    spec = CorrelationSpec(pairs=[CorrelationPair("Package 3", "Package 90", 0.4)])
    estimate = Estimate(items=items, correlation=spec)
    linked, caption = shown_items(estimate)
    assert [i.name for i in linked] == ["Package 3", "Package 90"]
    assert "2 items with a stated correlation" in caption

    estimate.correlation = CorrelationSpec(default=0.25, pairs=spec.pairs)
    linked, caption = shown_items(estimate)
    assert len(linked) == 60 and "first 60 of 100" in caption
    model = MatrixModel()
    model.show_estimate(estimate)
    # The cells are the engine's own matrix restricted to the shown items.
    _, full = build_matrix(estimate)
    assert np.array_equal(model.matrix, full[:60, :60])
    assert model.index(3, 3).data() == "1"
    assert model.index(0, 1).data() == "+0.25"
    assert shown_items(Estimate(items=items))[0] == []


def test_colour_scale_runs_from_orange_through_white_to_purple():
    # The scale's own stops, ColorBrewer PuOr (colorbrewer2.org).
    assert scale_colour(-1.0).name() == SCALE[0]
    assert scale_colour(0.0).name() == SCALE[2]
    assert scale_colour(1.0).name() == SCALE[-1]
    assert scale_colour(5.0).name() == SCALE[-1]
    # Lighter towards 0 on both sides, so the strength reads in grey too.
    lightness = [scale_colour(v).lightnessF() for v in (-1, -0.5, 0, 0.5, 1)]
    assert lightness[0] < lightness[1] < lightness[2] > lightness[3] > lightness[4]


# --- the window -----------------------------------------------------------------------------
def test_a_pair_made_in_the_editor_recomputes_with_correlation_and_undo_restores(
    make_window, qtbot
):
    window = make_window()
    open_estimate(window, qtbot, two_uniforms(), simulation())
    assert window.last_outcome.analysis.method == "exact"
    panel = window.open_correlations().panel
    with qtbot.waitSignal(window.recomputer.finished, timeout=TIMEOUT_MS):
        assert panel.add_pair("Crane hire", "Scaffold rental", 1.0)
    analysis = window.last_outcome.analysis
    assert analysis.method == "simulation" and "correlated" in analysis.method_reason
    p80 = row_at(window, 80)
    # Rank correlation 1 makes the items comonotone: the sum's quantile is the sum of the
    # quantiles, 2 * 80 = 160 (Dhaene, Denuit, Goovaerts, Kaas & Vyncke 2002, "The concept
    # of comonotonicity in actuarial science and finance: theory", Insurance: Mathematics
    # and Economics 31).
    assert p80.value == pytest.approx(160.0, rel=0.01)
    # If independent: the triangular sum, P80 = 200 - sqrt(4000) (Irwin–Hall n = 2,
    # Johnson, Kotz & Balakrishnan, Continuous Univariate Distributions vol. 2, ch. 26).
    assert p80.independent_value == pytest.approx(200 - math.sqrt(4000), rel=1e-3)
    # Normal with correlation: mean 100, r = 2 sin(pi/6) = 1 (Pearson 1907), so
    # sd = 2 * 100 / sqrt(12); the normal quantile from scipy.
    expected = 100 + stats.norm.ppf(0.8) * 200 / math.sqrt(12)
    assert p80.normal_dependent == pytest.approx(expected, rel=1e-6)
    names = window.results.table.column_names()
    assert "Normal with correlation" in names and "If independent" in names
    assert shown(window, "If independent", 1) == pytest.approx(136.754, abs=0.5)
    assert "if independent" in window.results.notice.text()
    links = window.results.links
    assert window.results.tabs.isTabVisible(window.results._links_index)
    assert links.rowCount() == 2 and float(links.item(0, 1).text()) > 0.9
    assert panel.pairs.rowCount() == 1 and panel.matrix_model.rowCount() == 2
    assert window.row_buttons["correlations"].text() == "Correlations (1)…"

    with qtbot.waitSignal(window.recomputer.finished, timeout=TIMEOUT_MS):
        window.undo_stack.undo()
    assert window.estimate.correlation.pairs == []
    assert window.last_outcome.analysis.method == "exact"
    assert row_at(window, 80).value == pytest.approx(200 - math.sqrt(4000), rel=1e-3)
    assert panel.pairs.rowCount() == 0
    assert not window.is_modified()
    with qtbot.waitSignal(window.recomputer.finished, timeout=TIMEOUT_MS):
        window.undo_stack.redo()
    assert window.estimate.correlation.pairs[0].coefficient == 1.0


def test_groups_default_and_cell_edits_go_through_undo(make_window, qtbot):
    window = make_window()
    estimate = two_uniforms()
    estimate.items = [i.with_changes(group="Access") for i in estimate.items]
    open_estimate(window, qtbot, estimate, simulation())
    panel = window.open_correlations().panel
    assert panel.groups.rowCount() == 1 and panel.groups.item(0, 1).text() == "2"
    assert panel.set_group_text("access", "0.4")  # matched ignoring case
    assert window.estimate.correlation.groups == {"Access": 0.4}
    steps = window.undo_stack.count()
    for value in (0.05, 0.1, 0.15):  # stepping the spin box: one undo step
        panel.default.setValue(value)
    assert window.estimate.correlation.default == pytest.approx(0.15)
    assert window.undo_stack.count() == steps + 1
    window.undo_stack.undo()
    assert window.estimate.correlation.default == 0.0

    assert panel.add_pair("Crane hire", "Scaffold rental", 0.3)
    count = window.undo_stack.count()
    assert not panel.set_pair_cell(0, 2, "1.5")  # refused: said why, nothing changed
    assert "between -1 and 1" in panel.problems.text()
    assert window.undo_stack.count() == count
    assert panel.pairs.item(0, 2).text() == "0.3"
    assert panel.set_pair_cell(0, 2, "-0.2")
    assert window.estimate.correlation.pairs[0].coefficient == -0.2
    assert panel.set_pair_cell(0, 1, "Scafold rental")  # a typo is kept, marked, and named
    assert "did you mean 'Scaffold rental'" in panel.problems.text()
    assert panel.pairs.item(0, 1).toolTip()
    panel.pairs.selectRow(0)
    panel.remove_selected()
    assert window.estimate.correlation.pairs == []
    with qtbot.waitSignal(window.recomputer.finished, timeout=TIMEOUT_MS):
        window.recompute_now()
    assert window.last_outcome.analysis.dependence is not None  # the group still links them


def test_an_impossible_matrix_is_shown_and_computed_only_once_the_repair_is_accepted(
    make_window, qtbot
):
    window = make_window()
    estimate = clashing()
    with qtbot.waitSignal(window.recomputer.failed, timeout=TIMEOUT_MS):
        window.set_document(estimate, simulation(), None)
    assert window.last_outcome is None
    notice = window.results.repair
    assert notice.isVisibleTo(window.results)
    preview = repair_preview(estimate)
    worst = preview.largest_change
    # The notice lists the engine's own preview (Higham 2002 nearest correlation matrix),
    # largest change first.
    assert notice.changes.rowCount() == 3
    assert notice.changes.item(0, 0).text() == worst.item_a
    assert notice.changes.item(0, 3).text() == f"{worst.repaired:+.2f}"
    assert "cannot all hold at once" in notice.text.text()
    panel = window.open_correlations().panel
    assert panel.repair.isVisibleTo(panel) and not panel.accepted_box.isVisibleTo(panel)

    with qtbot.waitSignal(window.recomputer.finished, timeout=TIMEOUT_MS):
        notice.accept_button.click()
    dependence = window.last_outcome.analysis.dependence
    assert dependence.repaired and window.estimate.correlation.accept_repair
    assert "REPAIR IN FORCE" in window.results.notice.text()
    assert "repair in force" in window.compute_label.text()
    assert not notice.isVisibleTo(window.results)
    assert panel.accepted_box.isVisibleTo(panel) and not panel.repair.isVisibleTo(panel)

    with qtbot.waitSignal(window.recomputer.failed, timeout=TIMEOUT_MS):
        window.undo_stack.undo()  # the acceptance is an undo step like any other
    assert not window.estimate.correlation.accept_repair
    assert notice.isVisibleTo(window.results) and window.last_outcome is None

    with qtbot.waitSignal(window.recomputer.finished, timeout=TIMEOUT_MS):
        window.undo_stack.redo()
    with qtbot.waitSignal(window.recomputer.failed, timeout=TIMEOUT_MS):
        panel.set_pair_cell(2, 2, "-0.75")  # a new matrix: the old acceptance does not carry
    assert not window.estimate.correlation.accept_repair
    with qtbot.waitSignal(window.recomputer.finished, timeout=TIMEOUT_MS):
        panel.set_pair_cell(2, 2, "0.7")  # now consistent: computed without any repair
    assert not window.last_outcome.analysis.dependence.repaired
    assert not notice.isVisibleTo(window.results) and not panel.repair.isVisibleTo(panel)


def test_fix_the_coefficients_opens_the_editor_on_the_worst_pair(make_window, qtbot):
    window = make_window()
    with qtbot.waitSignal(window.recomputer.failed, timeout=TIMEOUT_MS):
        window.set_document(clashing(), simulation(), None)
    worst = repair_preview(clashing()).largest_change
    window.results.repair.fix_button.click()
    panel = window.correlation_dialog.panel
    row = panel.pairs.currentRow()
    chosen = {panel.pairs.item(row, 0).text(), panel.pairs.item(row, 1).text()}
    assert chosen == {worst.item_a, worst.item_b}


def test_correlations_survive_saving_and_opening_the_project(make_window, qtbot, tmp_path):
    window = make_window()
    estimate = two_uniforms()
    estimate.items = [i.with_changes(group="Access") for i in estimate.items]
    open_estimate(window, qtbot, estimate, simulation())
    panel = window.open_correlations().panel
    panel.add_pair("Crane hire", "Scaffold rental", 0.35)
    panel.set_group_text("Access", "0.5")
    panel.default.setValue(0.2)
    path = tmp_path / "yard.rangefold"
    assert window.document.save_to(path)

    other = make_window()
    with qtbot.waitSignal(other.recomputer.finished, timeout=TIMEOUT_MS):
        assert other.document.open_path(path)
    spec = other.estimate.correlation
    assert [(p.item_a, p.item_b, p.coefficient) for p in spec.pairs] == [
        ("Crane hire", "Scaffold rental", 0.35)
    ]
    assert spec.groups == {"Access": 0.5} and spec.default == 0.2
    assert other.last_outcome.analysis.dependence is not None
    reopened = other.open_correlations().panel
    assert reopened.pairs.item(0, 2).text() == "0.35"
    assert reopened.default.value() == pytest.approx(0.2)


def test_a_pair_on_a_left_out_row_is_left_out_with_it_and_said(make_window, qtbot):
    """A row with a problem leaves the total with its correlation pairs; the notice says
    so, and the total is the valid row's alone (U(0, 100): P80 = 80)."""
    estimate = two_uniforms()
    estimate.items[1] = estimate.items[1].with_changes(low=None, raw={"Low": "lots"})
    estimate.correlation = CorrelationSpec(
        pairs=[CorrelationPair("Crane hire", "Scaffold rental", 0.5)]
    )
    window = make_window()
    open_estimate(window, qtbot, estimate, simulation())
    assert "1 row with 1 correlation pair naming them left out" in window.left_out.text()
    assert window.last_outcome.analysis.dependence is None  # nothing left to correlate
    assert row_at(window, 80).value == pytest.approx(80.0, rel=1e-3)
