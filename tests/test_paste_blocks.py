"""Paste as spreadsheets put rows on the clipboard: a quoted cell with a line break is one
cell, a repeated header is refused, a block above the row limit is refused in words, and
100,000 rows paste in one step (selected as one block, not row by row)."""

from __future__ import annotations

import pytest

from gui.clipboard_text import MAX_PASTE_ROWS, tsv_rows, tsv_to_cells


def test_a_quoted_multi_line_cell_is_one_cell():
    text = (
        'Item\tLow\tMost likely\tHigh\r\n"Pumps\nand seals"\t10\t12\t20\r\nCivils\t30\t35\t60\r\n'
    )
    cells = tsv_to_cells(text)
    assert [c["Item"] for c in cells] == ["Pumps\nand seals", "Civils"]
    assert cells[0]["High"] == "20"


def test_quotes_inside_a_cell_survive():
    assert tsv_rows('"12"" pipe"\t1\r\n') == [['12" pipe', "1"]]


def test_a_repeated_header_is_refused():
    with pytest.raises(ValueError, match="names Low twice"):
        tsv_to_cells("Item\tLow\tHigh\tlow\r\nPumps\t1\t3\t2\r\n")


def test_above_the_limit_is_refused_in_words():
    text = "Item\tLow\tHigh\n" + "P\t1\t2\n" * (MAX_PASTE_ROWS + 1)
    with pytest.raises(ValueError, match="more than Rangefold pastes at once"):
        tsv_rows(text)


def test_a_hundred_thousand_rows_paste_and_are_selected(make_window, qtbot):
    window = make_window()
    text = "Item\tLow\tMost likely\tHigh\n" + "".join(
        f"Package {k}\t10\t12\t20\n" for k in range(MAX_PASTE_ROWS)
    )
    window.recomputer.cancel()
    rows = window.table.paste_text(text)
    assert len(rows) == MAX_PASTE_ROWS == window.model.rowCount()
    assert len(window.table.selectionModel().selectedRows()) == MAX_PASTE_ROWS


@pytest.mark.parametrize(
    "text",
    ["12", "-12", "+12", "12.5", ".5", "12.", "-0", "1e3", "1E-2", "1.234", "999999999999999"],
)
@pytest.mark.parametrize("decimal", [None, "."])
def test_plain_numbers_read_the_same_by_the_short_path(text, decimal):
    """The short path for plain digits gives what the full path gives; a leading space sends
    the same text down the full path (it is stripped there)."""
    from fileio.cells import parse_number

    short, full = parse_number(text, decimal=decimal), parse_number(" " + text, decimal=decimal)
    assert str(short) == str(full)  # -0.0 included


def test_the_window_keeps_ticking_while_a_hundred_thousand_rows_are_checked(make_window, qtbot):
    """The rows' checks run in the recompute worker: the GUI thread's timer ticks before the
    worker says which rows are left out (every 1,000th row has Low above High)."""
    from PySide6.QtCore import QTimer

    window = make_window()
    text = "Item\tLow\tMost likely\tHigh\n" + "".join(
        f"Package {k}\t{30 if k % 1000 == 0 else 10}\t12\t20\n" for k in range(MAX_PASTE_ROWS)
    )
    ticks_before_checked, checked = [], []
    timer = QTimer()
    timer.setInterval(5)
    timer.timeout.connect(lambda: None if checked else ticks_before_checked.append(1))
    window.recomputer.prepared.connect(lambda usable: checked.append(usable))
    window.table.paste_text(text)
    timer.start()
    with qtbot.waitSignal(window.recomputer.prepared, timeout=600_000):
        pass
    window.recomputer.cancel()
    timer.stop()
    assert ticks_before_checked
    assert checked[0].left_out == 100 and len(checked[0].estimate.items) == MAX_PASTE_ROWS - 100
    assert "100 rows left out of the total" in window.left_out.text()


def test_many_rows_none_usable_say_so_after_the_worker_checks_them(make_window, qtbot):
    window = make_window()
    text = "Item\tLow\tHigh\n" + "".join(f"Bad {k}\t30\t20\n" for k in range(3_000))
    with qtbot.waitSignal(window.recomputer.prepared, timeout=120_000):
        window.table.paste_text(text)
    assert not window.recomputer.busy
    assert window.last_outcome is None
    assert window.last_problem.startswith("No row can be used yet")
    assert "3,000 rows left out" in window.left_out.text()
