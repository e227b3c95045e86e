"""E[X_i | T = t] for correlated items, from the trials whose total lies near t.

Kernel-weighted sums over the trials in a window around each wanted total t give the
conditional mean as the intercept of a weighted local-linear fit of X_i on T - t. Because
the items add up to T, the intercepts add up to exactly t (the same fit of T on T - t has
intercept t): the shares need no scaling. Standard errors come from deleting one group of
replicates at a time (the jackknife), replicates being independent. The analysis gathers
the sums at its levels during its own run (engine.simulation.level_windows); when it could
not, the correlated simulation is run again here with the analysis's seed, so its trials
are the analysis's own, and an observer keeps the sums for the exact tents.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from engine.dependence.correlation import Targets
from engine.exact.totals import SampleTotal
from engine.families.distributions import Distribution
from engine.progress import Progress
from engine.simulation.factor_pairing import fewest_per_replicate, pairing_for
from engine.simulation.independent_pairing import IndependentPairing
from engine.simulation.level_windows import KernelSums, tent_widths, window_edges
from engine.simulation.replicates import simulate
from engine.threads import PARTS

__all__ = [
    "SimulatedMeans",
    "from_sums",
    "gathered",
    "jackknife_error",
    "simulated_means",
    "window_edges",
]


@dataclass(frozen=True)
class SimulatedMeans:
    means: np.ndarray  # (items, totals)
    standard_errors: np.ndarray  # (items, totals)
    jackknife: np.ndarray  # (groups, items, totals): the estimates, one group left out
    window_trials: np.ndarray  # (totals,): trials with weight in each window
    total: SampleTotal | None  # the re-run's total (the analysis's own trials), if re-run


class WindowSums:
    """The `observe` hook: per replicate, kernel-weighted sums near each wanted total."""

    def __init__(self, totals: np.ndarray, below: np.ndarray, above: np.ndarray):
        self.totals, self.below, self.above = totals, below, above
        self.by_lane: list[list[tuple[np.ndarray, ...]]] = [[] for _ in range(PARTS)]

    def __call__(self, lane: int, values: np.ndarray, total: np.ndarray, positions) -> None:
        d = total[None, :] - self.totals[:, None]  # (totals, trials)
        w = np.where(d < 0, 1 + d / self.below[:, None], 1 - d / self.above[:, None])
        np.maximum(w, 0.0, out=w)
        used = np.nonzero(w.any(axis=0))[0]
        w, d = w[:, used], d[:, used]
        near = values[:, used]
        wd = w * d
        self.by_lane[lane].append(
            (
                w.sum(axis=1),
                wd.sum(axis=1),
                (wd * d).sum(axis=1),
                near @ w.T,
                near @ wd.T,
                (w > 0).sum(axis=1),
            )
        )

    def stacked(self) -> list[np.ndarray]:
        """Each sum stacked over replicates (replicate first), lanes in order."""
        rows = [r for lane in self.by_lane for r in lane]
        return [np.array([r[k] for r in rows]) for k in range(6)]


def local_linear(s0, s1, s2, a, b) -> np.ndarray:
    """Intercepts at d = 0 of the weighted fits x ~ alpha + beta d; a local mean where the
    window's totals do not vary (a point mass at t)."""
    det = s0 * s2 - s1 * s1
    flat = det <= 1e-12 * s0 * np.maximum(s2, 1e-300)
    safe = np.where(flat, 1.0, det)
    return np.where(flat, a / s0, (s2 * a - s1 * b) / safe)


def simulated_means(
    dists: Sequence[Distribution],
    aims: Targets | None,  # None: independent items
    totals: Sequence[float],
    window_edges: tuple[Sequence[float], Sequence[float]],
    *,
    trials: int,
    seed: int,
    sampling: str,
    progress: Progress | None = None,
) -> SimulatedMeans:
    """`window_edges`: (low, high) totals bounding each window, e.g. P_(q-0.02), P_(q+0.02)."""
    t = np.asarray(totals, dtype=float)
    sums = WindowSums(t, *tent_widths(t, window_edges))
    rerun = simulate(
        dists,
        trials=trials,
        seed=seed,
        sampling=sampling,
        pairing=IndependentPairing() if aims is None else pairing_for(aims),
        observe=sums,
        min_per_replicate=0 if aims is None else fewest_per_replicate(aims, len(dists)),
        progress=progress,
    )
    return from_sums(*sums.stacked(), total=rerun)


def from_sums(s0, s1, s2, a, b, counts, total: SampleTotal | None = None) -> SimulatedMeans:
    """The fit from its sums per jackknife group (group first: (groups, totals) and
    (groups, items, totals)), e.g. a KernelSums' `sums`."""
    pooled = [x.sum(axis=0) for x in (s0, s1, s2, a, b)]
    means = local_linear(*pooled)
    jack = np.array(
        [
            local_linear(*(p - x[r] for p, x in zip(pooled, (s0, s1, s2, a, b), strict=True)))
            for r in range(s0.shape[0])
        ]
    )
    return SimulatedMeans(means, jackknife_error(jack), jack, counts.sum(axis=0), total)


def gathered(sums: KernelSums | None, totals: Sequence[float]) -> SimulatedMeans | None:
    """The fit from the sums the analysis gathered in its run, if they are for `totals`."""
    if sums is None or not np.array_equal(sums.totals, np.asarray(totals, dtype=float)):
        return None
    return from_sums(*sums.sums)


def jackknife_error(leave_one_out: np.ndarray) -> np.ndarray:
    """Standard error from estimates with one replicate left out each (replicate first);
    sums of items' estimates (a group's) give the sum's error."""
    reps = leave_one_out.shape[0]
    spread = leave_one_out - leave_one_out.mean(axis=0)
    return np.sqrt((reps - 1) / reps * np.sum(spread * spread, axis=0))
