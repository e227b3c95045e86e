"""Risk events ranked three ways: by expected value, by probability, and by the share of the
contingency each carries at each level (AACE RP 57R-09 asks which risks drive the overrun;
the share is the conditional-expectation allocation, so it sees the tail a risk event
drives, which its expected value does not)."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

from engine.families.distributions import Distribution
from engine.items import LineItem


@dataclass(frozen=True)
class RankedRisk:
    name: str
    group: str
    probability: float
    impact_mean: float  # mean cost if it happens
    expected_value: float  # probability x impact mean
    # level (percent) -> share of the contingency at that level (fraction; None when the
    # total there is not above the base estimate)
    contingency_share: dict[float, float | None] = field(default_factory=dict)
    rank_by_expected_value: int = 0
    rank_by_probability: int = 0

    def to_dict(self) -> dict[str, Any]:
        return {
            "name": self.name,
            "group": self.group,
            "probability": self.probability,
            "impact_mean": self.impact_mean,
            "expected_value": self.expected_value,
            "contingency_share": {f"P{lv:g}": s for lv, s in self.contingency_share.items()},
            "rank_by_expected_value": self.rank_by_expected_value,
            "rank_by_probability": self.rank_by_probability,
        }


def rank_risk_events(
    items: Sequence[LineItem],
    dists: Sequence[Distribution],
    shares: dict[float, tuple[Sequence[float], float]],
) -> list[RankedRisk]:
    """Risk events by expected value, largest first. `shares`: level -> (each item's
    allocated share, the contingency there)."""
    events = [k for k, item in enumerate(items) if item.is_risk_event]
    by_probability = sorted(events, key=lambda k: (-items[k].probability, k))
    by_value = sorted(events, key=lambda k: (-dists[k].mean, k))
    ranked = []
    for place, k in enumerate(by_value, start=1):
        item, p = items[k], items[k].probability
        ranked.append(
            RankedRisk(
                name=item.name,
                group=item.group,
                probability=p,
                impact_mean=dists[k].mean / p if p > 0 else 0.0,
                expected_value=dists[k].mean,
                contingency_share={
                    level: (float(alloc[k]) / contingency if contingency > 0 else None)
                    for level, (alloc, contingency) in shares.items()
                },
                rank_by_expected_value=place,
                rank_by_probability=by_probability.index(k) + 1,
            )
        )
    return ranked
