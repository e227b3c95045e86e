"""Many rows of cell text to line items at once, for a paste of up to 100,000 rows.

Most pasted rows are a name and plain numbers (`Package 7  10  12  20`). Those are read
column by column here, each number by `float` as `fileio.cells.parse_number` reads plain
digits; every other row (currency, suffixes, a distribution, a probability, a dash...) goes
through the importer's own `item_from_cells`, so the result is the same item either way.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

from engine import LineItem
from fileio.cells import _PLAIN, unquote_formula_text
from fileio.rows import DEFAULT_SHAPE, item_from_cells
from fileio.safety import MAX_MAGNITUDE

FIGURES = ("Low", "Most likely", "High")
_SHORT_COLUMNS = frozenset(("Item", *FIGURES))


def items_from_cell_rows(rows: Sequence[Mapping[str, str]]) -> list[LineItem]:
    """Each row of {column: text} as `item_from_cells(row, None, None)` would read it."""
    columns = [_plain_column([row.get(c, "") for row in rows]) for c in FIGURES]
    items = []
    for row, low, most_likely, high in zip(rows, *columns, strict=True):
        if low is None or most_likely is None or high is None or not _short(row):
            items.append(item_from_cells(row, None, None))
            continue
        given = (low is not _BLANK, most_likely is not _BLANK, high is not _BLANK)
        items.append(
            LineItem(
                name=unquote_formula_text(row.get("Item", "").strip()),
                family="fixed" if given == (False, True, False) else "triangular",
                low=_value(low),
                most_likely=_value(most_likely),
                high=_value(high),
                shape=DEFAULT_SHAPE,
            )
        )
    return items


_BLANK = object()  # a blank figure cell, told apart from a cell that needs the full reader


def _plain_column(texts: list[str]) -> list[float | object | None]:
    """Each cell as a float if it is plain digits within range, `_BLANK` if blank, None if
    it needs the full reader."""
    out: list[float | object | None] = []
    for text in texts:
        stripped = text.strip()
        if not stripped:
            out.append(_BLANK)
        elif _PLAIN.fullmatch(stripped) and abs(value := float(stripped)) <= MAX_MAGNITUDE:
            out.append(value + 0.0)  # as parse_number: "-0" is 0
        else:
            out.append(None)
    return out


def _short(row: Mapping[str, str]) -> bool:
    """Only the name and figures are filled in: no column that changes how they are read."""
    return row.keys() <= _SHORT_COLUMNS or all(
        column in _SHORT_COLUMNS or not text.strip() for column, text in row.items()
    )


def _value(cell: float | object) -> float | None:
    return None if cell is _BLANK else cell  # type: ignore[return-value]
