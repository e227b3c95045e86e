"""Undo the spread the grid itself adds to a sum of many items.

An item's hat masses are the item plus a rounding noise of mean zero and variance about
h^2/6 (exactly E[f(1 - f)] h^2, f the position within a cell). Added over n items the noise
widens the total by n h^2 / 6: at 10,000 items that moves the percentiles by more than
1e-3 sd. The noise of many items is close to normal, so the total's spectrum is multiplied
by exp(V t^2 / 2) with V the noise's exact variance less the h^2/12 that reading each mass
as spread over its cell puts back. This is done only for totals with no point mass (a point
mass has no rounding noise) and at frequencies where the total's spectrum stands above
floating-point noise; elsewhere the spectrum is zero already.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy import fft as sp_fft

from engine.exact.totals import coarsen
from engine.families.distributions import Distribution

# Lattices longer than this take the noise variance of a smooth item, w h^2 / 6; shorter
# ones (an item narrower than a few cells) have theirs computed from the masses.
SMOOTH_POINTS = 32
# Below this the spectrum is floating-point noise, and is not amplified.
SPECTRUM_FLOOR = 1e-14
# Amplification beyond which a frequency is dropped (the spectrum there is below the floor).
MAX_GAIN = 1e3


@dataclass(frozen=True)
class HatSpread:
    """The rounding noise's variance at the step and at twice it (money squared)."""

    step: float
    variance: float
    coarse_variance: float
    applies: bool

    @classmethod
    def of(cls, dists: Sequence[Distribution], lattices, step: float) -> HatSpread:
        weight, atom_log, fine, coarse = 0.0, 0.0, 0.0, 0.0
        for d, (start, masses) in zip(dists, lattices, strict=True):
            atoms, continuous = d.parts()
            w = math.fsum(c for c, _ in continuous)
            weight += w
            atom_mass = math.fsum(m for _, m in atoms)
            atom_log += math.log(atom_mass) if atom_mass > 0 else -math.inf
            if len(masses) > SMOOTH_POINTS:
                fine += w * step**2 / 6
                coarse += w * (2 * step) ** 2 / 6
            else:
                fine += _added_variance(d, start, masses, step)
                coarse += _added_variance(d, *coarsen(start, masses), 2 * step)
        applies = weight >= 2 and atom_log < math.log(1e-15)
        return cls(step, fine, coarse, applies)


def _added_variance(d: Distribution, start: int, masses: np.ndarray, step: float) -> float:
    values = (start + np.arange(len(masses))) * step - d.mean
    return max(float(masses @ (values * values)) - d.variance, 0.0)


def sharpened(lattice: tuple[int, np.ndarray], spread: HatSpread, factor: int):
    """The convolved total with the rounding noise of its items' hats taken out (`factor`:
    1 for the grid at the step, 2 for the check at twice the step)."""
    step = spread.step * factor
    excess = (spread.variance if factor == 1 else spread.coarse_variance) - step**2 / 12
    start, masses = lattice
    if not spread.applies or excess <= 0:
        return lattice
    n = len(masses)
    nfft = sp_fft.next_fast_len(n, real=True)
    spectrum = sp_fft.rfft(masses, nfft)
    t = 2 * math.pi * np.arange(len(spectrum)) / (nfft * step)
    gain = np.exp(np.minimum(0.5 * excess * t * t, 700.0))
    loud = gain > MAX_GAIN
    if np.any(np.abs(spectrum[loud]) > SPECTRUM_FLOOR):
        return lattice  # a spectrum too rich to sharpen safely; the error check reports it
    spectrum[loud] = 0.0
    spectrum *= gain
    out = sp_fft.irfft(spectrum, nfft)[:n]
    np.maximum(out, 0.0, out=out)
    return start, out / out.sum()
