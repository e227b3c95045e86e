"""The normal shortcut and its better-informed neighbours, at any confidence level.

The shortcut of the trade adds the items' means and variances and reads a percentile off a
normal curve. Beside it: the Cornish–Fisher expansion, which corrects the normal for the
total's skewness and kurtosis, and the sum of the items' own percentiles, a common mistake
shown for contrast (it overstates the spread because percentiles do not add).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy import special

from engine.exact.item_abs_moments import abs_moments3
from engine.exact.stacked_parts import stacked
from engine.exact.totals import Cumulants
from engine.families.distributions import (
    Beta,
    Distribution,
    Fixed,
    Lognormal,
    Normal,
    Occurrence,
    Triangular,
    Uniform,
)


def normal_percentile(cumulants: Cumulants, q: np.ndarray) -> np.ndarray:
    return cumulants.mean + cumulants.sd * special.ndtri(q)


@dataclass(frozen=True)
class CornishFisherDomain:
    """Whether the 4th-order Cornish–Fisher map z -> w is increasing for every z.

    dw/dz = a z^2 + b z + c with a = g2/8 - g1^2/6, b = g1/3, c = 1 - g2/8 + 5 g1^2/36
    (differentiating Abramowitz & Stegun 26.2.49 truncated at the 4th cumulant). Outside
    this domain the expansion folds back and its percentiles are not a distribution's.
    """

    monotone: bool
    a: float
    b: float
    c: float

    def monotone_within(self, z_max: float) -> bool:
        """Whether dw/dz > 0 for |z| <= z_max. A small negative excess kurtosis makes the
        expansion fold back only near |z| ~ 15, far beyond any percentile a report reads,
        so the verdict asks about the percentiles in use, not about every z."""

        def slope(z: float) -> float:
            return self.a * z * z + self.b * z + self.c

        points = [-z_max, z_max]
        if self.a != 0 and abs(self.b / (2 * self.a)) <= z_max:
            points.append(-self.b / (2 * self.a))  # the slope's turning point
        return min(slope(z) for z in points) > 0


def cornish_fisher_domain(skewness: float, excess_kurtosis: float) -> CornishFisherDomain:
    g1, g2 = skewness, excess_kurtosis
    a = g2 / 8 - g1 * g1 / 6
    b = g1 / 3
    c = 1 - g2 / 8 + 5 * g1 * g1 / 36
    monotone = abs(b) < 1e-15 and c > 0 if abs(a) < 1e-15 else a > 0 and b * b - 4 * a * c <= 0
    return CornishFisherDomain(monotone, a, b, c)


def cornish_fisher_percentile(cumulants: Cumulants, q: np.ndarray) -> np.ndarray:
    """Cornish & Fisher (1937) to the 4th cumulant (Abramowitz & Stegun 26.2.49)."""
    z = special.ndtri(q)
    g1, g2 = cumulants.skewness, cumulants.excess_kurtosis
    w = z + (z * z - 1) * g1 / 6 + (z**3 - 3 * z) * g2 / 24 - (2 * z**3 - 5 * z) * g1 * g1 / 36
    return cumulants.mean + cumulants.sd * w


BATCHED = (Uniform, Triangular, Beta, Normal, Lognormal)
EVENT_IMPACTS = (*BATCHED, Fixed)  # a risk event's impact, batched


def sum_of_item_percentiles(dists: Sequence[Distribution], q: np.ndarray) -> np.ndarray:
    """Each family's items as one distribution with array parameters (their ppf broadcasts),
    and so the risk events over each family's impacts, so 10,000 items are a few numpy
    calls; discrete items one by one."""
    q = np.asarray(q, dtype=float)
    out = np.zeros(q.shape)
    plain: dict[type, list[Distribution]] = {}
    events: dict[type, list[Occurrence]] = {}
    for d in dists:
        if type(d) in BATCHED:
            plain.setdefault(type(d), []).append(d)
        elif isinstance(d, Occurrence) and type(d.impact) in EVENT_IMPACTS:
            events.setdefault(type(d.impact), []).append(d)
        else:
            out += d.ppf(q)
    for group in plain.values():
        batch = stacked(group, np.ones(len(group), dtype=int))
        out += batch.ppf(q[..., None]).sum(axis=-1)
    for group in events.values():
        out += _risk_event_percentiles(group, q[..., None]).sum(axis=-1)
    return out


def _risk_event_percentiles(events: Sequence[Occurrence], q: np.ndarray) -> np.ndarray:
    """`Occurrence.ppf` of risk events whose impacts are of one family, in one call."""
    impact = stacked([e.impact for e in events], np.ones(len(events), dtype=int))
    p = np.array([e.p for e in events])
    below = np.zeros(len(events))  # P(outcome < 0): an impact that can be negative, occurring
    negative = np.array([e.impact.bounds()[0] < 0 for e in events])
    if negative.any():
        below = np.where(negative, p * impact.cdf(0.0), 0.0)
    low_part = q < below
    at_zero = ~low_part & (q <= below + 1 - p)
    with np.errstate(all="ignore"):  # a tiny p overflows where its value is not used
        u = np.where(low_part, q / p, np.clip((q - (1 - p)) / p, 0.0, 1.0))
        return np.where(at_zero, 0.0, impact.ppf(u))


def correlated_normal_variance(sds: np.ndarray, pearson: np.ndarray) -> float:
    """Var(sum) = sum_i sum_j r_ij s_i s_j: the normal shortcut with dependence."""
    return float(sds @ pearson @ sds)


BERRY_ESSEEN_C0 = 0.5600  # independent, non-identical summands: Shevtsova (2010)


def berry_esseen_bound(dists: Sequence[Distribution], cumulants: Cumulants | None = None) -> float:
    """sup |F(x) - Phi(x)| <= C0 * sum E|X_i - mu_i|^3 / (sum var_i)^(3/2); `cumulants`: the
    items' summed cumulants when the caller has them already."""
    var = cumulants.variance if cumulants is not None else math.fsum(d.variance for d in dists)
    if var <= 0:
        return math.inf
    rho = math.fsum(abs_moments3([d for d in dists if d.variance > 0]))
    return min(BERRY_ESSEEN_C0 * rho / var**1.5, 1.0)
