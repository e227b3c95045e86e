"""The allocation's kernel sums gathered in the correlated run itself (one pass) against the
re-run that finds the window trials after the run (engine.simulation.level_windows)."""

from __future__ import annotations

import math

import numpy as np
import pytest
from report_fixtures import normal_item
from test_allocation_simulated import rerun_of

from engine import CorrelationPair, CorrelationSpec, Estimate, LineItem, analyze
from engine.allocation import allocate
from engine.allocation.simulated_shares import gathered
from engine.dependence.correlation import targets
from engine.simulation.factor_pairing import fewest_per_replicate, pairing_for
from engine.simulation.replicates import redraw
from engine.validation import build_distribution


def mixed_items(n: int) -> list[LineItem]:
    """Triangular, PERT and uniform items with risk events among them, in four groups."""
    rng = np.random.default_rng(11)
    items = []
    for k in range(n):
        low = float(rng.uniform(50, 150))
        family = ("triangular", "pert", "uniform", "triangular")[k % 4]
        items.append(
            LineItem(
                f"Item {k}",
                family,
                low=low,
                most_likely=None if family == "uniform" else low * 1.2,
                high=low * float(rng.uniform(1.5, 3.0)),
                probability=0.3 if k % 4 == 3 else 1.0,
                group=f"Area {k % 4}",
            )
        )
    return items


@pytest.mark.parametrize(
    ("count", "spec", "seed"),
    [
        (40, CorrelationSpec(default=0.3), 1),  # Iman-Conover on the matrix
        (40, CorrelationSpec(default=0.3), 2),
        (160, CorrelationSpec(groups={f"Area {g}": 0.5 for g in range(4)}), 3),  # block factors
    ],
)
def test_one_pass_sums_agree_with_the_rerun(count: int, spec: CorrelationSpec, seed: int) -> None:
    # The same trials, the tent cut at its corners within a third of its half-width: the
    # conditional means move by a small fraction of their standard error, and the standard
    # errors (16-20 jackknife groups against 20 replicates) agree to sampling error.
    items = mixed_items(count)
    est = Estimate(items=items, correlation=spec)
    analysis = analyze(est, levels=(10, 50, 80, 90), trials=60_000, seed=seed)
    totals = [row.value for row in analysis.levels]
    one_pass = gathered(analysis.kernel_sums, totals)
    assert one_pass is not None
    rerun = rerun_of(items, analysis)
    moved = np.abs(one_pass.means - rerun.means) / rerun.standard_errors
    assert moved.max() < 0.5 and moved.mean() < 0.1, (moved.max(), moved.mean())
    ratio = one_pass.standard_errors / rerun.standard_errors
    assert 0.6 < np.median(ratio) < 1.6
    # both fits add up to the level's total exactly (the fit of T on T - t is t)
    for fit in (one_pass, rerun):
        np.testing.assert_allclose(fit.means.sum(axis=0), totals, rtol=1e-12)
    assert np.all(one_pass.window_trials >= 0.9 * rerun.window_trials)


def test_one_pass_allocation_of_normal_items_matches_the_conditional_mean() -> None:
    # Jointly normal items: E[X_i | T = t] = mu_i + Cov(X_i, T) / Var(T) (t - M), the
    # conditional mean of a bivariate normal; the block factors give normal items a normal
    # copula with the score correlation they used (engine.simulation.factor_pairing).
    n = 120
    means = 100.0 + np.arange(n, dtype=float)
    sds = 5.0 + (np.arange(n) % 7)
    items = [normal_item(f"Part {k}", means[k], sds[k]) for k in range(n)]
    est = Estimate(items=items, correlation=CorrelationSpec(default=0.3))
    analysis = analyze(est, levels=(20, 50, 90), trials=100_000, seed=5)
    assert analysis.dependence is not None and analysis.dependence.model is not None
    assert analysis.kernel_sums is not None
    r = analysis.dependence.pearson_used
    cov = r * np.outer(sds, sds)
    alloc = allocate(est, analysis)
    for row in alloc.levels:
        expected = means + cov.sum(axis=1) / cov.sum() * (row.total - means.sum())
        got = np.array(row.shares) + np.array(alloc.bases)
        se = np.array(row.standard_errors)
        assert np.all(np.abs(got - expected) < 4 * se + 0.01 * sds), row.level
        assert math.fsum(row.shares) == pytest.approx(row.contingency, abs=1e-9 * row.total)


def test_replicates_drawn_again_are_the_analysis_own() -> None:
    items = mixed_items(30)
    est = Estimate(items=items, correlation=CorrelationSpec(default=0.4))
    analysis = analyze(est, trials=20_000, seed=8)
    aims = targets(est)
    dists = [build_distribution(i) for i in items]
    replicates = len(analysis.total.by_replicate)
    seen: dict[int, list[np.ndarray]] = {0: [], 1: []}
    redraw(
        dists,
        trials=analysis.trials,
        seed=analysis.seed,
        sampling="lhs",
        pairing=pairing_for(aims),
        min_per_replicate=fewest_per_replicate(aims, len(dists)),
        lanes=[[2, 0], [replicates - 1]],
        observe=lambda lane, values, total, positions: seen[lane].append(total.copy()),
    )
    by_replicate = analysis.total.by_replicate
    np.testing.assert_array_equal(seen[0], by_replicate[[2, 0]])
    np.testing.assert_array_equal(seen[1], by_replicate[[replicates - 1]])


def test_levels_on_point_masses_fall_back_to_the_rerun() -> None:
    # Fixed risk events only: the total takes a few values, each level sits on one of
    # them and its tent is a hair wide, finer than any grid: the analysis keeps no sums
    # and the allocation draws the run again, conditioning on the atom.
    items = [
        LineItem(f"Risk {k}", "fixed", most_likely=10.0 * (k + 1), probability=0.4)
        for k in range(3)
    ]
    spec = CorrelationSpec(pairs=[CorrelationPair("Risk 0", "Risk 1", 0.5)])
    est = Estimate(items=items, correlation=spec)
    analysis = analyze(est, levels=(50, 90), trials=20_000, seed=9)
    assert analysis.kernel_sums is None
    for row in allocate(est, analysis).levels:
        assert math.fsum(row.shares) == pytest.approx(row.contingency, abs=1e-9 * row.total)
        assert row.standard_errors is not None


def test_many_levels_use_fewer_groups_or_none(monkeypatch: pytest.MonkeyPatch) -> None:
    # The grid sums grow with levels x items: within the memory bound there are fewer
    # jackknife groups; below the fewest, none are gathered and the allocation draws the
    # run again. Either way the shares add up and come with standard errors.
    from engine.simulation import level_windows

    items = mixed_items(40)
    est = Estimate(items=items, correlation=CorrelationSpec(default=0.3))
    levels = (10, 30, 50, 70, 90)
    each = 2 * len(levels) * 2 * level_windows.NODES * len(items) * 8
    for memory, groups in ((5 * each, 10), (each, None)):
        monkeypatch.setattr(level_windows, "MEMORY", memory)
        analysis = analyze(est, levels=levels, trials=40_000, seed=6)
        sums = analysis.kernel_sums
        assert (sums is None) if groups is None else (sums.a.shape[0] == groups)
        for row in allocate(est, analysis).levels:
            assert math.fsum(row.shares) == pytest.approx(row.contingency, abs=1e-9 * row.total)
            assert row.standard_errors is not None and min(row.standard_errors) > 0
