"""A copy of the estimate that a worker thread can read while the user edits on.

The window changes `items`, `summary` and the correlation's pairs and groups in place, so a
worker (the recompute's row checks, the background autosave) gets its own containers; the
items themselves are frozen and shared.
"""

from __future__ import annotations

from dataclasses import replace

from engine import Estimate


def estimate_copy(full: Estimate, unit: str | None = None, source: str | None = None) -> Estimate:
    correlation = replace(
        full.correlation, pairs=list(full.correlation.pairs), groups=dict(full.correlation.groups)
    )
    return replace(
        full,
        items=list(full.items),
        unit=full.unit if unit is None else unit,
        source=full.source if source is None else source,
        read_problems=list(full.read_problems),
        summary=dict(full.summary),
        correlation=correlation,
    )
