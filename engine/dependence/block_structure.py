"""A default coefficient and group coefficients as blocks: checked, summed and induced without
an n x n matrix.

Items whose group has a stated coefficient form one block each; every other item is in the
rest block. Within block k every pair has coefficient w_k, across blocks the default a, and
named pairs override single entries. For 10,000 items the dense matrix is 800 MB and its
eigen-decomposition minutes; the block form needs a K x K matrix, K the number of blocks.

Its eigenvalues are known in closed form (without pairs): a vector summing to zero inside
block k and zero elsewhere is an eigenvector with eigenvalue 1 - w_k (multiplicity n_k - 1),
and on the K-dimensional space of vectors constant on each block the matrix acts as
B_kl = (1 - w_k) d_kl + sqrt(n_k n_l) (a + (w_k - a) d_kl). So the matrix is positive
semi-definite exactly when every 1 - w_k >= 0 (n_k >= 2) and B is.

The simulation induces it as block factors (`FactorModel`): normal scores
z_i = sqrt(w_k) F_k + sqrt(1 - w_k) e_i, with corr(F_k, F_l) = a / sqrt(w_k w_l), which has
corr(z_i, z_j) = w_k within block k and a across blocks; a named pair (i, j) adds
d = r_ij - (its block coefficient) as a shared term sqrt(|d|) G_ij on both, sign(d) on j,
paid for from the items' own variance 1 - w_k.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from engine.dependence.nearest_correlation import PSD_TOLERANCE
from engine.items import Estimate
from engine.simulation.iman_conover import rank_to_pearson

REST = ""  # the label of the block of items without a group coefficient


def _key(name: str) -> str:
    return name.strip().casefold()


@dataclass(frozen=True)
class Pair:
    """A named pair, resolved to item positions, overriding its block's coefficient."""

    a: int
    b: int
    coefficient: float
    row: int | None


@dataclass(frozen=True)
class BlockStructure:
    """The stated coefficients of an estimate in block form (rank or normal-score scale)."""

    names: list[str]
    block: np.ndarray  # (n,) the block of each item
    labels: list[str]  # (K,) each block's group, REST for the rest
    within: np.ndarray  # (K,) the coefficient within each block
    between: float  # the default, across blocks
    pairs: tuple[Pair, ...]

    @classmethod
    def from_estimate(cls, estimate: Estimate) -> BlockStructure:
        """Rank coefficients as `engine.dependence.correlation.build_matrix` states them: a
        pair over its group's coefficient over the default. A group of one item, or one
        whose coefficient is the default, adds nothing and joins the rest."""
        items = estimate.items
        spec = estimate.correlation
        stated = {_key(g): float(v) for g, v in spec.groups.items()}
        spelled = {_key(g): g.strip() for g in spec.groups}
        keys = [_key(i.group) if i.group.strip() else None for i in items]
        sizes: dict[str, int] = {}
        for k in keys:
            if k is not None and k in stated:
                sizes[k] = sizes.get(k, 0) + 1
        own = {k for k, size in sizes.items() if size >= 2 and stated[k] != spec.default}
        ordered = sorted(own)
        where = {k: b + 1 for b, k in enumerate(ordered)}
        block = np.array([where.get(k, 0) if k else 0 for k in keys], dtype=np.intp)
        within = np.array([float(spec.default), *(stated[k] for k in ordered)])
        index: dict[str, list[int]] = {}
        for k, item in enumerate(items):
            index.setdefault(_key(item.name), []).append(k)
        resolved: dict[tuple[int, int], Pair] = {}
        for pair in spec.pairs:
            for a in index.get(_key(pair.item_a), []):
                for b in index.get(_key(pair.item_b), []):
                    if a != b:
                        lo, hi = min(a, b), max(a, b)
                        resolved[lo, hi] = Pair(lo, hi, float(pair.coefficient), pair.row)
        return cls(
            [i.name for i in items],
            block,
            [REST, *(spelled[k] for k in ordered)],
            within,
            float(spec.default),
            tuple(resolved.values()),
        )

    @property
    def sizes(self) -> np.ndarray:
        return np.bincount(self.block, minlength=len(self.labels))

    def coefficient(self, a: int, b: int) -> float:
        """The block coefficient of items a and b, pairs left aside."""
        ka, kb = self.block[a], self.block[b]
        return float(self.within[ka]) if ka == kb else self.between

    def mapped(self, f: Callable[[np.ndarray], np.ndarray]) -> BlockStructure:
        """Every coefficient through f (e.g. rank to normal-score correlation)."""
        return BlockStructure(
            self.names,
            self.block,
            self.labels,
            np.asarray(f(self.within), dtype=float),
            float(f(np.asarray(self.between))),
            tuple(Pair(p.a, p.b, float(f(np.asarray(p.coefficient))), p.row) for p in self.pairs),
        )

    def pearson(self) -> BlockStructure:
        """The normal-score correlations that induce these rank correlations, 2 sin(pi r/6)
        (Pearson 1907), held in [-1, 1] (2 sin(pi/6) rounds to 1 - 1e-16)."""
        return self.mapped(lambda r: np.clip(rank_to_pearson(r), -1.0, 1.0))

    def linked_pairs(self) -> int:
        """How many pairs of items have a non-zero coefficient."""
        n = len(self.names)
        sizes = self.sizes
        inside = sizes * (sizes - 1) // 2
        count = int(np.sum(inside[self.within != 0]))
        if self.between != 0:
            count += n * (n - 1) // 2 - int(inside.sum())
        for p in self.pairs:
            count += (p.coefficient != 0) - (self.coefficient(p.a, p.b) != 0)
        return count

    def dense(self, items: np.ndarray | None = None) -> np.ndarray:
        """The matrix among `items` (all by default), for the few items a window or a
        report shows, and for tests."""
        items = np.arange(len(self.names)) if items is None else np.asarray(items)
        block = self.block[items]
        same = block[:, None] == block[None, :]
        matrix = np.where(same, self.within[block][:, None], self.between)
        where = {int(i): k for k, i in enumerate(items)}
        for p in self.pairs:
            if p.a in where and p.b in where:
                a, b = where[p.a], where[p.b]
                matrix[a, b] = matrix[b, a] = p.coefficient
        np.fill_diagonal(matrix, 1.0)
        return matrix

    def smallest_eigenvalue(self) -> float | None:
        """Exact without pairs (see the module's docstring); None with pairs, whose effect
        has no closed form."""
        if self.pairs:
            return None
        sizes = self.sizes.astype(float)
        used = sizes > 0
        n, w = sizes[used], self.within[used]
        root = np.sqrt(n)
        b = np.outer(root, root) * self.between
        b[np.diag_indices_from(b)] = (1 - w) + n * w
        inside = [1 - w_k for w_k, n_k in zip(w, n, strict=True) if n_k >= 2]
        return float(min([np.linalg.eigvalsh(b)[0], *inside]))

    def quadratic_form(self, s: np.ndarray) -> float:
        """s' M s: sum_i s_i^2 (1 - w_k) + a (sum s)^2 + sum_k (w_k - a)(sum_k s)^2 plus
        2 d s_a s_b for each pair, d its change from the block coefficient."""
        s = np.asarray(s, dtype=float)
        w = self.within[self.block]
        by_block = np.bincount(self.block, weights=s, minlength=len(self.labels))
        value = math.fsum(s * s * (1 - w)) + self.between * float(s.sum()) ** 2
        value += math.fsum((self.within - self.between) * by_block**2)
        value += math.fsum(
            2 * (p.coefficient - self.coefficient(p.a, p.b)) * s[p.a] * s[p.b] for p in self.pairs
        )
        return float(value)


