"""Batch sampling gives each item exactly the values of its own inverse transform."""

from __future__ import annotations

import numpy as np
import pytest

from engine.families.batch_sampling import BatchSampler
from engine.families.distributions import (
    Beta,
    Discrete,
    Fixed,
    Lognormal,
    Normal,
    Occurrence,
    Triangular,
    Uniform,
    pert,
)

MIXED = [
    Triangular(1.0, 3.0, 10.0),
    pert(10.0, 14.0, 30.0),
    Uniform(2.0, 7.0),
    Triangular(0.0, 0.0, 4.0),
    pert(0.0, 9.5, 10.0),
    Beta(0.0, 2.0, 0.7, 3.0),
    Normal(5.0, 2.0),
    Lognormal(1.0, 0.5),
    Fixed(12.0),
    Discrete((1.0, 5.0, 9.0), (0.2, 0.5, 0.3)),
    Occurrence(Triangular(100.0, 150.0, 400.0), 0.3),
    Occurrence(pert(-50.0, 10.0, 40.0), 0.6),  # an impact that can be negative
    Occurrence(Fixed(250.0), 0.1),
    Occurrence(Discrete((10.0, 20.0), (0.5, 0.5)), 0.5),
    Triangular(-2.0, 5.0, 5.0),
    pert(3.0, 4.0, 90.0),
]


@pytest.mark.parametrize("sorted_rows", [True, False])
def test_batch_equals_each_items_own_sample(sorted_rows: bool) -> None:
    rng = np.random.default_rng(21)
    u = rng.random((len(MIXED), 3000))
    u[:, :4] = [0.0, 1e-12, 1 / 16, 1 - 1e-15]  # ends and table edges, in every row
    if sorted_rows:
        u.sort(axis=1)
    got = BatchSampler(MIXED)(u)
    for k, dist in enumerate(MIXED):
        np.testing.assert_array_equal(got[k], dist.sample(u[k]), err_msg=repr(dist))


def test_batch_of_one_family_and_of_one_item() -> None:
    rng = np.random.default_rng(22)
    u = rng.random((1, 500))
    for dist in MIXED:
        np.testing.assert_array_equal(BatchSampler([dist])(u)[0], dist.sample(u[0]))
