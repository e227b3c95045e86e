"""Which line items a revision added, removed or changed, matched by name within group.

Names and groups are matched without regard to case or surrounding spaces, as analysts
retype them. An item whose name moved to another group is listed as moved, not as one
removal and one addition, when the name is unique on both sides.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import asdict, dataclass, field
from typing import Any

from engine.items import LineItem

# What the analyst states about an item; a difference in any of these is a change.
STATED = (
    "family",
    "low",
    "most_likely",
    "high",
    "low_pct",
    "high_pct",
    "probability",
    "shape",
    "values",
)


@dataclass(frozen=True)
class ItemChange:
    name: str
    group: str
    kind: str  # "added", "removed", "changed", "moved"
    fields: dict[str, tuple[Any, Any]] = field(default_factory=dict)  # field -> (before, after)

    def to_dict(self) -> dict[str, Any]:
        out = asdict(self)
        out["fields"] = {k: {"before": b, "after": a} for k, (b, a) in self.fields.items()}
        return out

    def describe(self) -> str:
        if self.kind in ("added", "removed"):
            return self.kind
        parts = [
            f"{name.replace('_', ' ')} {_said(b, name)} → {_said(a, name)}"
            for name, (b, a) in self.fields.items()
        ]
        return "; ".join(parts)


def _said(value: Any, name: str = "") -> str:
    """As the window and the reports write it: a chance as a percentage, an amount whole
    with separators ('1,250,000', never '1.25e+06')."""
    if value is None:
        return "blank"
    if isinstance(value, float) and name == "probability":
        return f"{round(100 * value, 4):g}%"
    if isinstance(value, float):
        return f"{value:,.15g}"
    if isinstance(value, tuple):
        return "; ".join(f"{v:g} @ {100 * w:g}%" for v, w in value)
    return str(value)


def _key(text: str) -> str:
    return " ".join(text.split()).casefold()


def item_changes(before: Sequence[LineItem], after: Sequence[LineItem]) -> list[ItemChange]:
    """Removed, moved, changed and added items, in the order they appear."""
    old = {(_key(i.group), _key(i.name)): i for i in before}
    new = {(_key(i.group), _key(i.name)): i for i in after}
    changes: list[ItemChange] = []
    gone = [k for k in old if k not in new]
    came = [k for k in new if k not in old]
    names_gone = [k[1] for k in gone]
    names_came = [k[1] for k in came]
    moved = {n for n in names_gone if names_gone.count(n) == 1 and names_came.count(n) == 1}
    for key in gone:
        item = old[key]
        if key[1] in moved:
            target = next(new[k] for k in came if k[1] == key[1])
            fields = {"group": (item.group, target.group), **_differences(item, target)}
            changes.append(ItemChange(target.name, target.group, "moved", fields))
        else:
            changes.append(ItemChange(item.name, item.group, "removed"))
    for key, item in new.items():
        if key in old:
            fields = _differences(old[key], item)
            if fields:
                changes.append(ItemChange(item.name, item.group, "changed", fields))
        elif key[1] not in moved:
            changes.append(ItemChange(item.name, item.group, "added"))
    return changes


def _differences(a: LineItem, b: LineItem) -> dict[str, tuple[Any, Any]]:
    return {f: (getattr(a, f), getattr(b, f)) for f in STATED if getattr(a, f) != getattr(b, f)}
