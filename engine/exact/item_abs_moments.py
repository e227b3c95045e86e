"""E|X - mean|^3 of many items at once (the Berry–Esseen numerator).

Each item is the mixture of its parts (`Distribution.parts`), so E|X - c|^3 is the weighted
sum of its point masses' |v - c|^3 and its continuous parts' E|Y - c|^3; the latter comes from
the partial moments below c (`Continuous.abs_moment3`'s formula), one call per family.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from engine.exact.item_cache import kept
from engine.exact.stacked_parts import stacked
from engine.families.distributions import Continuous, Distribution

# Items' values already computed (engine.exact.item_cache).
_known: dict[Distribution, float] = {}


def abs_moments3(dists: Sequence[Distribution]) -> np.ndarray:
    """E|X - mean|^3 of each item."""
    return np.array(kept(_known, dists, _abs_moments3))


def _abs_moments3(new: list[Distribution]) -> list[float]:
    sums = np.zeros(len(new))
    families: dict[type, list[tuple[int, float, float, Continuous]]] = {}
    for row, d in enumerate(new):
        c = d.mean
        atoms, continuous = d.parts()
        sums[row] = sum(mass * abs(value - c) ** 3 for value, mass in atoms)
        for weight, part in continuous:
            families.setdefault(type(part), []).append((row, weight, c, part))
    for members in families.values():
        rows, weights, about, parts = (list(col) for col in zip(*members, strict=True))
        np.add.at(sums, rows, np.array(weights) * _continuous(parts, np.array(about)))
    return sums.tolist()


def _continuous(parts: list[Continuous], c: np.ndarray) -> np.ndarray:
    """E|Y - c|^3 of parts of one family: E[(Y - c)^3] plus twice E[(c - Y)^3; Y < c]."""
    mean, variance, mu3, loc, scale = (
        np.array([getattr(p, name) for p in parts])
        for name in ("mean", "variance", "mu3", "loc", "scale")
    )
    d = mean - c
    signed = mu3 + 3 * variance * d + d**3
    y = (c - loc) / scale
    m0, m1, m2, m3 = stacked(parts, np.ones(len(parts), dtype=int))._partial_moments(y)
    lower = scale**3 * (y**3 * m0 - 3 * y**2 * m1 + 3 * y * m2 - m3)
    return np.maximum(signed + 2 * np.maximum(lower, 0.0), 0.0)
