"""Correlated simulation: Iman-Conover, the correlated normal shortcut, drivers, method choice."""

from __future__ import annotations

import json

import numpy as np
import pytest
from report_fixtures import normal_item
from scipy import special, stats

from engine import (
    Cancelled,
    CorrelationPair,
    CorrelationSpec,
    Estimate,
    InputError,
    LineItem,
    analyze,
    threads,
)
from engine.exact.convolution import exact_total
from engine.simulation.iman_conover import induce, rank_to_pearson, score_matrix, square_root
from engine.simulation.ranking import orders
from engine.simulation.replicates import replicate_layout
from engine.validation import build_distribution

# Iman & Conover (1982) illustrate the method on a few variables and samples of about
# n = 100 (from memory); we use 4 variables and n = 100, repeated over 200 seeded samples.
RANK_TARGET = np.array(
    [[1.0, 0.7, 0.3, -0.4], [0.7, 1.0, 0.5, -0.2], [0.3, 0.5, 1.0, 0.0], [-0.4, -0.2, 0.0, 1.0]]
)


def test_iman_conover_hits_the_product_moment_target_exactly():
    # Iman & Conover (1982): T = S F'^-1 Q' has exactly the target correlation Q Q'.
    pearson = rank_to_pearson(RANK_TARGET)
    t = induce(score_matrix(np.random.default_rng(7), 4, 100), square_root(pearson))
    assert np.allclose(np.corrcoef(t), pearson, atol=1e-5)  # single precision scores


def test_iman_conover_rank_correlation_within_sampling_tolerance():
    # Rank target r_s induced as 2 sin(pi r_s / 6) on normal scores (Pearson 1907); the
    # Spearman coefficient of the reordered sample is scipy.stats.spearmanr's.
    factor = square_root(rank_to_pearson(RANK_TARGET))
    achieved = []
    for seed in range(200):
        order = orders(induce(score_matrix(np.random.default_rng(seed), 4, 100), factor))
        ranks = np.argsort(order, axis=1)
        achieved.append(stats.spearmanr(ranks.T).statistic)
    mean = np.mean(achieved, axis=0)
    assert np.abs(mean - RANK_TARGET).max() < 0.02
    assert np.abs(np.array(achieved) - RANK_TARGET).max() < 0.2


SDS = np.array([10.0, 20.0, 5.0])
RANKS = np.array([[1.0, 0.6, 0.3], [0.6, 1.0, -0.2], [0.3, -0.2, 1.0]])


def _correlated_normals() -> Estimate:
    items = [
        normal_item(n, m, s)
        for n, m, s in zip(("Earthworks", "Structure", "Fit-out"), (100, 250, 60), SDS, strict=True)
    ]
    pairs = [
        CorrelationPair("Earthworks", "Structure", 0.6, row=2),
        CorrelationPair("Earthworks", "Fit-out", 0.3, row=3),
        CorrelationPair("Structure", "Fit-out", -0.2, row=4),
    ]
    return Estimate(items, correlation=CorrelationSpec(pairs=pairs))


def test_sum_of_correlated_normals_matches_the_closed_form():
    # A sum of jointly normal items is normal with Var = s' R s (REFERENCES.md, "Sum of
    # correlated normals"); for normal margins the product-moment R is 2 sin(pi r_s / 6) of
    # the rank correlation exactly (Pearson 1907).
    analysis = analyze(_correlated_normals(), trials=40_000, seed=11)
    variance = SDS @ rank_to_pearson(RANKS) @ SDS
    # 0.2%: the sd without the conversion (r = r_s) would be 0.44% lower.
    assert analysis.total.sd == pytest.approx(np.sqrt(variance), rel=0.002)
    assert analysis.dependence.shortcut_variance == pytest.approx(variance, rel=1e-12)
    for row in analysis.levels:
        exact = 410 + np.sqrt(variance) * special.ndtri(row.level / 100)
        assert row.value == pytest.approx(exact, abs=4 * row.standard_error + 0.05)
        assert row.normal_dependent == pytest.approx(exact, rel=1e-12)
    assert analysis.dependence.achieved_max_deviation < 0.02


