"""The batched per-family routes of the exact engine give what the per-item routes give."""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from scipy import integrate, stats

from engine.exact import family_lattices
from engine.exact.grid_plan import central_spreads
from engine.exact.item_abs_moments import abs_moments3
from engine.exact.item_cache import kept
from engine.exact.lattice import item_lattice
from engine.families.distributions import (
    Beta,
    Fixed,
    Lognormal,
    Normal,
    Occurrence,
    Triangular,
    Uniform,
    pert,
)
from engine.shortcut.normal import sum_of_item_percentiles

SHAPES = [
    pert(0.0, 1.0, 10.0),
    pert(5.0, 5.1, 6.0),  # mode near the low end
    pert(100.0, 900.0, 1000.0),
    Beta(0.0, 1.0, 0.5, 0.7),  # U-shaped: infinite density at both ends
    Lognormal(3.0, 0.5),
    Lognormal(0.0, 1.5),  # long tail, cut by the window at the finest step
    Lognormal(8.0, 0.05),  # narrow, far from zero
    Triangular(0.0, 2.0, 3.0),  # another family: the per-item route inside the batch
]


@pytest.mark.parametrize("step", [0.01, 0.37, 5.0])
def test_family_lattices_equal_the_per_item_lattices(step: float) -> None:
    span = step * 2**20
    family_lattices._cache.clear()
    batched = family_lattices.part_lattices(SHAPES, step, span)
    for part, (start, masses, tail) in zip(SHAPES, batched, strict=True):
        start_1, masses_1, tail_1 = item_lattice(part, step, span)
        assert (start, len(masses), tail) == (start_1, len(masses_1), tail_1), part
        np.testing.assert_allclose(masses, masses_1, rtol=0, atol=1e-12)
    again = family_lattices.part_lattices(SHAPES[::-1], step, span)  # from the cache
    for (s, m, _), (s_1, m_1, _) in zip(again, batched[::-1], strict=True):
        assert s == s_1 and m is m_1


def test_central_spreads_of_a_mixed_list_from_scipy() -> None:
    # min(sd, (P90 - P10) / (2 z_0.9)) of each family from scipy.stats (a continuous item), and
    # the mixture of that part with a point mass at zero for a risk event: its sd from
    # E[X^2] - E[X]^2 with the part read as its median and that spread
    def read(frozen) -> tuple[float, float]:
        p10, p50, p90 = frozen.ppf([0.1, 0.5, 0.9])
        return p50, min(frozen.std(), (p90 - p10) / (2 * stats.norm.ppf(0.9)))

    cases = [
        (Triangular(0.0, 2.0, 3.0), stats.triang(2 / 3, loc=0, scale=3)),
        (pert(5.0, 5.1, 6.0), stats.beta(*_shape(pert(5.0, 5.1, 6.0)), loc=5, scale=1)),
        (Uniform(1.0, 4.0), stats.uniform(1, 3)),
        (Normal(10.0, 2.0), stats.norm(10, 2)),
        (Lognormal(0.0, 1.5), stats.lognorm(1.5)),  # far tail: the P10-P90 reading wins
    ]
    dists = [d for d, _ in cases] + [Occurrence(Triangular(0.0, 2.0, 3.0), 0.3)]
    expected = [read(frozen)[1] for _, frozen in cases]
    centre, spread = read(cases[0][1])
    mean = 0.3 * centre
    expected.append(np.sqrt(0.3 * (spread**2 + centre**2) - mean**2))
    np.testing.assert_allclose(central_spreads(dists), expected, rtol=1e-12)


def _shape(part: Beta) -> tuple[float, float]:
    return part.alpha, part.beta


@pytest.mark.parametrize(
    "dist",
    [
        Triangular(0.0, 0.0, 1.0),  # mode at an end: the np.where branches
        Triangular(0.0, 1.0, 1.0),
        Triangular(2.0, 3.0, 9.0),
        pert(5.0, 5.1, 6.0),
        Uniform(1.0, 4.0),
        Normal(10.0, 2.0),
        Lognormal(0.0, 0.8),
        Occurrence(Triangular(0.0, 2.0, 3.0), 0.3),
    ],
)
def test_abs_moments3_against_quadrature(dist) -> None:
    # E|X - mean|^3 by scipy.integrate.quad of the density (the point mass at zero added)
    mean = dist.mean
    atoms, continuous = dist.parts()
    expected = sum(m * abs(v - mean) ** 3 for v, m in atoms)
    for weight, part in continuous:
        lo, hi = part.bounds()  # the unbounded families: their whole support
        if isinstance(part, Normal | Lognormal):
            lo, hi = (-np.inf if isinstance(part, Normal) else 0.0), np.inf
        pieces = sorted({lo, min(max(mean, lo), hi), hi})
        for a, b in itertools.pairwise(pieces):
            value, _ = integrate.quad(
                lambda x, part=part: abs(x - mean) ** 3 * float(part.pdf(x)), a, b, epsrel=1e-12
            )
            expected += weight * value
    (got,) = abs_moments3([dist])
    assert got == pytest.approx(expected, rel=1e-8)


def test_sum_of_item_percentiles_batched_equals_item_by_item() -> None:
    # risk events over every batched family, one with an impact that can be negative (its
    # percentiles below zero), one with a tiny probability, beside plain items
    dists = [
        Triangular(0.0, 2.0, 3.0),
        Occurrence(Triangular(1.0, 3.0, 8.0), 0.3),
        Occurrence(Triangular(-4.0, -1.0, 2.0), 0.6),
        Occurrence(Uniform(2.0, 4.0), 0.05),
        Occurrence(Normal(-1.0, 2.0), 0.25),
        Occurrence(pert(1.0, 2.0, 9.0), 1e-300),
        Occurrence(Lognormal(1.0, 0.4), 0.5),
        Occurrence(Fixed(6.0), 0.4),
        Occurrence(Fixed(-2.0), 0.7),  # a saving: its percentiles below zero
        pert(5.0, 6.0, 10.0),
    ]
    q = np.array([0.001, 0.1, 0.3, 0.5, 0.75, 0.8, 0.9, 0.95, 0.99])
    one_by_one = np.sum([d.ppf(q) for d in dists], axis=0)
    np.testing.assert_allclose(sum_of_item_percentiles(dists, q), one_by_one, rtol=1e-14)


def test_kept_values_are_computed_once_per_missing_key_in_order() -> None:
    calls: list[list[str]] = []

    def compute(missing: list[str]) -> list[int]:
        calls.append(missing)
        return [len(k) for k in missing]

    cache: dict[str, int] = {"ab": 99}  # a kept value is read, not recomputed
    assert kept(cache, ["abc", "ab", "abc", "a"], compute) == [3, 99, 3, 1]
    assert calls == [["abc", "a"]]
    assert kept(cache, ["a", "abc"], compute) == [1, 3] and len(calls) == 1
