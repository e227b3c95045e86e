"""The simulated total against the exact one, within its own reported standard errors."""

from __future__ import annotations

import numpy as np
import pytest

from engine.exact.convolution import exact_total
from engine.families.distributions import Fixed, Lognormal, Occurrence, Triangular, Uniform, pert
from engine.simulation.replicates import simulate

Q = np.arange(1, 10) / 10  # P10..P90

ITEMS = [
    Triangular(80.0, 100.0, 160.0),
    pert(40.0, 45.0, 90.0),
    Uniform(10.0, 30.0),
    Lognormal(3.0, 0.6),
    Fixed(250.0),
    Occurrence(Triangular(30.0, 50.0, 120.0), 0.25),
    Occurrence(Fixed(60.0), 0.1),
]


@pytest.fixture(scope="module")
def exact():
    return exact_total(ITEMS)


@pytest.mark.parametrize("sampling", ["lhs", "random"])
@pytest.mark.parametrize("seed", [1, 2, 3, 4])
def test_simulation_within_its_standard_errors_of_the_exact_total(exact, seed, sampling) -> None:
    # batch-means standard error: the spread of a percentile over independent replicates
    sim = simulate(ITEMS, trials=40_000, seed=seed, sampling=sampling)
    se = sim.standard_error(Q)
    assert np.all(se > 0)
    z = np.abs(sim.ppf(Q) - exact.ppf(Q)) / se
    assert np.all(z < 4.0), z  # 4 standard errors (t with 19 df: ~1e-3 two-sided)
    # and the trials' moments agree with the exact cumulants
    assert sim.mean == pytest.approx(exact.mean, rel=2e-3)
    assert sim.sd == pytest.approx(exact.sd, rel=2e-2)


def test_standard_errors_are_honest_across_seeds(exact) -> None:
    # the reported SE matches the spread of the estimate across independent runs
    runs = np.array([simulate(ITEMS, trials=10_000, seed=s).ppf(Q) for s in range(20)])
    spread = runs.std(axis=0, ddof=1)
    reported = np.mean(
        [simulate(ITEMS, trials=10_000, seed=s).standard_error(Q) for s in (100, 101)], axis=0
    )
    ratio = spread / reported
    assert np.all((ratio > 0.4) & (ratio < 2.5)), ratio


def test_latin_hypercube_beats_plain_random() -> None:
    # stratified sampling of each item cuts the variance of additive totals
    # (McKay, Beckman & Conover 1979, Technometrics 21(2))
    items = ITEMS[:3]
    lhs = simulate(items, trials=40_000, seed=9, sampling="lhs").standard_error(Q)
    plain = simulate(items, trials=40_000, seed=9, sampling="random").standard_error(Q)
    assert np.mean(lhs) < 0.8 * np.mean(plain)
    # with risk events (point masses) the gain is smaller but still there
    lhs = simulate(ITEMS, trials=40_000, seed=9, sampling="lhs").standard_error(Q)
    plain = simulate(ITEMS, trials=40_000, seed=9, sampling="random").standard_error(Q)
    assert np.mean(lhs) < np.mean(plain)


def test_same_seed_same_trials_other_seed_other_trials() -> None:
    a = simulate(ITEMS, trials=5_000, seed=42)
    b = simulate(ITEMS, trials=5_000, seed=42)
    c = simulate(ITEMS, trials=5_000, seed=43)
    np.testing.assert_array_equal(a.by_replicate, b.by_replicate)
    assert not np.array_equal(a.by_replicate, c.by_replicate)


def test_editing_one_item_leaves_the_others_draws_alone() -> None:
    # each item has its own stream: changing item 0 moves the total by item 0's change only
    edited = [Triangular(80.0, 110.0, 160.0), *ITEMS[1:]]
    a = simulate(ITEMS, trials=5_000, seed=5).by_replicate
    b = simulate(edited, trials=5_000, seed=5).by_replicate
    only = simulate([ITEMS[0]], trials=5_000, seed=5).by_replicate
    only_edited = simulate([edited[0]], trials=5_000, seed=5).by_replicate
    np.testing.assert_allclose(b - a, only_edited - only, atol=1e-9)
