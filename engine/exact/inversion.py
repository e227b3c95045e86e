"""The exact total by inverting the product of the items' characteristic functions.

The total's transform is the product of the items' (engine.exact.item_spectra), sampled at
the frequencies of a grid of n points: one inverse real FFT then gives the probability of
each cell [kh - h/2, kh + h/2] directly, with no rounding noise added per item, so the error
does not grow with the number of items. The product is built from the lowest frequencies up
and stops where it has fallen below floating point (for a sum of many items that is after a
few dozen frequencies, whatever n is). It is used for smooth totals only: one with a
point mass (a risk register) or a kink (one uniform) has a transform that does not die out,
and goes to the hat-grid convolution (engine.exact.convolution) instead.

The window holds every item's range, or, when narrower, the mean plus or minus Hoeffding's
bound for 1e-16 of the mass outside (items clipped at their 1e-10 quantiles), so the mass
folded back by the FFT's periodicity is below anything a percentile can see.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
from scipy import fft as sp_fft

from engine.exact.grid_plan import central_spreads, item_ranges
from engine.exact.item_spectra import (
    PartialSpectrum,
    SpectraPlan,
    gridded_lattices,
    gridded_spectra,
    partial_spectrum,
)
from engine.exact.lattice import Lattice, trim
from engine.families.distributions import Distribution
from engine.progress import Progress
from engine.threads import run_pair

# Mass the window may leave outside on each side (it folds back onto the other end).
TAIL_OUTSIDE = 1e-16
# Hoeffding: P(T - E T >= u) <= exp(-2 u^2 / sum w_i^2); u = 4.3 sqrt(sum w_i^2) -> 1e-16.
HOEFFDING_REACH = 4.3
# A transform below this is zero in floating point; the product stops there.
NEGLIGIBLE_SPECTRUM = 1e-17
# The inversion is used when the total's transform at half the grid's highest frequency and
# at the highest is below this: a total with a jump or a kink in its density (one uniform,
# a few items) has a transform that has not died out there, and cutting it would ring.
SMOOTH_ENOUGH = 1e-12
MIN_BLOCK = 16
# Where the smoothness is probed, in units of the highest frequency: spaced irregularly, so
# that a power-of-two step cannot put every probe on a zero of a uniform's transform.
PROBES = np.array([0.5, 0.5772, 0.6180, 0.7071, 0.7854, 0.8660, 0.9239, 1.0])


class SpectralSum:
    """The items ready to be inverted on the grid k * step."""

    def __init__(self, dists: Sequence[Distribution], step: float) -> None:
        self.dists = dists
        self.step = step
        self.plan = SpectraPlan.of(dists)
        self.anchors = np.array([round(d.mean / step) for d in dists], dtype=np.int64)
        self.folded = 0.0

    def is_smooth(self) -> bool:
        """Whether the total's transform has died out by the grid's highest frequency (a
        bound: items with gridded parts count as 1 there)."""
        if self.plan.has_point_mass or len(self.plan.gridded) == self.plan.count:
            return False
        t = PROBES * math.pi / self.step
        bound = partial_spectrum(self.plan, t, self.step, self.anchors).closed
        return bool(np.max(np.abs(bound)) < SMOOTH_ENOUGH)

    def lattices(self, progress: Progress) -> tuple[Lattice, Lattice]:
        """The total's cell masses on the grid, and on the grid of twice the step (the error
        check: the same transform read through cells twice as wide, one more small FFT)."""
        step, plan = self.step, self.plan
        first, count = window(self.dists, step)
        t_all = 2 * math.pi * np.arange(count // 2 + 1) / (count * step)
        # the gridded parts' hat masses (most of a first call's work at thousands of PERT or
        # lognormal items) on the other core while this one finds the frequencies in use
        gridded = None
        if plan.gridded:
            (blocks, bins), masses = run_pair(
                lambda: self._blocks(t_all, count, progress),
                lambda: gridded_lattices(plan, step, count),
            )
            gridded, self.folded = gridded_spectra(plan, step, self.anchors, count, bins, masses)
        else:
            blocks, bins = self._blocks(t_all, count, progress)
        t = t_all[:bins]
        progress.report(0.7)
        parts, done = [], 0
        for block in blocks:
            width = min(len(block.closed), bins - done)
            if gridded is None:
                parts.append(block.closed[:width])
            else:
                parts.append(block.total(plan, gridded[:, done : done + width]))
            done += width
        total = np.concatenate(parts) if parts else np.zeros(0, dtype=complex)
        # measured from an even grid point, so that the coarse grid holds it too
        base = int(self.anchors.sum())
        if base % 2:
            base -= 1
            total = total * np.exp(1j * step * t)
        progress.report(1.0)
        fine = _cells(total, t, step, count, first, base)
        coarse = _cells(total, t, 2 * step, count // 2, first // 2, base // 2)
        return fine, coarse

    def _blocks(
        self, t_all: np.ndarray, count: int, progress: Progress
    ) -> tuple[list[PartialSpectrum], int]:
        """The closed-form items' product in blocks from the lowest frequency up, until it
        falls below floating point; and how many frequencies matter (the bound from the
        items without gridded parts)."""
        bins, blocks = 0, []
        # first guess: a normal with the items' central spread has died out by t = 8.9 / S
        spread = math.sqrt(float(np.sum(central_spreads(self.dists) ** 2)))
        size = max(MIN_BLOCK, math.ceil(1.25 * 8.9 / spread * count * self.step / (2 * math.pi)))
        while bins < len(t_all):
            t = t_all[bins : bins + size]
            blocks.append(partial_spectrum(self.plan, t, self.step, self.anchors))
            loud = np.flatnonzero(np.abs(blocks[-1].closed) >= NEGLIGIBLE_SPECTRUM)
            progress.report(0.3 * (bins + len(t)) / len(t_all))
            if len(loud) < len(t):  # it has fallen below floating point within this block
                bins += int(loud[-1]) + 1 if len(loud) else 0
                break
            bins += len(t)
            size = max(MIN_BLOCK, size // 2)
        return blocks, bins


def _cells(
    total: np.ndarray, t: np.ndarray, step: float, count: int, first: int, base: int
) -> Lattice:
    """Cell masses on `count` points of `step` from index `first`, from the total's
    transform at t measured from the point `base` (times the cell's transform: a smooth
    total has no point mass to keep apart)."""
    bins = min(len(t), count // 2 + 1)
    box = np.sinc(t[:bins] * step / (2 * math.pi))  # np.sinc(x) = sin(pi x) / (pi x)
    cells = np.zeros(count // 2 + 1, dtype=complex)
    cells[:bins] = total[:bins] * box
    masses = sp_fft.irfft(np.conj(cells), count)
    masses = np.roll(masses, -((first - base) % count))  # index 0 was the point `base`
    np.maximum(masses, 0.0, out=masses)
    masses /= masses.sum()
    return trim(first, masses)


def window(dists: Sequence[Distribution], step: float) -> tuple[int, int]:
    """(first grid index, number of points) of a window holding the total but 1e-16 of it
    on each side: the items' own ranges added up, or the mean plus or minus the smaller of
    Hoeffding's and Bernstein's bounds (items clipped at their ranges), when narrower."""
    lows, highs = item_ranges(dists)
    means = [d.mean for d in dists]
    variances = [d.variance for d in dists]
    low, high, mean = math.fsum(lows), math.fsum(highs), math.fsum(means)
    means_ = np.array(means)
    widths = highs - lows
    variance = float(np.minimum(np.array(variances), widths**2 / 4).sum())
    hoeffding = HOEFFDING_REACH * math.sqrt(float(widths @ widths))
    low = max(low, mean - min(hoeffding, _bernstein(variance, float(np.max(means_ - lows)))))
    high = min(high, mean + min(hoeffding, _bernstein(variance, float(np.max(highs - means_)))))
    first = 2 * (math.floor(low / step) // 2 - 1)  # even, and so is the count: the check
    count = 2 * sp_fft.next_fast_len((math.ceil(high / step) + 4 - first) // 2 + 1, real=True)
    return first, count


def _bernstein(variance: float, largest: float) -> float:
    """u with exp(-u^2 / (2 (V + M u / 3))) = TAIL_OUTSIDE: Bernstein's inequality for a sum
    of independent items each at most M from its mean (Boucheron, Lugosi & Massart,
    Concentration Inequalities, 2013, Theorem 2.10)."""
    c = 2 * math.log(1 / TAIL_OUTSIDE)
    return (c * largest / 3 + math.sqrt((c * largest / 3) ** 2 + 4 * c * variance)) / 2
