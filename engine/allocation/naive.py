"""The spreadsheet allocation: each item's own P_q less its base value, scaled to fit.

It is what a spreadsheet does, and it is wrong for the reason the sum of percentiles is
wrong: an item's own P_q is not what it is when the total is at P_q. A rare risk event
below its probability's percentile gets nothing however much it drives the total's tail.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

from engine.families.distributions import Distribution


def naive_shares(
    dists: Sequence[Distribution], bases: Sequence[float], level: float, contingency: float
) -> np.ndarray | None:
    """Each item's (P_q - base) times contingency / sum(P_q - base); None when that sum is
    0 (nothing to scale)."""
    q = float(level) / 100
    raw = np.array([float(d.ppf(q)) - b for d, b in zip(dists, bases, strict=True)])
    spread = math.fsum(raw)
    if abs(spread) <= 1e-12 * max(math.fsum(np.abs(raw)), 1e-300):
        return None
    return raw * (contingency / spread)
