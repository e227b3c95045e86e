"""The finish of parallel paths and each path's criticality (the probability it is the latest)."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from engine.exact.totals import Total


@dataclass(frozen=True)
class Finish:
    """The latest path's distribution beside each path's own. `criticality_se` is None when
    computed exactly, else the batch standard error of each share of trials."""

    total: Total
    path_totals: tuple[Total, ...]
    criticality: np.ndarray
    criticality_se: np.ndarray | None
    method: str
