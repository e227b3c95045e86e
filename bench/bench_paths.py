"""Schedule benchmark: the finish of parallel paths beside the same items summed, and the
exact finish's accuracy against the closed form F(t)^n.

Timed interleaved (paths, sum, paths, sum...) in one process, the whole `analyze` call each
time; min and median printed with their ratio. Run: .venv/bin/python bench/bench_paths.py
"""

from __future__ import annotations

import statistics
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from engine import Estimate, LineItem, analyze

ROUNDS = 5


def schedule(paths: int, per_path: int, shared: bool, seed: int) -> list[LineItem]:
    rng = np.random.default_rng(seed)
    items = []
    for p in range(paths):
        for k in range(per_path):
            low = float(rng.uniform(5, 20))
            mode = low + float(rng.uniform(1, 5))
            high = mode + float(rng.uniform(2, 25))
            items.append(LineItem(f"P{p} A{k}", "triangular", low, mode, high, paths=(f"P{p}",)))
    if shared:
        every = tuple(f"P{p}" for p in range(paths))
        items.append(LineItem("Shared start", "pert", 5, 8, 20, paths=every))
    return items


def interleaved(paths_call, sum_call) -> tuple[list[float], list[float]]:
    a, b = [], []
    for _ in range(ROUNDS):
        for fn, out in ((paths_call, a), (sum_call, b)):
            t0 = time.perf_counter()
            fn()
            out.append(time.perf_counter() - t0)
    return a, b


def report(name: str, a: list[float], b: list[float]) -> None:
    print(
        f"{name:<44} paths min {min(a):7.3f} s med {statistics.median(a):7.3f} s | "
        f"sum min {min(b):7.3f} s med {statistics.median(b):7.3f} s | "
        f"ratio (min) {min(a) / min(b):5.2f}"
    )


def main() -> None:
    for paths, per_path, shared in ((5, 40, False), (20, 50, False), (5, 40, True), (20, 50, True)):
        items = schedule(paths, per_path, shared, seed=paths * 100 + per_path)
        plain = [i.with_changes(paths=()) for i in items]
        method = "simulation" if shared else "exact"
        kwargs = {"trials": 100_000, "seed": 1} if shared else {}
        a, b = interleaved(
            lambda items=items, kwargs=kwargs: analyze(Estimate(items), **kwargs),
            lambda plain=plain, method=method, kwargs=kwargs: analyze(
                Estimate(plain), method=method, **kwargs
            ),
        )
        label = f"{paths} paths x {per_path} items, {'shared start, ' if shared else ''}{method}"
        report(label, a, b)
    # Accuracy: four triangular(80, 100, 120) paths, F(t) = F_tri(t)^4 (product of CDFs).
    items = [LineItem(f"A{k}", "triangular", 80, 100, 120, paths=(f"P{k}",)) for k in range(4)]
    finish = analyze(Estimate(items)).total
    t = np.linspace(80, 120, 4001)
    tri = np.where(t <= 100, (t - 80) ** 2 / 800, 1 - (120 - t) ** 2 / 800)
    error = np.max(np.abs(finish.cdf(t) - tri**4))
    print(
        f"4 x triangular(80,100,120): P(finish <= 100) = {float(finish.cdf(100.0)):.6f} (0.0625);"
    )
    print(
        f"  largest |F(t) - F_tri(t)^4| over [80, 120]: {error:.2e}; grid error bound {finish.error_bound:.3g} days"
    )


if __name__ == "__main__":
    main()
