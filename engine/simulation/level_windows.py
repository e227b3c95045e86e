"""Kernel sums near each level's total, gathered during the correlated run itself.

The allocation (engine.allocation.simulated_shares) fits each item's value on the total
over the trials near P_q, with tent weights falling from 1 at P_q to 0 at P_(q-h) and
P_(q+h). Those totals are the pooled percentiles, known only once every replicate is drawn;
drawing the whole run again to find the trials near them costs as much as the run. Here
each lane instead takes its first replicates (PILOT_TRIALS trials) as a pilot, reads from
them where each window will fall, with a margin of MARGIN binomial standard errors of a
percentile on each side, and lays a grid of NODES points over that band. From then on each
trial's item values are spread over the two grid points around its total with linear
interpolation weights (the grid's hat functions). Any function of the total that is linear
between grid points is then summed exactly from the grid sums, so the tent is applied as
its interpolant on the grid: the same tent with its three corners cut within one grid
step, a step being at most a third of the tent's half-width (else the sums are refused and
the allocation draws the run again). The fit's own sums (of the weights, times T - P_q,
times its square) come from the totals of every trial, through the same weights, so the
fitted shares still add up to exactly P_q. The pilots are drawn again at the end into the
same grid sums (about a twentieth of the run at 10,000 items). Replicate i of a lane goes to
jackknife group i mod BATCHES, which bounds memory at 2 lanes x BATCHES x levels x 2 NODES x
items doubles (270 MB at 10,000 items and three levels); with more levels there are fewer
groups, so that the sums stay within MEMORY, and with many levels at many items none are
gathered (`batches` is 0) and the allocation draws the run again.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy import sparse

from engine.exact.totals import SampleTotal
from engine.threads import PARTS, halves

# Half-width of the window around P_q, in probability: 2% of the trials on each side, less
# near the ends (common practice for kernel regression, no source; the bias is measured in
# tests/test_allocation_simulated.py).
WINDOW = 0.02
# How far past the nearest trial an empty window reaches, in multiples of its distance:
# the tent then gives that trial a third of the weight at the level.
REACH_PAST = 1.5
PILOT_TRIALS = 2_500  # per lane
MARGIN = 5.0  # binomial standard errors of the pilot's percentiles, each side
NODES = 28  # grid points per level and lane
BATCHES = 10  # jackknife groups per lane: equal ones for the usual 20, 100 or 200 replicates
FEWEST_BATCHES = 4  # per lane; fewer and the jackknife's error is itself too uncertain
MEMORY = 300 << 20  # bytes of grid sums, at most: fewer groups for many levels, or none
FINEST = 3.0  # a grid step is at most the tent's half-width over this


@dataclass(frozen=True)
class KernelSums:
    """The local-linear fit's sums per jackknife group (first axis) and level (last axis),
    centred on `totals`: s0 = sum w, s1 = sum w d, s2 = sum w d^2, a = sum w x,
    b = sum w d x over trials, d = T - P_q; `counts`: trials with weight."""

    totals: np.ndarray  # (levels,)
    s0: np.ndarray  # (groups, levels)
    s1: np.ndarray
    s2: np.ndarray
    a: np.ndarray  # (groups, items, levels)
    b: np.ndarray
    counts: np.ndarray  # (groups, levels)

    @property
    def sums(self) -> list[np.ndarray]:
        return [self.s0, self.s1, self.s2, self.a, self.b, self.counts]


def window_half(q: np.ndarray) -> np.ndarray:
    """The window's half-width in probability at levels q (fractions)."""
    return np.minimum(WINDOW, np.minimum(q, 1 - q) / 2)


