"""Rank correlation induced through block factors: the pairing for a default coefficient and
group coefficients at any number of items.

Each replicate draws normal scores z = loading * F[block] + own * e (plus a shared term per
named pair) and puts each item's sorted sample in the order of its row of z, as
Iman-Conover does with its T (engine.simulation.iman_conover), but without the n x n
factor and the items x items products: the cost is a few passes over the (items, trials)
scores and one sort per item. The rank correlation achieved is that of a normal copula,
(6 / pi) asin(r / 2) for score correlation r (Pearson 1907), up to the sampling error of
each replicate's scores, which the replicates' spread includes in the standard errors.
The items' own terms (items x trials of them a replicate) are drawn by the Box-Muller
transform (engine.simulation.normal_scores), at half the cost of numpy's normal sampler.
"""

from __future__ import annotations

from collections.abc import Iterator

import numpy as np
from scipy import sparse

from engine.dependence.block_structure import FactorModel
from engine.dependence.correlation import Targets
from engine.simulation.iman_conover import ImanConoverPairing
from engine.simulation.normal_scores import standard_normals
from engine.simulation.ranking import unit_score_orders
from engine.simulation.workspace import Workspace

BLOCK_ROWS = 512  # items a block: a block's arrays (a few MB) stay in the shared cache


class FactorPairing:
    """The `pairing` hook of engine.simulation.replicates.simulate for a `FactorModel`.
    Called from both engine threads at once, each with its own stream and workspace."""

    def __init__(self, model: FactorModel):
        self.model = model
        self.block = model.block
        blocks = np.unique(model.block)
        self.one_block = int(blocks[0]) if len(blocks) == 1 else None
        self.loading = model.loading.astype(np.float32)[:, None]
        self.own = model.own.astype(np.float32)[:, None]
        self.root = model.factor_root.astype(np.float32)
        count, pairs = len(model.block), len(model.pair_items)
        columns = np.repeat(np.arange(pairs), 2)
        self.pair_terms = sparse.csr_matrix(
            (model.pair_weights.ravel().astype(np.float32), (model.pair_items.ravel(), columns)),
            shape=(count, pairs),
        )

    block_rows = BLOCK_ROWS

    def __call__(self, rng: np.random.Generator, items: int, n: int, work: Workspace) -> np.ndarray:
        positions = work.get("positions", (items, n), np.intp)
        for _ in self.blocks(rng, positions, work):
            pass
        return positions

    def blocks(
        self, rng: np.random.Generator, positions: np.ndarray, work: Workspace
    ) -> Iterator[tuple[int, np.ndarray]]:
        """Fills `positions` (items, n) block_rows items at a time, yielding each block as
        it is made (its first row, its rows of `positions`), so that the caller samples it
        while its arrays are still in cache: a 10,000-item replicate ran ~25 % slower whole."""
        items, n = positions.shape
        factors = self.root @ rng.standard_normal((len(self.root), n), dtype=np.float32)
        pairs = self.pair_terms.shape[1]
        pair_scores = rng.standard_normal((pairs, n), dtype=np.float32) if pairs else None
        z_work = work.get("z", (BLOCK_ROWS, n), np.float32)
        shared_work = work.get("shared", (BLOCK_ROWS, n), np.float32)
        scratch = work.get("normal scratch", (BLOCK_ROWS * n + 1,), np.float32)
        for start in range(0, items, BLOCK_ROWS):
            rows = slice(start, min(items, start + BLOCK_ROWS))
            count = rows.stop - start
            z, shared = z_work[:count], shared_work[:count]
            standard_normals(rng, z, scratch)
            z *= self.own[rows]
            if self.one_block is not None:  # a default alone: one factor, in one pass
                np.multiply(self.loading[rows], factors[self.one_block], out=shared)
            else:
                np.take(factors, self.block[rows], axis=0, out=shared)
                shared *= self.loading[rows]
            z += shared
            if pairs:
                z += self.pair_terms[rows] @ pair_scores
            unit_score_orders(z, out=positions[rows], work=shared.view(np.uint32))
            yield start, positions[rows]


def pairing_for(aims: Targets) -> FactorPairing | ImanConoverPairing:
    """Block factors when the stated structure has that form at scale, else Iman–Conover on
    the matrix used."""
    if aims.model is not None:
        return FactorPairing(aims.model)
    return ImanConoverPairing(aims.pearson_used)


def fewest_per_replicate(aims: Targets, items: int) -> int:
    """Iman–Conover needs more trials in a replicate than items; block factors do not. A
    re-run (the allocation's) must use the same rule to reproduce the analysis's trials."""
    return 0 if aims.model is not None else 2 * items
