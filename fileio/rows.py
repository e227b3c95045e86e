"""One row of cell text to a line item; shared by the importer and the window's clipboard paste.

A cell that cannot be read leaves its field empty, keeps its text in `raw` and adds a
`Problem` to `read_problems`, so the row becomes a draft the user can fix rather than a row
that disappears. Whether the numbers make a valid item (Low below High...) is the engine's
validation's job, not repeated here.
"""

from __future__ import annotations

from collections.abc import Callable, Collection, Mapping

from engine import LineItem, Problem
from engine.schedule.paths import path_names
from fileio.cells import (
    CellError,
    is_blank,
    is_dash,
    parse_discrete,
    parse_family,
    parse_number,
    parse_percentile,
    parse_probability,
    unquote_formula_text,
)

OPTIONAL_COLUMNS = ("Distribution", "Low %", "High %", "Probability", "Group", "Shape", "Path")
DEFAULT_SHAPE = 4.0  # the classic Beta-PERT weight on the mode (Malcolm et al. 1959)


def item_from_cells(
    cells: Mapping[str, str],
    row: int | None,
    sheet: str | None,
    *,
    decimal: str | None = None,
    percent_probability: bool = False,
    formulas: Collection[str] = (),
    cell_names: Mapping[str, str] | None = None,
) -> LineItem:
    """A line item from text cells keyed by engine column name (missing keys are blank).

    `decimal` is the file's decimal mark when known; `percent_probability` says the
    Probability header is marked %; `formulas` names columns whose cell is a formula with no
    saved result (its text is the formula); `cell_names` gives each column's cell reference,
    e.g. {"Low": "C5"}, for messages.
    """
    name = unquote_formula_text(cells.get("Item", "").strip())
    raw: dict[str, str] = {}
    problems: list[Problem] = []

    def text(column: str) -> str:
        value = cells.get(column, "")
        return "" if column in OPTIONAL_COLUMNS and is_dash(value) else value.strip()

    def failed(column: str, message: str, fix: str) -> None:
        raw[column] = cells.get(column, "")
        where = cell_names.get(column) if cell_names else None
        problems.append(
            Problem(
                f"cell {where}: {message}" if where else message,
                fix,
                item=name,
                row=row,
                column=column,
                sheet=sheet,
            )
        )

    def read(column: str, parse: Callable[[str], object]):
        value = text(column)
        if column in formulas:
            failed(
                column,
                f"the formula {value!r} has no saved result.",
                "open the workbook in a spreadsheet program, let it recalculate, save it, and import again; or type the value.",
            )
            return None
        if not value:
            return None
        try:
            return parse(value)
        except CellError as bad:
            failed(column, bad.message, bad.fix)
            return None

    if "Item" in formulas:
        name = ""
        read("Item", str)
    ml_text = text("Most likely")
    family_text = text("Distribution")
    family = read("Distribution", parse_family) if family_text else None
    if family is None:
        family = _implied_family(cells, ml_text, text)
    discrete = family == "discrete"

    def number(value: str) -> float:
        return parse_number(value, decimal=decimal)

    low = read("Low", number)
    high = read("High", number)
    values: tuple[tuple[float, float], ...] = ()
    most_likely = None
    if discrete:
        values = read("Most likely", lambda v: parse_discrete(v, decimal=decimal)) or ()
    else:
        most_likely = read("Most likely", number)
    probability = read(
        "Probability",
        lambda v: parse_probability(v, percent_header=percent_probability, decimal=decimal),
    )
    shape = read("Shape", lambda v: parse_number(v, decimal=decimal))
    group = unquote_formula_text(read("Group", str) or "")
    paths = read("Path", lambda v: path_names(unquote_formula_text(v))) or ()
    return LineItem(
        name=name,
        family=family,
        low=low,
        most_likely=most_likely,
        high=high,
        low_pct=read("Low %", lambda v: parse_percentile(v, decimal=decimal)),
        high_pct=read("High %", lambda v: parse_percentile(v, decimal=decimal)),
        probability=1.0 if probability is None else probability,
        group=group,
        paths=paths,
        shape=DEFAULT_SHAPE if shape is None else shape,
        values=values,
        row=row,
        sheet=sheet,
        raw=raw,
        read_problems=tuple(problems),
    )


def _implied_family(cells: Mapping[str, str], ml_text: str, text: Callable[[str], str]) -> str:
    """A blank distribution: discrete for `value @ chance` text, fixed for a lone Most likely,
    triangular otherwise (the engine then says what a triangular item still lacks)."""
    if "@" in ml_text:
        return "discrete"
    given = [c for c in ("Low", "Most likely", "High") if not is_blank(cells.get(c, ""))]
    return "fixed" if given == ["Most likely"] else "triangular"
