"""What the before-and-after report says, independent of its file format."""

from __future__ import annotations

from charts import numbers
from engine.comparison import Comparison
from reports.content import Column, Table, make_table


def level_table(comparison: Comparison) -> Table:
    columns = [
        Column("Level", "level", lambda r: r.level),
        Column("Total before", "money", lambda r: r.before),
        Column("Total after", "money", lambda r: r.after),
        Column("Difference", "money", lambda r: r.difference),
        Column("Contingency before", "money", lambda r: r.contingency_before),
        Column("Contingency after", "money", lambda r: r.contingency_after),
        Column("Contingency difference", "money", lambda r: r.contingency_difference),
    ]
    return make_table(columns, comparison.levels)


def facts_table(comparison: Comparison) -> Table:
    b, a = comparison.before, comparison.after
    exposure = comparison.risk_exposure
    records = [
        ("Base estimate", b.base_estimate, a.base_estimate, "money"),
        (
            "Chance of the base estimate",
            comparison.before_allocation.base_confidence.probability,
            comparison.after_allocation.base_confidence.probability,
            "percent",
        ),
        ("Mean of the total", b.total.mean, a.total.mean, "money"),
        ("Standard deviation of the total", b.total.sd, a.total.sd, "money"),
        ("Risk events' expected value", exposure[0], exposure[1], "money"),
        ("Line items", len(b.item_names), len(a.item_names), "number"),
    ]
    # One kind per column in a Table: amounts and chances each shown in their own way by
    # putting the kind's text in the cell when it is not money.
    columns = [
        Column("", "text", lambda r: r[0]),
        Column("Before", "money", lambda r: r[1] if r[3] == "money" else _shown(r[1], r[3])),
        Column("After", "money", lambda r: r[2] if r[3] == "money" else _shown(r[2], r[3])),
    ]
    return make_table(columns, records)


def _shown(value: float, kind: str) -> str:
    return numbers.percent(value) if kind == "percent" else numbers.count(value)


def group_table(comparison: Comparison, level: float) -> Table:
    columns = [
        Column("Group", "text", lambda r: r[0]),
        Column(f"{numbers.level(level)} share before", "money", lambda r: r[1]),
        Column(f"{numbers.level(level)} share after", "money", lambda r: r[2]),
        Column(
            "Difference", "money", lambda r: None if r[1] is None or r[2] is None else r[2] - r[1]
        ),
    ]
    return make_table(columns, comparison.group_changes(level))


def change_table(comparison: Comparison) -> Table:
    columns = [
        Column("Item", "text", lambda c: c.name),
        Column("Group", "text", lambda c: c.group),
        Column("Change", "text", lambda c: c.kind),
        Column("What changed", "text", lambda c: c.describe()),
    ]
    return make_table(columns, comparison.changes)
