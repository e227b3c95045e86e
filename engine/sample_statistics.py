"""Statistics of correlated item samples, gathered one replicate at a time.

Memory stays bounded by one replicate (items x trials) however many trials are run: each
replicate adds its covariances and rank correlations to running sums, and the results are
the averages over replicates. The order and ranks come from the Iman-Conover step, which
already knows them, so nothing is sorted twice.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from engine.distributions import Distribution
from engine.iman_conover import ImanConoverScores


def tie_averaged_ranks(values_ascending: np.ndarray) -> np.ndarray:
    """Ranks 0..n-1 of an ascending array, ties sharing their average rank (as Spearman's
    coefficient with ties is usually computed)."""
    n = len(values_ascending)
    starts = np.flatnonzero(np.r_[True, values_ascending[1:] != values_ascending[:-1]])
    ends = np.r_[starts[1:], n]
    return np.repeat((starts + ends - 1) / 2, ends - starts)


class CorrelatedSampleStatistics:
    """The `observe` hook of engine.simulation.simulate for an Iman-Conover run.

    Per replicate: the rank correlation achieved among the items' scores; each item's
    covariance with the total (var_i + sum_j cov_ij, its part in the total's variance); and
    each item's rank correlation with the total, ties averaged. Only items with point
    masses (risk events, discrete and fixed items) can tie, so only they are re-ranked.
    """

    def __init__(self, scores: ImanConoverScores, dists: Sequence[Distribution]):
        count = len(dists)
        self.scores = scores
        self.can_tie = [k for k, d in enumerate(dists) if d.parts()[0]]
        self.replicates = 0
        self.rank_sum = np.zeros((count, count))
        self.covariance_sum = np.zeros(count)
        self.with_total_sum = np.zeros(count)

    def __call__(self, values: np.ndarray, total: np.ndarray) -> None:
        order, ranks = self.scores.last_order, self.scores.last_ranks
        assert order is not None and ranks is not None and ranks.shape == values.shape
        n = values.shape[1]
        spread = n * (n * n - 1) / 12  # sum of squared centred ranks 0..n-1
        centred = ranks.astype(np.float32)
        centred -= (n - 1) / 2
        self.rank_sum += (centred @ centred.T).astype(float) / spread

        deviations = total - total.mean()
        self.covariance_sum += (values @ deviations) / (n - 1)

        order_total = np.argsort(total, kind="stable")
        t = np.empty(n)
        t[order_total] = tie_averaged_ranks(total[order_total])
        t -= t.mean()
        t_norm = np.sqrt(t @ t)
        if t_norm == 0:
            self.with_total_sum += np.nan
        else:
            norms = np.full(len(values), np.sqrt(spread))
            for k in self.can_tie:
                tied = np.empty(n)
                tied[order[k]] = tie_averaged_ranks(values[k, order[k]])
                centred[k] = tied - tied.mean()
                norms[k] = np.sqrt(centred[k].astype(float) @ centred[k])
            with np.errstate(invalid="ignore", divide="ignore"):
                self.with_total_sum += (centred @ t.astype(np.float32)) / (norms * t_norm)
        self.replicates += 1

    @property
    def achieved(self) -> np.ndarray:
        return self.rank_sum / self.replicates

    @property
    def variance_contributions(self) -> np.ndarray:
        return self.covariance_sum / self.replicates

    @property
    def rank_with_total(self) -> np.ndarray:
        """NaN for an item that never varies (its rank correlation is undefined)."""
        return self.with_total_sum / self.replicates
