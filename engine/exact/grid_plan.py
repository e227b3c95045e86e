"""Where the total's probability is, and so how fine its grid must be.

The grid step used to follow the total's standard deviation. A far tail (a lognormal with
P90/P10 = 10^4) makes the sd enormous while almost all the probability sits near the median:
the step then swallowed the median whole. The step now follows each item's central spread
(its sd, or its P10-P90 range read as a normal's when that is smaller), and an item whose
range to ITEM_TAIL would need more grid points than WIDE_POINTS at that step is kept out of
the grid altogether (engine.exact.wide_item evaluates its own cdf against the rest's grid).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from engine.exact.item_cache import kept
from engine.exact.stacked_parts import stacked
from engine.families.distributions import Beta, Continuous, Distribution, Triangular, Uniform

# P90 - P10 of a normal, in standard deviations: 2 * Phi^-1(0.9).
NORMAL_P10_P90 = 2.5631031310892007
# Tail probability folded onto an unbounded item's grid ends, per side.
ITEM_TAIL = 1e-10
# An item needing more grid points than this is evaluated by its own cdf (see the docstring).
WIDE_POINTS = 1 << 22


# Central spreads already computed (engine.exact.item_cache).
_spreads: dict[Distribution, float] = {}


def central_spreads(dists: Sequence[Distribution]) -> np.ndarray:
    """Each item's spread where its probability is: the sd of its parts, each continuous
    part read with its median and min(sd, (P90 - P10) / 2.563) so that a far tail cannot
    inflate it. The quantiles of all parts of a family come from one call."""
    return np.array(kept(_spreads, dists, _central_spreads))


def _central_spreads(new: list[Distribution]) -> list[float]:
    slots: list[tuple[int, float, float, float]] = []  # (item, weight, centre, variance)
    families: dict[type, list[tuple[int, Continuous]]] = {}
    for row, d in enumerate(new):
        atoms, continuous = d.parts()
        slots += [(row, mass, value, 0.0) for value, mass in atoms]
        for weight, part in continuous:
            families.setdefault(type(part), []).append((len(slots), part))
            slots.append((row, weight, 0.0, _variance_or_inf(part)))
    r, w, c, v = (np.array(column) for column in zip(*slots, strict=True))
    r = r.astype(np.int64)
    for members in families.values():
        at = [slot for slot, _ in members]
        p10, p50, p90 = stacked([p for _, p in members]).ppf(np.array([0.1, 0.5, 0.9])).T
        c[at] = p50
        v[at] = np.minimum(v[at], ((p90 - p10) / NORMAL_P10_P90) ** 2)
    total = np.bincount(r, w)
    mid = np.bincount(r, w * c) / total
    return np.sqrt(np.maximum(np.bincount(r, w * (v + (c - mid[r]) ** 2)) / total, 0.0)).tolist()


def _variance_or_inf(part: Continuous) -> float:
    try:
        return float(part.variance)
    except OverflowError:
        return math.inf


# Parts' grid ranges already computed.
_ranges: dict[Continuous, tuple[float, float, float]] = {}


def part_ranges(parts: Sequence[Continuous]) -> list[tuple[float, float, float]]:
    """(low, high, folded tail mass) of each continuous part's grid: its bounds when
    bounded, else its quantiles at ITEM_TAIL and 1 - ITEM_TAIL, those of all unbounded
    parts of a family from one call."""
    return kept(_ranges, parts, _part_ranges)


def _part_ranges(new: list[Continuous]) -> list[tuple[float, float, float]]:
    out: dict[Continuous, tuple[float, float, float]] = {}
    unbounded: dict[type, list[Continuous]] = {}
    for part in new:
        if isinstance(part, Uniform | Triangular | Beta):
            lo, hi = part.bounds()
            out[part] = (lo, hi, 0.0)
        else:
            unbounded.setdefault(type(part), []).append(part)
    for members in unbounded.values():
        ends = stacked(members).ppf(np.array([ITEM_TAIL, 1 - ITEM_TAIL]))
        for part, (lo, hi) in zip(members, ends.tolist(), strict=True):
            out[part] = (lo, hi, 2 * ITEM_TAIL)
    return [out[p] for p in new]


def part_range(part: Continuous) -> tuple[float, float, float]:
    """`part_ranges` of one part."""
    return part_ranges([part])[0]


# Items' grid ranges already computed.
_item_ranges: dict[Distribution, tuple[float, float]] = {}


def item_ranges(dists: Sequence[Distribution]) -> tuple[np.ndarray, np.ndarray]:
    """The lowest and highest value each item's grid holds (its point masses included)."""
    lows, highs = np.array(kept(_item_ranges, dists, _item_ranges_of)).T
    return lows, highs


def _item_ranges_of(new: list[Distribution]) -> list[tuple[float, float]]:
    ranges = iter(part_ranges([part for d in new for _, part in d.parts()[1]]))
    out = []
    for d in new:
        atoms, continuous = d.parts()
        ends = [v for v, _ in atoms]
        for _ in continuous:
            ends += next(ranges)[:2]
        out.append((min(ends), max(ends)))
    return out


class TooWideForOneGrid(ValueError):
    """Two items each too wide for a grid: only one can be evaluated by its own cdf."""

    def __init__(self, first: int, second: int) -> None:
        self.first, self.second = first, second  # indices into the items given
        super().__init__(f"items {first} and {second} are both too wide for one grid")


@dataclass(frozen=True)
class GridPlan:
    """The target step, and the index of the one item kept off the grid (None: none)."""

    step: float
    wide: int | None


def plan_grid(dists: Sequence[Distribution], resolution: int) -> GridPlan:
    """The step from the items' central spreads; the widest unbounded item taken off the
    grid when its range would take more than WIDE_POINTS steps."""
    spreads = central_spreads(dists)
    scale = math.sqrt(float(spreads @ spreads))
    if not scale > 0:  # rare events only: every central spread is a point; use the sd
        scale = math.sqrt(math.fsum(d.variance for d in dists))
    step = scale / resolution
    widest, most = None, 0.0
    owners = [i for i, d in enumerate(dists) for _ in d.parts()[1]]
    parts = [part for d in dists for _, part in d.parts()[1]]
    for i, (lo, hi, folded) in zip(owners, part_ranges(parts), strict=True):
        if folded and (hi - lo) / step > most:
            widest, most = i, (hi - lo) / step
    return GridPlan(step, widest if most > WIDE_POINTS else None)
