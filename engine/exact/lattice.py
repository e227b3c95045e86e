"""Items on a grid: hat-function masses at the points k * step, and the step itself.

Each grid point k h takes E[max(0, 1 - |X - kh| / h)] of the item, computed from the
integrated cdf, so every item keeps its exact mean, and its point masses (a risk event's
zero, a discrete value) stay where they are instead of being smeared over a cell.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

from engine.exact.grid_plan import part_range
from engine.families.distributions import Distribution

# Mass below which a tail of a total is folded into its neighbour.
TRIM = 1e-15
# Largest grid one item may take; beyond it the item's tails are folded in harder.
MAX_ITEM_POINTS = 1 << 22

Lattice = tuple[int, np.ndarray]  # (index of the first grid point, masses)


def aligned_step(dists: Sequence[Distribution], target: float) -> float:
    """The largest step at most `target` on which every stated point value (a risk event's
    fixed impact, a discrete value) is a grid point, so that point masses stay points; the
    target itself when their common quantum would force a much finer grid."""
    points = [v for d in dists for v, _ in d.parts()[0] if v != 0]
    if not points:
        return target
    quantum = _common_quantum(points)
    if quantum is None or quantum < target / 64:
        return target
    per_quantum = 2 * math.ceil(quantum / (2 * target))  # even, so twice the step aligns too
    return quantum / per_quantum


def _common_quantum(values: Sequence[float]) -> float | None:
    """Greatest common divisor of values stated with up to six decimals, or None."""
    for decimals in range(7):
        scale = 10**decimals
        scaled = [v * scale for v in values]
        ints = [round(x) for x in scaled]
        if all(abs(x - i) <= 1e-9 * max(abs(x), 1.0) for x, i in zip(scaled, ints, strict=True)):
            return math.gcd(*(abs(i) for i in ints)) / scale
    return None


def trim(start: int, masses: np.ndarray) -> Lattice:
    """Fold tails holding less than TRIM of the mass into the first and last kept points."""
    cum = np.cumsum(masses)
    total = cum[-1]
    lo = int(np.searchsorted(cum, TRIM * total, side="right"))
    hi = int(np.searchsorted(cum, (1 - TRIM) * total, side="left"))
    lo, hi = min(lo, len(masses) - 1), min(max(hi, lo), len(masses) - 1)
    if lo == 0 and hi == len(masses) - 1:
        return start, masses
    kept = masses[lo : hi + 1].copy()
    kept[0] += cum[lo] - masses[lo] if lo > 0 else 0.0
    kept[-1] += total - cum[hi]
    return start + lo, kept


def item_lattice(
    d: Distribution, step: float, span: float | None = None
) -> tuple[int, np.ndarray, float]:
    """One item's masses on the grid k * step: (first k, masses, tail mass folded in);
    `span`: the longest range kept above a part's low end (the rest is folded onto it)."""
    atoms, continuous = d.parts()
    pieces: list[Lattice] = []
    folded = 0.0
    for weight, part in continuous:
        start, masses, tail = _continuous_lattice(part, step, span)
        pieces.append((start, weight * masses))
        folded += weight * tail
    for value, mass in atoms:
        pos = value / step
        k = math.floor(pos)
        frac = pos - k
        pieces.append((k, np.array([mass * (1 - frac), mass * frac])))
    start = min(p[0] for p in pieces)
    stop = max(p[0] + len(p[1]) for p in pieces)
    out = np.zeros(stop - start)
    for k, masses in pieces:
        out[k - start : k - start + len(masses)] += masses
    return start, out, folded


def _continuous_lattice(part, step: float, span: float | None) -> tuple[int, np.ndarray, float]:
    lo, hi, tail = part_range(part)
    longest = min(MAX_ITEM_POINTS * step, span or math.inf)
    if hi - lo > longest:
        # A heavy tail beside an item kept off the grid, or beyond the total's window:
        # folded onto the last point kept.
        hi = lo + longest
        tail = tail / 2 + 1 - float(part.cdf(hi))
    k0 = math.floor(lo / step)
    k1 = math.ceil(hi / step)
    grid = np.arange(k0, k1 + 2) * step
    n = len(grid) - 1  # grid points; grid[i] to grid[i + 1] is cell i
    below = int(np.searchsorted(grid[:-1], part.mean, side="left"))
    # Average cdf and survival over each cell [k h, (k+1) h], each from the side of the mean
    # where it is computed without cancellation (and only there: it is most of the cost);
    # a point's hat mass is a difference of neighbouring cells.
    masses = np.empty(n)
    if below:
        mean_cdf = np.diff(part.integrated_cdf(grid[: below + 1])) / step
        masses[:below] = np.diff(mean_cdf, prepend=0.0)
    if below < n:
        first = max(below - 1, 0)
        mean_surv = -np.diff(part.integrated_survival(grid[first:])) / step
        mean_surv[-1] = 0.0  # the last point takes whatever lies beyond it
        if below == 0:
            mean_surv = np.concatenate([[1.0], mean_surv])
        masses[below:] = mean_surv[:-1] - mean_surv[1:]
    np.maximum(masses, 0.0, out=masses)
    masses /= masses.sum()
    return k0, masses, tail
