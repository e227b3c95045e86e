"""Where each item came from (sheet and row) and the notes kept from columns the import did
not map, for the report's item lists: the reader can trace every figure to its cell."""

from __future__ import annotations

from typing import Any

from engine import Estimate
from reports.content import Column, Table


def note_headers(estimate: Estimate) -> list[str]:
    """Every notes header, in the order the items first carry them."""
    headers: dict[str, None] = {}
    for item in estimate.items:
        headers.update(dict.fromkeys(item.notes))
    return list(headers)


def with_sources(table: Table, estimate: Estimate) -> Table:
    """The item table with Sheet, Row and one column per notes header added on the right."""
    notes = note_headers(estimate)
    columns = [
        Column("Sheet", "text", lambda i: i.sheet or ""),
        Column("Row", "number", lambda i: i.row),
        *(Column(h, "text", lambda i, h=h: i.notes.get(h, "")) for h in notes),
    ]
    rows = [
        [*row, *(c.value(item) for c in columns)]
        for row, item in zip(table.rows, estimate.items, strict=True)
    ]
    return Table(table.columns + columns, rows)


def item_records(estimate: Estimate) -> list[dict[str, Any]]:
    """The items as the JSON report lists them, with their source and notes."""
    return [
        {
            "name": i.name,
            "group": i.group,
            "distribution": i.family,
            "low": i.low,
            "most_likely": i.most_likely,
            "high": i.high,
            "values": [list(v) for v in i.values],
            "low_pct": i.low_pct,
            "high_pct": i.high_pct,
            "probability": i.probability,
            "sheet": i.sheet,
            "row": i.row,
            "notes": dict(i.notes),
        }
        for i in estimate.items
    ]
