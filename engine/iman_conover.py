"""Rank correlation induced among sampled items by Iman & Conover (1982).

Iman & Conover, "A distribution-free approach to inducing rank correlation among input
variables", Communications in Statistics - Simulation and Computation 11(3), 311-334:
build a score matrix S whose columns are random permutations of the van der Waerden scores
Phi^-1(i / (n + 1)); E = corr(S) = F F' and the target P = Q Q'; T = S F'^-1 Q' then has
exactly the product-moment correlation P (the F'^-1 step removes the sample's own chance
correlation). Each item's sample is reordered to the ranks of its column of T, so every
item keeps its own Latin hypercube (or random) sample exactly and only the pairing changes.

Arrays here are (items, trials): one contiguous row per item, as the items are sampled.
"""

from __future__ import annotations

from collections.abc import Sequence
from functools import lru_cache

import numpy as np
from scipy import linalg, special

from engine.parallel import run_split


def rank_to_pearson(rank: np.ndarray) -> np.ndarray:
    """Product-moment correlation of normal scores whose rank correlation is `rank`:
    r = 2 sin(pi r_s / 6) (Pearson 1907, for the bivariate normal)."""
    return 2 * np.sin(np.pi * np.asarray(rank, dtype=float) / 6)


def pearson_to_rank(pearson: np.ndarray) -> np.ndarray:
    """The inverse, r_s = (6 / pi) asin(r / 2)."""
    return 6 / np.pi * np.arcsin(np.asarray(pearson, dtype=float) / 2)


@lru_cache(maxsize=8)
def van_der_waerden(n: int) -> np.ndarray:
    """Phi^-1(i / (n + 1)), in single precision: the scores only decide an order, and the
    matrix products on them are the costly part of inducing correlation."""
    scores = special.ndtri(np.arange(1, n + 1) / (n + 1)).astype(np.float32)
    scores.setflags(write=False)
    return scores


def square_root(p: np.ndarray) -> np.ndarray:
    """A lower factor Q with Q Q' = p: Cholesky, or the symmetric root when p is only
    positive semi-definite (a repaired matrix sits on the edge of the valid set)."""
    try:
        return np.linalg.cholesky(p)
    except np.linalg.LinAlgError:
        w, v = np.linalg.eigh(p)
        return v * np.sqrt(np.maximum(w, 0.0))


def score_matrix(streams: Sequence[np.random.Generator], n: int) -> np.ndarray:
    """S: each item's row a random permutation of the van der Waerden scores, drawn from
    that item's own stream."""
    scores = van_der_waerden(n)
    s = np.empty((len(streams), n), dtype=scores.dtype)

    def fill(part: range) -> None:
        for k in part:
            np.take(scores, streams[k].permutation(n), out=s[k])

    run_split(fill, len(streams))
    return s


def induce(s: np.ndarray, target_factor: np.ndarray) -> np.ndarray:
    """T (items, trials) with product-moment correlation exactly Q Q' (the paper's
    T = S F'^-1 Q', transposed). The scores' rows have zero mean and equal sums of squares,
    so corr(S) is S S' divided by that sum."""
    e = (s @ s.T).astype(float) / float(s[0].astype(float) @ s[0])
    f = np.linalg.cholesky(e)
    mixing = target_factor @ linalg.solve_triangular(f, np.eye(len(f)), lower=True)
    return mixing.astype(s.dtype) @ s


def orders(t: np.ndarray) -> np.ndarray:
    """Per row, the trial indices in increasing order of t. Keys pack each value's sortable
    bits with its trial index in the low bits, so a plain (vectorised) sort of integers does
    what argsort does at about half the cost."""
    n = t.shape[1]
    bits = max(int(n - 1).bit_length(), 1)
    mask = np.uint64((1 << bits) - 1)
    # Positive doubles order like their bit patterns; shift every row above zero first.
    keys = np.subtract(t, t.min(axis=1, keepdims=True) - 1.0, dtype=np.float64).view(np.uint64)
    keys &= ~mask
    keys |= np.arange(n, dtype=np.uint64)
    keys.sort(axis=1)
    keys &= mask
    return keys.astype(np.intp)


class ImanConoverScores:
    """The `scores` hook of engine.simulation.simulate: uniform scores (items, trials) for
    one replicate, each item's own sample design reordered to the target rank correlation.

    `pearson` is the product-moment target for the normal scores (rank_to_pearson of the
    rank target). `last_order` and `last_ranks` keep the replicate's order and ranks
    (items, trials), so statistics of the sample need not sort it again.
    """

    def __init__(self, pearson: np.ndarray, sampling: str):
        self.factor = square_root(np.asarray(pearson, dtype=float))
        self.sampling = sampling
        self.last_order: np.ndarray | None = None
        self.last_ranks: np.ndarray | None = None

    def __call__(self, streams: list[np.random.Generator], n: int) -> np.ndarray:
        if n <= len(streams):
            raise ValueError(
                f"Iman-Conover needs more trials per replicate ({n}) than items ({len(streams)})."
            )
        t = induce(score_matrix(streams, n), self.factor)
        order = np.empty(t.shape, dtype=np.intp)
        ranks = np.empty_like(order)
        u = np.empty(t.shape)
        strata = np.arange(n)

        def reorder(part: range) -> None:
            order[part.start : part.stop] = orders(t[part.start : part.stop])
            for k in part:
                g = streams[k]
                ranks[k, order[k]] = strata
                if self.sampling == "lhs":
                    u[k, order[k]] = (strata + g.random(n)) / n
                else:
                    u[k, order[k]] = np.sort(g.random(n))

        run_split(reorder, len(streams))
        self.last_order, self.last_ranks = order, ranks
        return u
