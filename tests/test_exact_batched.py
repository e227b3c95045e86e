"""The batched per-family routes of the exact engine give what the per-item routes give."""

from __future__ import annotations

import numpy as np
import pytest

from engine.exact import family_lattices
from engine.exact.lattice import item_lattice
from engine.families.distributions import Beta, Lognormal, Triangular, pert

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
