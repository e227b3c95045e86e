"""The analysis as JSON, with where it came from: what scripts and audits read."""

from __future__ import annotations

import json
import math
from typing import Any

from engine import Analysis
from engine.allocation import Allocation
from reports import content


def payload(
    analysis: Analysis, about: dict[str, Any], allocation: Allocation | None = None
) -> dict[str, Any]:
    """`analysis.to_dict()` plus a `report` block (input, checksum, date, settings, caution,
    version) and the correlation section when the items are dependent."""
    data = analysis.to_dict()
    dependence = content.dependence_of(analysis)
    if dependence is not None and "dependence" not in data:
        data["dependence"] = dependence.to_dict()
    if allocation is not None:
        data["allocation"] = allocation.to_dict()
    data["report"] = about
    return _plain(data)


def dumps(analysis: Analysis, about: dict[str, Any], allocation: Allocation | None = None) -> str:
    data = payload(analysis, about, allocation)
    return json.dumps(data, indent=2, ensure_ascii=False, allow_nan=False)


def _plain(value: Any) -> Any:
    """Strict JSON: numpy scalars to Python, non-finite numbers (an unbounded Berry–Esseen
    bound for a total with no spread) to null, since JSON has no infinity."""
    if isinstance(value, dict):
        return {str(k): _plain(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_plain(v) for v in value]
    if hasattr(value, "tolist"):
        return _plain(value.tolist())
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value
