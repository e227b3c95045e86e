"""A line item as the text of its cells, and back: what the table shows, edits and copies.

Qt-free so the clipboard format and the cell texts can be tested without a window. Edit text
round-trips exactly (shortest exact digits, no thousands separators) through the importer's
parsers; display text is for reading.
"""

from __future__ import annotations

from engine import LineItem
from engine.schedule.paths import path_text
from reports.content import discrete_shown, family_name

# Columns of the item table, in order; the first ten are typed by the user.
EDIT_COLUMNS = (
    "Item",
    "Group",
    "Distribution",
    "Low",
    "Most likely",
    "High",
    "Low %",
    "High %",
    "Probability",
    "Path",
)
READ_ONLY_COLUMNS = ("Mean", "SD")
TABLE_COLUMNS = EDIT_COLUMNS + READ_ONLY_COLUMNS
NUMBER_COLUMNS = frozenset({"Low", "Most likely", "High", "Low %", "High %", "Probability"})
DEFAULT_SHAPE = 4.0


def plain_number(value: float) -> str:
    """The shortest text an importer reads back to exactly the same float."""
    text = repr(float(value))
    return text.removesuffix(".0")


def percent_text(fraction: float) -> str:
    """A chance as a percentage when that reads back exactly, else as a fraction."""
    shown = f"{100 * fraction:.12g}"
    return f"{shown}%" if float(shown) / 100 == fraction else plain_number(fraction)


def display_number(value: float) -> str:
    return f"{value:,.6g}" if abs(value) < 1e6 else f"{value:,.0f}"


def discrete_text(values: tuple[tuple[float, float], ...]) -> str:
    return "; ".join(f"{plain_number(v)} @ {percent_text(w)}" for v, w in values)


def probability_text(probability: float) -> str:
    """Blank for a base item (certain), a percentage for a risk event."""
    return "" if probability == 1 else percent_text(probability)


def item_cells(item: LineItem) -> dict[str, str]:
    """Every typed cell of the item as text; a cell that failed to read keeps its raw text."""

    def number(value: float | None) -> str:
        return "" if value is None else plain_number(value)

    most_likely = (
        discrete_text(item.values)
        if item.family == "discrete" and item.values
        else number(item.most_likely)
    )
    cells = {
        "Item": item.name,
        "Group": item.group,
        "Distribution": item.family,
        "Low": number(item.low),
        "Most likely": most_likely,
        "High": number(item.high),
        "Low %": number(item.low_pct),
        "High %": number(item.high_pct),
        "Probability": probability_text(item.probability),
        "Path": path_text(item.paths),
    }
    if item.shape != DEFAULT_SHAPE:
        cells["Shape"] = plain_number(item.shape)
    cells.update({k: v for k, v in item.raw.items() if k in cells or k == "Shape"})
    return cells


def display_cells(item: LineItem) -> dict[str, str]:
    """Cells as shown: numbers and discrete values with thousands separators,
    families as the trade writes them (PERT)."""
    shown = item_cells(item)
    if "Distribution" not in item.raw:
        shown["Distribution"] = family_name(item.family)
    for column, value in (
        ("Low", item.low),
        ("High", item.high),
        ("Most likely", item.most_likely),
    ):
        discrete_ml = column == "Most likely" and item.family == "discrete" and item.values
        if discrete_ml and column not in item.raw:
            shown[column] = discrete_shown(item.values)
        elif value is not None and column not in item.raw and not discrete_ml:
            shown[column] = display_number(value)
    return shown
