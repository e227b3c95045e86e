"""Panes that stay usable when the window is small: each side of the splitter keeps a
minimum width (the results table and charts need room to lay out), and neither collapses."""

from __future__ import annotations

from PySide6.QtWidgets import QSplitter, QWidget

ITEMS_MIN_WIDTH = 340  # name, group, distribution and the first figures
RESULTS_MIN_WIDTH = 460  # the level table's first columns and a readable chart


def keep_usable_widths(splitter: QSplitter, items: QWidget, results: QWidget) -> None:
    items.setMinimumWidth(ITEMS_MIN_WIDTH)
    results.setMinimumWidth(RESULTS_MIN_WIDTH)
    splitter.setChildrenCollapsible(False)
