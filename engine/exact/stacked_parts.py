"""Many parts of one family as one instance whose parameters are numpy arrays, so that one
call of its ppf, integrated cdf or survival serves them all (the families' formulas
broadcast; a Python call per item is what costs at 10,000 items)."""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence

import numpy as np

from engine.families.distributions import Continuous, Lognormal


class _Lognormals(Lognormal):
    """Lognormals with array parameters: the raw moments by numpy instead of math."""

    def _raw(self, k: int) -> np.ndarray:
        return np.exp(k * self.mu + 0.5 * k * k * self.sigma**2)


def stacked(parts: Sequence[Continuous], repeats: np.ndarray | None = None) -> Continuous:
    """The parts (all of one family) as one instance: each parameter a column (one row per
    part), or with `repeats`, a flat array holding each part's value repeats[i] times."""
    family = type(parts[0])
    columns = {}
    for f in dataclasses.fields(family):
        values = np.array([getattr(p, f.name) for p in parts], dtype=float)
        columns[f.name] = values[:, None] if repeats is None else np.repeat(values, repeats)
    return (_Lognormals if family is Lognormal else family)(**columns)
