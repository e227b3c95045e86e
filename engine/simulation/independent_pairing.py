"""Independent items through the paired simulation: each item's values go to the trials of
a random permutation of its own. The paired route lets an observer see every replicate's
item values (the allocation's sums near a level), which the independent route does not keep.
"""

from __future__ import annotations

import numpy as np

from engine.simulation.workspace import Workspace


class IndependentPairing:
    mirrored = None  # no item is ranked against the rest

    def __call__(self, rng: np.random.Generator, items: int, n: int, work: Workspace) -> np.ndarray:
        order = work.get("order", (items, n), np.int64)
        order[:] = np.arange(n)
        return rng.permuted(order, axis=1, out=order)
