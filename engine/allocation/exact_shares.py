"""E[X_i | T = t] for independent items, exactly on a lattice, at a few totals t.

On a common grid of step h each item is a lattice of hat-function masses p_i[k] (the exact
machinery's `item_lattice`: means kept, point masses on grid points). For a grid point t,

    E[X_i | T = t h] = h (c_i + sum_k (k - c_i) p_i[k] O_i[t - k] / sum_k p_i[k] O_i[t - k]),

where O_i is the lattice of the sum of every other item and c_i the grid point nearest the
item's mean (it keeps the numbers small). Summed over items the numerators are (t - sum c_i)
times the total's mass at t, so the shares add up to t by construction, not by scaling.

The leave-one-out lattices O_i are never formed whole. The items' sums are merged in a
balanced tree; walking down it, a node's "outside" (the sum of every item not under it) is
its parent's outside convolved with its sibling, and only the window t - (the node's
support) is ever needed: as wide as the node's own lattice, for each wanted t. The work is
about that of the total's own convolution, whatever the number of items. A total between
two grid points gets the linear interpolation of its neighbours' conditional means, which
still adds up to t exactly (one window row, one point wider, serves both neighbours). Fixed
items are a shift; a total stretched past MAX_WIDTH points by a heavy tail gets a coarser
grid.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
from numpy.lib.stride_tricks import sliding_window_view
from scipy import signal

from engine.exact.convolution import aligned_step, item_lattice
from engine.exact.grid_plan import part_range
from engine.families.distributions import Distribution, Fixed
from engine.progress import Progress

# Grid steps per standard deviation of the total. The conditional mean is smooth in t, so a
# coarser grid than the total's own is enough; tests/test_allocation_exact.py measures it.
RESOLUTION = 1000
# Mass dropped from each tail of a partial sum: it cannot reach the totals that are read.
NEGLIGIBLE = 1e-16
# Below this mass at a grid point the total is not conditioned there.
NO_MASS = 1e-250
# A grid point of the total's lattice holding less than this fraction of the largest point's
# mass is read as empty: FFT rounding alone leaves ~1e-16 of it anywhere.
EMPTY = 1e-10
# Longest lattice of the total kept (points); a longer one is coarsened to fit.
MAX_WIDTH = 1 << 19
# Coarsest grid accepted, in multiples of the target step: a heavy tail that forces a
# coarser one leaves the body of the total unresolved (measured in
# tests/test_allocation_exact.py: a lognormal with P90/P10 = 100 beside three triangular
# items is off by 60 standard errors of a 8M-trial reference once coarsened 64 times).
COARSEST = 8
# Farthest apart (grid steps) a total's two reading points may be to share one window row.
MAX_REACH = 8
# Product of two lengths above which convolution goes by FFT.
DIRECT_LIMIT = 500_000


class GridTooCoarse(ValueError):
    """No lattice short enough to hold the total resolves its body: simulate instead."""

    def __init__(self, steps_per_spread: float) -> None:
        self.step = steps_per_spread  # the grid step, in units of the total's spread
        super().__init__(f"the grid step would be {steps_per_spread:.3g} of the total's spread")


class Node:
    """A partial sum of items: its lattice (first grid index, masses) and its two halves."""

    __slots__ = ("children", "index", "masses", "start", "weighted")

    def __init__(self, start: int, masses: np.ndarray, children: tuple[Node, Node] | None):
        self.start, self.masses, self.children = start, masses, children
        self.weighted = np.zeros(0)  # a leaf's (k - c_i) p_i[k]
        self.index = 0  # a leaf's place among the items

    @property
    def stop(self) -> int:
        return self.start + len(self.masses) - 1


def conditional_means(
    dists: Sequence[Distribution],
    totals: Sequence[float],
    *,
    resolution: int = RESOLUTION,
    spread: float | None = None,
    progress: Progress | None = None,
) -> np.ndarray:
    """(items, totals): E[X_i | T = t] for each total t. `spread`: the total's central
    spread in sd units ((P90 - P10) / 2.563), which the grid must resolve; GridTooCoarse
    when a heavy tail leaves no grid that both holds the total and resolves its body."""
    progress = progress or Progress()
    out = np.empty((len(dists), len(totals)))
    certain = {k for k, d in enumerate(dists) if isinstance(d, Fixed) or d.variance <= 0}
    for k in certain:
        out[k] = dists[k].mean
    uncertain = [k for k in range(len(dists)) if k not in certain]
    if not uncertain:
        return out
    shift = math.fsum(dists[k].mean for k in certain)
    parts = [dists[k] for k in uncertain]
    scale = math.sqrt(math.fsum(d.variance for d in parts))
    if spread:  # a far tail inflates the sd: the body sets the scale (none: a point mass)
        scale = min(scale, spread)
    target = scale / resolution
    step = aligned_step(parts, target)
    root = _lattice_tree(parts, step)
    while root is None:
        # A heavy tail stretches the total over millions of steps, and every window down the
        # tree would be as long: a coarser grid keeps memory bounded (the shares still add
        # up) until it no longer resolves the body of the total.
        # (Past the point values' common quantum the grid cannot stay aligned: just double.)
        coarser = aligned_step(parts, 2 * step)
        step = coarser if coarser > step else 2 * step
        if step > COARSEST * target:
            raise GridTooCoarse(step / scale)
        root = _lattice_tree(parts, step)
    points, weights = _reading_points(root, np.asarray(totals, dtype=float) - shift, step)
    spans = points[:, 1] - points[:, 0]
    if spans.max() <= MAX_REACH:
        # A total's two points are neighbours (or nearly): one window row serves both.
        firsts, row = np.unique(points[:, 0], return_inverse=True)
        ratios = _leaf_ratios(root, firsts, int(spans.max()), progress)
        low, high = ratios[:, row, 0], ratios[:, row, spans]
    else:  # points far apart (a wide gap between point masses): a row for each
        ratios = _leaf_ratios(root, points.ravel(), 0, progress)[:, :, 0]
        low, high = ratios[:, 0::2], ratios[:, 1::2]
    centres = np.array([round(d.mean / step) for d in parts], dtype=float)
    steps = low * weights[:, 0] + high * weights[:, 1]
    out[uncertain] = (centres[:, None] + steps) * step
    return out


def _too_wide(part, step: float) -> bool:
    lo, hi, _ = part_range(part)
    return (hi - lo) / step > MAX_WIDTH


def _lattice_tree(parts: Sequence[Distribution], step: float) -> Node | None:
    """Each item's lattice (with its moment about the grid point nearest its mean) and
    their sum's merge tree; None when an item or the total is wider than MAX_WIDTH."""
    for d in parts:  # a part too wide is seen from its range, before its lattice is built
        if any(_too_wide(part, step) for _, part in d.parts()[1]):
            return None
    leaves = []
    for d in parts:
        start, masses, _ = item_lattice(d, step)
        if len(masses) > MAX_WIDTH:
            return None
        leaf = Node(start, masses, None)
        leaf.weighted = (np.arange(start, start + len(masses)) - round(d.mean / step)) * masses
        leaves.append(leaf)
    root = _merge_tree(leaves)
    return root if len(root.masses) <= MAX_WIDTH else None


