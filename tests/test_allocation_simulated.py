"""Allocation for correlated items (simulated near each level), the confidence of the base
estimate and of a budget, the naive allocation and the risk-event ranking."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from report_fixtures import normal_item
from scipy import stats

from engine import (
    CorrelationPair,
    CorrelationSpec,
    Estimate,
    LineItem,
    analyze,
    build_distribution,
)
from engine.allocation import allocate
from engine.allocation.naive import naive_shares
from engine.allocation.simulated_shares import simulated_means, window_edges
from engine.families.distributions import Triangular


def test_correlated_normal_items_match_the_conditional_mean_of_a_normal_vector() -> None:
    # Jointly normal items: E[X_i | T = t] = mu_i + Cov(X_i, T) / Var(T) (t - M) (the
    # conditional mean of a bivariate normal). Iman-Conover with normal scores gives normal
    # items a normal copula with the product-moment matrix it used (Iman & Conover 1982).
    means = np.array([400.0, 250.0, 120.0, 600.0])
    sds = np.array([60.0, 45.0, 30.0, 20.0])
    items = [
        normal_item(f"Part {k}", m, s) for k, (m, s) in enumerate(zip(means, sds, strict=False))
    ]
    spec = CorrelationSpec(
        pairs=[CorrelationPair("Part 0", "Part 1", 0.6), CorrelationPair("Part 1", "Part 2", 0.3)]
    )
    est = Estimate(items=items, correlation=spec)
    analysis = analyze(est, levels=(20, 50, 80, 95), trials=200_000, seed=7)
    assert analysis.dependence is not None
    alloc = allocate(est, analysis)
    assert alloc.method == "simulation"
    r = analysis.dependence.pearson_used
    cov = r * np.outer(sds, sds)
    cov_with_total = cov.sum(axis=1)
    for row in alloc.levels:
        expected = means + cov_with_total / cov.sum() * (row.total - means.sum())
        got = np.array(row.shares) + np.array(alloc.bases)
        se = np.array(row.standard_errors)
        assert np.all(se > 0)
        # within 4 standard errors, plus a little for the window's bias and the copula
        assert np.all(np.abs(got - expected) < 4 * se + 0.01 * sds), (row.level, got - expected, se)
        assert math.fsum(row.shares) == pytest.approx(row.contingency, abs=1e-9 * row.total)


def test_the_simulated_allocation_conditions_on_the_analysis_own_trials() -> None:
    # Same seed, same trials: rerunning is repeatable, and a level on a point mass (fixed
    # risk events, most trials without them) is conditioned on the atom, shares adding up.
    items = [
        LineItem("Walls", "triangular", low=90.0, most_likely=100.0, high=130.0, group="Build"),
        LineItem("Roof", "triangular", low=40.0, most_likely=50.0, high=70.0, group="Build"),
        LineItem("Strike", "fixed", most_likely=80.0, probability=0.2, group="Risks"),
    ]
    spec = CorrelationSpec(pairs=[CorrelationPair("Walls", "Roof", 0.5)])
    est = Estimate(items=items, correlation=spec)
    analysis = analyze(est, levels=(50, 90), trials=40_000, seed=3)
    first, second = allocate(est, analysis), allocate(est, analysis)
    assert first.to_dict() == second.to_dict()
    rerun = rerun_of(items, analysis)
    np.testing.assert_array_equal(rerun.total.by_replicate, analysis.total.by_replicate)
    assert np.all(rerun.window_trials > 0)
    for row in first.levels:
        assert math.fsum(row.shares) == pytest.approx(row.contingency, abs=1e-9 * row.total)
    assert first.at(50).groups["Risks"] < 1.0  # P50 is reached without the strike
    # a group of one item has that item's standard error; a group of two, its sum's
    p90 = first.at(90)
    assert p90.group_errors is not None
    assert p90.group_errors["Risks"] == pytest.approx(p90.standard_errors[2], rel=1e-12)
    assert 0 < p90.group_errors["Build"] <= p90.standard_errors[0] + p90.standard_errors[1]
    assert first.at(90).groups["Risks"] > 0.5 * first.at(90).contingency
    json.dumps(first.to_dict(), allow_nan=False)


def test_base_and_budget_confidence_against_the_normal_cdf() -> None:
    # Normal items: P(T <= x) = Phi((x - M) / S) (closed form of the normal sum).
    items = [normal_item("A", 100.0, 10.0), normal_item("B", 200.0, 20.0)]
    est = Estimate(items=items)
    analysis = analyze(est, method="exact")
    alloc = allocate(est, analysis, budgets=[310.0, 340.0])
    s = math.sqrt(500.0)
    assert alloc.base_confidence.probability == pytest.approx(0.5, abs=1e-5)  # base = means
    for budget, amount in zip(alloc.budgets, (310.0, 340.0), strict=False):
        assert budget.probability == pytest.approx(stats.norm.cdf((amount - 300) / s), abs=1e-5)
        assert budget.contingency == pytest.approx(amount - 300.0)
        assert budget.standard_error is None
    simulated = analyze(est, method="simulation", trials=100_000, seed=2)
    budget = allocate(est, simulated, budgets=[320.0]).budgets[0]
    want = stats.norm.cdf(20 / s)
    assert budget.standard_error is not None and 0 < budget.standard_error < 0.005
    assert abs(budget.probability - want) < 4 * budget.standard_error + 1e-4


def test_naive_allocation_by_hand() -> None:
    # Own P80 less base, scaled to fit the contingency (what a spreadsheet does).
    a = Triangular(0.0, 10.0, 20.0)
    b = Triangular(0.0, 0.0, 30.0)
    own = [float(a.ppf(0.8)), float(b.ppf(0.8))]
    raw = [own[0] - 10.0, own[1] - 0.0]
    got = naive_shares([a, b], [10.0, 0.0], 80, 12.0)
    assert got is not None
    np.testing.assert_allclose(got, np.array(raw) * 12.0 / sum(raw), rtol=1e-12)
    assert naive_shares([a], [float(a.ppf(0.5))], 50, 1.0) is None


def test_risk_events_ranked_three_ways() -> None:
    items = [
        LineItem("Base works", "triangular", low=900.0, most_likely=1000.0, high=1200.0),
        LineItem("Flood", "fixed", most_likely=500.0, probability=0.05),  # EV 25
        LineItem("Late permit", "fixed", most_likely=60.0, probability=0.5),  # EV 30
        LineItem(
            "Crane hire", "triangular", low=20.0, most_likely=40.0, high=90.0, probability=0.3
        ),
    ]
    est = Estimate(items=items)
    alloc = allocate(est, analyze(est, method="exact", levels=(50, 99)))
    ranked = alloc.risk_events
    assert [r.name for r in ranked] == ["Late permit", "Flood", "Crane hire"]  # EV 30, 25, 15
    assert ranked[2].expected_value == pytest.approx(0.3 * 50.0)
    assert {r.name: r.rank_by_probability for r in ranked} == {
        "Late permit": 1,
        "Crane hire": 2,
        "Flood": 3,
    }
    at99 = alloc.at(99)
    for r in ranked:
        k = alloc.names.index(r.name)
        assert r.contingency_share[99.0] == pytest.approx(at99.shares[k] / at99.contingency)
    # the flood, least likely, dominates the far tail
    assert ranked[1].contingency_share[99.0] == max(r.contingency_share[99.0] for r in ranked)


def test_block_factor_analyses_are_allocated_on_their_own_trials() -> None:
    """From FACTOR_ITEMS items a default correlation is induced by block factors, with no
    matrix kept above MATRIX_ITEMS: the allocation's re-run must use the same pairing and
    replicate sizes, so it reproduces the analysis's trials and its shares add up."""
    from engine.dependence.correlation import FACTOR_ITEMS

    n = FACTOR_ITEMS + 20
    items = [
        LineItem(f"Item {k}", "triangular", low=90.0, most_likely=100.0, high=130.0 + k)
        for k in range(n)
    ]
    est = Estimate(items=items, correlation=CorrelationSpec(default=0.3))
    analysis = analyze(est, levels=(50, 80), trials=20_000, seed=4)
    assert analysis.dependence is not None and analysis.dependence.model is not None
    rerun = rerun_of(items, analysis)
    np.testing.assert_array_equal(rerun.total.by_replicate, analysis.total.by_replicate)
    for row in allocate(est, analysis).levels:
        assert math.fsum(row.shares) == pytest.approx(row.contingency, abs=1e-9 * row.total)


