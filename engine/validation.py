"""From a line item as typed to a distribution, or to the list of what is wrong with it.

Every message names the item and the column and says how to fix it, because the user reads
it in a table cell's tooltip or on a terminal, far from this code.
"""

from __future__ import annotations

import math
from functools import lru_cache

from scipy import special

from engine.families.distributions import (
    Discrete,
    Distribution,
    Fixed,
    Lognormal,
    Normal,
    Occurrence,
    Triangular,
    Uniform,
    pert,
)
from engine.families.moment_limits import lognormal_fits, widest_ratio
from engine.families.percentile_ends import NoBoundsFound, solve_bounds
from engine.items import FAMILIES, LineItem, Problem


class ItemInvalid(ValueError):
    def __init__(self, problems: list[Problem]):
        self.problems = problems
        super().__init__("; ".join(str(p) for p in problems))


def item_problems(item: LineItem) -> list[Problem]:
    try:
        build_distribution(item)
    except ItemInvalid as bad:
        return bad.problems
    return []


def build_distribution(item: LineItem) -> Distribution:
    """The item's distribution, occurrence included; raises ItemInvalid with every problem."""
    return _build(item)


@lru_cache(maxsize=65536)
def _build(item: LineItem) -> Distribution:
    problems: list[Problem] = []

    def bad(column: str, message: str, fix: str) -> None:
        problems.append(Problem(message, fix, item=item.name, row=item.row, column=column))

    family = (item.family or "").strip().lower()
    if not item.name.strip():
        bad("Item", "the item has no name.", "type a short description in the Item column.")
    if family not in FAMILIES:
        bad(
            "Distribution",
            f"{item.family!r} is not a distribution Rangefold knows.",
            f"use one of: {', '.join(FAMILIES)}.",
        )
        raise ItemInvalid(problems)

    for column, value in (
        ("Low", item.low),
        ("Most likely", item.most_likely),
        ("High", item.high),
        ("Low %", item.low_pct),
        ("High %", item.high_pct),
        ("Probability", item.probability),
    ):
        if value is not None and not math.isfinite(value):
            bad(column, f"{value!r} is not a finite number.", "enter an ordinary number.")
    p = item.probability
    if p is None or not (0 < p <= 1):
        bad(
            "Probability",
            f"probability of occurrence {p!r} is outside (0, 1].",
            "enter a probability above 0 and at most 1 (or 0%-100%); leave blank for a base item.",
        )
    if problems:
        raise ItemInvalid(problems)

    impact = _impact(item, family, bad)
    if problems or impact is None:
        raise ItemInvalid(problems)
    return impact if p == 1 else Occurrence(impact, p)


