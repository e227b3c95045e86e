"""Engine benchmark: the whole exact analysis against OpenTURNS, simulation speed, memory, far tails.

Run: .venv/bin/python bench/bench_engine.py [--quick] [--before=DIR]   (prints one table)
--before=DIR: a checkout of an earlier version, timed at 10,000 items interleaved with this one.

The exact rows time the user-facing call, `analyze(estimate, method="exact", levels=[50, 80,
90, 95, 99])`, against OpenTURNS building the same sum (LinearCombinationDistribution) and
computing the same five quantiles, interleaved in one process (ours, theirs, ours, ...), and
print the min and median of each and the ratio of the medians. Accuracy is in probability:
OpenTURNS' cdf at our percentiles against the level asked.
"""

from __future__ import annotations

import math
import statistics
import subprocess
import sys
import time
import tracemalloc
from pathlib import Path

import numpy as np
import openturns as ot

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from engine import Estimate, LineItem, analyze
from engine.exact.convolution import exact_total
from engine.families.distributions import Lognormal, Triangular
from engine.simulation.replicates import simulate
from engine.validation import build_distribution

LEVELS = [50.0, 80.0, 90.0, 95.0, 99.0]
rows: list[tuple[str, str, str]] = []


def best_of(fn, repeat: int = 3) -> tuple[float, object]:
    best, out = math.inf, None
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out


def triangular_items(n: int, seed: int) -> list[tuple[float, float, float]]:
    rng = np.random.default_rng(seed)
    low = rng.uniform(50, 1000, n)
    mode = low + rng.uniform(0, 200, n)
    return list(zip(low, mode, mode + rng.uniform(10, 800, n), strict=True))


def mixed_estimate(n: int, seed: int) -> Estimate:
    """Invented items cycling through triangular, PERT, uniform, normal, lognormal and risk
    events (triangular and fixed impacts)."""
    rng = np.random.default_rng(seed)
    items = []
    for k in range(n):
        low = float(rng.uniform(50, 1000))
        ml = low + float(rng.uniform(0, 200))
        high = ml + float(rng.uniform(10, 800))
        kind = k % 7
        name = f"Item {k}"
        if kind == 0:
            items.append(LineItem(name, "triangular", low, ml, high))
        elif kind == 1:
            items.append(LineItem(name, "pert", low, ml, high))
        elif kind == 2:
            items.append(LineItem(name, "uniform", low, None, high))
        elif kind == 3:
            items.append(LineItem(name, "normal", low, None, high, low_pct=10, high_pct=90))
        elif kind == 4:
            items.append(LineItem(name, "lognormal", low, None, high, low_pct=10, high_pct=90))
        elif kind == 5:
            p = float(rng.uniform(0.05, 0.6))
            items.append(LineItem(name, "triangular", low, ml, high, probability=p))
        else:
            p = float(rng.uniform(0.05, 0.6))
            items.append(LineItem(name, "fixed", None, round(ml), None, probability=p))
    return Estimate(items=items)


def openturns_item(d):
    """The same distribution as OpenTURNS writes it."""
    name = type(d).__name__
    if name == "Occurrence":
        return ot.Mixture([ot.Dirac(0.0), openturns_item(d.impact)], [1 - d.p, d.p])
    if name == "Triangular":
        return ot.Triangular(d.low, d.mode, d.high)
    if name == "Beta":
        return ot.Beta(d.alpha, d.beta, d.low, d.high)
    if name == "Uniform":
        return ot.Uniform(d.low, d.high)
    if name == "Normal":
        return ot.Normal(d.mu, d.sigma)
    if name == "Lognormal":
        return ot.LogNormal(d.mu, d.sigma)
    if name == "Fixed":
        return ot.Dirac(d.value)
    raise TypeError(name)


def triangular_estimate(n: int, seed: int) -> Estimate:
    return Estimate(
        items=[
            LineItem(f"Item {k}", "triangular", float(a), float(c), float(b))
            for k, (a, c, b) in enumerate(triangular_items(n, seed))
        ]
    )


def exact_vs_openturns(label: str, estimate: Estimate, repeat: int, reference: bool) -> None:
    """`reference`: False where OpenTURNS would take hours (it grows ~n^2 on risk events:
    78 s at 500 mixed items here); ours alone is timed then."""
    n = len(estimate.items)
    dists = [build_distribution(i) for i in estimate.items]
    q = np.array(LEVELS) / 100

    def ours():
        return np.array([r.value for r in analyze(estimate, method="exact", levels=LEVELS).levels])

    def theirs():
        parts = [openturns_item(d) for d in dists]
        dist = ot.LinearCombinationDistribution(parts, [1.0] * n)
        return dist, np.array([dist.computeQuantile(float(v))[0] for v in q])

    ours_t, theirs_t = [], []
    for _ in range(repeat):  # interleaved: ours, theirs, ours, theirs...
        t0 = time.perf_counter()
        values = ours()
        ours_t.append(time.perf_counter() - t0)
        if reference:
            t0 = time.perf_counter()
            dist, _ = theirs()
            theirs_t.append(time.perf_counter() - t0)
    a = statistics.median(ours_t)
    timing = f"ours min {min(ours_t) * 1e3:.1f} / median {a * 1e3:.1f} ms"
    if not reference:
        rows.append((f"analyze exact, {n} {label}", timing, "OpenTURNS not run (hours)"))
        return
    gap = max(abs(dist.computeCDF(float(v)) - level) for v, level in zip(values, q, strict=True))
    b = statistics.median(theirs_t)
    rows.append(
        (
            f"analyze exact, {n} {label}",
            f"{timing}, OpenTURNS min {min(theirs_t) * 1e3:.1f} / median {b * 1e3:.1f} ms",
            f"ratio {a / b:.2f}; |F_OT(ours) - q| {gap:.1e}",
        )
    )