def _reading_points(root: Node, offsets: np.ndarray, step: float) -> tuple[np.ndarray, np.ndarray]:
    """For each total, two grid points that carry mass and weights (adding up to 1) that
    put their weighted position at the total: its neighbours, interpolated; or, where the
    total lies in a cell the lattice leaves empty (a gap between point masses, an end of
    the support the analysis's grid smeared past), the two nearest points with mass,
    extrapolated. The conditional means then add up to the total exactly either way."""
    carried = np.nonzero(root.masses > EMPTY * root.masses.max())[0] + root.start
    position = offsets / step
    points = np.empty((len(offsets), 2), dtype=np.int64)
    weights = np.empty((len(offsets), 2))
    for r, x in enumerate(position):
        k = int(np.searchsorted(carried, x))
        if k < len(carried) and abs(carried[k] - x) < 1e-9:  # on a grid point: read it alone
            points[r], weights[r] = (carried[k], carried[k]), (1.0, 0.0)
            continue
        if len(carried) == 1:
            points[r], weights[r] = (carried[0], carried[0]), (1.0, 0.0)
            continue
        if 0 < k < len(carried):
            a, b = carried[k - 1], carried[k]
        else:
            a, b = (carried[0], carried[1]) if k == 0 else (carried[-2], carried[-1])
        frac = (x - a) / (b - a)
        points[r], weights[r] = (a, b), (1 - frac, frac)
    return points, weights


