"""Rank correlation induced among sampled items by Iman & Conover (1982).

Iman & Conover, "A distribution-free approach to inducing rank correlation among input
variables", Communications in Statistics - Simulation and Computation 11(3), 311-334:
build a score matrix S whose columns are random permutations of the van der Waerden scores
Phi^-1(i / (n + 1)); E = corr(S) = F F' and the target P = Q Q'; T = S F'^-1 Q' then has
exactly the product-moment correlation P (the F'^-1 step removes the sample's own chance
correlation).

Each item's sample is then placed in the order of its column of T (engine.simulation.replicates draws
it sorted and scatters it by that order). Arrays here are (items, trials): one contiguous
row per item, as the items are sampled.
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np
from scipy import linalg, special
from scipy.linalg import blas

from engine.simulation.ranking import orders, random_permutations
from engine.simulation.workspace import Workspace


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


def score_matrix(
    rng: np.random.Generator,
    items: int,
    n: int,
    keys: np.ndarray | None = None,
    out: np.ndarray | None = None,
) -> np.ndarray:
    """S: each item's row an independent random permutation of the van der Waerden scores.
    `keys` (uint64) and `out` (float32), both items x n, are work arrays to reuse."""
    return van_der_waerden(n).take(random_permutations(rng, items, n, out=keys), out=out)


def induce(s: np.ndarray, target_factor: np.ndarray, out: np.ndarray | None = None) -> np.ndarray:
    """T (items, trials) with product-moment correlation exactly Q Q' (the paper's
    T = S F'^-1 Q', transposed). The scores' rows have zero mean and equal sums of squares,
    so corr(S) is S S' divided by that sum."""
    # S S' by the symmetric rank-k update (half a product; np.linalg.cholesky reads only
    # the lower triangle it fills), then Q F^-1 as a triangular solve: Q F^-1 F = Q.
    e = blas.ssyrk(1.0, s.T, trans=1, lower=1).astype(float) / float(s[0].astype(float) @ s[0])
    f = np.linalg.cholesky(e)
    mixing = linalg.solve_triangular(f, target_factor.T, trans="T", lower=True).T
    return np.matmul(mixing.astype(s.dtype), s, out=out)


def against_the_rest(pearson: np.ndarray) -> np.ndarray:
    """Items on the minority side of the leading eigenvector of the target: those ranked
    against the others (a pair at -1: one of the two). With positive coefficients there are
    none (Perron-Frobenius). The Latin hypercube mirrors their within-stratum position, so a
    pair at -1 is exactly countermonotone (engine.simulation.replicates.sorted_designs)."""
    if len(pearson) < 2:
        return np.array([], dtype=np.intp)
    leading = np.linalg.eigh(pearson)[1][:, -1]
    if np.sum(leading < 0) > np.sum(leading > 0):
        leading = -leading
    return np.flatnonzero(leading < -1e-9)


class ImanConoverPairing:
    """The `pairing` hook of engine.simulation.replicates.simulate: for one replicate, each item's
    trials in the order of its column of T, so every item keeps its own sample exactly
    and only the pairing changes.

    `pearson` is the product-moment target for the normal scores (rank_to_pearson of the
    rank target). Called from both engine threads at once, each with its own stream.
    """

    def __init__(self, pearson: np.ndarray):
        pearson = np.asarray(pearson, dtype=float)
        self.factor = square_root(pearson)
        self.mirrored = against_the_rest(pearson)

    def __call__(self, rng: np.random.Generator, items: int, n: int, work: Workspace) -> np.ndarray:
        if n <= items:
            raise ValueError(
                f"Iman–Conover needs more trials per replicate ({n}) than items ({items})."
            )
        keys = work.get("keys", (items, n), np.uint64)
        s = score_matrix(rng, items, n, keys=keys, out=work.get("s", (items, n), np.float32))
        t = induce(s, self.factor, out=work.get("t", (items, n), np.float32))
        return orders(t, out=keys)  # the permutations' keys are done with
