"""Engine benchmark: exact totals against OpenTURNS, simulation speed, memory, far tails.

Run: .venv/bin/python bench/bench_engine.py   (prints one table)
"""

from __future__ import annotations

import math
import sys
import time
import tracemalloc
from pathlib import Path

import numpy as np
import openturns as ot

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from engine.exact.convolution import exact_total
from engine.families.distributions import Lognormal, Triangular
from engine.simulation.replicates import simulate

Q = np.arange(1, 100) / 100
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


def exact_vs_openturns(n: int) -> None:
    spec = triangular_items(n, seed=n)
    ours = [Triangular(*t) for t in spec]

    def theirs():
        dist = ot.LinearCombinationDistribution([ot.Triangular(*t) for t in spec], [1.0] * n)
        return np.array([dist.computeQuantile(float(q))[0] for q in Q])

    t_ours, total = best_of(lambda: exact_total(ours).ppf(Q))
    t_ot, ref = best_of(theirs)
    sd = math.sqrt(sum(d.variance for d in ours))
    gap = float(np.max(np.abs(total - ref))) / sd
    rows.append(
        (
            f"exact, {n} triangular",
            f"ours {t_ours:.3f} s, OpenTURNS {t_ot:.3f} s",
            f"time ratio {t_ours / t_ot:.2f}; largest P1..P99 gap {gap:.1e} sd",
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
    exact_vs_openturns(50)
    exact_vs_openturns(500)
    simulation_speed()
    peak_memory()
    heavy_lognormal_tail()
    widths = [max(len(r[i]) for r in rows) for i in range(3)]
    for r in rows:
        print("  ".join(c.ljust(w) for c, w in zip(r, widths, strict=True)))


if __name__ == "__main__":
    main()
