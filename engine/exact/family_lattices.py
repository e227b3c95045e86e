"""Hat masses of many PERT (beta) and lognormal parts at once: one call of the family's
integrated cdf and survival on all their grid points, instead of one per item.

The arithmetic is `engine.exact.lattice.item_lattice`'s, point for point (each point's mass
from the side of the item's mean where it is computed without cancellation), so both routes
agree to rounding; at 10,000 items the per-item route spent most of its time in Python
overhead around short scipy calls. Parts of other families, and parts whose range is cut by
the window, take the per-item route.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

from engine.exact.grid_plan import part_ranges
from engine.exact.lattice import MAX_ITEM_POINTS, item_lattice
from engine.exact.stacked_parts import stacked
from engine.families.distributions import Beta, Continuous, Lognormal

PartLattice = tuple[int, np.ndarray, float]  # (first grid index, masses, tail folded in)

# Lattices kept for the next analysis of the same items on the same step (an edit, another
# level); cleared whole when full.
CACHE_SIZE = 16384
_cache: dict[tuple[Continuous, float, float], PartLattice] = {}


def part_lattices(parts: Sequence[Continuous], step: float, span: float) -> list[PartLattice]:
    """Each part's hat masses on the grid k * step (as `item_lattice(part, step, span)`)."""
    if len(_cache) > CACHE_SIZE:
        _cache.clear()
    out = [_cache.get((part, step, span)) for part in parts]
    missing = [i for i, hit in enumerate(out) if hit is None]
    batches: dict[type, list[tuple[int, float, float, float]]] = {}
    longest = min(MAX_ITEM_POINTS * step, span)
    for i, (lo, hi, tail) in zip(missing, part_ranges([parts[i] for i in missing]), strict=True):
        part = parts[i]
        if type(part) in (Beta, Lognormal) and hi - lo <= longest:
            batches.setdefault(type(part), []).append((i, lo, hi, tail))
        else:
            out[i] = item_lattice(part, step, span)
    for rows in batches.values():
        lattices = _family_lattices([parts[r[0]] for r in rows], rows, step)
        for (i, _, _, _), lattice in zip(rows, lattices, strict=True):
            out[i] = lattice
    for i in missing:
        _cache[(parts[i], step, span)] = out[i]
    return out


def _family_lattices(
    parts: Sequence[Continuous], rows: list[tuple[int, float, float, float]], step: float
) -> list[PartLattice]:
    k0 = np.array([math.floor(lo / step) for _, lo, _, _ in rows])
    k1 = np.array([math.ceil(hi / step) for _, _, hi, _ in rows])
    n = k1 - k0 + 1  # grid points of each part; its grid has n + 1 edges
    edges = n + 1
    first = np.concatenate([[0], np.cumsum(edges)[:-1]])  # each part's first edge, flat
    local = np.arange(int(edges.sum())) - np.repeat(first, edges)
    grid = (np.repeat(k0, edges) + local) * step
    # cells j = 0 .. n - 1 of each part (the flat cell index skips each part's last edge)
    cell = np.flatnonzero(local < np.repeat(n, edges))
    means = np.array([p.mean for p in parts])
    point = local[cell]  # grid point j of its part (point j sits at edge j)
    owner = np.repeat(np.arange(len(parts)), n)
    below = grid[cell] < means[owner]  # as searchsorted(grid[:-1], mean, side="left")
    # a point below the mean reads the integrated cdf at edges j - 1 .. j + 1, one above it
    # the integrated survival: each is evaluated on its side only (plus the edges next to it)
    count_below = np.repeat(np.bincount(owner, below, minlength=len(parts)), edges)
    cdf_side = _on_edges(parts, edges, grid, local <= count_below, "integrated_cdf")
    surv_side = _on_edges(parts, edges, grid, local >= count_below - 1, "integrated_survival")
    mean_cdf = (cdf_side[cell + 1] - cdf_side[cell]) / step
    mean_surv = -(surv_side[cell + 1] - surv_side[cell]) / step
    cell_start = np.concatenate([[0], np.cumsum(n)[:-1]])
    mean_surv[cell_start + n - 1] = 0.0  # the last point takes whatever lies beyond it
    before_cdf = np.where(point > 0, np.roll(mean_cdf, 1), 0.0)
    before_surv = np.where(point > 0, np.roll(mean_surv, 1), 1.0)
    masses = np.where(below, mean_cdf - before_cdf, before_surv - mean_surv)
    np.maximum(masses, 0.0, out=masses)
    pieces = np.split(masses, cell_start[1:])
    return [(int(k0[j]), piece / piece.sum(), rows[j][3]) for j, piece in enumerate(pieces)]


def _on_edges(
    parts: Sequence[Continuous], edges: np.ndarray, grid: np.ndarray, used: np.ndarray, name: str
) -> np.ndarray:
    """The family's function `name` at the flat grid's edges in `used` (one run of edges per
    part; `edges`: each part's count of edges), zero elsewhere."""
    owner = np.repeat(np.arange(len(parts)), edges)
    runs = np.bincount(owner, used, minlength=len(parts)).astype(np.int64)
    out = np.zeros(len(grid))
    out[used] = getattr(stacked(parts, runs), name)(grid[used])
    return out
