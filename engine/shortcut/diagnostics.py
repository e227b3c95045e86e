"""Why the normal shortcut holds or fails for an estimate: skew drivers, dominance, risk
events, the measured distance between the total and the normal curve, and the guarantee."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import asdict, dataclass

import numpy as np
from scipy import special

from engine.exact.totals import Cumulants, GridTotal, SampleTotal, Total
from engine.families.distributions import Distribution
from engine.items import LineItem


@dataclass(frozen=True)
class ItemDriver:
    """One item's part in the total's spread and skew."""

    name: str
    group: str
    family: str
    probability: float
    mean: float
    sd: float
    variance_share: float  # of the total's variance (with covariances when correlated)
    skew_share: float  # of the total's third cumulant (negative for left-skewed items)
    rank_correlation_with_total: float | None = None

    def to_dict(self) -> dict:
        return asdict(self)


def item_drivers(
    items: Sequence[LineItem],
    dists: Sequence[Distribution],
    variance_contributions: Sequence[float] | None = None,
    rank_with_total: Sequence[float] | None = None,
) -> list[ItemDriver]:
    """Drivers, largest variance share first. Without correlation an item's contribution is
    its own variance; with it, the caller passes var_i + sum_j cov_ij, and each item's rank
    correlation with the total (NaN, reported as None, for an item that never varies)."""
    contrib = (
        np.asarray(variance_contributions, dtype=float)
        if variance_contributions is not None
        else np.array([d.variance for d in dists])
    )
    var_total = contrib.sum()
    k3 = np.array([d.mu3 for d in dists])
    k3_total = k3.sum()
    # the shares as Python floats in one pass each (a numpy scalar per item cost ~1 us)
    var_share = (contrib / var_total if var_total > 0 else np.zeros(len(dists))).tolist()
    skew_share = (k3 / k3_total if abs(k3_total) > 1e-300 else np.zeros(len(dists))).tolist()
    drivers = [
        ItemDriver(
            name=item.name,
            group=item.group,
            family=item.family,
            probability=item.probability,
            mean=d.mean,
            sd=d.sd,
            variance_share=v,
            skew_share=k,
            rank_correlation_with_total=(
                float(rank_with_total[i])
                if rank_with_total is not None and np.isfinite(rank_with_total[i])
                else None
            ),
        )
        for i, (item, d, v, k) in enumerate(zip(items, dists, var_share, skew_share, strict=True))
    ]
    return sorted(drivers, key=lambda r: -abs(r.variance_share))


@dataclass(frozen=True)
class NormalGap:
    """The largest distance between the total's cdf and the normal shortcut's (Kolmogorov)."""

    distance: float
    at: float  # the total's value where it occurs
    at_level: float  # the total's cdf there, in percent


def kolmogorov_gap(total: Total, shortcut: Cumulants | None = None) -> NormalGap:
    """Against the normal with `shortcut`'s mean and sd (the items' exact ones), or with the
    total's own when None (correlated items, whose sd needs the covariances)."""
    mean, sd = (shortcut.mean, shortcut.sd) if shortcut is not None else (total.mean, total.sd)
    if sd <= 0:
        return NormalGap(0.0, mean, 50.0)
    if isinstance(total, SampleTotal):
        x = total.sorted_trials
        n = len(x)
        phi = special.ndtr((x - mean) / sd)
        upper = np.arange(1, n + 1) / n - phi
        lower = phi - np.arange(0, n) / n
        gaps = np.maximum(upper, lower)
        i = int(np.argmax(gaps))
        return NormalGap(float(gaps[i]), float(x[i]), float(100 * (i + 0.5) / n))
    if isinstance(total, GridTotal):  # at a cell's edge its cdf is the masses' running sum
        x = total.edges
        cdf = total.edges_cdf
    else:
        x = total.support_grid()
        cdf = total.cdf(x)
    gaps = np.abs(cdf - special.ndtr((x - mean) / sd))
    i = int(np.argmax(gaps))
    return NormalGap(float(gaps[i]), float(x[i]), float(100 * cdf[i]))
