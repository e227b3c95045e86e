"""What the window says in place of figures when the estimate has no line items: the ways to
start, so a new user is never left with blank panes."""

from __future__ import annotations

from fileio.demo import SAMPLE_DIR

TEMPLATE = SAMPLE_DIR / "import_template.xlsx"


def empty_estimate_text() -> str:
    template = (
        f" The template {TEMPLATE} has the columns to fill and a Notes sheet explaining each."
        if TEMPLATE.is_file()
        else ""
    )
    return (
        "The estimate has no line items yet. To start: File ▸ Open an estimate (.rangefold, "
        ".xlsx, .xlsm, .csv, .tsv, .txt); File ▸ Import items from a spreadsheet; paste rows "
        "copied from a spreadsheet into the table (Ctrl+V, with a header row Item, Low, Most "
        "likely, High); or add a row with + Row and type the three-point estimate." + template
    )
