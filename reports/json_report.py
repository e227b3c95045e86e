"""The analysis as JSON, with where it came from: what scripts and audits read."""

from __future__ import annotations

import json
import math
from typing import Any

from engine import Analysis
from reports import content


def payload(analysis: Analysis, about: dict[str, Any]) -> dict[str, Any]:
    """`analysis.to_dict()` plus a `report` block (input, checksum, date, settings, caution,
    version) and the correlation section when the items are dependent."""
    data = analysis.to_dict()
    dependence = content.dependence_of(analysis)
    if dependence is not None and "dependence" not in data:
        data["dependence"] = dependence.to_dict()
    data["report"] = about
    return _plain(data)


def dumps(analysis: Analysis, about: dict[str, Any]) -> str:
    return json.dumps(payload(analysis, about), indent=2, ensure_ascii=False, allow_nan=False)


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
