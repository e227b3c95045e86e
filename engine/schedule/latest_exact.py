"""The exact finish of independent paths: F(t) = prod_k F_k(t) (the largest of independent
variables; any text on order statistics), and path k's criticality
integral f_k(t) prod_{j != k} F_j(t) dt, both on one grid fine enough for every path.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

from engine.exact.totals import Cumulants, GridTotal, PointTotal, Total
from engine.schedule.finish import Finish

MAX_CELLS = 1 << 18  # bounds the work when one path is far narrower than the others' span


def latest_of(path_totals: Sequence[Total]) -> Finish:
    """The finish of independent path totals (each from the exact engine)."""
    totals = tuple(path_totals)
    ends = np.array([_ends(t) for t in totals])
    lo, hi = float(ends[:, 0].max()), float(ends[:, 1].max())
    if hi <= lo:  # every path fixed, or the latest fixed path beyond the others' reach
        latest = np.isclose(ends[:, 1], hi)
        return Finish(PointTotal(hi), totals, latest / latest.sum(), None, "exact")
    steps = [t.step for t in totals if isinstance(t, GridTotal)]
    step = max(min(steps), (hi - lo) / MAX_CELLS)
    # Cells centred on lo, origin + k * step: a path fixed at lo (a point mass where the
    # finish starts) falls inside the first cell rather than on its edge, so its chance of
    # being the latest and the finish's jump there are both kept.
    cells = math.ceil((hi - lo) / step + 0.5)
    edges = lo - step / 2 + np.arange(cells + 1) * step
    cdfs = np.clip(np.array([t.cdf(edges) for t in totals]), 0.0, 1.0)
    cdfs[:, -1] = 1.0  # hi is every path's upper end; mass beyond it was folded there
    finish_cdf = np.prod(cdfs, axis=0)
    masses = np.diff(finish_cdf)
    masses[0] += finish_cdf[0]
    origin = lo
    bound = max((t.error_bound for t in totals if isinstance(t, GridTotal)), default=0.0)
    total = GridTotal(
        origin,
        step,
        masses,
        _grid_cumulants(origin, step, masses),
        error_bound=bound + step,
        truncated_mass=sum(t.truncated_mass for t in totals if isinstance(t, GridTotal)),
    )
    return Finish(total, totals, _criticality(cdfs), None, "exact")


def _ends(total: Total) -> tuple[float, float]:
    if isinstance(total, GridTotal):
        edges = total.edges
        return float(edges[0]), float(edges[-1])
    value = float(total.ppf(0.5))
    return value, value


def _criticality(cdfs: np.ndarray) -> np.ndarray:
    """Each path's probability of being the latest: its mass in each cell times the chance
    every other path is done by then (averaged over the cell's two edges)."""
    shares = np.empty(len(cdfs))
    for k in range(len(cdfs)):
        others = np.prod(np.delete(cdfs, k, axis=0), axis=0)
        shares[k] = float(np.sum(np.diff(cdfs[k]) * (others[:-1] + others[1:]) / 2))
    # A point mass shared by two paths at the same value is a tie: split it by the rule above,
    # then scale so the shares add up to one (they differ from one only by the cells' width).
    return shares / shares.sum()


def _grid_cumulants(origin: float, step: float, masses: np.ndarray) -> Cumulants:
    """Moments of masses spread evenly over their cells (Sheppard's step^2/12 for the spread
    within a cell)."""
    x = origin + np.arange(len(masses)) * step
    p = masses / masses.sum()
    mean = float(np.dot(p, x))
    d = x - mean
    d2 = d * d
    variance = float(np.dot(p, d2)) + step * step / 12
    kappa4 = float(np.dot(p, d2 * d2)) - 3 * variance * variance
    return Cumulants(mean, variance, float(np.dot(p, d2 * d)), kappa4)
