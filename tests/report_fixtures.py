"""Small estimates with closed-form totals, shared by the chart, report and CLI tests."""

from __future__ import annotations

import math

import numpy as np
from scipy import optimize, special

from engine import Estimate, LineItem


def irwin_hall_cdf(x: float, n: int) -> float:
    """Sum of n standard uniforms; Irwin–Hall CDF, Johnson, Kotz & Balakrishnan,
    Continuous Univariate Distributions vol. 2."""
    return sum(
        (-1) ** k * math.comb(n, k) * (x - k) ** n for k in range(math.floor(x) + 1)
    ) / math.factorial(n)


def irwin_hall_ppf(q: float, n: int) -> float:
    return optimize.brentq(lambda x: irwin_hall_cdf(x, n) - q, 0.0, float(n), xtol=1e-12)


def irwin_hall_normal(q: np.ndarray, n: int) -> np.ndarray:
    """The normal shortcut for n standard uniforms: mean n/2, variance n/12."""
    return n / 2 + math.sqrt(n / 12) * special.ndtri(q)


def uniforms(n: int = 3, names: list[str] | None = None) -> Estimate:
    names = names or [f"Uniform item {k + 1}" for k in range(n)]
    items = [LineItem(name, "uniform", 0.0, None, 1.0, group="Works") for name in names]
    return Estimate(items=items, title="Three uniforms", unit="EUR")


def widths_estimate() -> Estimate:
    """Uniforms of widths 1, 2 and 3: variance shares 1/14, 4/14, 9/14 (uniform variance
    w^2/12, Johnson, Kotz & Balakrishnan vol. 2)."""
    items = [
        LineItem(f"Width {w}", "uniform", 0.0, None, float(w), group="Works") for w in (1, 2, 3)
    ]
    return Estimate(items=items, title="Widths", unit="EUR")


def mixed_estimate() -> Estimate:
    """One of each kind the report must show: a risk event, a discrete item, percentile ends,
    a fixed item, and text a spreadsheet would run as a formula."""
    items = [
        LineItem(
            '=HYPERLINK("http://example.invalid","x")', "triangular", 90, 100, 130, group="+Group"
        ),
        LineItem("-Demolition", "pert", 40, 50, 75, group="@Works"),
        LineItem("\tTabbed name", "fixed", most_likely=20.0, group="Fees"),
        LineItem("Cabling", "normal", 30, None, 45, low_pct=10, high_pct=90, group="Works"),
        LineItem("Crane hire", "lognormal", 10, None, 30, low_pct=10, high_pct=90, group="Works"),
        LineItem("Fit-out grade", "discrete", values=((100, 0.2), (150, 0.5), (300, 0.3))),
        LineItem(
            "Risk: flooded basement",
            "uniform",
            200,
            None,
            400,
            probability=0.05,
            group="Risk events",
        ),
    ]
    return Estimate(items=items, title="=Mixed estimate", unit="EUR")


def correlated_normals(rank: float = 0.5) -> Estimate:
    """Two normal items (P10 90, P90 110) with a stated rank correlation."""
    from engine import CorrelationPair, CorrelationSpec

    items = [
        LineItem(name, "normal", 90.0, None, 110.0, low_pct=10, high_pct=90, group="Works")
        for name in ("Steelwork", "Cladding")
    ]
    spec = CorrelationSpec(pairs=[CorrelationPair("Steelwork", "Cladding", rank)])
    return Estimate(items=items, title="Correlated pair", unit="EUR", correlation=spec)


def normal_item(name: str, mean: float, sd: float, group: str = "", **fields) -> LineItem:
    """A normal line item stated the trade's way, by its P10 and P90 (mean -/+ z_0.9 sd)."""
    half = float(special.ndtri(0.9)) * sd
    return LineItem(
        name,
        "normal",
        low=mean - half,
        high=mean + half,
        low_pct=10,
        high_pct=90,
        group=group,
        **fields,
    )