@dataclass(frozen=True)
class FactorModel:
    """Normal scores with a block structure's correlations, from K block factors and one
    shared term per named pair (see the module's docstring)."""

    block: np.ndarray  # (n,)
    loading: np.ndarray  # (n,) sqrt(w_k) of the item's block
    own: np.ndarray  # (n,) the item's own share, sqrt(1 - w_k - sum |d| of its pairs)
    factor_root: np.ndarray  # (K, K) R with R R' = corr(F)
    pair_items: np.ndarray  # (P, 2)
    pair_weights: np.ndarray  # (P, 2) sqrt(|d|), and sign(d) sqrt(|d|)


def factor_model(structure: BlockStructure) -> FactorModel | None:
    """The factor form of a normal-score block structure, or None when it has none: a block
    with a coefficient <= 0 and a non-zero default, factor correlations that are not valid,
    or pairs that take more than an item's own variance."""
    w = structure.within
    a = structure.between
    if np.any(w < 0) or (a != 0 and np.any(w == 0)):
        return None
    with np.errstate(divide="ignore", invalid="ignore"):
        corr = np.where(w[:, None] * w[None, :] > 0, a / np.sqrt(np.outer(w, w)), 0.0)
    np.fill_diagonal(corr, 1.0)
    values, vectors = np.linalg.eigh(corr)
    if values[0] < -PSD_TOLERANCE or np.abs(corr).max() > 1 + 1e-12:
        return None
    root = vectors * np.sqrt(np.maximum(values, 0.0))
    spare = 1 - w[structure.block]
    items, weights = [], []
    for p in structure.pairs:
        d = p.coefficient - structure.coefficient(p.a, p.b)
        if d == 0:
            continue
        spare[p.a] -= abs(d)
        spare[p.b] -= abs(d)
        items.append((p.a, p.b))
        weights.append((math.sqrt(abs(d)), math.copysign(math.sqrt(abs(d)), d)))
    if np.any(spare < -1e-12):
        return None
    return FactorModel(
        structure.block,
        np.sqrt(w)[structure.block],
        np.sqrt(np.maximum(spare, 0.0)),
        root,
        np.array(items, dtype=np.intp).reshape(-1, 2),
        np.array(weights, dtype=float).reshape(-1, 2),
    )


def is_valid(structure: BlockStructure) -> bool | None:
    """Whether the coefficients can hold together; None when only the dense matrix can say
    (pairs beyond what the factor form carries)."""
    smallest = structure.smallest_eigenvalue()
    if smallest is not None:
        return smallest >= -PSD_TOLERANCE
    return True if factor_model(structure) is not None else None


def correlated_counts(structure: BlockStructure) -> tuple[int, int]:
    """Pairs with a non-zero stated coefficient, and the items they involve, counted from the
    blocks without an n x n matrix."""
    n = len(structure.names)
    sizes = np.bincount(structure.block, minlength=len(structure.within))
    inside = structure.within != 0
    across = structure.between != 0
    pairs = int(np.sum(np.where(inside, sizes * (sizes - 1) // 2, 0)))
    if across:
        pairs += (n * n - int(np.sum(sizes * sizes))) // 2
    own = sizes[structure.block]
    degree = np.where(inside[structure.block], own - 1, 0) + (n - own if across else 0)
    for pair in structure.pairs:
        same = structure.block[pair.a] == structure.block[pair.b]
        implied = inside[structure.block[pair.a]] if same else across
        change = int(pair.coefficient != 0) - int(implied)
        pairs += change
        degree[[pair.a, pair.b]] += change
    return pairs, int(np.count_nonzero(degree))
