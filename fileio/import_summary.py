"""The import summary in words: what was read, and everything that was not.

`rangefold check` prints these lines and the import dialog shows them, so the window and the
command line say the same thing about the same file.
"""

from __future__ import annotations

from typing import Any


def _count(n: int, word: str) -> str:
    return f"{n} {word}" if n == 1 else f"{n} {word}s"


def sheet_lines(summary: dict[str, Any]) -> list[str]:
    """Which sheets were combined, and every other sheet with what it holds."""
    lines = []
    read = summary.get("sheets_read") or []
    if len(read) > 1:
        parts = [
            f"{s['name']!r} ({_count(s['items'], 'item')}"
            + (", a risk register" if s.get("register") else "")
            + ")"
            for s in read
        ]
        lines.append(f"sheets combined: {', '.join(parts)}")
    elif read:
        lines.append(f"sheet: {read[0]['name']}")
    elif summary.get("sheet"):
        lines.append(f"sheet: {summary['sheet']}")
    lines += [f"hidden sheet {s['name']!r} read" for s in read if s.get("hidden")]
    for other in summary.get("other_sheets", []):
        hidden = " (hidden)" if other.get("hidden") else ""
        lines.append(
            f"sheet {other['name']!r}{hidden} holds {_count(other['items'], 'line item')}, "
            f"not read: add {other['option']} (or --sheet all) to include it"
        )
    for skipped in summary.get("sheets_skipped", []):
        hidden = " (hidden)" if skipped.get("hidden") else ""
        reason = skipped["reason"]
        # The Correlations sheet is read, though not for items.
        verb = "" if reason.startswith("read as") else "not read: "
        lines.append(f"sheet {skipped['name']!r}{hidden} {verb}{reason}")
    return lines


def count_lines(summary: dict[str, Any]) -> list[str]:
    """Header rows and counts, by sheet when several were combined."""
    by_sheet = summary.get("by_sheet") or []
    lines = []
    if len(by_sheet) > 1:
        for s in by_sheet:
            lines.append(
                f"sheet {s['sheet']!r}: header row {s['header_row']}, "
                f"{_count(s['rows_read'], 'row')} read, {_count(s['items_taken'], 'item')} taken"
            )
    else:
        for key, label in (("header_row", "header row"), ("rows_read", "rows read")):
            if summary.get(key) is not None:
                lines.append(f"{label}: {summary[key]}")
    for key, label in (
        ("items_taken", "items taken"),
        ("drafts", "drafts (rows with problems, kept)"),
    ):
        if summary.get(key) is not None:
            lines.append(f"{label}: {summary[key]}")
    return lines


def skipped_row_line(entry: dict[str, Any], several_sheets: bool) -> str:
    where = f"sheet {entry['sheet']!r} " if several_sheets and entry.get("sheet") else ""
    return f"{where}row {entry['row']} skipped: {entry['reason']}"


def column_lines(summary: dict[str, Any]) -> list[str]:
    """Columns not mapped (kept as notes), duplicate headers, structure of a CSV file."""
    lines = []
    by_sheet = summary.get("by_sheet") or [summary]
    several = len(by_sheet) > 1
    for s in by_sheet:
        where = f" in sheet {s['sheet']!r}" if several else ""
        kept = s.get("columns_ignored") or []
        if kept:
            lines.append(
                f"columns not mapped{where}, kept as notes on each item: {', '.join(kept)}"
            )
    return lines


def hidden_row_lines(summary: dict[str, Any]) -> list[str]:
    """Rows hidden in the sheet but read as items: a hidden row may be a superseded line or
    an option set aside, which the sheet's own totals leave out; the user should know."""
    hidden = summary.get("rows_hidden") or []
    if not hidden:
        return []
    by_sheet: dict[str | None, list[int]] = {}
    for entry in hidden:
        sheet, row = (entry["sheet"], entry["row"]) if isinstance(entry, dict) else (None, entry)
        by_sheet.setdefault(sheet, []).append(row)
    return [
        f"{_count(len(rows), 'row')} hidden in {f'sheet {sheet!r}' if sheet else 'the sheet'}"
        f" read as items: {', '.join(map(str, rows[:20]))}{' ...' if len(rows) > 20 else ''}"
        " (unhide them to check; delete any that are not part of this estimate)"
        for sheet, rows in by_sheet.items()
    ]


def summary_lines(summary: dict[str, Any]) -> list[str]:
    """Every line of the summary, in the order `check` prints them."""
    several = len(summary.get("sheets_read") or []) > 1
    return (
        sheet_lines(summary)
        + count_lines(summary)
        + column_lines(summary)
        + hidden_row_lines(summary)
        + [skipped_row_line(e, several) for e in summary.get("rows_skipped", [])]
    )


def brief_lines(summary: dict[str, Any]) -> list[str]:
    """What a report's terminal summary says about the import: the sheets, and how many
    subtotal rows were left out (`check` lists them)."""
    left_out = sum(1 for e in summary.get("rows_skipped", []) if e.get("subtotal"))
    lines = sheet_lines(summary) + hidden_row_lines(summary)
    if left_out:
        lines.append(
            f"{left_out} subtotal row{'s' if left_out != 1 else ''} left out of the items; "
            "rangefold check lists them"
        )
    return lines
