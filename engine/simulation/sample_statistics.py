"""Statistics of correlated item samples, gathered one replicate at a time.

Memory stays bounded by one replicate (items x trials) however many trials are run: each
replicate adds its covariances and rank correlations to running sums, and the results are
the averages over replicates. Each item's order comes from the Iman-Conover step, which
already knows it, so nothing is sorted twice.
"""

from __future__ import annotations

from collections.abc import Sequence
from functools import lru_cache

import numpy as np

from engine.families.distributions import Distribution
from engine.simulation.workspace import Workspace
from engine.threads import PARTS


def tie_averaged_ranks(ascending: np.ndarray) -> np.ndarray:
    """Ranks 0..n-1 along the last axis of values in ascending order, ties sharing their
    average rank (as Spearman's coefficient with ties is usually computed). Each run of
    equal values is found once over the whole array, and its middle read back by run."""
    rows = np.atleast_2d(ascending)
    n = rows.shape[-1]
    fresh = np.empty(rows.shape, dtype=bool)  # where a run of equal values begins
    fresh[:, 0] = True
    np.not_equal(rows[:, 1:], rows[:, :-1], out=fresh[:, 1:])
    starts = np.flatnonzero(fresh)
    ends = np.empty_like(starts)
    ends[:-1] = starts[1:]
    ends[-1] = fresh.size
    middle = (starts + ends - 1) / 2 - (starts // n) * n  # each run's average rank in its row
    run = np.cumsum(fresh.ravel(), dtype=np.intp)
    run -= 1
    return middle.take(run).reshape(np.shape(ascending))


@lru_cache(maxsize=2)
def _centred_ranks(rows: int, n: int) -> np.ndarray:
    """0..n-1 less their mean, float32, once for each row (rows * n)."""
    strata = np.arange(n, dtype=np.float32) - np.float32((n - 1) / 2)
    tiled = np.tile(strata, rows)
    tiled.setflags(write=False)
    return tiled


# Trials whose ranks are gathered (the first replicates of each lane, so the same on every
# machine): rank correlations from 50,000 trials are within about 0.005 of those from all,
# and ranking every trial of 10,000 items cost a sixth of the run.
RANKED_TRIALS = 50_000


class CorrelatedSampleStatistics:
    """The `observe` hook of engine.simulation.replicates.simulate for an Iman-Conover run.

    Per replicate: the rank correlation achieved among the (measured) items' scores; each item's
    covariance with the total (var_i + sum_j cov_ij, its part in the total's variance); and
    each item's rank correlation with the total, ties averaged. Only items with point
    masses (risk events, discrete and fixed items) can tie, so only they are re-ranked.
    Each lane adds to its own sums and the lanes are added in order at the end, so the
    averages are the same however the two threads interleave.
    """

    def __init__(self, dists: Sequence[Distribution], measured: np.ndarray | None = None):
        """`measured`: the items whose rank correlations are gathered (all by default); the
        items x items products cost items^2 x trials, too much for thousands of items."""
        count = len(dists)
        self.can_tie = np.array([k for k, d in enumerate(dists) if d.parts()[0]], dtype=np.intp)
        self.replicates = np.zeros(PARTS, dtype=int)
        self.ranked = np.zeros(PARTS, dtype=int)  # replicates whose ranks were gathered
        self.ranked_trials = np.zeros(PARTS, dtype=int)
        self.measured = None if measured is None or len(measured) == count else measured
        shown = count if self.measured is None else len(self.measured)
        self.rank_sum = np.zeros((PARTS, shown, shown))
        self.covariance_sum = np.zeros((PARTS, count))
        self.with_total_sum = np.zeros((PARTS, count))
        self.work = [Workspace() for _ in range(PARTS)]

    def __call__(self, lane: int, values: np.ndarray, total: np.ndarray, positions: np.ndarray):
        n = values.shape[1]
        deviations = total - total.mean()
        self.covariance_sum[lane] += (values @ deviations) / (n - 1)
        self.replicates[lane] += 1
        if self.ranked_trials[lane] < RANKED_TRIALS // PARTS:
            self._ranks(lane, values, total, positions)
            self.ranked[lane] += 1
            self.ranked_trials[lane] += n

    def _ranks(self, lane: int, values: np.ndarray, total: np.ndarray, positions: np.ndarray):
        n = values.shape[1]
        spread = n * (n * n - 1) / 12  # sum of squared centred ranks 0..n-1
        centred = self.work[lane].get("centred", values.shape, np.float32)  # ranks less mean
        centred.reshape(-1)[positions.ravel()] = _centred_ranks(*values.shape)
        some = centred if self.measured is None else centred[self.measured]
        self.rank_sum[lane] += (some @ some.T).astype(float) / spread

        order_total = np.argsort(total, kind="stable")
        t = np.empty(n)
        t[order_total] = tie_averaged_ranks(total[order_total])
        t -= t.mean()
        t_norm = np.sqrt(t @ t)
        if t_norm == 0:
            self.with_total_sum[lane] += np.nan
            return
        with np.errstate(invalid="ignore", divide="ignore"):
            with_total = (centred @ t.astype(np.float32)) / (np.sqrt(spread) * t_norm)
            if len(self.can_tie):
                # the items with point masses, ranked again with ties averaged, in their
                # sorted order: each rank meets the total's rank at its own trial
                where = positions[self.can_tie]
                ranks = tie_averaged_ranks(values.reshape(-1)[where])
                ranks -= (n - 1) / 2  # averaging ties keeps the ranks' sum
                where -= (self.can_tie * n)[:, None]  # -> the trial of each sorted value
                products = np.einsum("ij,ij->i", ranks, t[where])
                with_total[self.can_tie] = products / (
                    np.sqrt(np.einsum("ij,ij->i", ranks, ranks)) * t_norm
                )
        self.with_total_sum[lane] += with_total

    @staticmethod
    def _mean(sums: np.ndarray, count: np.ndarray) -> np.ndarray:
        total = sums[0].copy()
        for lane in sums[1:]:
            total += lane
        return total / count.sum()

    @property
    def achieved(self) -> np.ndarray:
        """Clipped to [-1, 1]: the single-precision ranks put a comonotone pair's
        coefficient a few parts in 1e8 above 1, which no correlation can be."""
        return np.clip(self._mean(self.rank_sum, self.ranked), -1.0, 1.0)

    @property
    def variance_contributions(self) -> np.ndarray:
        return self._mean(self.covariance_sum, self.replicates)

    @property
    def rank_with_total(self) -> np.ndarray:
        """NaN for an item that never varies (its rank correlation is undefined)."""
        return self._mean(self.with_total_sum, self.ranked)
