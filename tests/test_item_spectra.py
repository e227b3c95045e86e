"""The items' characteristic functions as the inversion multiplies them, against each item's
transform computed on its own: scipy quad of the density against cos and sin, the normal's
closed form, and a risk event as the mixture of its zero and its impact."""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest
from scipy import integrate

from engine.exact.item_spectra import SPLIT_FROM, SpectraPlan, partial_spectrum
from engine.families.distributions import (
    Distribution,
    Fixed,
    Normal,
    Occurrence,
    Triangular,
    Uniform,
    pert,
)

STEP = 0.5  # the risk events' impacts below sit on grid points, so no point is split

ITEMS: list[Distribution] = [
    Triangular(0.0, 2.0, 3.0),
    Triangular(10.0, 10.0, 14.0),  # mode at the low end
    Triangular(-3.0, 1.0, 1.0),  # mode at the high end
    Triangular(100.0, 100.02, 100.05),  # narrow: its ramps stay in the series' range
    Uniform(2.0, 7.5),
    Uniform(-1.0, 0.2),
    Normal(4.0, 1.5),
    Normal(-2.0, 0.3),
    Occurrence(Triangular(1.0, 3.0, 8.0), 0.3),
    Occurrence(Uniform(2.0, 4.0), 0.6),
    Occurrence(Normal(5.0, 2.0), 0.25),
    Occurrence(Fixed(6.0), 0.4),
]


def reference_transform(d: Distribution, t: float) -> complex:
    """E[exp(i t X)] of one item, by quadrature of its density (Normal: exp(i mu t -
    sigma^2 t^2 / 2), Feller, An Introduction to Probability Theory vol. 2, XV.2)."""
    if isinstance(d, Occurrence):
        return (1 - d.p) + d.p * reference_transform(d.impact, t)
    if isinstance(d, Fixed):
        return complex(math.cos(t * d.value), math.sin(t * d.value))
    if isinstance(d, Normal):
        return complex(np.exp(1j * d.mu * t - 0.5 * d.sigma**2 * t * t))
    lo, hi = d.low, d.high
    # a triangle in two pieces: its density has a kink at the mode
    edges = sorted({lo, d.mode, hi}) if isinstance(d, Triangular) else [lo, hi]
    re = im = 0.0
    for a, b in itertools.pairwise(edges):
        re += integrate.quad(lambda x: float(d.pdf(x)) * math.cos(t * x), a, b, epsabs=1e-14)[0]
        im += integrate.quad(lambda x: float(d.pdf(x)) * math.sin(t * x), a, b, epsabs=1e-14)[0]
    return complex(re, im)


@pytest.mark.parametrize(
    "t",
    [
        np.linspace(0.0, 3.0, 2 * SPLIT_FROM),  # evenly spaced: the split exponentials
        np.array([0.013, 0.4, 0.77, 1.3, 2.9, 6.1]),  # a few probes: exponentials direct
    ],
)
def test_the_product_is_the_items_transforms_multiplied(t: np.ndarray) -> None:
    anchors = np.array([round(d.mean / STEP) for d in ITEMS], dtype=np.int64)
    plan = SpectraPlan.of(ITEMS)
    got = partial_spectrum(plan, t, STEP, anchors).closed
    # measured from the sum of the anchors
    expected = np.exp(-1j * t * STEP * anchors.sum())
    for d in ITEMS:
        expected = expected * np.array([reference_transform(d, v) for v in t])
    np.testing.assert_allclose(got, expected, rtol=0, atol=1e-12)


def test_items_with_a_gridded_part_are_kept_apart_with_their_other_parts() -> None:
    # a PERT risk event: its zero stays in the open row, the beta comes from its grid later
    items = [Triangular(0.0, 2.0, 3.0), Occurrence(pert(1.0, 2.0, 6.0), 0.3), Uniform(0.0, 1.0)]
    t = np.linspace(0.0, 2.0, 40)
    anchors = np.array([round(d.mean / STEP) for d in items], dtype=np.int64)
    spectrum = partial_spectrum(SpectraPlan.of(items), t, STEP, anchors)
    np.testing.assert_allclose(
        spectrum.open_values[0], 0.7 * np.exp(-1j * t * STEP * anchors[1]), rtol=0, atol=1e-14
    )
    closed = np.exp(-1j * t * STEP * (anchors[0] + anchors[2]))
    for d in (items[0], items[2]):
        closed = closed * np.array([reference_transform(d, v) for v in t])
    np.testing.assert_allclose(spectrum.closed, closed, rtol=0, atol=1e-12)
