"""The part of a distribution worth drawing. A claim or an outage can put the P99.95 of a
total thousands of times past its P90; drawn to there, the body of the total and the levels
read in it shrink into one pixel. So the view stops at a few P10-P90 widths past the median
(never short of a level marked on the chart), and says where the cut tail goes."""

from __future__ import annotations

from collections.abc import Callable, Iterable

import numpy as np

from charts import numbers

# Central range drawn at most: past these the curves are flat and only squeeze the levels.
SHOWN = (0.0005, 0.9995)
# Farthest from the median drawn, in P10-P90 widths: a normal's P99.95 is 1.3 widths out,
# a lognormal with P90/P10 = 10 reaches 6 widths (common practice, no source).
REACH = 6.0


def body_range(
    ppf: Callable[[np.ndarray], np.ndarray],
    marks: Iterable[float] = (),
    beside: Iterable[float] = (),
) -> tuple[float, float, float | None]:
    """(left, right, where the cut right tail ends, or None when nothing is cut). `marks`
    are always in view; `beside` (a curve drawn with it) only within the reach."""
    lo, p10, p50, p90, hi = (float(v) for v in ppf(np.array([SHOWN[0], 0.1, 0.5, 0.9, SHOWN[1]])))
    reach = REACH * (p90 - p10)
    near = [float(b) for b in beside if abs(float(b) - p50) <= reach]
    left = max(min([lo, *near]), p50 - reach)
    right = min(max([hi, *near]), p50 + reach)
    marked = [float(m) for m in marks]
    if marked:
        left, right = min(left, *marked), max(right, *marked)
    return left, right, (hi if right < hi else None)


def cut_note(cut: float | None, unit: str = "") -> str:
    """The words under a chart whose far tail was cut, or ""."""
    if cut is None:
        return ""
    return f"far right tail not drawn: P99.95 is {numbers.money(cut, unit)}"
