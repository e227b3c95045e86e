"""Which sheets of a workbook make the estimate, and the estimate they make together.

Estimators keep a cost plan on one sheet and the risk register on another; a register adds to
the estimate, so by default the first sheet of line items is read together with every sheet
recognised as a risk register (a probability-of-occurrence column beside an impact, every
row a risk event). Every other sheet is named in the summary with what it holds, so nothing
is left out without a word: a sheet of items with its count and the option that includes it,
a chart or empty sheet as skipped.
"""

from __future__ import annotations

from collections.abc import Collection, Sequence
from pathlib import Path
from typing import Any

from engine import Estimate, LineItem, Problem
from fileio.safety import UnreadableFile
from fileio.table import estimate_from_table
from fileio.xlsx_reader import SheetRead, WorkbookRead, read_workbook

ALL_SHEETS = "all"
_SKIP_REASONS = {
    "chart": "a chart sheet (no cells)",
    "empty": "empty",
    "no header": "no header row of line items in its first 30 rows",
    "words": "notes or instructions (by its name)",
    "correlations": "read as the stated correlations",
    "items": "its headers are not recognised; choose its columns in the import dialog",
}


def sheet_option(name: str) -> str:
    """The command-line option that includes a sheet, quoted when it holds spaces."""
    return f"--sheet {name!r}" if any(c.isspace() for c in name) or not name else f"--sheet {name}"


def read_workbook_estimate(
    path: Path,
    sheets: Sequence[str] | None = None,
    mapping: dict[str, str] | None = None,
    keep_rows: Collection[tuple[str, int]] = (),
) -> Estimate:
    """The estimate of the chosen sheets (`sheets`: names, or ["all"]; None for the default),
    with `keep_rows` (sheet, row) taken as items although they read as subtotals."""
    book = read_workbook(path, mapping)
    # Each sheet as its own headers say (what a register is, how many items), then the
    # chosen sheets again: the caller's mapping names the first sheet's headers only, and
    # applied to a register it would leave the register's probabilities unread.
    estimates = {}
    for sheet in book.sheets:
        guessed = _guessed_estimate(sheet, keep_rows)
        if guessed is not None:
            estimates[sheet.name] = guessed
    readable = set(estimates) | {s.name for s in book.sheets if s.mapped}
    chosen = _chosen(book, estimates, readable, sheets, mapping, path)
    for name in chosen:
        sheet = book.find(name)
        assert sheet is not None and sheet.table is not None
        given = mapping if name == chosen[0] and sheet.mapped else None
        read_with = frozenset(chosen) - {name}
        copies = read_with and any("!" in f for f in sheet.table.formula_text.values())
        if given or copies or name not in estimates:
            estimates[name] = _sheet_estimate(sheet, given, keep_rows, read_with)
    estimate = _combined([estimates[n] for n in chosen], chosen)
    estimate.read_problems.extend(book.correlation_problems)
    estimate.correlation = book.correlation
    summary = estimate.summary
    summary["sheets_read"] = [
        {
            "name": n,
            "items": len(estimates[n].items),
            "hidden": book.find(n).hidden,
            "register": is_risk_register(estimates[n]),
        }
        for n in chosen
    ]
    summary["other_sheets"] = [
        {
            "name": s.name,
            "items": len(estimates[s.name].items),
            "hidden": s.hidden,
            "option": sheet_option(s.name),
        }
        for s in book.sheets
        if s.name in estimates and s.name not in chosen and s.kind == "items"
    ]
    summary["sheets_skipped"] = [
        {"name": s.name, "reason": _SKIP_REASONS[s.kind], "hidden": s.hidden}
        for s in book.sheets
        if s.name not in chosen and (s.kind != "items" or s.name not in estimates)
    ]
    return estimate


def is_risk_register(estimate: Estimate) -> bool:
    """A probability-of-occurrence column beside an impact, and every readable row a risk
    event: what a register holds, unlike a cost plan with a few risk rows."""
    if "Probability" not in estimate.summary.get("mapping", {}):
        return False
    readable = [i for i in estimate.items if not i.read_problems]
    return bool(readable) and all(i.is_risk_event for i in readable)


def _sheet_estimate(
    sheet: SheetRead,
    mapping: dict[str, str] | None,
    keep_rows: Collection[tuple[str, int]],
    read_with: frozenset[str] = frozenset(),
) -> Estimate:
    table = sheet.table
    assert table is not None  # only sheets with a header row are estimated
    table.keep_rows = frozenset(r for s, r in keep_rows if s == sheet.name)
    table.read_with = read_with
    return estimate_from_table(table, mapping)


