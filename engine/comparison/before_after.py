"""An estimate before and after a revision (a risk response plan, say), side by side: the
total at each level and its change, the contingency, the chance of the base estimate,
where the contingency sits by group, the risk events' expected value, and which items were
added, removed or changed. Both are analysed with the same settings and seed."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from engine.allocation import Allocation
from engine.comparison.item_changes import ItemChange, item_changes
from engine.items import Estimate

if TYPE_CHECKING:  # the analysis is taken, never made, here: no import of analysis.py
    from engine.analysis import Analysis


@dataclass(frozen=True)
class LevelChange:
    level: float
    before: float
    after: float
    contingency_before: float
    contingency_after: float

    @property
    def difference(self) -> float:
        return self.after - self.before

    @property
    def contingency_difference(self) -> float:
        return self.contingency_after - self.contingency_before


@dataclass
class Comparison:
    before_title: str
    after_title: str
    before: Analysis
    after: Analysis
    before_allocation: Allocation
    after_allocation: Allocation
    levels: list[LevelChange]
    changes: list[ItemChange]
    summary: str

    @property
    def risk_exposure(self) -> tuple[float, float]:
        """Sum of the risk events' expected values, before and after."""
        return _exposure(self.before_allocation), _exposure(self.after_allocation)

    @property
    def shares_note(self) -> str:
        """Why the contingency is not shared out by group (a schedule on either side), or ""."""
        return self.before_allocation.note or self.after_allocation.note

    def group_changes(self, level: float) -> list[tuple[str, float | None, float | None]]:
        """(group, share before, share after) at the level; None where a side lacks it;
        none at all when either side is a schedule (`shares_note`)."""
        if self.shares_note:
            return []
        b = self.before_allocation.at(level).groups
        a = self.after_allocation.at(level).groups
        names = list(b) + [g for g in a if g not in b]
        return [(g, b.get(g), a.get(g)) for g in names]

    def to_dict(self) -> dict[str, Any]:
        exposure = self.risk_exposure
        return {
            "before": {"title": self.before_title, "base_estimate": self.before.base_estimate},
            "after": {"title": self.after_title, "base_estimate": self.after.base_estimate},
            "summary": self.summary,
            "levels": [
                {
                    "level": r.level,
                    "before": r.before,
                    "after": r.after,
                    "difference": r.difference,
                    "contingency_before": r.contingency_before,
                    "contingency_after": r.contingency_after,
                    "contingency_difference": r.contingency_difference,
                }
                for r in self.levels
            ],
            "base_confidence": {
                "before": self.before_allocation.base_confidence.probability,
                "after": self.after_allocation.base_confidence.probability,
            },
            "mean": {"before": self.before.total.mean, "after": self.after.total.mean},
            "sd": {"before": self.before.total.sd, "after": self.after.total.sd},
            "risk_exposure": {"before": exposure[0], "after": exposure[1]},
            "groups": {
                f"P{r.level:g}": [
                    {"group": g, "before": b, "after": a} for g, b, a in self.group_changes(r.level)
                ]
                for r in self.levels
            },
            **({"groups_note": self.shares_note} if self.shares_note else {}),
            "items": [c.to_dict() for c in self.changes],
            "before_allocation": self.before_allocation.to_dict(),
            "after_allocation": self.after_allocation.to_dict(),
        }


def _exposure(allocation: Allocation) -> float:
    return math.fsum(r.expected_value for r in allocation.risk_events)


def compare(
    before: Estimate,
    before_analysis: Analysis,
    before_allocation: Allocation,
    after: Estimate,
    after_analysis: Analysis,
    after_allocation: Allocation,
) -> Comparison:
    if [r.level for r in before_analysis.levels] != [r.level for r in after_analysis.levels]:
        raise ValueError(
            "the two analyses are at different levels: analyse both with the same levels."
        )
    levels = [
        LevelChange(b.level, b.value, a.value, b.contingency, a.contingency)
        for b, a in zip(before_analysis.levels, after_analysis.levels, strict=True)
    ]
    changes = item_changes(before.items, after.items)
    return Comparison(
        before_title=before.title or "before",
        after_title=after.title or "after",
        before=before_analysis,
        after=after_analysis,
        before_allocation=before_allocation,
        after_allocation=after_allocation,
        levels=levels,
        changes=changes,
        summary=_summary(levels, changes),
    )


def _summary(levels: list[LevelChange], changes: list[ItemChange]) -> str:
    counts = {
        k: sum(1 for c in changes if c.kind == k) for k in ("added", "removed", "changed", "moved")
    }
    said = ", ".join(f"{n} {k}" for k, n in counts.items() if n) or "no item changed"
    top = levels[-1]
    way = "lower" if top.difference < 0 else "higher"
    return (
        f"Items: {said}. At P{top.level:g} the total is {abs(top.difference):,.0f} {way}"
        f" ({top.before:,.0f} → {top.after:,.0f}); contingency {top.contingency_before:,.0f}"
        f" → {top.contingency_after:,.0f}."
    )
