"""Contingency allocated by conditional expectation, exactly, for independent items: checked
against closed forms, enumeration and a large seeded simulation of its own."""

from __future__ import annotations

import ast
import itertools
import json
import math
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from report_fixtures import normal_item
from scipy import stats

from engine import Estimate, LineItem, analyze
from engine.allocation import allocate
from engine.allocation.exact_shares import conditional_means
from engine.families.distributions import Discrete, Fixed, Occurrence, Triangular


def test_normal_items_match_the_bivariate_normal_conditional_mean() -> None:
    # E[X_i | T = t] = mu_i + (s_i^2 / S^2)(t - M): the conditional mean of a bivariate
    # normal (any probability text, e.g. Devore, Probability and Statistics, ch. 5).
    rng = np.random.default_rng(11)
    means = rng.uniform(100, 900, 7)
    sds = rng.uniform(5, 120, 7)
    items = [
        normal_item(f"N{k}", m, s, "AB"[k % 2])
        for k, (m, s) in enumerate(zip(means, sds, strict=False))
    ]
    items.append(LineItem("Permit fees", "fixed", most_likely=40.0))
    est = Estimate(items=items)
    analysis = analyze(est, method="exact", levels=(10, 50, 80, 90, 99))
    alloc = allocate(est, analysis)
    big_m, big_s2 = means.sum() + 40.0, float(np.sum(sds**2))
    for row in alloc.levels:
        expected = means + sds**2 / big_s2 * (row.total - big_m)
        got = np.array(row.shares[:-1]) + np.array(alloc.bases[:-1])
        assert np.max(np.abs(got - expected)) < 1e-5 * math.sqrt(big_s2)
        assert row.shares[-1] == 0.0  # a fixed item holds no contingency
        assert math.fsum(row.shares) == pytest.approx(row.contingency, abs=1e-9 * row.total)
        assert math.fsum(row.groups.values()) == pytest.approx(
            row.contingency, abs=1e-8 * row.total
        )


def _enumerated(dists, t: float) -> np.ndarray:
    """E[X_i | T = t] by listing every combination of the items' point values."""
    options = [d.parts()[0] for d in dists]
    num, den = np.zeros(len(dists)), 0.0
    for combo in itertools.product(*options):
        if abs(sum(v for v, _ in combo) - t) < 1e-9:
            w = math.prod(p for _, p in combo)
            den += w
            num += w * np.array([v for v, _ in combo])
    return num / den


def test_discrete_items_and_risk_events_match_enumeration() -> None:
    # The total has only point masses: every level sits on one, and conditioning is on it.
    dists = [
        Discrete((100.0, 150.0, 300.0), (0.2, 0.5, 0.3)),
        Discrete((40.0, 60.0, 65.0), (0.5, 0.3, 0.2)),
        Occurrence(Fixed(250.0), 0.3),
        Occurrence(Fixed(120.0), 0.1),
        Fixed(12.5),
    ]
    atoms = sorted(
        {sum(c) for c in itertools.product(*[[v for v, _ in d.parts()[0]] for d in dists])}
    )
    chosen = atoms[2::5]
    got = conditional_means(dists, chosen)
    for j, t in enumerate(chosen):
        np.testing.assert_allclose(got[:, j], _enumerated(dists, t), rtol=0, atol=1e-9)
        assert got[:, j].sum() == pytest.approx(t, abs=1e-9)


def test_discrete_estimate_through_allocate_adds_up() -> None:
    items = [
        LineItem("Pumps", "discrete", values=((100.0, 0.2), (150.0, 0.5), (300.0, 0.3)), group="M"),
        LineItem("Valves", "discrete", values=((40.0, 0.5), (60.0, 0.5)), group="M"),
        LineItem("Flood", "fixed", most_likely=250.0, probability=0.3, group="Risks"),
    ]
    est = Estimate(items=items)
    analysis = analyze(est, method="exact", levels=(50, 80, 95))
    alloc = allocate(est, analysis)
    dists = [
        Discrete((100.0, 150.0, 300.0), (0.2, 0.5, 0.3)),
        Discrete((40.0, 60.0), (0.5, 0.5)),
        Occurrence(Fixed(250.0), 0.3),
    ]
    for row in alloc.levels:
        expected = _enumerated(dists, row.total) - np.array(alloc.bases)
        np.testing.assert_allclose(row.shares, expected, atol=1e-9)
        assert sum(row.shares) == pytest.approx(row.contingency, abs=1e-9)


