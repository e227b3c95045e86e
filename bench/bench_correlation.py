"""Correlated simulation at scale, against the same items simulated independently.

Cases (100k Latin hypercube trials each, invented estimates):
- 200 items with a full structure (default 0.3, five groups at 0.6, three named pairs at
  0.8): the whole `analyze` by block factors (now) against the same call by Iman-Conover on
  the dense matrix (the route before; forced by raising the block-factor threshold).
  Target: faster than before.
- 2,000 items with a default of 0.3: `analyze` against `simulate` of the same items
  independent. Target: at most 3x the independent simulation, under 1 GB.

Timings are interleaved in one process (A, B, A, B...) after a first run that builds each PERT
item's sampling tables; min and median are printed with their ratios. Peak memory is each
case's own, from a fresh subprocess (VmHWM: ru_maxrss would carry this process's peak
across fork and exec). Achieved rank correlations are printed
against the stated ones (mean and largest |difference| over the measured pairs).

Run: .venv/bin/python bench/bench_correlation.py [--quick]
"""

from __future__ import annotations

import statistics
import subprocess
import sys
import time
from collections.abc import Callable
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from engine import CorrelationPair, CorrelationSpec, Estimate, LineItem, analyze  # noqa: E402
from engine.dependence import correlation  # noqa: E402
from engine.simulation.replicates import simulate  # noqa: E402
from engine.validation import build_distribution  # noqa: E402

TRIALS = 100_000
REPEATS = 3
LIMIT_RATIO = 3.0
LIMIT_MB = 1024


def invented_estimate(items: int, structure: str) -> Estimate:
    """Work packages of a made-up plant extension, in k."""
    rng = np.random.default_rng(2024)
    families = ("triangular", "pert", "uniform")
    out = []
    for k in range(items):
        low = float(rng.uniform(50, 150))
        likely = low + float(rng.uniform(5, 50))
        high = likely + float(rng.uniform(10, 200))
        out.append(
            LineItem(
                f"package {k:05d}",
                families[k % 3],
                low,
                likely,
                high,
                probability=0.3 if k % 10 == 0 else 1.0,
                group=f"area {k % 5}",
            )
        )
    if structure == "default":
        spec = CorrelationSpec(default=0.3)
    else:
        spec = CorrelationSpec(
            pairs=[
                CorrelationPair(f"package {k:05d}", f"package {k + 5:05d}", 0.8) for k in (1, 7, 21)
            ],
            groups={f"area {g}": 0.6 for g in range(5)},
            default=0.3,
        )
    return Estimate(out, title="bench", correlation=spec)


def dense_route(estimate: Estimate) -> None:
    """The route before block factors: Iman-Conover on the dense matrix."""
    saved = correlation.FACTOR_ITEMS
    correlation.FACTOR_ITEMS = 10**9
    try:
        analyze(estimate, trials=TRIALS, seed=1)
    finally:
        correlation.FACTOR_ITEMS = saved


def interleaved(runs: dict[str, Callable[[], object]]) -> dict[str, list[float]]:
    times: dict[str, list[float]] = {name: [] for name in runs}
    for _ in range(REPEATS):
        for name, run in runs.items():
            started = time.perf_counter()
            run()
            times[name].append(time.perf_counter() - started)
    return times


MEMORY_CASE = r"""
import json, sys
sys.path.insert(0, {root!r})
sys.path.insert(0, {bench!r})
from bench_correlation import TRIALS, dense_route, invented_estimate
from engine import analyze
from engine.simulation.replicates import simulate
from engine.validation import build_distribution
estimate = invented_estimate({items}, {structure!r})
if {how!r} == "independent":
    simulate([build_distribution(i) for i in estimate.items], trials=TRIALS, seed=1)
elif {how!r} == "dense":
    dense_route(estimate)
else:
    analyze(estimate, trials=TRIALS, seed=1)
status = open("/proc/self/status").read().split("VmHWM:")[1]
print(json.dumps(int(status.split()[0]) / 1024))
"""


def peak_mb(items: int, structure: str, how: str) -> float:
    code = MEMORY_CASE.format(
        root=str(ROOT), bench=str(ROOT / "bench"), items=items, structure=structure, how=how
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    return float(out.stdout.strip().splitlines()[-1])


def case(label: str, items: int, structure: str, reference: str) -> None:
    estimate = invented_estimate(items, structure)
    dists = [build_distribution(i) for i in estimate.items]
    analyze(estimate, trials=TRIALS, seed=1)  # builds each PERT item's tables once
    runs: dict[str, Callable[[], object]] = {
        "block factors (analyze)": lambda: analyze(estimate, trials=TRIALS, seed=1)
    }
    if reference == "dense":
        runs["Iman-Conover, dense (analyze, before)"] = lambda: dense_route(estimate)
    else:
        runs["independent (simulate)"] = lambda: simulate(dists, trials=TRIALS, seed=1)
    times = interleaved(runs)
    ours, ref = (times[name] for name in runs)
    ratio_min, ratio_median = min(ours) / min(ref), statistics.median(ours) / statistics.median(ref)
    print(f"\n{label}: {items:,} items x {TRIALS:,} trials, {REPEATS} interleaved runs")
    print(f"  {'route':<40}{'min s':>8}{'median s':>10}{'peak MB':>9}")
    for name, how in zip(runs, ("analyze", reference), strict=True):
        mb = peak_mb(items, structure, how)
        print(
            f"  {name:<40}{min(times[name]):>8.2f}{statistics.median(times[name]):>10.2f}{mb:>9.0f}"
        )
    print(f"  ratio (block factors / reference): min {ratio_min:.2f}, median {ratio_median:.2f}")
    dependence = analyze(estimate, trials=TRIALS, seed=1).dependence
    summary = dependence.achieved_summary
    print(
        f"  achieved vs stated rank correlation over {summary.pairs:,} pairs of "
        f"{summary.items} items: mean |diff| {summary.mean_abs_deviation:.4f}, "
        f"largest {summary.max_abs_deviation:.4f}"
    )
    if reference == "dense":
        print(f"  target faster than before: {'met' if ratio_median < 1 else 'NOT met'}")
    else:
        ours_mb = peak_mb(items, structure, "analyze")
        met = ratio_median <= LIMIT_RATIO and ours_mb < LIMIT_MB
        print(
            f"  target <= {LIMIT_RATIO:g}x independent and < {LIMIT_MB} MB: "
            f"{'met' if met else 'NOT met'}"
        )


def main() -> None:
    case("Full structure", 200, "full", "dense")
    case("Default 0.3", 400 if "--quick" in sys.argv else 2_000, "default", "independent")


if __name__ == "__main__":
    main()
