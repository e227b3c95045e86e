"""The total by simulation: Latin hypercube or plain Monte Carlo, in independent replicates.

Every item draws from its own random stream (child `k` of the run's seed for item `k`), so
editing one item leaves every other item's draws unchanged: the change in the total is the
edit's effect, not fresh noise. Trials are drawn in replicates; each replicate is one
complete design, which bounds memory and gives the batch standard errors of `SampleTotal`.
Correlation, when given, is induced within each replicate by `scores` (engine.iman_conover):
the items' scores are then drawn together, and `observe` sees each replicate's item values
before they are summed (engine.sample_statistics gathers the drivers from them).
"""

from __future__ import annotations

from collections.abc import Callable, Sequence

import numpy as np

from engine.distributions import Distribution
from engine.parallel import run_split
from engine.progress import Progress
from engine.totals import Cumulants, SampleTotal

REPLICATES = 20
MIN_PER_REPLICATE = 500

# (rngs per item, trials in this replicate) -> uniform scores (items, trials): one row per item
ScoreMaker = Callable[[list[np.random.Generator], int], np.ndarray]
# (item values (items, trials), total (trials,)) of each replicate, before the next is drawn
Observer = Callable[[np.ndarray, np.ndarray], None]


def new_seed() -> int:
    """A fresh seed, recorded with the result so the run can be repeated exactly."""
    return int(np.random.SeedSequence().entropy % (2**63))


def item_streams(seed: int, count: int) -> list[np.random.Generator]:
    return [np.random.default_rng(s) for s in np.random.SeedSequence(seed).spawn(count)]


def replicate_scores(
    rng: np.random.Generator, replicates: int, m: int, sampling: str
) -> np.ndarray:
    """One item's scores for every replicate at once (replicates * m, replicate by
    replicate): a Latin hypercube design of m strata per replicate, or plain random."""
    if sampling == "lhs":
        strata = rng.permuted(
            np.broadcast_to(np.arange(m, dtype=np.float64), (replicates, m)), axis=1
        )
        strata += rng.random((replicates, m))
        strata /= m
        return strata.ravel()
    return rng.random(replicates * m)


def simulate(
    dists: Sequence[Distribution],
    *,
    trials: int,
    seed: int,
    sampling: str = "lhs",
    replicates: int = REPLICATES,
    scores: ScoreMaker | None = None,
    observe: Observer | None = None,
    min_per_replicate: int = 0,
    progress: Progress | None = None,
) -> SampleTotal:
    """Simulated total of the items; `scores` replaces independent sampling when given."""
    progress = progress or Progress()
    replicates, per = replicate_layout(trials, replicates, min_per_replicate)
    streams = item_streams(seed, len(dists))
    if scores is None:
        out = _independent(dists, streams, replicates, per, sampling, progress)
    else:
        out = np.zeros((replicates, per))
        for r in range(replicates):
            u = scores(streams, per)
            values = np.empty((len(dists), per))

            def draw(part: range, u=u, values=values) -> None:
                for k in part:
                    values[k] = dists[k].sample(u[k])

            run_split(draw, len(dists))
            np.sum(values, axis=0, out=out[r])
            if observe is not None:
                observe(values, out[r])
            progress.report((r + 1) / replicates)
    return SampleTotal(out, sample_cumulants(out.ravel()), sampling=sampling)


def _independent(
    dists: Sequence[Distribution],
    streams: list[np.random.Generator],
    replicates: int,
    per: int,
    sampling: str,
    progress: Progress,
) -> np.ndarray:
    """Each item drawn once for all replicates; the two halves of the items on two threads,
    each summing its own partial total."""
    done = [0] * 2

    def draw(part: range) -> np.ndarray:
        partial = np.zeros(replicates * per)
        half = 0 if part.start == 0 else 1
        for i, k in enumerate(part):
            partial += dists[k].sample(replicate_scores(streams[k], replicates, per, sampling))
            if i % 8 == 7:
                done[half] = i + 1
                progress.report(sum(done) / len(dists))
        return partial

    partials = run_split(draw, len(dists))
    total = partials[0]
    for p in partials[1:]:
        total += p
    progress.report(1.0)
    return total.reshape(replicates, per)


def sample_cumulants(x: np.ndarray) -> Cumulants:
    mean = float(x.mean())
    d = x - mean
    var = float(np.mean(d * d))
    k3 = float(np.mean(d**3))
    k4 = float(np.mean(d**4)) - 3 * var * var
    return Cumulants(mean, var, k3, k4)


def replicate_layout(
    trials: int, replicates: int = REPLICATES, min_per_replicate: int = 0
) -> tuple[int, int]:
    """(replicates, trials in each): at least MIN_PER_REPLICATE trials per replicate (or
    `min_per_replicate` if larger: Iman-Conover needs more trials than items), so a
    replicate's percentiles are meaningful, and at least two replicates for an error."""
    count = max(2, min(replicates, trials // max(MIN_PER_REPLICATE, min_per_replicate)))
    return count, max(trials // count, 1)