def _local_linear(x: np.ndarray, total: np.ndarray, t: float, h: float) -> tuple[float, float]:
    """Intercept at t of a triangular-kernel weighted fit of x on total - t, and its
    standard error from 20 batches."""

    def fit(xs, ts):
        d = ts - t
        w = np.maximum(1 - np.abs(d) / h, 0)
        s0, s1, s2 = w.sum(), (w * d).sum(), (w * d * d).sum()
        a, b = (w * xs).sum(), (w * xs * d).sum()
        return (s2 * a - s1 * b) / (s0 * s2 - s1 * s1)

    whole = fit(x, total)
    parts = [
        fit(xs, ts)
        for xs, ts in zip(np.array_split(x, 20), np.array_split(total, 20), strict=False)
    ]
    return whole, float(np.std(parts, ddof=1) / math.sqrt(20))


def test_mixed_families_match_a_large_seeded_simulation() -> None:
    # Reference: 4 million trials drawn with numpy's own samplers (not the engine's), the
    # conditional mean read by local-linear regression in a narrow window around t_q.
    items = [
        LineItem("Steel", "triangular", low=200.0, most_likely=260.0, high=420.0, group="S"),
        LineItem("Cladding", "pert", low=80.0, most_likely=90.0, high=160.0, group="S"),
        LineItem("Ground", "lognormal", low=30.0, high=150.0, low_pct=10, high_pct=90, group="G"),
        LineItem("Strike", "triangular", low=50.0, most_likely=90.0, high=200.0, probability=0.15),
    ]
    est = Estimate(items=items)
    analysis = analyze(est, method="exact", levels=(50, 80, 95))
    alloc = allocate(est, analysis)
    rng = np.random.default_rng(20260214)
    n = 4_000_000
    steel = rng.triangular(200, 260, 420, n)
    a, b = 1 + 4 * 10 / 80, 1 + 4 * 70 / 80  # beta-PERT shape 4 (Malcolm et al. 1959)
    cladding = 80 + 80 * rng.beta(a, b, n)
    sigma = math.log(150 / 30) / (2 * stats.norm.ppf(0.9))
    ground = rng.lognormal(math.log(math.sqrt(30 * 150)), sigma, n)
    strike = np.where(rng.random(n) < 0.15, rng.triangular(50, 90, 200, n), 0.0)
    columns = [steel, cladding, ground, strike]
    total = steel + cladding + ground + strike
    for row in alloc.levels:
        h = 0.01 * total.std()
        for k, x in enumerate(columns):
            want, se = _local_linear(x, total, row.total, h)
            got = row.shares[k] + alloc.bases[k]
            assert abs(got - want) < 4 * se + 0.002 * total.std(), (row.level, k, got, want, se)


def test_one_item_carries_all_and_a_skewed_tail_moves_to_the_risk_event() -> None:
    solo = Estimate(items=[LineItem("Hall", "triangular", low=10.0, most_likely=20.0, high=50.0)])
    alloc = allocate(solo, analyze(solo, method="exact"))
    for row in alloc.levels:
        assert row.shares[0] == pytest.approx(row.contingency, abs=1e-9)
    items = [
        LineItem(f"Trade {k}", "triangular", low=90.0, most_likely=100.0, high=120.0, group="Base")
        for k in range(6)
    ] + [
        LineItem(f"Event {k}", "fixed", most_likely=300.0, probability=0.08, group="Risks")
        for k in range(3)
    ]
    est = Estimate(items=items)
    alloc = allocate(est, analyze(est, method="exact", levels=(50, 90)))
    p50, p90 = alloc.levels
    assert p50.groups["Risks"] == pytest.approx(0.0, abs=1e-6)
    # One of the events happens with chance 1 - 0.92^3 = 22% > 10%: the total's P90 is
    # reached almost only with an event, yet each event's own P90 is 0, so the naive
    # allocation gives the events nothing.
    assert p90.groups["Risks"] > 0.8 * p90.contingency
    assert p90.naive_groups is not None and p90.naive_groups["Risks"] == 0.0
    assert "difference matters" in p90.note and "'Risks'" in p90.note


def test_thousands_of_items_stay_exact_and_add_up() -> None:
    rng = np.random.default_rng(5)
    dists = [
        Triangular(float(a), float(a + c), float(a + c + w))
        for a, c, w in zip(
            rng.uniform(10, 100, 3000),
            rng.uniform(0, 20, 3000),
            rng.uniform(1, 60, 3000),
            strict=False,
        )
    ]
    big_m = math.fsum(d.mean for d in dists)
    big_s = math.sqrt(math.fsum(d.variance for d in dists))
    totals = [big_m - big_s, big_m + 1.5 * big_s]
    got = conditional_means(dists, totals)
    np.testing.assert_allclose(got.sum(axis=0), totals, rtol=1e-12)
    # With 3000 items the total is close to normal and each item's conditional mean to
    # the bivariate-normal line (Berry-Esseen size: well within 2% of the slope's effect).
    expected = np.array(
        [[d.mean + d.variance / big_s**2 * (t - big_m) for t in totals] for d in dists]
    )
    assert (
        np.max(np.abs(got - expected))
        < 0.02 * 1.5 * big_s * max(d.variance for d in dists) / big_s**2 + 1e-6 * big_s
    )


