"""The bulk reader of pasted rows gives the very item the importer's row reader gives, for
plain rows (its short path) and for every kind of cell that needs the full reader."""

from __future__ import annotations

import dataclasses

import numpy as np

from fileio.bulk_rows import items_from_cell_rows
from fileio.rows import item_from_cells

ROWS = [
    {"Item": "Package 1", "Low": "10", "Most likely": "12", "High": "20"},
    {"Item": " Pumps ", "Low": " 1.5", "Most likely": "", "High": "3e2 "},
    {"Item": "Fixed fee", "Most likely": "40"},
    {"Item": "Signed", "Low": "-0", "Most likely": "+.5", "High": "7."},
    {"Item": "'=A1 total", "Low": "1", "High": "2"},
    {"Item": "Currency", "Low": "$1,200", "Most likely": "1.3k", "High": "(1,200)"},
    {"Item": "Lower m", "Low": "1m", "High": "2"},
    {"Item": "Huge", "Low": "1e16", "High": "1e999"},
    {"Item": "Dash", "Low": "-", "High": "2"},
    {"Item": "Risk", "Low": "1", "High": "2", "Probability": "30%"},
    {"Item": "Risk dash", "Low": "1", "High": "2", "Probability": "-"},
    {"Item": "Pert", "Distribution": "PERT", "Low": "1", "Most likely": "2", "High": "3"},
    {"Item": "Disc", "Most likely": "100 @ 20%; 150 @ 80%"},
    {"Item": "Shape", "Low": "1", "Most likely": "2", "High": "3", "Shape": "6"},
    {"Item": "Grouped", "Low": "1", "High": "3", "Group": "Civils", "Path": "A; B"},
    {"Item": "Pct", "Low": "1", "High": "3", "Low %": "P10", "High %": "90%"},
    {"Item": "Blank others", "Low": "1", "High": "3", "Group": " ", "Shape": ""},
    {"Item": "Text figure", "Low": "ten", "High": "3"},
    {"Item": "", "Low": "", "Most likely": "", "High": ""},
    {"Item": "Comma", "Low": "12,5", "High": "12,500"},
]


def _fields(item) -> dict:
    """Every field, compared by repr so -0.0 and 0.0 differ and raw/problems count too."""
    return {f.name: repr(getattr(item, f.name)) for f in dataclasses.fields(item)}


def test_every_row_reads_as_the_importer_reads_it():
    bulk = items_from_cell_rows(ROWS)
    assert [_fields(i) for i in bulk] == [_fields(item_from_cells(r, None, None)) for r in ROWS]


def test_random_plain_and_odd_cells_read_the_same():
    rng = np.random.default_rng(11)
    texts = ["", " ", "0", "-0", "12", "12.", ".5", "1e3", "1E-2", "-7.25", "1,200", "1.2M",
             "€5", "-", "x", "1e15", "1.0000001e15", "(3)", "5%"]  # fmt: skip
    rows = [
        {c: str(rng.choice(texts)) for c in ("Low", "Most likely", "High")} | {"Item": f"R{k}"}
        for k in range(2_000)
    ]
    bulk = items_from_cell_rows(rows)
    assert [_fields(i) for i in bulk] == [_fields(item_from_cells(r, None, None)) for r in rows]
