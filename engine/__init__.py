"""Rangefold's engine: the total of uncertain line items, exactly and by simulation, beside
the normal shortcut. Pure numpy and scipy: no Qt, no pyplot, no files but through
`read_estimate`, which hands over to the I/O layer (fileio) when called."""

from __future__ import annotations

from pathlib import Path
from typing import Any

from engine.analysis import DEFAULT_LEVELS, DEFAULT_TOLERANCE, Analysis, LevelRow, analyze
from engine.items import (
    COLUMNS,
    FAMILIES,
    CorrelationPair,
    CorrelationSpec,
    Estimate,
    InputError,
    LineItem,
    Problem,
)
from engine.progress import Cancelled
from engine.settings import Settings
from engine.validation import build_distribution


def read_estimate(path: str | Path, **choices: Any) -> Estimate:
    """Read an estimate from a CSV template, a workbook or a project file (by extension).

    `mapping` ({column: header}) and `sheet` override what the reader would guess.
    """
    from fileio.readers import read_estimate as read

    return read(path, **choices)


__all__ = [
    "COLUMNS",
    "DEFAULT_LEVELS",
    "DEFAULT_TOLERANCE",
    "FAMILIES",
    "Analysis",
    "Cancelled",
    "CorrelationPair",
    "CorrelationSpec",
    "Estimate",
    "InputError",
    "LevelRow",
    "LineItem",
    "Problem",
    "Settings",
    "analyze",
    "build_distribution",
    "read_estimate",
]