def test_a_heavy_tail_no_grid_resolves_is_shared_from_trials_and_matches_a_reference() -> None:
    # P90/P10 = 10,000: a grid fine enough for the fit-out would hold the claim's tail over
    # billions of steps, and a coarse one put the fit-out's share below its own low end
    # (E[fit-out | T] < 40, read as -918 of its base before this was caught). The shares are
    # read from trials instead (with standard errors) and still add up to the contingency.
    # Reference: 4 million numpy draws, local-linear in a window around t_q.
    items = [
        LineItem("Fit-out", "triangular", low=40.0, most_likely=50.0, high=90.0),
        LineItem("Claim", "lognormal", low=1.0, high=1e4, low_pct=10, high_pct=90),
        LineItem("Flood", "fixed", most_likely=300.0, probability=0.1),
    ]
    est = Estimate(items=items)
    alloc = allocate(est, analyze(est, method="exact", levels=(50, 90, 99)))
    assert alloc.method == "simulation"
    rng = np.random.default_rng(20261202)
    n = 4_000_000
    fit_out = rng.triangular(40, 50, 90, n)
    sigma = math.log(1e4) / (2 * stats.norm.ppf(0.9))  # lognormal from P10 = 1, P90 = 1e4
    claim = rng.lognormal(math.log(1e4) / 2, sigma, n)
    flood = np.where(rng.random(n) < 0.1, 300.0, 0.0)
    total = fit_out + claim + flood
    for row in alloc.levels:
        assert math.fsum(row.shares) == pytest.approx(row.contingency, abs=1e-9 * abs(row.total))
        h = 0.01 * row.total
        for k, x in ((0, fit_out), (2, flood)):
            want, se = _local_linear(x, total, row.total, h)
            got = row.shares[k] + alloc.bases[k]
            assert abs(got - want) <= 4 * math.hypot(se, row.standard_errors[k]), (k, got, want)
        assert 40 <= row.shares[0] + alloc.bases[0] <= 90  # within the fit-out's own range
    # the far tail is the claim's
    assert alloc.at(99).shares[1] > 0.99 * alloc.at(99).contingency


def test_a_moderate_tail_stays_exact() -> None:
    # P90/P10 = 10 beside three triangular items: the grid resolves the body, the shares
    # stay exact (no standard errors) and match a 4M-draw numpy reference.
    items = [LineItem("Claim", "lognormal", low=100, high=1000, low_pct=10, high_pct=90)] + [
        LineItem(f"Works {k}", "triangular", low=900, most_likely=1000, high=1300) for k in range(3)
    ]
    est = Estimate(items=items)
    alloc = allocate(est, analyze(est, method="exact", levels=(50, 90)))
    assert alloc.method == "exact"
    rng = np.random.default_rng(7)
    n = 4_000_000
    sigma = math.log(10) / (2 * stats.norm.ppf(0.9))
    columns = [rng.lognormal(math.log(math.sqrt(1e5)), sigma, n)] + [
        rng.triangular(900, 1000, 1300, n) for _ in range(3)
    ]
    total = sum(columns)
    for row in alloc.levels:
        for k, x in enumerate(columns):
            want, se = _local_linear(x, total, row.total, 0.01 * total.std())
            assert abs(row.shares[k] + alloc.bases[k] - want) < 4 * se + 0.002 * total.std()


def test_allocation_and_comparison_stay_in_the_pure_engine() -> None:
    # numpy and scipy only: no Qt, plotting or workbooks, imported or reachable in the source
    root = Path(__file__).resolve().parents[1]
    probe = (
        "import json, sys, engine, engine.comparison\n"
        "from engine.allocation import allocate\n"
        "e = engine.Estimate(items=[engine.LineItem('Roof', 'triangular', low=1.0,"
        " most_likely=2.0, high=4.0), engine.LineItem('Hail', 'fixed', most_likely=3.0,"
        " probability=0.2)])\n"
        "allocate(e, engine.analyze(e, method='exact'))\n"
        "print(json.dumps(sorted({m.split('.')[0] for m in sys.modules})))\n"
    )
    out = subprocess.run(
        [sys.executable, "-c", probe], cwd=root, capture_output=True, text=True, check=True
    )
    roots = set(json.loads(out.stdout.strip().splitlines()[-1]))
    assert not roots & {"PySide6", "matplotlib", "openpyxl"}
    for folder in ("allocation", "comparison"):
        for path in sorted((root / "engine" / folder).glob("*.py")):
            for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
                if isinstance(node, ast.ImportFrom) and node.module:
                    assert node.module.split(".")[0] in {
                        "engine",
                        "numpy",
                        "scipy",
                        "collections",
                        "dataclasses",
                        "typing",
                        "math",
                        "time",
                        "__future__",
                    }, (path.name, node.module)
