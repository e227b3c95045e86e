"""What a sheet's columns say beyond the mapped values: notes kept, doubts raised.

Columns the mapping does not use (Ref, Basis, Owner, Notes) travel with each item as notes,
so nothing typed disappears. Two headers with the same name leave it unclear which column
was meant; an amount in another currency than the sheet states would be added as if it were
the same money; a CSV row with more fields than its header has shifted values (an unquoted
"1,200"). Each of these is said, with the cell and the fix.
"""

from __future__ import annotations

import re
import unicodedata
from collections.abc import Collection, Sequence

from engine import Problem
from fileio.cells import unquote_formula_text
from fileio.headers import column_letter

# Currency codes an estimate's title block or header is likely to state (ISO 4217).
CURRENCY_CODES = frozenset(
    [
        "USD",
        "EUR",
        "GBP",
        "JPY",
        "CNY",
        "CHF",
        "AUD",
        "CAD",
        "NZD",
        "SEK",
        "NOK",
        "DKK",
        "INR",
        "SGD",
        "HKD",
        "ZAR",
        "MXN",
        "BRL",
        "PLN",
        "CZK",
        "HUF",
    ]
)
# What a symbol may stand for; "$" is shared by many dollars.
_SYMBOL_CODES = {
    "$": frozenset({"USD", "AUD", "CAD", "NZD", "SGD", "HKD", "MXN"}),
    "€": frozenset({"EUR"}),
    "£": frozenset({"GBP"}),
    "¥": frozenset({"JPY", "CNY"}),
    "₹": frozenset({"INR"}),
    "₣": frozenset({"CHF"}),
}
_CODE = re.compile(r"(?<![A-Za-z])([A-Z]{3})(?![A-Za-z])")


def notes_of(row: Sequence[str], headers: Sequence[str], read: Collection[int]) -> dict[str, str]:
    """The row's text in columns no field took, by header (a column past the header's last
    name by its letter)."""
    notes = {}
    for i, text in enumerate(row):
        if text and i not in read:
            name = headers[i] if i < len(headers) else f"Column {column_letter(i)}"
            notes[name] = unquote_formula_text(text)
    return notes


def duplicate_headers(texts: Sequence[str]) -> dict[str, list[int]]:
    """Header text -> the columns (0-based) that carry it, for names used more than once."""
    seen: dict[str, list[int]] = {}
    for i, text in enumerate(texts):
        name = " ".join(text.split())
        if name:
            seen.setdefault(name.lower(), []).append(i)
    return {" ".join(texts[c[0]].split()): c for c in seen.values() if len(c) > 1}


def duplicate_problem(
    name: str, columns: list[int], read: int, sheet: str | None, header_row: int
) -> Problem:
    letters = ", ".join(column_letter(c) for c in columns)
    return Problem(
        f"the header {name!r} names columns {letters}; column {column_letter(read)} was read "
        "and the others kept as notes, which may not be the column meant.",
        "rename the columns so each name is used once, or choose the column in the import dialog.",
        row=header_row,
        column=name,
        sheet=sheet,
    )


def stated_currency(unit: str) -> str | None:
    """The currency code a unit names ("USD", "EUR", "US$" -> USD), if it is a currency."""
    text = unit.strip().upper()
    if text in CURRENCY_CODES:
        return text
    if text in ("US$", "US DOLLARS"):
        return "USD"
    return None


def currency_in_text(text: str) -> str | None:
    """A currency code stated in a title block line: "cost plan (USD)", "all figures in GBP"."""
    for found in _CODE.finditer(text):
        if found.group(1) in CURRENCY_CODES:
            return found.group(1)
    return None


def cell_currencies(text: str) -> frozenset[str] | None:
    """The currencies an amount cell's marks may mean, or None when it carries none."""
    codes: set[str] = set()
    for char in text:
        if unicodedata.category(char) == "Sc":
            codes |= _SYMBOL_CODES.get(char, {char})
    codes |= {c for c in _CODE.findall(text) if c in CURRENCY_CODES}
    return frozenset(codes) if codes else None


def currency_problem(
    text: str, stated: str, cell: str, column: str, row: int, item: str, sheet: str | None
) -> Problem | None:
    marks = cell_currencies(text)
    if marks is None or stated in marks:
        return None
    return Problem(
        f"{cell}: {text.strip()!r} is not in {stated}, the currency the sheet states; "
        "Rangefold does not convert currencies.",
        f"convert the amount to {stated} and type it without the other currency's mark.",
        item=item,
        row=row,
        column=column,
        sheet=sheet,
    )


def extra_fields_problem(row: Sequence[str], width: int, line: int, item: str) -> Problem | None:
    """A CSV record with filled fields past the header's last column: its values have
    shifted (most often an amount with an unquoted thousands comma)."""
    extra = [t for t in row[width:] if t]
    if not extra:
        return None
    return Problem(
        f"row {line} has {len(row)} fields but the header has {width}; "
        f"{', '.join(repr(t) for t in extra[:3])} past the last column is not read and the "
        "values before it may have shifted.",
        'put quotes around a value holding the delimiter ("1,200"), or remove the extra field.',
        item=item,
        row=line,
    )
