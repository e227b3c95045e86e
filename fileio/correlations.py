"""The workbook's "Correlations" sheet as a `CorrelationSpec`.

Layout: a header `Item A | Item B | Coefficient`, then one row per stated pair; a row
`Group | <group name> | <coefficient>` sets the coefficient shared by the items of a group,
and `Default | | <coefficient>` the one for every other pair. Coefficients are rank
(Spearman) correlations between -1 and 1. A row that cannot be read becomes a problem of the
estimate, so the analysis does not run on dependence the user did not see taken.
"""

from __future__ import annotations

from collections.abc import Sequence

from engine import CorrelationPair, CorrelationSpec, Problem
from fileio.cells import CellError, parse_number
from fileio.headers import normalise

CORRELATION_SHEET = "Correlations"
_HEADER_ROWS = 10
_COEFFICIENT_WORDS = ("coefficient", "correlation", "rank correlation", "rho")


def spec_from_grid(
    grid: Sequence[Sequence[str]], sheet: str = CORRELATION_SHEET
) -> tuple[CorrelationSpec, list[Problem]]:
    spec = CorrelationSpec()
    problems: list[Problem] = []
    found = _header(grid)
    if found is None:
        if any(any(row) for row in grid):
            problems.append(
                Problem(
                    "the sheet has no header row 'Item A, Item B, Coefficient', so its correlations were not read.",
                    "put those three headers above the pairs.",
                    sheet=sheet,
                )
            )
        return spec, problems
    header_index, (col_a, col_b, col_c) = found

    for index in range(header_index + 1, len(grid)):
        row = list(grid[index]) + [""] * 3
        first, second, coefficient_text = row[col_a], row[col_b], row[col_c]
        if not (first or second or coefficient_text):
            continue
        number = index + 1

        def bad(column: str, message: str, fix: str, row_number: int = number) -> None:
            problems.append(Problem(message, fix, row=row_number, column=column, sheet=sheet))

        try:
            coefficient = parse_number(coefficient_text)
        except CellError as why:
            bad("Coefficient", why.message, "enter a rank correlation between -1 and 1.")
            continue
        if not -1 <= coefficient <= 1:
            bad(
                "Coefficient",
                f"{coefficient:g} is not a correlation.",
                "enter a value between -1 and 1.",
            )
            continue
        keyword = first.strip().lower()
        if keyword == "group":
            if not second:
                bad(
                    "Item B",
                    "a Group row needs the group's name.",
                    "write it in the second column.",
                )
                continue
            spec.groups[second] = coefficient
        elif keyword == "default":
            spec.default = coefficient
        elif not first or not second:
            bad(
                "Item A" if not first else "Item B",
                "a pair needs two item names.",
                "write the names of both items as in the Item column.",
            )
        else:
            spec.pairs.append(CorrelationPair(first, second, coefficient, row=number))
    return spec, problems


def _header(grid: Sequence[Sequence[str]]) -> tuple[int, tuple[int, int, int]] | None:
    for index, row in enumerate(grid[:_HEADER_ROWS]):
        names = [normalise(text) for text in row]
        if "item a" in names and "item b" in names:
            coefficient = next((i for i, n in enumerate(names) if n in _COEFFICIENT_WORDS), None)
            if coefficient is not None:
                return index, (names.index("item a"), names.index("item b"), coefficient)
    return None