def window_edges(total, levels: Sequence[float]) -> tuple[np.ndarray, np.ndarray]:
    """P_(q - w) and P_(q + w) of the total for each level q (percent), w at most WINDOW.
    A level in a gap between point masses (read between two trials' values) has no trial in
    that window: its window then reaches past the nearest trial on each side, and the fit
    through the two is the linear interpolation of their conditional means, still adding
    up to the level."""
    q = np.asarray(levels, dtype=float) / 100
    half = window_half(q)
    low, high = total.ppf(q - half), total.ppf(q + half)
    if isinstance(total, SampleTotal):
        values = total.sorted_trials
        t = total.ppf(q)
        at = np.searchsorted(values, t)
        # no trial strictly inside: one on an edge has no weight in the tent
        empty = np.searchsorted(values, high) == np.searchsorted(values, low, side="right")
        empty &= (at > 0) & (at < len(values))
        below = values[np.clip(at - 1, 0, len(values) - 1)]
        above = values[np.clip(at, 0, len(values) - 1)]
        low = np.where(empty, np.minimum(low, t - REACH_PAST * (t - below)), low)
        high = np.where(empty, np.maximum(high, t + REACH_PAST * (above - t)), high)
    return low, high


def tent_widths(
    totals: np.ndarray, edges: tuple[Sequence[float], Sequence[float]]
) -> tuple[np.ndarray, np.ndarray]:
    """The tent's half-widths below and above each total (never zero: a level on a point
    mass keeps a window of its own trials)."""
    t = np.asarray(totals, dtype=float)
    floor = 1e-12 * (1 + np.abs(t))
    below = np.maximum(t - np.asarray(edges[0], dtype=float), floor)
    above = np.maximum(np.asarray(edges[1], dtype=float) - t, floor)
    return below, above


def tent(x: np.ndarray, t: float, below: float, above: float) -> np.ndarray:
    d = x - t
    return np.maximum(np.where(d < 0, 1 + d / below, 1 - d / above), 0.0)


