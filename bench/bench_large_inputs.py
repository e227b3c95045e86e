"""Large inputs and outputs (issue 11), each against the code path it replaced, interleaved
(A, B, A, B) in one process; min and median of each and the ratio.

- paste: selecting N pasted rows as one block of runs against one `select` call per row;
- paste 100,000 rows: reading them column by column (`fileio.bulk_rows`) against the row
  reader per row; and the whole paste in the window, until the GUI thread is free again,
  with the rows' checks in the recompute worker against per-row reading and the checks in
  the GUI thread (`CHECKED_IN_WINDOW` raised);
- header search: a CSV with 120,000-character cells above the header, with the 200-character
  cap against no cap (`MAX_HEADER_CHARS` raised);
- PDF appendix: the compact list of the widest items against ruled table pages for all items
  (`COMPACT_AFTER` raised), at a size the old path finishes in reasonable time.
Run: .venv/bin/python bench/bench_large_inputs.py [--quick]
"""

from __future__ import annotations

import io
import os
import statistics
import sys
import tempfile
import time
from collections.abc import Callable
from pathlib import Path

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
sys.path.insert(0, str(Path(__file__).resolve().parent.parent))


def interleaved(a: Callable[[], None], b: Callable[[], None], repeats: int) -> tuple[list, list]:
    times_a, times_b = [], []
    for _ in range(repeats):
        for run, times in ((a, times_a), (b, times_b)):
            started = time.perf_counter()
            run()
            times.append(time.perf_counter() - started)
    return times_a, times_b


def report(name: str, new: list[float], old: list[float]) -> None:
    print(
        f"{name:<44} new min {min(new):7.2f} s med {statistics.median(new):7.2f} s | "
        f"old min {min(old):7.2f} s med {statistics.median(old):7.2f} s | "
        f"old/new {statistics.median(old) / statistics.median(new):6.1f}x"
    )


def bench_paste_selection(rows: int, repeats: int) -> None:
    from PySide6.QtCore import QItemSelectionModel
    from PySide6.QtWidgets import QApplication

    from engine import Estimate, LineItem
    from gui.item_editor import ItemEditor
    from gui.item_table import ItemTableView

    QApplication.instance() or QApplication([])
    editor = ItemEditor()
    editor.set_estimate(
        Estimate(items=[LineItem(f"P{k}", "uniform", 0.0, None, 1.0) for k in range(rows)])
    )
    table = ItemTableView(editor)
    every = list(range(rows))

    def one_by_one() -> None:  # the replaced code
        selection = table.selectionModel()
        selection.clearSelection()
        for row in every:
            selection.select(
                table.model().index(row, 0),
                QItemSelectionModel.SelectionFlag.Select | QItemSelectionModel.SelectionFlag.Rows,
            )

    new, old = interleaved(lambda: table.select_rows(every), one_by_one, repeats)
    report(f"select {rows:,} pasted rows", new, old)


def _pasted_block(rows: int) -> str:
    return "Item\tLow\tMost likely\tHigh\n" + "".join(
        f"Package {k}\t{10 + k % 7}\t12\t{20 + k % 11}\n" for k in range(rows)
    )


def bench_paste_reading(rows: int, repeats: int) -> None:
    from fileio.bulk_rows import items_from_cell_rows
    from gui.clipboard_text import tsv_to_cells
    from gui.item_model import item_from_text

    cells = tsv_to_cells(_pasted_block(rows))
    new, old = interleaved(
        lambda: items_from_cell_rows(cells), lambda: [item_from_text(c) for c in cells], repeats
    )
    report(f"read {rows:,} pasted rows", new, old)


def bench_paste_window(rows: int, repeats: int) -> None:
    from PySide6.QtWidgets import QApplication

    import gui.item_editor as item_editor
    import gui.main_window as main_window
    from gui.item_model import item_from_text

    QApplication.instance() or QApplication([])
    window = main_window.MainWindow()
    window.document.edited = lambda: None  # no autosave of the pasted rows between runs
    text = _pasted_block(rows)
    bulk, checked_in_window = item_editor.items_from_cell_rows, main_window.CHECKED_IN_WINDOW

    def paste(old: bool) -> Callable[[], None]:
        def run() -> None:
            if old:
                item_editor.items_from_cell_rows = lambda r: [item_from_text(c) for c in r]
                main_window.CHECKED_IN_WINDOW = 10**9
            try:
                assert len(window.table.paste_text(text)) == rows
            finally:
                item_editor.items_from_cell_rows = bulk
                main_window.CHECKED_IN_WINDOW = checked_in_window
            window.recomputer.cancel()
            window.recomputer.wait()
            window.undo_stack.undo()

        return run

    new, old = interleaved(paste(False), paste(True), repeats)
    report(f"paste {rows:,} rows (GUI thread busy)", new, old)


def bench_header_search(repeats: int) -> None:
    import fileio.headers as headers
    import fileio.table as table
    from fileio.readers import read_estimate

    folder = Path(tempfile.mkdtemp())
    path = folder / "notes above.csv"
    note = "Scope notes " + "x" * 120_000
    with path.open("w", encoding="utf-8") as out:
        out.writelines(",".join([note] * 5) + "\n" for _ in range(20))
        out.write("Item,Low,Most likely,High\n")
        out.writelines(f"Package {k},10,12,20\n" for k in range(50))
    capped = headers.MAX_HEADER_CHARS

    def with_cap(limit: int) -> Callable[[], None]:
        def run() -> None:
            headers.MAX_HEADER_CHARS = table.MAX_HEADER_CHARS = limit
            assert len(read_estimate(path).items) == 50

        return run

    new, old = interleaved(with_cap(capped), with_cap(10**9), repeats)
    headers.MAX_HEADER_CHARS = table.MAX_HEADER_CHARS = capped
    report("CSV, 120,000-character cells above header", new, old)


def bench_pdf_appendix(items: int, repeats: int) -> None:
    import reports.pdf as pdf
    from engine import Estimate, LineItem, Settings, analyze
    from reports.provenance import provenance

    estimate = Estimate(
        items=[LineItem(f"Package {k}", "pert", 10.0, 12.0 + k % 5, 30.0) for k in range(items)],
        title="Large",
        unit="EUR",
    )
    analysis = analyze(estimate, method="exact")
    about = provenance(estimate, Settings(unit="EUR"), None)
    compact = pdf.COMPACT_AFTER

    def with_limit(limit: int) -> Callable[[], None]:
        def run() -> None:
            pdf.COMPACT_AFTER = limit
            pdf.write_pdf(io.BytesIO(), estimate, analysis, about)

        return run

    new, old = interleaved(with_limit(compact), with_limit(10**9), repeats)
    pdf.COMPACT_AFTER = compact
    report(f"PDF of {items:,} items", new, old)


if __name__ == "__main__":
    quick = "--quick" in sys.argv
    repeats = 2 if quick else 3
    bench_paste_selection(5_000 if quick else 20_000, repeats)
    bench_paste_reading(100_000, repeats)
    bench_paste_window(100_000, repeats)
    bench_header_search(repeats)
    bench_pdf_appendix(1_000 if quick else 2_000, repeats)
