"""Numbers as the user reads them, the same in the window, the reports, the charts and the
command line: thousands separators always, no negative zero, and one number of decimals for
every figure of one kind (pick it once with `decimals_for`, then pass it to each call).

Pure Python, no matplotlib: the command line imports it without drawing anything.
"""

from __future__ import annotations

import math
from collections.abc import Iterable

from engine.shortcut.verdict import LARGEST_SHAPE, shape_text
from engine.shortcut.verdict import compact as _compact
from engine.shortcut.verdict import count as count

MAX_DECIMALS = 2


def _rounded(x: float, decimals: int) -> float:
    """Rounded, with -0.0 made 0.0 so '-0' and '-0.0%' never show."""
    return round(float(x), decimals) + 0.0


def decimals_for(values: Iterable[float | None]) -> int:
    """Decimals that show about four significant figures of the largest value, at most two:
    totals in millions get none, durations of 40 days get two, so '450' never stands beside
    '47.22' in one column."""
    largest = max((abs(v) for v in values if v is not None and math.isfinite(v)), default=0.0)
    if largest == 0:
        return 0
    return max(0, min(MAX_DECIMALS, 3 - math.floor(math.log10(largest))))


def money(x: float | None, unit: str = "", decimals: int = 0, sign: bool = False) -> str:
    """'14,400,354 EUR'; `sign` for changes ('+1,200'); empty for a missing value."""
    if x is None:
        return ""
    if not math.isfinite(x):
        return "unbounded" if x > 0 else "-unbounded"
    value = _rounded(x, decimals)
    text = f"{value:+,.{decimals}f}" if sign and value else f"{value:,.{decimals}f}"
    return f"{text} {unit}" if unit else text


def compact(x: float, unit: str = "") -> str:
    """'12.3 k EUR', '4.1 M': sums said aloud, for sentences and chart ticks."""
    text = _compact(_rounded(x, 12))
    return f"{text} {unit}" if unit else text


def percent(fraction: float | None, decimals: int = 1, sign: bool = False) -> str:
    """A share as a percentage: 0.166 -> '16.6%'; `sign` for changes ('+3.6%')."""
    if fraction is None:
        return ""
    value = _rounded(100 * fraction, decimals)
    return f"{value:+,.{decimals}f}%" if sign and value else f"{value:,.{decimals}f}%"


def probability(p: float) -> str:
    """A chance of occurrence, no more digits than it has: 0.3 -> '30%', 0.125 -> '12.5%',
    0.0005 -> '0.05%'."""
    value = _rounded(100 * p, 4)
    return f"{value:,.4f}".rstrip("0").rstrip(".") + "%"


def coefficient(r: float | None, sign: bool = False) -> str:
    """A correlation coefficient to two decimals, never '-0.00'."""
    if r is None:
        return ""
    value = _rounded(r, 2)
    return f"{value:+.2f}" if sign and value else f"{value:.2f}"


def statistic(x: float, decimals: int = 2) -> str:
    """A unitless statistic (skewness, kurtosis, a distance): fixed decimals; past 1,000 a
    far tail makes it and its digits say nothing ('over 1,000')."""
    if abs(x) >= LARGEST_SHAPE:
        return shape_text(x)
    return f"{_rounded(x, decimals):,.{decimals}f}"


def level(q: float) -> str:
    """A confidence level: 80 -> 'P80', 97.5 -> 'P97.5'."""
    return f"P{q:g}"
