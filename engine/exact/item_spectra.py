"""The items' characteristic functions E[exp(i t X)] at the frequencies of one grid.

Uniform, triangular and normal parts, point masses, and risk events over them have closed
forms, evaluated for all items of a family in one array operation. Parts without one (the
beta of PERT, the lognormal) are put on the grid by hat masses (engine.exact.convolution's
`item_lattice`) and transformed; a hat spreads its item by the kernel whose transform is
sinc^2(t h / 2), so that factor is divided out. Point masses that fall between grid points
are split between the two neighbours the same way (keeping the mean).

Each item is measured from its own grid point near its mean (`anchors`), so that phases stay
small numbers; the product is then the total measured from the sum of those points.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np
from scipy import fft as sp_fft

from engine.exact.family_lattices import part_lattices
from engine.families.distributions import Continuous, Distribution, Normal, Triangular, Uniform

# Lattices up to this long are transformed directly at the frequencies in use (a matrix
# product); longer ones by an FFT over the whole window.
DIRECT_POINTS = 512
# Below this |s| the triangle's transform is summed from its series, of SERIES_TERMS terms.
RAMP_SERIES = 0.05
SERIES_TERMS = 8


@dataclass
class SpectraPlan:
    """The items' parts sorted by how their transform is computed; rows are items."""

    count: int
    uniform: list[tuple[int, float, float, float]] = field(default_factory=list)
    triangular: list[tuple[int, float, float, float, float]] = field(default_factory=list)
    normal: list[tuple[int, float, float, float]] = field(default_factory=list)
    gridded: list[tuple[int, float, Continuous]] = field(default_factory=list)
    atoms: list[tuple[int, float, float]] = field(default_factory=list)
    atom_log: float = 0.0  # log of the total's point-mass share (the product of the items')

    @property
    def has_point_mass(self) -> bool:
        return self.atom_log > math.log(1e-15)

    @classmethod
    def of(cls, dists: Sequence[Distribution]) -> SpectraPlan:
        plan = cls(len(dists))
        for row, d in enumerate(dists):
            atoms, continuous = d.parts()
            share = math.fsum(m for _, m in atoms)
            plan.atom_log += math.log(share) if share > 0 else -math.inf
            for value, mass in atoms:
                plan.atoms.append((row, mass, value))
            for weight, part in continuous:
                if isinstance(part, Uniform):
                    plan.uniform.append((row, weight, part.low, part.high))
                elif isinstance(part, Triangular):
                    plan.triangular.append((row, weight, part.low, part.mode, part.high))
                elif isinstance(part, Normal):
                    plan.normal.append((row, weight, part.mu, part.sigma))
                else:
                    plan.gridded.append((row, weight, part))
        return plan


@dataclass(frozen=True)
class PartialSpectrum:
    """The product of the items without gridded parts, and the other items' transforms so
    far (their point masses and closed-form parts), at some frequencies."""

    closed: np.ndarray  # a bound on the total's transform: any transform is at most 1
    open_rows: np.ndarray  # the items with a gridded part
    open_values: np.ndarray  # (len(open_rows), frequencies)

    def total(self, plan: SpectraPlan, gridded: np.ndarray) -> np.ndarray:
        """The total's transform at the first len(gridded[0]) of these frequencies, given
        the gridded parts' there (`gridded_spectra`)."""
        width = gridded.shape[1]
        values = self.open_values[:, :width].copy()
        where = np.searchsorted(self.open_rows, [r for r, _, _ in plan.gridded])
        weights = np.array([w for _, w, _ in plan.gridded])
        _add_rows(values, where, weights[:, None] * gridded)
        return self.closed[:width] * np.prod(values, axis=0)


