"""Allocation benchmark: the conditional-expectation allocation beside the analysis the user
already waits for, and beside a brute-force leave-one-out reference.

Run: .venv/bin/python bench/bench_allocation.py   (prints one table; about a minute)

Timings interleave ours and the reference (A, B, A, B) in one process; min and median.
"""

from __future__ import annotations

import math
import statistics
import sys
import time
import tracemalloc
from pathlib import Path

import numpy as np
from scipy import stats

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from engine import CorrelationSpec, Estimate, LineItem, analyze
from engine.allocation import allocate
from engine.allocation.exact_shares import conditional_means
from engine.exact.convolution import exact_total
from engine.families.distributions import Triangular

rows: list[tuple[str, str, str]] = []


def interleaved(a, b, repeat: int) -> tuple[list[float], list[float]]:
    ta, tb = [], []
    for _ in range(repeat):
        for fn, out in ((a, ta), (b, tb)):
            t0 = time.perf_counter()
            fn()
            out.append(time.perf_counter() - t0)
    return ta, tb


def said(ta: list[float], tb: list[float]) -> str:
    return (
        f"{min(ta):.2f} / {statistics.median(ta):.2f} s vs {min(tb):.2f} / "
        f"{statistics.median(tb):.2f} s; ratio of medians {statistics.median(ta) / statistics.median(tb):.2f}"
    )


def triangulars(n: int, seed: int) -> Estimate:
    rng = np.random.default_rng(seed)
    low = rng.uniform(50, 1000, n)
    mode = low + rng.uniform(0, 200, n)
    high = mode + rng.uniform(10, 800, n)
    return Estimate(
        items=[
            LineItem(
                f"Item {k}",
                "triangular",
                low=float(a),
                most_likely=float(m),
                high=float(b),
                group=f"G{k % 12}",
            )
            for k, (a, m, b) in enumerate(zip(low, mode, high, strict=True))
        ]
    )


def against_analysis(label: str, estimate: Estimate, repeat: int, **settings) -> None:
    analysis = analyze(estimate, **settings)
    ta, tb = interleaved(
        lambda: allocate(estimate, analysis), lambda: analyze(estimate, **settings), repeat
    )
    tracemalloc.start()
    allocate(estimate, analysis)
    peak = tracemalloc.get_traced_memory()[1] / 1e6
    tracemalloc.stop()
    rows.append((label, "allocate vs analyze: " + said(ta, tb), f"peak {peak:.0f} MB"))


def brute_force(dists, t: float) -> np.ndarray:
    """E[X_i | T = t] = int x f_i(x) f_rest(t - x) dx / f_T(t), the rest's density from its
    own exact total (central differences of its CDF), the integral by the trapezoid rule."""
    out = []
    for i, d in enumerate(dists):
        rest = exact_total([e for j, e in enumerate(dists) if j != i])
        lo, hi = d.bounds()
        x = np.linspace(lo, hi, 4001)
        h = rest.sd / 400
        f_rest = (rest.cdf(t - x + h) - rest.cdf(t - x - h)) / (2 * h)
        w = d.pdf(x) * f_rest
        out.append(np.trapezoid(x * w, x) / np.trapezoid(w, x))
    return np.array(out)


def against_brute_force(n: int) -> None:
    rng = np.random.default_rng(n)
    dists = [
        Triangular(float(a), float(a + c), float(a + c + w))
        for a, c, w in zip(
            rng.uniform(50, 1000, n), rng.uniform(0, 200, n), rng.uniform(10, 800, n), strict=True
        )
    ]
    total = exact_total(dists)
    t = float(total.ppf(0.8))
    ta, tb = interleaved(lambda: conditional_means(dists, [t]), lambda: brute_force(dists, t), 3)
    gap = np.max(np.abs(conditional_means(dists, [t])[:, 0] - brute_force(dists, t))) / total.sd
    rows.append(
        (
            f"{n} triangular items at P80",
            "ours vs brute-force leave-one-out: " + said(ta, tb),
            f"largest difference {gap:.1e} sd",
        )
    )


def normal_accuracy(n: int) -> None:
    # E[X_i | T = t] = mu_i + s_i^2 / S^2 (t - M): bivariate normal conditional mean.
    rng = np.random.default_rng(3)
    means, sds = rng.uniform(100, 900, n), rng.uniform(5, 120, n)
    z = stats.norm.ppf(0.9)
    estimate = Estimate(
        items=[
            LineItem(f"N{k}", "normal", low=m - z * s, high=m + z * s, low_pct=10, high_pct=90)
            for k, (m, s) in enumerate(zip(means, sds, strict=True))
        ]
    )
    analysis = analyze(estimate, method="exact", levels=(50, 80, 90, 99))
    alloc = allocate(estimate, analysis)
    s2 = float(np.sum(sds**2))
    worst = 0.0
    for row in alloc.levels:
        want = means + sds**2 / s2 * (row.total - means.sum())
        got = np.array(row.shares) + np.array(alloc.bases)
        worst = max(worst, float(np.max(np.abs(got - want))) / math.sqrt(s2))
    adds = max(abs(math.fsum(r.shares) - r.contingency) / r.total for r in alloc.levels)
    rows.append(
        (
            f"{n} normal items, P50-P99",
            "against the closed form",
            f"largest error {worst:.1e} sd; shares add up to {adds:.0e} of the total",
        )
    )


def correlated(n: int) -> None:
    estimate = triangulars(n, seed=7)
    estimate.correlation = CorrelationSpec(default=0.3)
    against_analysis(f"{n} correlated items x 100k trials", estimate, 3, trials=100_000, seed=1)


if __name__ == "__main__":
    normal_accuracy(500)
    against_brute_force(40)
    against_analysis("500 triangular items, exact", triangulars(500, 1), 5, method="exact")
    against_analysis("10,000 triangular items, exact", triangulars(10_000, 2), 2, method="exact")
    correlated(200)
    width = max(len(r[0]) for r in rows)
    for label, timing, extra in rows:
        print(f"{label:<{width}}  {timing}  {extra}")