def _convolve(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Each row of `a` (1-d or 2-d) convolved with `b`; directly while that is cheaper."""
    if a.shape[-1] * len(b) > DIRECT_LIMIT:
        return signal.fftconvolve(a, b if a.ndim == 1 else b[None, :], axes=-1)
    if a.ndim == 1:
        return np.convolve(a, b)
    return np.stack([np.convolve(row, b) for row in a])


def _merge_tree(leaves: list[Node]) -> Node:
    nodes = leaves
    while len(nodes) > 1:
        merged = [_merge(nodes[j], nodes[j + 1]) for j in range(0, len(nodes) - 1, 2)]
        nodes = merged + ([nodes[-1]] if len(nodes) % 2 else [])
    return nodes[0]


def _merge(a: Node, b: Node) -> Node:
    masses = np.maximum(_convolve(a.masses, b.masses), 0.0)
    cum = np.cumsum(masses)
    lo = int(np.searchsorted(cum, NEGLIGIBLE * cum[-1], side="right"))
    hi = int(np.searchsorted(cum, (1 - NEGLIGIBLE) * cum[-1], side="left"))
    hi = min(max(hi, lo), len(masses) - 1)
    return Node(a.start + b.start + lo, masses[lo : hi + 1], (a, b))


def _leaf_ratios(root: Node, points: np.ndarray, reach: int, progress: Progress) -> np.ndarray:
    """(leaves in order, points, reach + 1): for each grid point t + o (o = 0..reach),
    sum_k (k - c_i) p_i[k] O_i[t + o - k] over sum_k p_i[k] O_i[t + o - k] (0 where the
    total has no mass there)."""
    # outside[r, s]: the node's outside at grid index t_r - stop + s, s over the node's
    # width plus `reach`, so that the windows of t_r + o are its slices [o, o + width).
    first = np.zeros((len(points), len(root.masses) + reach))
    at = root.stop - points  # the outside of the root is a unit mass at 0
    hit = (at >= 0) & (at < first.shape[1])
    first[np.nonzero(hit)[0], at[hit]] = 1.0
    rows: list[tuple[int, np.ndarray]] = []
    if root.children is None:  # one uncertain item: it is the total
        return _ratio(first, root, root.masses, root.weighted, root.start, reach)[None]
    stack = [(root, first)]
    leaves = _number_leaves(root)
    while stack:
        node, outside = stack.pop()
        assert node.children is not None  # only inner nodes are stacked
        for child, sibling in (node.children, node.children[::-1]):
            if child.children is not None:
                stack.append((child, _outside_of(child, sibling, node, outside, reach)))
                continue
            # A leaf's numerator and mass straight from its parent's outside: one short
            # convolution with its sibling instead of a window for every total.
            plain = _convolve(child.masses, sibling.masses)
            weighted = _convolve(child.weighted, sibling.masses)
            start = child.start + sibling.start
            rows.append((child.index, _ratio(outside, node, plain, weighted, start, reach)))
        progress.report(len(rows) / leaves)
    return np.array([row for _, row in sorted(rows, key=lambda r: r[0])])


def _ratio(
    outside: np.ndarray,
    node: Node,
    plain: np.ndarray,
    weighted: np.ndarray,
    start: int,
    reach: int,
) -> np.ndarray:
    """Weighted over plain mass of the configurations that make each total, from the node's
    outside windows and two lattices over (a part of) the node's support."""
    placed = np.zeros((2, len(node.masses)))
    lo, hi = max(start, node.start), min(start + len(plain) - 1, node.stop)
    if hi >= lo:
        placed[0, lo - node.start : hi - node.start + 1] = plain[lo - start : hi - start + 1]
        placed[1, lo - node.start : hi - node.start + 1] = weighted[lo - start : hi - start + 1]
    windows = sliding_window_view(outside, len(node.masses), axis=1)[:, : reach + 1]
    sums = windows @ placed[:, ::-1].T  # (points, reach + 1, 2)
    mass, moment = sums[..., 0], sums[..., 1]
    return np.where(mass > NO_MASS, moment / np.maximum(mass, NO_MASS), 0.0)


def _outside_of(
    child: Node, sibling: Node, parent: Node, outside: np.ndarray, reach: int
) -> np.ndarray:
    """The child's outside windows: the parent's convolved with the sibling's lattice."""
    full = _convolve(outside, sibling.masses)
    offset = parent.stop - child.stop - sibling.start
    out = np.zeros((outside.shape[0], len(child.masses) + reach))
    lo, hi = max(offset, 0), min(offset + out.shape[1], full.shape[1])
    if hi > lo:
        out[:, lo - offset : hi - offset] = full[:, lo:hi]
    return out


def _number_leaves(root: Node) -> int:
    """Number the leaves in order (the tree keeps the items' order); return how many."""
    count = 0
    stack = [root]
    while stack:
        node = stack.pop()
        if node.children is None:
            node.index = count
            count += 1
        else:
            stack.extend(node.children[::-1])
    return count
