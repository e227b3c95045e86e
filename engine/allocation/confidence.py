"""The chance that a stated amount (the base estimate, a budget) covers the total.

GAO-20-195G (2020), step 9, asks for the cumulative probability of the point estimate and
the confidence level of any budget; it is the total's CDF there, P(T <= amount), point
masses included. A simulated total also gives the standard error of that probability from
the spread across its independent replicates (the batch method).
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass
from typing import Any

import numpy as np

from engine.exact.totals import SampleTotal, Total


@dataclass(frozen=True)
class Confidence:
    label: str  # "base estimate" or "budget"
    amount: float
    probability: float  # P(T <= amount)
    standard_error: float | None  # of the probability; None when computed exactly
    contingency: float  # amount - base estimate

    def to_dict(self) -> dict[str, Any]:
        return asdict(self)


def confidence_of(total: Total, amount: float, base: float, label: str) -> Confidence:
    if not math.isfinite(amount):
        raise ValueError(f"the {label} {amount!r} is not a number.")
    probability = float(total.cdf(amount))
    error = None
    if isinstance(total, SampleTotal):
        per_replicate = np.mean(total.by_replicate <= amount, axis=1)
        error = float(per_replicate.std(ddof=1) / math.sqrt(total.replicates))
    return Confidence(label, float(amount), probability, error, float(amount) - base)