def _impact(item: LineItem, family: str, bad) -> Distribution | None:
    low, ml, high = item.low, item.most_likely, item.high
    if family == "fixed":
        value = ml if ml is not None else (low if low is not None and low == high else None)
        if value is None:
            bad("Most likely", "a fixed item needs its value.", "enter the value in Most likely.")
            return None
        return Fixed(value)
    if family == "discrete":
        return _discrete(item, bad)

    pct = item.low_pct is not None or item.high_pct is not None
    if pct and (item.low_pct is None or item.high_pct is None):
        column = "High %" if item.high_pct is None else "Low %"
        bad(
            column,
            "only one end is stated as a percentile.",
            "give both Low % and High %, or neither.",
        )
        return None
    if pct and not (0 < item.low_pct < item.high_pct < 100):
        bad(
            "Low %",
            f"percentiles {item.low_pct:g} and {item.high_pct:g} must satisfy 0 < Low % < High % < 100.",
            "use e.g. Low % = 10 and High % = 90.",
        )
        return None
    if family in ("normal", "lognormal") and not pct:
        bad(
            "Low %",
            f"a {family} item is defined by two percentiles, and none are given.",
            "enter Low % and High % (for example 10 and 90) for the Low and High values.",
        )
        return None
    if low is None or high is None:
        bad(
            "Low" if low is None else "High",
            "the range needs both Low and High.",
            "enter both ends.",
        )
        return None
    if not low < high:
        bad(
            "High",
            f"High ({high:g}) must be above Low ({low:g}).",
            "swap them or widen the range; use 'fixed' for a single value.",
        )
        return None
    if ml is not None and family in ("triangular", "pert") and not (low <= ml <= high):
        bad(
            "Most likely",
            f"most likely {ml:g} is outside Low {low:g} to High {high:g}.",
            "put it between Low and High.",
        )
        return None

    p_lo = item.low_pct / 100 if pct else None
    p_hi = item.high_pct / 100 if pct else None
    if family == "uniform":
        if pct:
            width = (high - low) / (p_hi - p_lo)
            return Uniform(low - p_lo * width, low - p_lo * width + width)
        return Uniform(low, high)
    if family == "normal":
        z_lo, z_hi = special.ndtri(p_lo), special.ndtri(p_hi)
        sigma = (high - low) / (z_hi - z_lo)
        return Normal(low - z_lo * sigma, sigma)
    if family == "lognormal":
        if low <= 0:
            bad(
                "Low",
                f"a lognormal item needs positive ends; Low is {low:g}.",
                "use positive values, or a normal or triangular item.",
            )
            return None
        z_lo, z_hi = special.ndtri(p_lo), special.ndtri(p_hi)
        sigma = (math.log(high) - math.log(low)) / (z_hi - z_lo)
        if not lognormal_fits(math.log(low) - z_lo * sigma, sigma):
            bad(
                "High",
                f"a lognormal from {low:g} to {high:g} is too wide for its mean, variance and"
                " skewness to be computed (they pass the largest number a computer holds);"
                f" with Low {low:g} the widest High is {low * widest_ratio(low, z_lo, z_hi):.4g}.",
                "narrow the range: raise Low or lower High.",
            )
            return None
        return Lognormal(math.log(low) - z_lo * sigma, sigma)

    # triangular and PERT
    if ml is None:
        bad(
            "Most likely",
            f"a {family} item needs a most likely value.",
            "enter it between Low and High.",
        )
        return None
    if family == "pert" and not (item.shape > 0 and math.isfinite(item.shape)):
        bad("Shape", f"PERT shape {item.shape!r} must be positive.", "use 4, the usual value.")
        return None
    if pct:
        try:
            return solve_bounds(family, low, ml, high, p_lo, p_hi, item.shape)
        except NoBoundsFound as why:
            bad(
                "Low %",
                f"{why}.",
                "check the percentiles and the most likely value, or state absolute bounds.",
            )
            return None
    if family == "triangular":
        return Triangular(low, ml, high)
    return pert(low, ml, high, item.shape)


def _discrete(item: LineItem, bad) -> Distribution | None:
    if not item.values:
        bad(
            "Most likely",
            "a discrete item needs its values and their chances.",
            "write them in Most likely as '100 @ 20%; 150 @ 50%; 300 @ 30%'.",
        )
        return None
    values = [v for v, _ in item.values]
    weights = [w for _, w in item.values]
    if any(not math.isfinite(v) for v in values) or any(
        not (w > 0 and math.isfinite(w)) for w in weights
    ):
        bad(
            "Most likely",
            "every value needs a finite amount and a chance above 0.",
            "check each 'value @ chance' pair.",
        )
        return None
    total = sum(weights)
    if abs(total - 1) > 1e-6:
        bad(
            "Most likely",
            f"the chances add up to {total * 100:g}%, not 100%.",
            "adjust them so they add up to 100%.",
        )
        return None
    return Discrete(tuple(values), tuple(weights))


def base_value(item: LineItem) -> tuple[float, str]:
    """The item's point value in the base estimate, and which value that is.

    Risk events are not in the base: carrying them is contingency's job.
    """
    if item.is_risk_event:
        return 0.0, "risk event, not in the base"
    if item.family == "discrete":
        dist = build_distribution(item)
        assert isinstance(dist, Discrete)
        v, w = dist._arrays
        return float(v[w.argmax()]), "most probable value"
    if item.most_likely is not None:
        return item.most_likely, "most likely"
    dist = build_distribution(item)
    if item.family == "lognormal":
        return float(dist.ppf(0.5)), "median"
    return dist.mean, "mean"
