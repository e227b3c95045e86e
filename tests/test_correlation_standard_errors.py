"""Simulated percentiles of correlated totals lie within a few of their own standard errors
of the exact answer, for every correlation from -1 to 1.

A standard error that is smaller than the real error is worse than none: the analyst reads
a percentile as settled when it is not. Before the within-stratum position was shared by the
items of a trial, five comonotone items were off by up to 10 reported standard errors.
"""

from __future__ import annotations

import numpy as np
import pytest
from report_fixtures import normal_item
from scipy import special

from engine import CorrelationPair, CorrelationSpec, Estimate, LineItem, analyze
from engine.dependence.correlation import build_matrix
from engine.shortcut.normal import sum_of_item_percentiles
from engine.simulation.iman_conover import rank_to_pearson
from engine.validation import build_distribution

LEVELS = (1.0, 10.0, 50.0, 90.0, 99.0)
SEEDS = (0, 1, 2)
# |error| / reported SE: the batch SE over 20 replicates is Student t with 19 degrees of
# freedom when the error is normal, and P(|t_19| > 4) is about 0.0008 (scipy.stats.t).
COVERED = 4.0


def _errors_in_standard_errors(estimate: Estimate, exact: np.ndarray, seed: int, sampling: str):
    analysis = analyze(
        estimate, method="simulation", trials=100_000, seed=seed, levels=LEVELS, sampling=sampling
    )
    values = np.array([row.value for row in analysis.levels])
    errors = np.array([row.standard_error for row in analysis.levels])
    assert analysis.dependence is None or np.abs(analysis.dependence.achieved).max() <= 1.0
    return (values - exact) / errors


def _mixed_items() -> list[LineItem]:
    """Five invented work packages of different shapes, in k."""
    return [
        LineItem("Groundworks", "triangular", 40, 55, 120),
        LineItem("Frame", "pert", 200, 240, 390),
        LineItem("Cladding", "uniform", 80, None, 140),
        LineItem("Services", "lognormal", 60, None, 150, 10, 90),
        normal_item("Fit-out", 90, 12),
    ]


@pytest.mark.parametrize("sampling", ["lhs", "random"])
@pytest.mark.parametrize("seed", SEEDS)
def test_comonotone_items_total_the_sum_of_their_percentiles(seed, sampling):
    # For comonotone items (rank correlation 1) every quantile of the sum is the sum of the
    # items' quantiles: Dhaene, Denuit, Goovaerts, Kaas & Vyncke, "The concept of
    # comonotonicity in actuarial science and finance: theory", Insurance: Mathematics and
    # Economics 31 (2002), theorem 5.
    items = _mixed_items()
    estimate = Estimate(items, correlation=CorrelationSpec(default=1.0))
    dists = [build_distribution(i) for i in items]
    exact = sum_of_item_percentiles(dists, np.array(LEVELS) / 100)
    z = _errors_in_standard_errors(estimate, exact, seed, sampling)
    assert np.abs(z).max() < COVERED, z


def _normal_case(kind: str, coefficient: float) -> tuple[Estimate, np.ndarray]:
    """Items and the exact percentiles of their total: a correlated normal sum is normal with
    variance s' R s (REFERENCES.md), R = 2 sin(pi r_s / 6) of the rank correlation r_s for
    normal margins exactly (Pearson 1907)."""
    sds = np.array([3.0, 5.0, 8.0, 2.0, 6.0, 4.0])
    means = 100 + 10 * np.arange(6)
    groups = ["east", "west"] * 3
    items = [normal_item(f"package {k}", means[k], sds[k], groups[k]) for k in range(6)]
    if kind == "default":
        spec = CorrelationSpec(default=coefficient)
    elif kind == "groups":  # two groups, comonotone or nearly within, independent between
        spec = CorrelationSpec(groups={"east": coefficient, "west": coefficient})
    else:  # one pair, the others independent
        spec = CorrelationSpec(pairs=[CorrelationPair("package 0", "package 1", coefficient)])
    estimate = Estimate(items, correlation=spec)
    _, rank = build_matrix(estimate)
    pearson = np.clip(rank_to_pearson(rank), -1.0, 1.0)
    sd = float(np.sqrt(sds @ pearson @ sds))
    return estimate, means.sum() + sd * special.ndtri(np.array(LEVELS) / 100)


CASES = [
    ("pair", -1.0),
    ("pair", -0.99),
    ("pair", -0.5),
    ("default", -0.15),
    ("default", 0.3),
    ("default", 0.9),
    ("default", 0.99),
    ("default", 1.0),
    ("groups", 0.95),
    ("groups", 1.0),
]


@pytest.mark.parametrize(("kind", "coefficient"), CASES)
def test_correlated_normal_percentiles_within_their_standard_errors(kind, coefficient):
    estimate, exact = _normal_case(kind, coefficient)
    for seed in SEEDS:
        z = _errors_in_standard_errors(estimate, exact, seed, "lhs")
        assert np.abs(z).max() < COVERED, (seed, z)


@pytest.mark.parametrize("trials", [4_000, 20_000, 400_000])
def test_achieved_correlation_of_comonotone_items_is_never_above_one(trials):
    # Single-precision ranks once reported 1.00000009 for a comonotone pair.
    estimate, _ = _normal_case("default", 1.0)
    achieved = analyze(estimate, trials=trials, seed=3).dependence.achieved
    assert achieved.max() <= 1.0
    assert np.allclose(achieved, 1.0, atol=1e-5)


def test_shared_within_stratum_position_keeps_each_item_a_latin_hypercube():
    # McKay, Beckman & Conover (1979), Technometrics 21(2): a Latin hypercube puts exactly
    # one point in each of the n equal strata of every margin, uniform within it.
    from engine.simulation.ranking import random_permutations
    from engine.simulation.replicates import sorted_designs

    rng = np.random.default_rng(8)
    order = random_permutations(rng, 6, 1000)
    u = sorted_designs(rng, order, "lhs", mirrored=np.array([2, 5]))
    strata = np.floor(u * 1000)
    assert np.array_equal(strata, np.broadcast_to(np.arange(1000), (6, 1000)))
    within = u * 1000 - strata  # the trial's position: shared, mirrored on rows 2 and 5
    by_trial = np.empty_like(within)
    np.put_along_axis(by_trial, order, within, axis=1)
    assert np.allclose(by_trial[1], by_trial[0]) and np.allclose(by_trial[2], 1 - by_trial[0])
    assert abs(by_trial[0].mean() - 0.5) < 0.03  # uniform: mean 1/2, sd 1/sqrt(12 * 1000)