def partial_spectrum(
    plan: SpectraPlan, t: np.ndarray, step: float, anchors: np.ndarray
) -> PartialSpectrum:
    """The items' closed-form transforms at frequencies t, measured from step * sum(anchors)
    (`anchors`: each item's grid index near its mean)."""
    at = anchors * step
    found: list[tuple[np.ndarray, np.ndarray]] = []  # (items, their parts' transforms)
    if plan.atoms:
        rows, mass, value = _columns(plan.atoms)
        found.append((rows, mass[:, None] * _lattice_points(value - at[rows], step, t)))
    if plan.uniform:
        rows, w, low, high = _columns(plan.uniform)
        found.append((rows, w[:, None] * _uniform(low - at[rows], high - at[rows], t)))
    if plan.triangular:
        rows, w, low, mode, high = _columns(plan.triangular)
        o = at[rows]
        found.append((rows, w[:, None] * _triangular(low - o, mode - o, high - o, t)))
    if plan.normal:
        rows, w, mu, sigma = _columns(plan.normal)
        phase = np.exp(1j * np.outer(mu - at[rows], t) - 0.5 * np.outer(sigma**2, t * t))
        found.append((rows, w[:, None] * phase))
    return _multiplied(plan, found, len(t))


def _multiplied(
    plan: SpectraPlan, found: list[tuple[np.ndarray, np.ndarray]], width: int
) -> PartialSpectrum:
    """Items of one closed-form part straight into the product; items of several parts (a
    risk event: its zero and its impact) or with a gridded part summed first, in a table
    only as tall as they are (a table of all 10,000 items was most of the cost)."""
    open_rows = np.unique([r for r, _, _ in plan.gridded]).astype(np.int64)
    counts = np.bincount(
        np.concatenate([rows for rows, _ in found] + [[]]).astype(np.int64), minlength=plan.count
    )
    summed_first = counts > 1
    summed_first[open_rows] = True
    kept = np.flatnonzero(summed_first)
    where = np.full(plan.count, -1)
    where[kept] = np.arange(len(kept))
    closed = np.ones(width, dtype=complex)
    summed = np.zeros((len(kept), width), dtype=complex)
    for rows, values in found:
        alone = ~summed_first[rows]
        closed *= np.prod(values[alone], axis=0)
        if not alone.all():
            _add_rows(summed, where[rows[~alone]], values[~alone])
    is_open = np.zeros(plan.count, dtype=bool)
    is_open[open_rows] = True
    closed *= np.prod(summed[~is_open[kept]], axis=0)
    return PartialSpectrum(closed, open_rows, summed[where[open_rows]])


def gridded_spectra(
    plan: SpectraPlan, step: float, anchors: np.ndarray, count: int, bins: int
) -> tuple[np.ndarray, float]:
    """The gridded parts' transforms at the first `bins` frequencies 2 pi j / (count step),
    from their hat masses on the grid (the hat's sinc^2 divided out), and the tail mass
    their grids folded in. A part's range is cut at `count` steps: beyond its low end plus
    the window, the total is beyond the window too."""
    out = np.empty((len(plan.gridded), bins), dtype=complex)
    folded = 0.0
    t = 2 * math.pi * np.arange(bins) / (count * step)
    spread = np.sinc(t * step / (2 * math.pi)) ** 2  # np.sinc(x) = sin(pi x) / (pi x)
    lattices = []
    # the span only cuts heavy tails; a power of two of steps lets an analysis of the same
    # items on the same step (another level, a setting changed) reuse the lattices
    span = step * 2 ** math.ceil(math.log2(count))
    parts = [part for _, _, part in plan.gridded]
    for (row, weight, _), (start, masses, tail) in zip(
        plan.gridded, part_lattices(parts, step, span), strict=True
    ):
        folded += weight * tail
        lattices.append((start - anchors[row], masses))
    lengths = np.array([len(m) for _, m in lattices])
    short = np.flatnonzero(lengths <= DIRECT_POINTS)
    if len(short):  # a few frequencies of short lattices: real matrix products
        angle = np.outer(np.arange(int(lengths[short].max())) * step, t)
        cos, sin = np.cos(angle), np.sin(angle)
        bucket = np.ceil(np.log2(np.maximum(lengths[short], 1))).astype(int)
        for b in np.unique(bucket):  # lattices of similar length, padded to the longest
            rows = short[bucket == b]
            width = int(lengths[rows].max())
            stacked = np.zeros((len(rows), width))
            for j, i in enumerate(rows):
                stacked[j, : lengths[i]] = lattices[i][1]
            starts = np.array([lattices[i][0] for i in rows], dtype=float)
            out[rows] = np.exp(1j * np.outer(starts * step, t)) * (
                stacked @ cos[:width] + 1j * (stacked @ sin[:width])
            )
    for i in np.flatnonzero(lengths > DIRECT_POINTS):  # long: one FFT over the window
        start, masses = lattices[i]
        where = (start + np.arange(len(masses))) % count
        wrapped = np.bincount(where, weights=masses, minlength=count)
        out[i] = np.conj(sp_fft.rfft(wrapped)[:bins])
    return out / spread, folded