def hats(total: np.ndarray, low: float, step: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The trials inside the grid low + step * (0..NODES-1): their indices, the grid point
    below each (k) and the fraction of a step above it (f); the weight of point k is 1 - f,
    of point k + 1, f."""
    x = (total - low) / step
    used = np.flatnonzero((x >= 0) & (x < NODES - 1))
    below = np.floor(x[used])
    return used, below.astype(np.intp), x[used] - below


class LevelWindows:
    """The `observe` hook (engine.simulation.replicates) that gathers the allocation's kernel
    sums in the run; `pilots()` then names the replicates to draw again for `again`, and
    `settle` gives the sums once the pooled levels are known (None if the grid misses)."""

    def __init__(self, levels: Sequence[float], items: int):
        self.q = np.asarray([float(lv) for lv in levels]) / 100
        each = PARTS * len(self.q) * 2 * NODES * items * 8  # bytes per group of each lane
        fitting = min(BATCHES, MEMORY // each)
        self.batches = fitting if fitting >= FEWEST_BATCHES else 0
        self.seen = [0] * PARTS
        self.redrawn = [0] * PARTS
        self.pilot_totals: list[list[np.ndarray]] = [[] for _ in range(PARTS)]
        self.grids: list[tuple[np.ndarray, np.ndarray] | None] = [None] * PARTS  # lows, steps
        self.sums: list[dict[int, np.ndarray]] = [{} for _ in range(PARTS)]

    def pilot_count(self, per: int) -> int:
        return math.ceil(PILOT_TRIALS / per)

    def __call__(self, lane: int, values: np.ndarray, total: np.ndarray, positions) -> None:
        i = self.seen[lane]
        self.seen[lane] += 1
        pilots = self.pilot_count(len(total))
        if i < pilots:
            self.pilot_totals[lane].append(total.copy())
            if i == pilots - 1:
                self.grids[lane] = self._grid(lane)
            return
        self._spread(lane, i, values, total)

    def again(self, lane: int, values: np.ndarray, total: np.ndarray, positions) -> None:
        """The observer for the pilots drawn again (`pilots()`, lane by lane, in order)."""
        i = self.redrawn[lane]
        self.redrawn[lane] += 1
        self._spread(lane, i, values, total)

    def pilots(self, replicates: int) -> list[list[int]]:
        """Each lane's pilot replicates, which the grid could not take when first drawn."""
        for lane in range(PARTS):  # a lane shorter than its pilot: the grid from all of it
            if self.grids[lane] is None and self.pilot_totals[lane]:
                self.grids[lane] = self._grid(lane)
        return [
            list(part)[: len(self.pilot_totals[lane])]
            for lane, part in enumerate(halves(replicates))
        ]

    def _grid(self, lane: int) -> tuple[np.ndarray, np.ndarray]:
        pilot = np.concatenate(self.pilot_totals[lane])
        q, half = self.q, window_half(self.q)
        margin = MARGIN * np.sqrt(q * (1 - q) / len(pilot))
        low = np.quantile(pilot, np.clip(q - half - margin, 0, 1))
        high = np.quantile(pilot, np.clip(q + half + margin, 0, 1))
        return low, (high - low) / (NODES - 1)

    def _spread(self, lane: int, i: int, values: np.ndarray, total: np.ndarray) -> None:
        """Adds the replicate's items at each grid point: the hat weight (1 - f or f) and
        the hat weight times T - c (f (1 - f) step, of either sign), in rows NODES on."""
        lows, steps = self.grids[lane]
        batch = self.sums[lane].setdefault(
            i % self.batches, np.zeros((len(self.q), 2 * NODES, len(values)))
        )
        for j, (low, step) in enumerate(zip(lows, steps, strict=True)):
            if not step > 0:
                continue
            used, k, f = hats(total, low, step)
            if not len(used):
                continue
            g = f * (1 - f) * step
            weights = np.concatenate([1 - f, f, g, -g])
            rows = np.concatenate([k, k + 1, NODES + k, NODES + k + 1])
            columns = np.tile(np.arange(len(used)), 4)
            spread = sparse.csr_matrix((weights, (rows, columns)), shape=(2 * NODES, len(used)))
            batch[j] += spread @ np.ascontiguousarray(values.T[used])

    def settle(
        self,
        total: SampleTotal,
        totals: np.ndarray,
        edges: tuple[Sequence[float], Sequence[float]],
    ) -> KernelSums | None:
        """The sums for the tents around `totals` (the pooled levels) from P_(q-h) to
        P_(q+h) (`edges`): None when a lane's grid does not hold a tent, or is too coarse
        for it."""
        t = np.asarray(totals, dtype=float)
        below, above = tent_widths(t, edges)
        by_replicate = total.by_replicate
        groups: list[tuple[np.ndarray, ...]] = []
        for lane, part in enumerate(halves(len(by_replicate))):
            if self.grids[lane] is None or self.redrawn[lane] != len(self.pilot_totals[lane]):
                return None
            lows, steps = self.grids[lane]
            tops = lows + (NODES - 1) * steps
            fits = (
                (steps > 0)
                & (lows <= t - below)
                & (t + above <= tops)
                & (FINEST * steps <= np.minimum(below, above))
            )
            if not fits.all():
                return None
            nodes = lows[:, None] + steps[:, None] * np.arange(NODES)
            weight = [tent(nodes[j], t[j], below[j], above[j]) for j in range(len(t))]
            for batch, sums in sorted(self.sums[lane].items()):
                rows = by_replicate[list(part)[batch :: self.batches]].ravel()
                groups.append(self._group(rows, sums, nodes, weight, t, lows, steps))
        s0, s1, s2, a, b, counts = (np.array([g[k] for g in groups]) for k in range(6))
        return KernelSums(t, s0, s1, s2, a, b, counts)

    @staticmethod
    def _group(rows, sums, nodes, weight, t, lows, steps) -> tuple[np.ndarray, ...]:
        """One jackknife group's sums at every level, from its trials' totals (`rows`) and
        its grid sums."""
        levels = len(t)
        s = np.zeros((4, levels))
        a = np.zeros((sums.shape[2], levels))
        b = np.zeros((sums.shape[2], levels))
        for j in range(levels):
            used, k, f = hats(rows, lows[j], steps[j])
            w = (1 - f) * weight[j][k] + f * weight[j][k + 1]
            d = rows[used] - t[j]
            s[:, j] = w.sum(), (w * d).sum(), (w * d * d).sum(), np.count_nonzero(w > 0)
            at, spread = sums[j, :NODES], sums[j, NODES:]
            a[:, j] = weight[j] @ at
            b[:, j] = weight[j] @ spread + (weight[j] * (nodes[j] - t[j])) @ at
        return s[0], s[1], s[2], a, b, s[3]