def test_correlated_shortcut_variance_is_the_double_sum():
    # Var = sum_i sum_j r_ij s_i s_j, computed term by term against the engine's figure.
    estimate = _correlated_normals()
    estimate.items.append(LineItem("Permits", "triangular", 5, 8, 20, probability=0.4))
    estimate.correlation.default = 0.25
    analysis = analyze(estimate, trials=8000, seed=2)
    dists = [build_distribution(i) for i in estimate.items]
    r = rank_to_pearson(analysis.dependence.used)
    direct = sum(r[i, j] * dists[i].sd * dists[j].sd for i in range(4) for j in range(4))
    mean = sum(d.mean for d in dists)
    for row in analysis.levels:
        z = special.ndtri(row.level / 100)
        assert row.normal_dependent == pytest.approx(mean + z * np.sqrt(direct), rel=1e-12)
        independent_sd = np.sqrt(sum(d.variance for d in dists))
        assert row.normal == pytest.approx(mean + z * independent_sd, rel=1e-12)


def test_independent_comparison_is_the_exact_total():
    analysis = analyze(_correlated_normals(), trials=4000, seed=1)
    dists = [build_distribution(i) for i in _correlated_normals().items]
    exact = exact_total(dists)
    for row in analysis.levels:
        assert row.independent_value == pytest.approx(float(exact.ppf(row.level / 100)), rel=1e-9)


def test_drivers_include_covariances():
    # For normal items, item i's part in the total's variance is s_i sum_j r_ij s_j.
    analysis = analyze(_correlated_normals(), trials=40_000, seed=4)
    r = rank_to_pearson(RANKS)
    expected = SDS * (r @ SDS) / (SDS @ r @ SDS)
    shares = {d.name: d.variance_share for d in analysis.drivers}
    got = [shares["Earthworks"], shares["Structure"], shares["Fit-out"]]
    assert np.allclose(got, expected, atol=0.01)
    assert all(d.rank_correlation_with_total is not None for d in analysis.drivers)
    json.dumps(analysis.to_dict())  # the report's JSON takes it as it is


def test_auto_switches_to_simulation_and_says_so():
    estimate = _correlated_normals()
    analysis = analyze(estimate, trials=4000, seed=1)
    assert analysis.method == "simulation"
    assert "3 pairs of items are correlated" in analysis.method_reason
    assert "Iman–Conover" in analysis.method_reason
    with pytest.raises(InputError) as refused:
        analyze(estimate, method="exact")
    assert "use auto or simulation" in refused.value.problems[0].fix


def test_independent_items_keep_the_exact_default():
    items = _correlated_normals().items
    spec = CorrelationSpec(pairs=[CorrelationPair("Earthworks", "Structure", 0.0)], groups={})
    analysis = analyze(Estimate(items, correlation=spec))
    assert analysis.method == "exact" and analysis.dependence is None
    assert all(r.normal_dependent is None and r.independent_value is None for r in analysis.levels)
    assert analysis.to_dict()["dependence"] is None


def test_positive_correlation_reason_and_too_few_trials():
    estimate = _correlated_normals()
    estimate.correlation = CorrelationSpec(default=0.6)
    analysis = analyze(estimate, trials=4000, seed=1)
    assert analysis.reasons[0].startswith("positive correlation widens the total: sd")
    many = Estimate([LineItem(f"Lot {k}", "fixed", None, 1.0, None) for k in range(300)])
    many.correlation = CorrelationSpec(default=0.1)
    with pytest.raises(InputError) as refused:
        analyze(many, trials=1000)
    assert "at least 1200 trials" in refused.value.problems[0].fix


def test_risk_event_follows_its_correlated_partner():
    # The shared-score mechanism: a risk event correlated with a base item occurs more often
    # when that item runs high (a consequence of one score per item, no outside source).
    items = [
        normal_item("Tunnel", 500, 50),
        LineItem("Flooding", "uniform", 20, None, 80, probability=0.3),
    ]
    spec = CorrelationSpec(pairs=[CorrelationPair("Tunnel", "Flooding", 0.8)])
    analysis = analyze(Estimate(items, correlation=spec), trials=20_000, seed=9)
    independent = analysis.dependence.sd_independent
    assert analysis.dependence.sd_dependent > 1.1 * independent
    flooding = next(d for d in analysis.drivers if d.name == "Flooding")
    assert flooding.rank_correlation_with_total > 0.4