@lru_cache(maxsize=64)
def _columns_of(rows: tuple[tuple, ...]) -> tuple[np.ndarray, ...]:
    return tuple(np.array(col) for col in zip(*rows, strict=True))


def _columns(rows: list[tuple]) -> tuple[np.ndarray, ...]:
    """The parts' parameters as arrays, kept across the blocks of one total."""
    return _columns_of(tuple(rows))


def _add_rows(into: np.ndarray, rows: np.ndarray, values: np.ndarray) -> None:
    order = np.argsort(rows, kind="stable")
    rows = rows[order]
    starts = np.flatnonzero(np.diff(rows, prepend=-1))
    if len(starts) == len(rows):
        into[rows] += values[order]
    else:  # several parts of one item (a risk event's zero and its impact's points)
        into[rows[starts]] += np.add.reduceat(values[order], starts, axis=0)


def _lattice_points(position: np.ndarray, step: float, t: np.ndarray) -> np.ndarray:
    """A point split between its two neighbouring grid points, keeping its mean."""
    cell = np.floor(position / step)
    frac = position / step - cell
    below = np.exp(1j * np.outer(cell * step, t))
    above = below * np.exp(1j * step * t)[None, :]
    return (1 - frac)[:, None] * below + frac[:, None] * above


def _uniform(low: np.ndarray, high: np.ndarray, t: np.ndarray) -> np.ndarray:
    half = np.outer((high - low) / 2, t)
    return np.exp(1j * np.outer((low + high) / 2, t)) * np.sinc(half / math.pi)


def _ramp(s: np.ndarray) -> np.ndarray:
    """E[exp(i s V)] for V with density 2v on [0, 1]: 2 (1 + (is - 1) e^{is}) / (is)^2, from
    its power series sum 2 (is)^n / (n! (n + 2)) where that cancels (|s| < RAMP_SERIES: the
    closed form then loses eps / s^2, 4e-14, and the series' first term left out is below
    s^8 / 8!, 1e-15)."""
    small = np.abs(s) < RAMP_SERIES
    out = np.empty(s.shape, dtype=complex)
    z = 1j * s[small]
    series = np.zeros(z.shape, dtype=complex)
    term = np.ones(z.shape, dtype=complex)
    for n in range(SERIES_TERMS):
        series += 2 * term / (n + 2)
        term *= z / (n + 1)
    out[small] = series
    z = 1j * s[~small]
    out[~small] = 2 * (1 + (z - 1) * np.exp(z)) / (z * z)
    return out


def _triangular(low, mode, high, t: np.ndarray) -> np.ndarray:
    """A triangle is a mixture of a rising ramp on [low, mode] (weight (mode - low) / range)
    and a falling one on [mode, high]."""
    width = high - low
    left = (mode - low) / width
    rising = np.exp(1j * np.outer(low, t)) * _ramp(np.outer(mode - low, t))
    falling = np.exp(1j * np.outer(high, t)) * _ramp(-np.outer(high - mode, t))
    return left[:, None] * rising + (1 - left)[:, None] * falling
