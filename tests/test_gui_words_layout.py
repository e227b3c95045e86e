"""The window's words and layout (issue 16): labels an estimator reads without help, numbers
written one way, panes that stay usable at 1280x800 with the "rows left out" banner, item
names elided in the middle, the correlation dialog's Close, and the Help menu."""

from __future__ import annotations

import pytest
from PySide6.QtCore import Qt
from PySide6.QtWidgets import QDialogButtonBox, QLabel, QTextBrowser

from engine import CorrelationPair, CorrelationSpec, Estimate, LineItem, Settings
from gui.help_menu import shipped_licences
from gui.item_text import TABLE_COLUMNS
from gui.pane_widths import ITEMS_MIN_WIDTH, RESULTS_MIN_WIDTH

TIMEOUT_MS = 30_000
pytestmark = pytest.mark.qt_log_ignore(
    "This plugin does not support propagateSizeHints", "This plugin does not support raise"
)
LONG_NAME = "Temporary works: cofferdam sheet piling, install, maintain and extract at outfall"


def estimate(bad_rows: int = 0) -> Estimate:
    """Seven items, a long name, a PERT item, a discrete item, three correlated pairs among
    four items, and `bad_rows` rows whose High is below their Low."""
    items = [
        LineItem(LONG_NAME, "pert", 1_200_000, 1_450_000, 2_100_000, group="Marine works"),
        LineItem("Outfall pipe", "triangular", 800_000, 950_000, 1_400_000, group="Marine works"),
        LineItem("Pumping station", "triangular", 2_000_000, 2_300_000, 3_100_000, group="M&E"),
        LineItem("Control kiosk", "uniform", 150_000, None, 240_000, group="M&E"),
        LineItem("Design fees", "pert", 300_000, 340_000, 420_000, group="Fees"),
        LineItem("Consents", "discrete", values=((50_000, 0.5), (120_000, 0.5)), group="Fees"),
        LineItem("Risk: unexploded ordnance", "uniform", 200_000, None, 900_000, probability=0.1),
    ]
    items += [
        LineItem(f"Draft row {k}", "triangular", 500.0, 600.0, 100.0) for k in range(bad_rows)
    ]
    names = [i.name for i in items[:4]]
    spec = CorrelationSpec(
        pairs=[
            CorrelationPair(names[0], names[1], 0.5),
            CorrelationPair(names[1], names[2], 0.4),
            CorrelationPair(names[2], names[3], 0.3),
        ]
    )
    return Estimate(items=items, title="Outfall", unit="EUR", correlation=spec)


def opened(make_window, qtbot, size=(1280, 800), bad_rows: int = 0):
    window = make_window()
    window.resize(*size)
    window.show()
    qtbot.waitExposed(window)
    settings = Settings(levels=(50.0, 80.0, 90.0), trials=20_000, seed=3, unit="EUR")
    with qtbot.waitSignal(window.recomputer.finished, timeout=TIMEOUT_MS):
        window.set_document(estimate(bad_rows), settings, None)
    return window


def test_level_table_headers_say_what_they_are(make_window, qtbot):
    window = opened(make_window, qtbot)
    names = window.results.table.column_names()
    for name in ("Contingency %", "Normal shortcut", "Sum of item percentiles"):
        assert name in names
    for cut in ("Cont. %", "Normal", "Sum of item P", "Std. error"):
        assert cut not in names


def test_level_table_numbers_have_separators_and_one_number_of_decimals(make_window, qtbot):
    window = opened(make_window, qtbot)
    table = window.results.table
    money = [
        table.item(r, c).text()
        for c, name in enumerate(table.column_names())
        if name in ("Total", "Contingency", "Normal shortcut", "Gap")
        for r in range(table.rowCount())
    ]
    # Totals in millions: whole units with thousands separators, no decimals anywhere.
    assert all("," in text and "." not in text for text in money if abs(_value(text)) >= 1000)
    percents = [
        table.item(r, c).text()
        for c, name in enumerate(table.column_names())
        if name.endswith("%")
        for r in range(table.rowCount())
    ]
    assert percents and not any(text.startswith("-0.0") for text in percents)


def _value(text: str) -> float:
    return float(text.replace(",", ""))


def test_tabs_and_notice_words(make_window, qtbot):
    window = opened(make_window, qtbot)
    tabs = window.results.tabs
    titles = [tabs.tabText(k) for k in range(tabs.count())]
    assert "Rank correlation with the total" in titles and "Links" not in titles
    assert "Share of skewness" in tabs.tabToolTip(titles.index("What drives it"))
    # The spread tab and its chart say the same.
    tabs.setCurrentIndex(0)
    axes = window.results.canvases[0].figure.axes[0]
    assert axes.get_title(loc="left") == titles[0] == "Spread of the total"
    notice = window.results.notice.text()
    assert "3 pairs of items are correlated, among 4 items" in notice
    assert "the other 3 items are independent" in notice


