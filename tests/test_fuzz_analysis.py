"""Randomised estimates through the whole chain: analyse (every method), allocate and write
the JSON report either work or raise the documented `InputError` naming the row; never an
internal error, and the shares always add up to the contingency. The mixes are what broke
before: items over several orders of magnitude, heavy lognormals beside narrow items, risk
events, point masses, named paths and a correlated pair. Seeded so a failure repeats."""

from __future__ import annotations

import numpy as np
import pytest

from engine import (
    CorrelationPair,
    CorrelationSpec,
    Estimate,
    InputError,
    LineItem,
    Settings,
    analyze,
)
from engine.allocation import allocate
from reports import write_report

FAMILIES = ("triangular", "pert", "uniform", "normal", "lognormal", "fixed", "discrete")


def random_item(rng: np.random.Generator, k: int) -> LineItem:
    family = str(rng.choice(FAMILIES))
    scale = 10 ** rng.uniform(0, 6)
    low = float(rng.uniform(-0.2, 1) * scale)
    ml = low + float(rng.uniform(0, 0.5) * scale)
    high = ml + float(rng.uniform(0.001, 2) * scale)
    common = {
        "probability": 1.0 if rng.random() < 0.6 else float(rng.uniform(0.001, 0.99)),
        "group": f"Group {rng.integers(3)}",
        "paths": (f"Path {rng.integers(3)}",) if rng.random() < 0.2 else (),
    }
    name = f"Item {k}"
    if family == "lognormal":
        low = abs(low) + 1
        ends = {"low_pct": 10.0, "high_pct": 90.0}
        return LineItem(name, family, low, None, low * 10 ** rng.uniform(0.1, 4), **ends, **common)
    if family == "normal":
        return LineItem(name, family, low, None, high, low_pct=10.0, high_pct=90.0, **common)
    if family == "uniform":
        return LineItem(name, family, low, None, high, **common)
    if family == "fixed":
        return LineItem(name, family, None, ml, None, **common)
    if family == "discrete":
        values = rng.uniform(-0.2, 1, 3).round(3) * scale
        return LineItem(
            name, family, values=tuple(zip(values, (0.5, 0.3, 0.2), strict=True)), **common
        )
    return LineItem(name, family, low, ml, high, **common)


@pytest.mark.parametrize("seed", range(60))
def test_random_estimates_analyse_allocate_and_report(seed: int, tmp_path) -> None:
    rng = np.random.default_rng(seed)
    items = [random_item(rng, k) for k in range(int(rng.integers(1, 10)))]
    correlation = CorrelationSpec()
    if rng.random() < 0.2:
        correlation = CorrelationSpec(default=float(rng.uniform(0.0, 0.9)))
    elif rng.random() < 0.15 and len(items) > 1:
        pair = CorrelationPair(items[0].name, items[1].name, float(rng.uniform(-1, 1)))
        correlation = CorrelationSpec(pairs=[pair])
    estimate = Estimate(items, correlation=correlation)
    method = str(rng.choice(["auto", "exact", "simulation"]))
    try:
        analysis = analyze(estimate, method=method, trials=5_000, seed=seed)
    except InputError as refused:  # a refusal names the item and the way out
        assert all(p.fix for p in refused.problems)
        return
    allocation = allocate(estimate, analysis)
    for row in allocation.levels:
        assert sum(row.shares) == pytest.approx(row.contingency, abs=1e-6 * max(1, abs(row.total)))
    write_report(tmp_path / "r.json", estimate, analysis, Settings(), allocation=allocation)