def _guessed_estimate(sheet: SheetRead, keep_rows: Collection[tuple[str, int]]) -> Estimate | None:
    """The sheet read by the headers it has; None when only the caller's mapping finds them."""
    if sheet.table is None:
        return None
    try:
        return _sheet_estimate(sheet, None, keep_rows)
    except UnreadableFile:
        return None


def _chosen(
    book: WorkbookRead,
    estimates: dict[str, Estimate],
    readable: set[str],
    wanted: Sequence[str] | None,
    mapping: dict[str, str] | None,
    path: Path,
) -> list[str]:
    """The sheets to read, the one the mapping is for first."""

    def register(name: str) -> bool:
        return name in estimates and is_risk_register(estimates[name])

    items = [s for s in book.sheets if s.kind == "items" and s.name in readable]
    if wanted and any(w.strip().lower() == ALL_SHEETS for w in wanted):
        if not items:
            raise _no_items(book, path)
        return [s.name for s in items]
    if wanted:
        chosen = []
        for name in wanted:
            sheet = book.find(name)
            if sheet is None:
                raise UnreadableFile(
                    f"{path.name} has no sheet {name!r}; its sheets are: {', '.join(book.names)}."
                )
            if sheet.name not in readable:
                raise UnreadableFile(
                    f"sheet {sheet.name!r} of {path.name} holds no line items "
                    f"({_SKIP_REASONS[sheet.kind]}). Choose another sheet."
                )
            if mapping and not sheet.mapped and len(wanted) == 1:
                raise _mapping_not_found(mapping, path)
            if sheet.name not in chosen:
                chosen.append(sheet.name)
        return chosen
    candidates = [s for s in items if s.mapped] if mapping else items
    if not candidates:
        raise _mapping_not_found(mapping, path) if mapping else _no_items(book, path)
    visible = [s for s in candidates if not s.hidden] or candidates
    plans = [s.name for s in visible if not register(s.name)]
    main = plans[:1] or [visible[0].name]
    others = [s.name for s in items if not s.hidden and register(s.name)]
    return main + [n for n in others if n not in main]


def _combined(parts: list[Estimate], names: list[str]) -> Estimate:
    """One estimate from the sheets' estimates; each item keeps its sheet and row."""
    first = parts[0]
    items: list[LineItem] = []
    problems: list[Problem] = []
    skipped: list[dict[str, Any]] = []
    for name, part in zip(names, parts, strict=True):
        items.extend(part.items)
        problems.extend(part.read_problems)
        skipped.extend({"sheet": name, **entry} for entry in part.summary["rows_skipped"])
    problems.extend(_unit_conflicts(parts, names))
    summary = dict(first.summary)
    summary.update(
        rows_read=sum(p.summary["rows_read"] for p in parts),
        items_taken=len(items),
        rows_skipped=skipped,
        rows_hidden=[
            {"sheet": name, "row": row}
            for name, p in zip(names, parts, strict=True)
            for row in p.summary.get("rows_hidden", [])
        ],
        drafts=sum(p.summary["drafts"] for p in parts),
        by_sheet=[
            {
                "sheet": name,
                "header_row": p.summary["header_row"],
                "rows_read": p.summary["rows_read"],
                "items_taken": p.summary["items_taken"],
                "mapping": p.summary["mapping"],
                "columns_ignored": p.summary["columns_ignored"],
            }
            for name, p in zip(names, parts, strict=True)
        ],
    )
    return Estimate(
        items=items,
        title=first.title,
        unit=next((p.unit for p in parts if p.unit), ""),
        source=first.source,
        read_problems=problems,
        summary=summary,
    )


def _unit_conflicts(parts: list[Estimate], names: list[str]) -> list[Problem]:
    stated = [(n, p.unit) for n, p in zip(names, parts, strict=True) if p.unit]
    if len({u.lower() for _, u in stated}) <= 1:
        return []
    listed = ", ".join(f"sheet {n!r} states {u}" for n, u in stated)
    return [
        Problem(
            f"the sheets read state different units ({listed}); Rangefold does not convert "
            "between them, so the total would mix them.",
            "convert the amounts to one unit, or read the sheets one at a time with --sheet.",
        )
    ]


def _no_items(book: WorkbookRead, path: Path) -> UnreadableFile:
    return UnreadableFile(
        f"no sheet of {path.name} looks like a list of line items (sheets: "
        f"{', '.join(book.names)}): none has a header row naming an Item column and Low, "
        "Most likely or High columns. Choose the sheet and its columns in the import dialog."
    )


def _mapping_not_found(mapping: dict[str, str] | None, path: Path) -> UnreadableFile:
    wanted = ", ".join(repr(h) for h in (mapping or {}).values() if h.strip())
    return UnreadableFile(
        f"the mapping names headers ({wanted}) that no sheet of {path.name} has in one row; "
        "choose the columns again in the import dialog."
    )