# One first and two warm calls of analyze at 10,000 mixed items, in a fresh process (the
# per-item caches start empty); prints "first warm warm" in seconds.
FRESH_RUN = """
import sys, time
sys.path.insert(0, "bench")
from bench_engine import LEVELS, mixed_estimate
from engine import analyze
estimate = mixed_estimate(10_000, 10_000)
times = []
for _ in range(3):
    t0 = time.perf_counter()
    analyze(estimate, method="exact", levels=LEVELS)
    times.append(time.perf_counter() - t0)
print(*times)
"""


def ten_thousand_items(runs: int = 5, before: Path | None = None) -> None:
    """First call (fresh process) and warm call at 10,000 mixed items; with `before` (a
    checkout of an earlier version, e.g. from `git archive`), interleaved with it."""
    trees = {"ours": Path(__file__).resolve().parents[1]}
    if before is not None:
        trees["before"] = before
    times: dict[str, list[list[float]]] = {name: [] for name in trees}
    for _ in range(runs):
        for name, tree in trees.items():
            out = subprocess.run(
                [sys.executable, "-c", FRESH_RUN], cwd=tree, capture_output=True, text=True
            )
            times[name].append([float(v) for v in out.stdout.split()])
    for name, runs_of in times.items():
        first = [r[0] for r in runs_of]
        warm = [w for r in runs_of for w in r[1:]]
        rows.append(
            (
                f"analyze exact, 10,000 mixed items ({name})",
                f"first call min {min(first):.2f} / median {statistics.median(first):.2f} s, "
                f"warm min {min(warm):.2f} / median {statistics.median(warm):.2f} s",
                "target < 1 s",
            )
        )


def simulation_speed() -> None:
    dists = [Triangular(*t) for t in triangular_items(100, seed=7)]
    t, _ = best_of(lambda: simulate(dists, trials=100_000, seed=1, sampling="lhs"))
    rows.append(("simulation, 100 items x 100k LHS", f"{t:.3f} s", "target < 0.5 s"))


def peak_memory() -> None:
    dists = [Triangular(*t) for t in triangular_items(500, seed=500)]
    tracemalloc.start()
    exact_total(dists)
    exact_peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.reset_peak()
    simulate(dists[:100], trials=100_000, seed=1)
    sim_peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    rows.append(
        (
            "peak memory (tracemalloc)",
            f"exact 500 items {exact_peak / 2**20:.1f} MiB",
            f"simulation 100 x 100k {sim_peak / 2**20:.1f} MiB",
        )
    )


def heavy_lognormal_tail(trials: int = 20_000_000, chunk: int = 2_000_000) -> None:
    # six lognormals stated by P10 and P90 with P90/P10 ratios 8..15 (invented)
    ratios = [8, 9, 10, 12, 14, 15]
    medians = [100, 250, 60, 400, 30, 150]
    z90 = 1.2815515655446004
    params = [(math.log(m), math.log(r) / (2 * z90)) for m, r in zip(medians, ratios, strict=True)]
    ours = exact_total([Lognormal(mu, s) for mu, s in params]).ppf(np.array([0.9, 0.99]))
    ot_dist = ot.LinearCombinationDistribution([ot.LogNormal(mu, s) for mu, s in params], [1.0] * 6)
    theirs = np.array([ot_dist.computeQuantile(q)[0] for q in (0.9, 0.99)])
    rng = np.random.default_rng(20260101)
    parts = []
    for _ in range(trials // chunk):
        x = np.zeros(chunk)
        for mu, s in params:
            x += rng.lognormal(mu, s, chunk)
        parts.append(np.quantile(x, [0.9, 0.99]))  # chunk quantiles: their spread is the SE
    per_chunk = np.array(parts)
    ref = per_chunk.mean(axis=0)
    se = per_chunk.std(axis=0, ddof=1) / math.sqrt(len(parts))
    for i, level in enumerate(("P90", "P99")):
        rows.append(
            (
                f"6 heavy lognormals {level}",
                f"simulation {ref[i]:,.1f} (SE {se[i]:.1f}, {trials / 1e6:.0f}M)",
                f"ours {100 * (ours[i] / ref[i] - 1):+.3f}%, OpenTURNS {100 * (theirs[i] / ref[i] - 1):+.3f}%",
            )
        )


def main() -> None:
    quick = "--quick" in sys.argv
    for n, repeat in ((50, 41), (500, 9), (5000, 3)):  # more runs where one is short
        exact_vs_openturns("triangular", triangular_estimate(n, n), repeat, reference=True)
    for n, repeat, reference in ((50, 9, True), (500, 3, True), (5000, 3, False)):
        exact_vs_openturns("mixed items", mixed_estimate(n, n), repeat, reference)
    before = next((Path(a.split("=", 1)[1]) for a in sys.argv if a.startswith("--before=")), None)
    ten_thousand_items(before=before)
    if quick:
        rows_print()
        return
    simulation_speed()
    peak_memory()
    heavy_lognormal_tail()
    rows_print()


def rows_print() -> None:
    widths = [max(len(r[i]) for r in rows) for i in range(3)]
    for r in rows:
        print("  ".join(c.ljust(w) for c, w in zip(r, widths, strict=True)))


if __name__ == "__main__":
    main()