def test_normal_score_matrix_repaired_when_the_conversion_breaks_it():
    # A valid but singular rank matrix (r_ij = cos(t_i - t_j), rank 2) whose elementwise
    # 2 sin(pi r / 6) has a negative eigenvalue: the induced matrix is repaired and said so.
    angles = np.array([0.0, 1.0, 2.0])
    rank = np.cos(angles[:, None] - angles[None, :])
    names = ["Crane hire", "Scaffold", "Night shifts"]
    pairs = [
        CorrelationPair(names[i], names[j], float(rank[i, j]))
        for i in range(3)
        for j in range(i + 1, 3)
    ]
    items = [normal_item(n, 100, 10) for n in names]
    analysis = analyze(
        Estimate(items, correlation=CorrelationSpec(pairs=pairs)), trials=6000, seed=3
    )
    dep = analysis.dependence
    assert not dep.repaired and dep.pearson_repaired
    assert np.linalg.eigvalsh(dep.pearson_used)[0] > -1e-9
    assert "normal-score correlations were repaired" in analysis.method_reason
    assert any("normal-score correlations" in r for r in analysis.reasons)


def test_correlated_run_is_the_same_on_one_lane_or_two(monkeypatch):
    # Replicates draw from streams of their own, so the split between threads cannot move
    # a single trial; the lanes' statistics are summed in order.
    estimate = _correlated_normals()
    two = analyze(estimate, trials=20_000, seed=3)
    monkeypatch.setattr(threads, "PARTS", 1)
    one = analyze(estimate, trials=20_000, seed=3)
    np.testing.assert_array_equal(one.total.by_replicate, two.total.by_replicate)
    np.testing.assert_allclose(one.dependence.achieved, two.dependence.achieved, rtol=1e-12)


def test_correlated_edit_moves_only_the_edited_item():
    # The draws do not depend on the items' parameters: shifting one normal item by 30
    # shifts every trial of the correlated total by exactly 30.
    estimate = _correlated_normals()
    shifted = Estimate(
        [
            estimate.items[0],
            estimate.items[1].with_changes(
                low=estimate.items[1].low + 30, high=estimate.items[1].high + 30
            ),
            estimate.items[2],
        ],
        correlation=estimate.correlation,
    )
    a = analyze(estimate, trials=10_000, seed=4).total.by_replicate
    b = analyze(shifted, trials=10_000, seed=4).total.by_replicate
    np.testing.assert_allclose(b - a, 30.0, atol=1e-9)


def test_correlated_run_can_be_cancelled_and_reports_progress():
    seen: list[float] = []
    analyze(_correlated_normals(), trials=10_000, seed=1, progress=seen.append)
    assert seen and seen[-1] == pytest.approx(1.0)
    with pytest.raises(Cancelled):
        analyze(_correlated_normals(), trials=10_000, seed=1, cancel=lambda: True)


def test_long_correlated_runs_use_more_smaller_replicates():
    # a replicate's work arrays stay near 2^21 values: 200 items x 1M trials -> 100 x 10,000
    assert replicate_layout(1_000_000, 20, 400, 10_000) == (100, 10_000)
    assert replicate_layout(100_000, 20, 400, 10_000) == (20, 5_000)


def test_rank_with_total_is_spearmans_with_ties_averaged():
    # Each item's rank correlation with the total, risk events (a point mass at 0) and
    # discrete items included: scipy.stats.spearmanr (average ranks for ties) on the same
    # replicate.
    from engine.families.distributions import Discrete, Occurrence, Triangular
    from engine.simulation.sample_statistics import CorrelatedSampleStatistics

    dists = [
        Triangular(1.0, 2.0, 4.0),
        Occurrence(Triangular(5.0, 6.0, 9.0), 0.3),
        Discrete((1.0, 2.0, 3.0), (0.2, 0.5, 0.3)),
        Occurrence(Triangular(1.0, 1.5, 2.0), 0.6),
    ]
    rng = np.random.default_rng(8)
    n = 2_000
    shared = rng.random(n)
    values = np.array([d.ppf(np.clip(0.6 * shared + 0.4 * rng.random(n), 0, 1)) for d in dists])
    total = values.sum(axis=0)
    positions = np.argsort(values, axis=1, kind="stable") + (np.arange(len(dists)) * n)[:, None]
    statistics = CorrelatedSampleStatistics(dists)
    statistics(0, values, total, positions)
    expected = [stats.spearmanr(row, total).statistic for row in values]
    np.testing.assert_allclose(statistics.rank_with_total, expected, rtol=1e-6)