def rerun_of(items, analysis):
    """The allocation's re-run of a correlated analysis, windows at the analysis's levels."""
    levels = [r.level for r in analysis.levels]
    return simulated_means(
        [build_distribution(i) for i in items],
        analysis.dependence,
        [r.value for r in analysis.levels],
        window_edges(analysis.total, levels),
        trials=analysis.trials,
        seed=analysis.seed,
        sampling=analysis.sampling,
    )


def test_a_level_between_two_point_masses_interpolates_their_conditional_means() -> None:
    # A fixed item and a discrete one (30,341 / 39,200 / 54,924 at 30 / 50 / 20 %), a small
    # default correlation: P80 is read between the trials at 39,229 and 54,953, where no
    # trial lies (the shares came out NaN). The window reaches the nearest trial on each
    # side, and the fit through the two is their linear interpolation: the discrete item
    # carries all of the contingency, the fixed item none (it is the same in every trial).
    items = [
        LineItem("Licence", "fixed", None, 29.0, None),
        LineItem("Crane", "discrete", values=((39_200.0, 0.5), (30_341.0, 0.3), (54_924.0, 0.2))),
    ]
    estimate = Estimate(items, correlation=CorrelationSpec(default=0.01))
    analysis = analyze(estimate, trials=5_000, seed=283, levels=(50, 80, 90))
    p80 = allocate(estimate, analysis).at(80)
    assert 39_229.0 < p80.total < 54_953.0  # between the two atoms
    assert p80.shares[0] == pytest.approx(0.0, abs=1e-6)
    assert p80.shares[1] == pytest.approx(p80.contingency, abs=1e-6)
