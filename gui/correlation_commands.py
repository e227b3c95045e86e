"""Edits of the stated correlations as small command objects, each returning its inverse.

Qt-free like gui.commands. A CorrelationSpec is treated as a value: every edit builds a new
one and swaps it in, so a worker still computing on the old spec never sees it change.
A change of any coefficient withdraws an accepted repair, because the user accepted the
repair of the matrix they saw, not of the one they are now making.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

from engine import CorrelationPair, CorrelationSpec, Estimate


@dataclass(frozen=True)
class ReplaceCorrelation:
    """Put a new spec in the estimate; the inverse puts the old one back."""

    spec: CorrelationSpec

    def apply(self, estimate: Estimate) -> ReplaceCorrelation:
        old = estimate.correlation
        estimate.correlation = self.spec
        return ReplaceCorrelation(old)


def _copy(spec: CorrelationSpec, **changes) -> CorrelationSpec:
    fresh = replace(spec, pairs=list(spec.pairs), groups=dict(spec.groups))
    return replace(fresh, **changes)


def check_coefficient(value: float) -> float:
    """A rank correlation as the user may state it; ValueError says what to type."""
    if not -1.0 <= value <= 1.0:
        raise ValueError(
            f"{value:g} is not a correlation. Fix: enter a rank correlation between -1 and 1 "
            "(0.3 is a moderate link)."
        )
    return float(value)


def add_pair(spec: CorrelationSpec, item_a: str, item_b: str, coefficient: float):
    pair = CorrelationPair(item_a, item_b, check_coefficient(coefficient))
    return ReplaceCorrelation(_copy(spec, pairs=[*spec.pairs, pair], accept_repair=False))


def edit_pair(spec: CorrelationSpec, index: int, **changes) -> ReplaceCorrelation:
    """Change a pair's `item_a`, `item_b` or `coefficient`."""
    if "coefficient" in changes:
        changes["coefficient"] = check_coefficient(changes["coefficient"])
    pairs = list(spec.pairs)
    pairs[index] = replace(pairs[index], **changes)
    return ReplaceCorrelation(_copy(spec, pairs=pairs, accept_repair=False))


def remove_pairs(spec: CorrelationSpec, indices: list[int]) -> ReplaceCorrelation:
    gone = set(indices)
    pairs = [p for k, p in enumerate(spec.pairs) if k not in gone]
    return ReplaceCorrelation(_copy(spec, pairs=pairs, accept_repair=False))


def set_group(spec: CorrelationSpec, group: str, coefficient: float | None):
    """State (or with None, withdraw) the coefficient shared by a group's items."""
    groups = dict(spec.groups)
    if coefficient is None:
        groups.pop(group, None)
    else:
        groups[group] = check_coefficient(coefficient)
    return ReplaceCorrelation(_copy(spec, groups=groups, accept_repair=False))


def set_default(spec: CorrelationSpec, coefficient: float) -> ReplaceCorrelation:
    return ReplaceCorrelation(
        _copy(spec, default=check_coefficient(coefficient), accept_repair=False)
    )


def set_accept_repair(spec: CorrelationSpec, accepted: bool) -> ReplaceCorrelation:
    return ReplaceCorrelation(_copy(spec, accept_repair=bool(accepted)))
