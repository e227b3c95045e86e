"""The stated rank-correlation matrix as a read-only table with a diverging colour scale.

A full matrix of ten thousand items would be a hundred million cells nobody can read, so the
view shows the items that take part in a stated correlation (all items when the default is
not 0), at most `MATRIX_LIMIT` of them, and says which ones it shows. The cells come from
engine.dependence.correlation.build_matrix on those items, so they are the coefficients the engine uses.
"""

from __future__ import annotations

import numpy as np
from PySide6.QtCore import QAbstractTableModel, QModelIndex, Qt
from PySide6.QtGui import QBrush, QColor

from engine import Estimate, LineItem
from engine.dependence.correlation import build_matrix

MATRIX_LIMIT = 60
# ColorBrewer "PuOr" (Brewer & Harrower, colorbrewer2.org), listed there as colour-blind
# safe: orange for negative, purple for positive, near-white at 0. Cells also show the
# number, so the sign never rests on colour alone.
SCALE = ("#b35806", "#f1a340", "#f7f7f7", "#998ec3", "#542788")
DIAGONAL = QColor("#e3e5e8")
DARK_TEXT, LIGHT_TEXT = QColor("#1f2933"), QColor("#ffffff")


def _key(name: str) -> str:
    return name.strip().casefold()  # names match as engine.dependence.correlation matches them


def shown_items(estimate: Estimate, limit: int = MATRIX_LIMIT) -> tuple[list[LineItem], str]:
    """The items the matrix view shows, and a caption saying which they are."""
    items, spec = estimate.items, estimate.correlation
    if spec.default != 0:
        linked, which = list(items), "items (the default links every pair)"
    else:
        named = {_key(n) for p in spec.pairs if p.coefficient != 0 for n in (p.item_a, p.item_b)}
        groups = {_key(g) for g, c in spec.groups.items() if c != 0}
        linked = [
            i
            for i in items
            if _key(i.name) in named or (i.group.strip() and _key(i.group) in groups)
        ]
        which = "items with a stated correlation"
    if not linked:
        return [], "No correlation is stated: the items are treated as independent."
    if len(linked) > limit:
        return linked[:limit], f"The first {limit} of {len(linked):,} {which}."
    return linked, f"{'All' if len(linked) > 1 else 'The'} {len(linked):,} {which}."


def scale_colour(value: float) -> QColor:
    """-1 .. +1 on the five-step diverging scale, linear between the steps."""
    position = (min(max(value, -1.0), 1.0) + 1.0) / 2.0 * (len(SCALE) - 1)
    low = min(int(position), len(SCALE) - 2)
    t = position - low
    a, b = QColor(SCALE[low]), QColor(SCALE[low + 1])
    return QColor.fromRgbF(
        a.redF() + t * (b.redF() - a.redF()),
        a.greenF() + t * (b.greenF() - a.greenF()),
        a.blueF() + t * (b.blueF() - a.blueF()),
    )


class MatrixModel(QAbstractTableModel):
    def __init__(self, parent=None):
        super().__init__(parent)
        self.names: list[str] = []
        self.matrix = np.zeros((0, 0))

    def show_estimate(self, estimate: Estimate, limit: int = MATRIX_LIMIT) -> str:
        """Show the matrix of the estimate's linked items; returns the caption."""
        items, caption = shown_items(estimate, limit)
        self.beginResetModel()
        if items:
            part = Estimate(items=items, correlation=estimate.correlation)
            self.names, self.matrix = build_matrix(part)
        else:
            self.names, self.matrix = [], np.zeros((0, 0))
        self.endResetModel()
        return caption

    def rowCount(self, parent=QModelIndex()) -> int:  # noqa: B008 (Qt's signature)
        return 0 if parent.isValid() else len(self.names)

    def columnCount(self, parent=QModelIndex()) -> int:  # noqa: B008
        return self.rowCount(parent)

    def headerData(self, section, orientation, role=Qt.ItemDataRole.DisplayRole):
        if role == Qt.ItemDataRole.DisplayRole:
            # Columns by number to keep them narrow; rows carry the number and the name.
            number = str(section + 1)
            if orientation == Qt.Orientation.Horizontal:
                return number
            return f"{number}  {self.names[section]}"
        if role == Qt.ItemDataRole.ToolTipRole:
            return self.names[section]
        return None

    def data(self, index, role=Qt.ItemDataRole.DisplayRole):
        if not index.isValid():
            return None
        r, c = index.row(), index.column()
        value = float(self.matrix[r, c])
        if role == Qt.ItemDataRole.DisplayRole:
            return "1" if r == c else ("0" if value == 0 else f"{value:+.2f}")
        if role == Qt.ItemDataRole.BackgroundRole:
            return QBrush(DIAGONAL if r == c else scale_colour(value))
        if role == Qt.ItemDataRole.ForegroundRole:
            return QBrush(LIGHT_TEXT if r != c and abs(value) > 0.55 else DARK_TEXT)
        if role == Qt.ItemDataRole.TextAlignmentRole:
            return int(Qt.AlignmentFlag.AlignCenter)
        if role == Qt.ItemDataRole.ToolTipRole:
            return f"{self.names[r]} and {self.names[c]}: rank correlation {value:+.2f}"
        return None
