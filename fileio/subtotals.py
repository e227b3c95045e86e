"""Totals and subtotals in an estimator's sheet, which are never line items.

A cost plan carries its own arithmetic: section subtotals, carried-forward lines, a grand
total. Taken as items they count the same money twice or more (a plan with two section
subtotals came out 87 % too high). Three kinds of evidence, strongest first:

- the label, in the Item column or a text column left of it ("Subtotal groundworks",
  "Section total", "Carried forward", "c/f", "Sum");
- a formula that adds cells of other rows (`=SUM(D5:D9)`, `=D5+D6`, `=SUBTOTAL(9,D5:D9)`),
  read from the formula view of the workbook since the value view shows only the result;
- arithmetic: a single amount with no range, equal within the rounding it is written to, to
  the sum of the rows above it in its section, its group or the whole sheet. This is
  circumstantial, so the row is left out *and* raised as a problem the user must confirm.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

from engine import LineItem

_QUALIFIED = r"(?:grand|sub\s*-?|section|page|running|overall|cumulative)\s*totals?"
# Labels that say "total" whatever follows: "Subtotal groundworks", "Section total: building",
# "Groundworks total", "Total", "Total for section 2", "Carried forward", "c/f", "Sum of 1-4".
_TOTAL_LABEL = re.compile(
    rf"""^\s*(?:
        .*\b{_QUALIFIED}\b.*
      | totals?\s*[:.\-–]?
      | totals?\s+(?:for|of|to)\b.*
      | totals?\s*[:\-–].*
      | .*\btotals?\s*[:.]?
      | .*\b(?:carried|brought)\s+(?:forward|fwd|over)\b.*
      | [cb]\s*/\s*f(?:wd)?\b.*
      | sum(?:\s+of\b.*)?\s*[:.]?
    )\s*$""",
    re.IGNORECASE | re.VERBOSE,
)
# "Total groundworks" is a subtotal, "Total station survey" an instrument: a label that only
# starts with Total counts when the row's amounts also read as a total.
_TOTAL_FIRST = re.compile(r"^\s*totals?\b", re.IGNORECASE)
_REFERENCE = re.compile(
    r"(?:(?:'[^']+'|[A-Za-z_][\w.]*)!)?\$?([A-Z]{1,3})\$?(\d+)(?::\$?([A-Z]{1,3})\$?(\d+))?"
)
# What may stand between the references of an adding formula.
_ADDING_REST = re.compile(r"^(?:SUM\(|SUBTOTAL\((?:9|109),|AGGREGATE\(9,\d+,|[+(),\s])*$")
_AMOUNTS = ("low", "most_likely", "high")


def totals_label(texts: Sequence[str], item_column: int) -> tuple[str, bool] | None:
    """(text, certain) for the text that labels the row as a total, looked for in the Item
    column and the text columns left of it (a Notes column further right may say "total" of
    anything). Not certain for a label that only starts with "Total"."""
    weak = None
    for text in texts[: item_column + 1]:
        if not text or _looks_numeric(text):
            continue
        if _TOTAL_LABEL.match(text):
            return text.strip(), True
        if weak is None and _TOTAL_FIRST.match(text):
            weak = text.strip()
    return (weak, False) if weak else None


def adding_formula(formula: str, own_row: int) -> list[int] | None:
    """The rows an adding formula takes its cells from, when it adds cells of two or more
    other rows; None for any other formula (a rate times a quantity, a copy of one cell)."""
    body = formula.lstrip("=").upper()
    references = list(_REFERENCE.finditer(body))
    if not references or not _ADDING_REST.match(_REFERENCE.sub("", body)):
        return None
    rows: set[int] = set()
    for found in references:
        first = int(found.group(2))
        last = int(found.group(4) or first)
        rows.update(range(min(first, last), max(first, last) + 1))
    rows.discard(own_row)
    return sorted(rows) if len(rows) >= 2 else None


def sheets_referenced(formula: str) -> set[str]:
    """The other sheets a formula takes cells from: `='Cost plan'!D13` -> {"Cost plan"}."""
    found = re.findall(r"(?:'((?:[^']|'')+)'|([A-Za-z_][\w.]*))!", formula)
    return {(quoted.replace("''", "'") or plain) for quoted, plain in found}


def written_precision(value: float) -> float:
    """Half the last unit a typed amount shows: 3,650,000 is good to 5,000; 12.35 to 0.005.

    At least three significant figures are trusted, so 1,000 matches 995 to 1,005 only.
    """
    if value == 0 or not math.isfinite(value):
        return 0.0
    magnitude = abs(value)
    if float(magnitude).is_integer():
        whole = round(magnitude)
        zeros = len(str(whole)) - len(str(whole).rstrip("0"))
        unit = 10.0 ** min(zeros, max(len(str(whole)) - 3, 0))
    else:
        decimals = len(repr(magnitude).split(".")[1]) if "." in repr(magnitude) else 0
        unit = 10.0 ** -min(decimals, 9)
    return unit / 2


def single_amount(item: LineItem) -> tuple[str, float] | None:
    """The one amount of a row that states no range (one cell, or three equal cells)."""
    given = [(f, getattr(item, f)) for f in _AMOUNTS if getattr(item, f) is not None]
    if not given or item.values or item.probability != 1.0:
        return None
    if len(given) == 1 or len({v for _, v in given}) == 1:
        field_name = "most_likely" if any(f == "most_likely" for f, _ in given) else given[0][0]
        return field_name, given[0][1]
    return None


@dataclass
class _Sums:
    """Running sums of one stretch of rows (a section, a group, the sheet)."""

    rows: list[int] = field(default_factory=list)
    sums: dict[str, float] = field(default_factory=lambda: dict.fromkeys(_AMOUNTS, 0.0))
    counts: dict[str, int] = field(default_factory=lambda: dict.fromkeys(_AMOUNTS, 0))

    def add(self, row: int, amounts: Mapping[str, float | None]) -> None:
        self.rows.append(row)
        for f, v in amounts.items():
            if v is not None and math.isfinite(v):
                self.sums[f] += v
                self.counts[f] += 1

    def matches(self, field_name: str, value: float, tolerance: float) -> bool:
        if self.counts[field_name] < 2:
            return False
        total = self.sums[field_name]
        return abs(value - total) <= tolerance + 1e-9 * max(1.0, abs(total))


def _amounts(item: LineItem) -> dict[str, float | None]:
    amounts = {f: getattr(item, f) for f in _AMOUNTS}
    if item.family == "fixed" and item.most_likely is not None:
        # A fixed item typed in one column counts in every column's sum.
        amounts = dict.fromkeys(_AMOUNTS, item.most_likely)
    return amounts


class SectionSums:
    """What the rows above add up to: in the current section (since the last heading or
    subtotal), in each group, in the whole sheet, and over the subtotals themselves."""

    def __init__(self) -> None:
        self.section = _Sums()
        self.groups: dict[str, _Sums] = {}
        self.sheet = _Sums()
        self.subtotals = _Sums()

    def new_section(self) -> None:
        self.section = _Sums()

    def add_item(self, row: int, item: LineItem) -> None:
        amounts = _amounts(item)
        self.section.add(row, amounts)
        self.sheet.add(row, amounts)
        if item.group:
            self.groups.setdefault(item.group, _Sums()).add(row, amounts)

    def add_subtotal(self, row: int, item: LineItem) -> None:
        self.subtotals.add(row, {f: getattr(item, f) for f in _AMOUNTS})
        self.new_section()

    def rows_summed_by(self, item: LineItem) -> tuple[str, list[int], dict[str, float]] | None:
        """(what, rows, amounts) when the row's amounts (its one amount, or each end of its
        range) are the sums of the rows above it, to the rounding each is written to."""
        if item.values or item.probability != 1.0:
            return None
        single = single_amount(item)
        given = (
            dict([single])
            if single
            else {f: getattr(item, f) for f in _AMOUNTS if getattr(item, f) is not None}
        )
        if not given:
            return None
        stretches = [("its section", self.section)]
        if item.group in self.groups:
            stretches.append((f"group {item.group!r}", self.groups[item.group]))
        stretches += [("the sheet", self.sheet), ("the subtotals", self.subtotals)]
        for what, sums in stretches:
            if all(sums.matches(f, v, written_precision(v)) for f, v in given.items()):
                return what, sums.rows, given
        return None

    def all_amounts_summed(self, item: LineItem) -> bool:
        """Every amount the row states is the sum of that column over the sheet or section."""
        given = {f: getattr(item, f) for f in _AMOUNTS if getattr(item, f) is not None}
        return bool(given) and any(
            all(s.matches(f, v, 0.0) for f, v in given.items())
            for s in (self.sheet, self.section, self.subtotals)
        )


def row_span(rows: Sequence[int]) -> str:
    """Rows as a reader would write them: "rows 5-9", "rows 5, 7 and 9"."""
    if not rows:
        return "no rows"
    if len(rows) == 1:
        return f"row {rows[0]}"
    if list(rows) == list(range(rows[0], rows[-1] + 1)):
        return f"rows {rows[0]}–{rows[-1]}"
    shown = [str(r) for r in rows[:6]] + (["…"] if len(rows) > 6 else [])
    return f"rows {', '.join(shown[:-1])} and {shown[-1]}"


def _looks_numeric(text: str) -> bool:
    return bool(re.fullmatch(r"[\s\d.,()$€£¥%+\-kKM]*", text))
