"""The contingency report: `write_report` picks the format from the file's extension."""

from __future__ import annotations

import io
from pathlib import Path

from engine import Analysis, Estimate, Settings
from engine.allocation import Allocation, allocate, shares_add_up
from reports.provenance import provenance

FORMATS = (".xlsx", ".pdf", ".json")


def write_report(
    path: str | Path,
    estimate: Estimate,
    analysis: Analysis,
    settings: Settings,
    *,
    source_path: str | Path | None = None,
    paper: str = "a4",
    allocation: Allocation | None = None,
) -> Path:
    """Write the report to `path` (.xlsx, .pdf or .json) and return it.

    The report is made in memory and written atomically, so a failed export never leaves
    half a report under the real name; it is never written over the estimate it reports on.
    """
    from fileio.atomic import write_atomic
    from fileio.output_guard import refuse_overwriting_inputs

    path = Path(path)
    suffix = path.suffix.lower()
    if suffix not in FORMATS:
        raise ValueError(
            f"cannot write a report as {suffix or 'a file without extension'!r}: "
            f"use {', '.join(FORMATS)}."
        )
    refuse_overwriting_inputs(path, [source_path])
    about = provenance(estimate, settings, source_path)
    if not shares_add_up(analysis):  # a schedule's finish: shares would not add up
        allocation = None
    elif allocation is None:  # where the contingency sits: every report of a sum carries it
        allocation = allocate(estimate, analysis)
    stream = io.BytesIO()
    if suffix == ".xlsx":
        from reports.xlsx import write_xlsx

        write_xlsx(stream, estimate, analysis, about, allocation=allocation)
    elif suffix == ".pdf":
        from reports.pdf import write_pdf

        write_pdf(stream, estimate, analysis, about, paper=paper, allocation=allocation)
    else:
        from reports.json_report import dumps

        stream.write((dumps(analysis, about, allocation) + "\n").encode("utf-8"))
    write_atomic(path, stream.getvalue(), backup=False)
    return path