def test_settings_and_correlation_editor_words(make_window, qtbot):
    window = opened(make_window, qtbot)
    labels = [w.text() for w in window.settings_panel.findChildren(QLabel)]
    assert "Verdict tolerance:" in labels
    assert "Tolerance for the verdict" in window.settings_panel.tolerance.toolTip()
    assert "Shortcut holds within:" not in labels
    dialog = window.open_correlations()
    help_texts = [w.text() for w in dialog.findChildren(QLabel)]
    assert not any("default for that group" in t for t in help_texts)
    assert any("take the coefficient under 'Every other pair'" in t for t in help_texts)
    # The dialog fits a 1280x800 screen (its colour legend wraps instead of widening it).
    hint = dialog.minimumSizeHint()
    assert hint.width() <= 1280 - 40 and hint.height() <= 800 - 60
    buttons = dialog.findChild(QDialogButtonBox, "close")
    assert buttons.button(QDialogButtonBox.StandardButton.Close) is not None
    picker = dialog.panel.pick_a
    assert picker.view().textElideMode() == Qt.TextElideMode.ElideMiddle
    picker.setCurrentIndex(picker.findText(LONG_NAME))
    assert picker.toolTip() == LONG_NAME
    assert picker.lineEdit().cursorPosition() == 0  # the name shows from its start
    buttons.button(QDialogButtonBox.StandardButton.Close).click()
    assert not dialog.isVisible()


def test_item_table_writes_pert_and_elides_long_names_in_the_middle(make_window, qtbot):
    window = opened(make_window, qtbot, size=(1440, 900))  # the window's first size
    view, model = window.table, window.model
    assert view.textElideMode() == Qt.TextElideMode.ElideMiddle
    family = TABLE_COLUMNS.index("Distribution")
    assert model.index(0, family).data() == "PERT"
    assert model.index(0, family).data(Qt.ItemDataRole.EditRole) == "pert"  # as typed
    assert model.index(0, 0).data(Qt.ItemDataRole.ToolTipRole) == LONG_NAME
    most_likely = TABLE_COLUMNS.index("Most likely")
    assert model.index(5, most_likely).data() == "50,000 @ 50%; 120,000 @ 50%"
    assert model.index(5, most_likely).data(Qt.ItemDataRole.EditRole) == (
        "50000 @ 50%; 120000 @ 50%"  # the text an edit starts from reads back exactly
    )
    # The three figures a user types stay in view beside the names at the first size.
    for name in ("Low", "Most likely", "High"):
        column = TABLE_COLUMNS.index(name)
        right = view.columnViewportPosition(column) + view.columnWidth(column)
        assert right <= view.viewport().width(), name


@pytest.mark.parametrize("size", [(1280, 800), (1600, 1000)])
def test_panes_stay_usable_with_the_left_out_banner(make_window, qtbot, size):
    window = opened(make_window, qtbot, size, bad_rows=12)
    assert window.minimumSizeHint().width() <= size[0]
    assert (window.width(), window.height()) == size
    banner = window.left_out
    assert banner.isVisible() and banner.wordWrap()
    assert "12 rows" in banner.text()
    left, right = window.splitter.sizes()
    assert left >= ITEMS_MIN_WIDTH and right >= RESULTS_MIN_WIDTH
    assert banner.width() <= window.splitter.widget(0).width()
    # The charts lay out (a collapsed pane makes matplotlib warn, an error under pytest).
    for k in range(4):
        window.results.tabs.setCurrentIndex(k)
        window.results.canvases[k].draw()
    assert window.results.table.width() >= RESULTS_MIN_WIDTH - 20


def test_help_menu_has_the_guide_and_about(make_window, qtbot):
    window = opened(make_window, qtbot)
    menus = {a.text().replace("&", ""): a.menu() for a in window.menuBar().actions()}
    assert list(menus).count("Help") == 1
    actions = {a.text().replace("&", ""): a for a in menus["Help"].actions()}
    actions["User guide"].trigger()
    browser = window.guide_dialog.findChild(QTextBrowser, "user-guide")
    text = browser.toPlainText()
    for heading in ("The figures", "Reading the verdict", "Input formats", "Limits"):
        assert heading in text
    window.guide_dialog.close()
    licences = dict((name, licence) for name, _, licence in shipped_licences())
    assert licences["openpyxl"] == "MIT"  # openpyxl's declared licence (its PyPI metadata)
    assert all(licences[n] != "not installed" for n in ("numpy", "scipy", "matplotlib"))


def test_the_verdict_is_in_view_on_a_laptop_screen_and_headers_read_whole(make_window, qtbot):
    # 1280 x 800: the level table's verdict is seen without scrolling sideways; long headers
    # sit on two lines but read as their full words.
    window = opened(make_window, qtbot)
    table = window.results.table
    verdict = table.column_names().index("Verdict")
    assert verdict < table.column_names().index("Gap")  # beside the shortcut it judges
    right_edge = table.columnViewportPosition(verdict) + table.columnWidth(verdict)
    assert right_edge <= table.viewport().width()
    shown = table.horizontalHeaderItem(table.column_names().index("Normal shortcut")).text()
    assert shown == "Normal\nshortcut"
