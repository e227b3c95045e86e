"""Sampling a replicate's items family by family: one vectorised call for all the items of
a family instead of one call per item.

A correlated replicate is (items, trials) scores, a few thousand trials each; called item by
item, numpy spends more time starting operations than computing them, and the two engine
threads queue for the interpreter between the calls. Each family's batch applies the same
arithmetic as its own `sample`, with the parameters as columns, so the values are the
same to the last bit (tests/test_batch_sampling.py).
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from itertools import groupby

import numpy as np
from scipy import special

from engine.families.distributions import (
    Beta,
    Distribution,
    Lognormal,
    Normal,
    Occurrence,
    Triangular,
    Uniform,
    beta_tables,
)
from engine.families.tabulated_inverse import TabulatedInverse

# scores (rows, n) -> values (rows, n), for the rows of one group of items
RowSampler = Callable[[np.ndarray], np.ndarray]


def _column(dists: Sequence[Distribution], value: Callable[[Distribution], float]) -> np.ndarray:
    return np.array([value(d) for d in dists], dtype=float)[:, None]


def _uniform(dists: Sequence[Uniform]) -> RowSampler:
    low, width = _column(dists, lambda d: d.low), _column(dists, lambda d: d.high - d.low)
    return lambda u: low + width * u


def _triangular(dists: Sequence[Triangular]) -> RowSampler:
    low, width = _column(dists, lambda d: d.low), _column(dists, lambda d: d.high - d.low)
    m = _column(dists, lambda d: d.mode_fraction)
    rest = 1 - m

    def sample(u: np.ndarray) -> np.ndarray:
        # Triangular.ppf's two branches, in place
        y = u * m
        np.sqrt(y, out=y)
        right = 1 - u
        right *= rest
        np.maximum(right, 0.0, out=right)
        np.sqrt(right, out=right)
        np.subtract(1, right, out=right)
        np.copyto(y, right, where=u >= m)
        y *= width
        y += low
        return y

    return sample


def _beta(dists: Sequence[Beta]) -> RowSampler:
    beta_tables(dists)  # ~2 ms a table the first time, built together on both threads
    table = TabulatedInverse.stack([d.inverse_table for d in dists])
    low, scale = _column(dists, lambda d: d.low), _column(dists, lambda d: d.scale)

    def sample(u: np.ndarray) -> np.ndarray:
        y = table(u)
        y *= scale
        y += low
        return y

    return sample


def _normal(dists: Sequence[Normal]) -> RowSampler:
    mu, sigma = _column(dists, lambda d: d.mu), _column(dists, lambda d: d.sigma)
    return lambda u: mu + sigma * special.ndtri(u)


def _lognormal(dists: Sequence[Lognormal]) -> RowSampler:
    mu, sigma = _column(dists, lambda d: d.mu), _column(dists, lambda d: d.sigma)
    return lambda u: np.exp(mu + sigma * special.ndtri(u))


def _occurrence(dists: Sequence[Occurrence]) -> RowSampler:
    """Occurrence._invert on every row at once: scores in the occurring parts are mapped
    onto the impact's scale, the impacts drawn as a batch, and the rest set to zero."""
    impact = _batch([d.impact for d in dists])
    p = _column(dists, lambda d: d.p)
    below = _column(dists, lambda d: d.below_zero())

    def sample(u: np.ndarray) -> np.ndarray:
        if not below.any():  # no impact below zero (the usual case): the same, fewer passes
            at_zero = u <= 1 - p
            mapped = u - (1 - p)
            mapped /= p
            np.minimum(mapped, 1.0, out=mapped)
        else:
            low_part = u < below
            at_zero = ~low_part & (u <= below + 1 - p)
            mapped = np.where(low_part, u / p, np.clip((u - (1 - p)) / p, 0.0, 1.0))
        np.copyto(mapped, 0.5, where=at_zero)  # inside any table; these values become 0
        out = impact(mapped)
        np.copyto(out, 0.0, where=at_zero)
        return out

    return sample


_FAMILIES: dict[type, Callable[[Sequence], RowSampler]] = {
    Uniform: _uniform,
    Triangular: _triangular,
    Beta: _beta,
    Normal: _normal,
    Lognormal: _lognormal,
}


def _kind(dist: Distribution) -> tuple[type, ...]:
    if isinstance(dist, Occurrence):
        return (Occurrence, *_kind(dist.impact))
    return (type(dist),)


def _batch(dists: Sequence[Distribution]) -> RowSampler:
    """One sampler for items all of one kind (see _kind)."""
    kind = type(dists[0])
    if kind is Occurrence:
        return _occurrence(dists)
    if kind in _FAMILIES:
        return _FAMILIES[kind](dists)
    return lambda u: np.stack([d.sample(row) for d, row in zip(dists, u, strict=True)])


class BatchSampler:
    """Values (items, n) at scores (items, n) for a fixed list of items, grouped by kind."""

    def __init__(self, dists: Sequence[Distribution]):
        order = sorted(range(len(dists)), key=lambda k: [c.__name__ for c in _kind(dists[k])])
        self.groups: list[tuple[np.ndarray, RowSampler]] = []
        for _, members in groupby(order, key=lambda k: _kind(dists[k])):
            rows = np.array(list(members))
            self.groups.append((rows, _batch([dists[k] for k in rows])))

    def __call__(self, u: np.ndarray, out: np.ndarray | None = None) -> np.ndarray:
        out = np.empty(u.shape) if out is None else out
        for rows, sample in self.groups:
            out[rows] = sample(u[rows])
        return out
