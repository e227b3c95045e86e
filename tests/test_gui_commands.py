"""Undo commands, cell texts and clipboard blocks, without Qt."""

from __future__ import annotations

import pytest

from engine import LineItem, build_distribution
from fileio.rows import item_from_cells
from gui.clipboard_text import items_to_tsv, tsv_to_cells
from gui.commands import InsertItems, RemoveItems, ReplaceItems, duplicate_rows, move_rows
from gui.item_text import item_cells


def _items() -> list[LineItem]:
    return [
        LineItem("Site survey", "triangular", 10.0, 12.0, 20.0, group="Design"),
        LineItem("Pump skid", "pert", 80.0, 95.0, 140.0, group="Plant"),
        LineItem("Permit delay", "uniform", 5.0, None, 30.0, probability=0.25),
    ]


@pytest.mark.parametrize(
    "command",
    [
        ReplaceItems(((1, LineItem("Pump skid", "fixed", most_likely=90.0)),)),
        InsertItems(((0, LineItem("Crane hire", "fixed", most_likely=7.0)),)),
        RemoveItems((0, 2)),
        move_rows(3, [1, 2], -1),
        duplicate_rows(_items(), [0, 2]),
    ],
)
def test_each_command_undoes_exactly(command):
    items = _items()
    before = list(items)
    inverse = command.apply(items)
    after = list(items)
    assert after != before
    redo = inverse.apply(items)
    assert items == before
    redo.apply(items)
    assert items == after


def test_move_and_duplicate_place_rows_where_expected():
    items = _items()
    move_rows(3, [2], -1).apply(items)
    assert [i.name for i in items] == ["Site survey", "Permit delay", "Pump skid"]
    assert move_rows(3, [0], -1) is None
    duplicate_rows(items, [0]).apply(items)
    assert [i.name for i in items][:3] == ["Site survey", "Site survey (copy)", "Permit delay"]


def test_cell_text_round_trips_through_the_importers_row_reader():
    for item in [
        *_items(),
        LineItem("Scope option", "discrete", values=((100.0, 0.2), (150.0, 0.5), (300.0, 0.3))),
        LineItem("Ground works", "lognormal", 40.0, None, 90.0, 10.0, 90.0),
        LineItem("Tie-ins", "pert", 1.0 / 3.0, 0.5, 0.9, shape=6.0),
    ]:
        back = item_from_cells(item_cells(item), item.row, None)
        assert back == item, item.name
        assert not back.read_problems


def test_copied_block_pastes_back_with_its_header():
    items = _items()
    cells = tsv_to_cells(items_to_tsv(items))
    assert [item_from_cells(c, None, None) for c in cells] == items


def test_block_without_header_is_read_in_table_order_and_bad_cell_is_kept():
    text = "Cable trays\tElectrical\ttriangular\t4\t5\tabc\r\nLighting\t\tuniform\t1\t\t3\r\n"
    cells = tsv_to_cells(text)
    bad = item_from_cells(cells[0], None, None)
    assert bad.raw == {"High": "abc"}
    assert [p.column for p in bad.read_problems] == ["High"]
    good = item_from_cells(cells[1], None, None)
    # Uniform(1, 3) has mean 2 and variance (3-1)^2/12 (closed form, any probability text).
    dist = build_distribution(good)
    assert dist.mean == pytest.approx(2.0)
    assert dist.variance == pytest.approx(4 / 12)


def test_unknown_header_is_refused_not_dropped():
    with pytest.raises(ValueError, match="Colour"):
        tsv_to_cells("Item\tLow\tColour\nA\t1\tred\n")
