"""The finish by simulation, for paths tied by shared activities or correlation: each
trial draws every activity once, sums each path, and takes the latest path.

The draws are the simulation engine's own (engine.simulation.replicates): independent
activities one stream per item, drawn once for all replicates; correlated ones paired by
Iman–Conover within each replicate, the path sums taken as each replicate is observed.
Criticality is the share of trials in which a path is the latest (a tie split evenly), with
the batch standard error across replicates, as for the percentiles.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

from engine.exact.totals import SampleTotal
from engine.families.distributions import Distribution
from engine.progress import Progress
from engine.schedule.finish import Finish
from engine.schedule.paths import SchedulePath
from engine.simulation.replicates import (
    Observer,
    Pairing,
    item_streams,
    replicate_layout,
    replicate_scores,
    sample_cumulants,
    simulate,
)


def simulated_finish(
    dists: Sequence[Distribution],
    paths: Sequence[SchedulePath],
    *,
    trials: int,
    seed: int,
    sampling: str = "lhs",
    pairing: Pairing | None = None,
    observe: Observer | None = None,
    progress: Progress | None = None,
) -> Finish:
    """`observe` (with `pairing` only) also sees each replicate, e.g. to gather the
    correlations achieved."""
    progress = progress or Progress()
    membership = np.zeros((len(paths), len(dists)))
    for p, path in enumerate(paths):
        membership[p, list(path.members)] = 1.0
    if pairing is None:
        sums = _independent_path_sums(dists, membership, trials, seed, sampling, progress)
    else:
        sums = _paired_path_sums(
            dists, membership, trials, seed, sampling, pairing, observe, progress
        )
    # sums: (paths, replicates, trials per replicate)
    latest = sums.max(axis=0)
    ties = sums == latest
    shares = (ties / ties.sum(axis=0)).mean(axis=2)  # (paths, replicates)
    replicates = sums.shape[1]
    return Finish(
        total=_sample_total(latest, sampling),
        path_totals=tuple(_sample_total(s, sampling) for s in sums),
        criticality=shares.mean(axis=1),
        criticality_se=shares.std(axis=1, ddof=1) / math.sqrt(replicates),
        method="simulation",
    )


def _sample_total(by_replicate: np.ndarray, sampling: str) -> SampleTotal:
    return SampleTotal(by_replicate, sample_cumulants(by_replicate.ravel()), sampling=sampling)


def _independent_path_sums(
    dists: Sequence[Distribution],
    membership: np.ndarray,
    trials: int,
    seed: int,
    sampling: str,
    progress: Progress,
) -> np.ndarray:
    """Each activity drawn once for all replicates from its own stream (as the simulation
    engine draws independent items) and added to every path it lies on."""
    replicates, per = replicate_layout(trials)
    streams = item_streams(seed, len(dists))
    sums = np.zeros((len(membership), replicates * per))
    for k, dist in enumerate(dists):
        on = np.flatnonzero(membership[:, k])
        if len(on):
            sums[on] += dist.sample(replicate_scores(streams[k], replicates, per, sampling))
        progress.report((k + 1) / len(dists))
    return sums.reshape(len(membership), replicates, per)


def _paired_path_sums(
    dists: Sequence[Distribution],
    membership: np.ndarray,
    trials: int,
    seed: int,
    sampling: str,
    pairing: Pairing,
    also: Observer | None,
    progress: Progress,
) -> np.ndarray:
    """The correlated simulation, observed: each replicate's activity values summed by path."""
    by_lane: dict[int, list[np.ndarray]] = {}

    def observe(lane: int, values: np.ndarray, total: np.ndarray, positions: np.ndarray) -> None:
        by_lane.setdefault(lane, []).append(membership @ values)
        if also is not None:
            also(lane, values, total, positions)

    simulate(
        dists,
        trials=trials,
        seed=seed,
        sampling=sampling,
        pairing=pairing,
        observe=observe,
        min_per_replicate=2 * len(dists),
        progress=progress,
    )
    rows = [s for lane in sorted(by_lane) for s in by_lane[lane]]
    return np.stack(rows, axis=1)
