"""What the report says about where the contingency sits, independent of the file format:
the chance of the base estimate and of each budget, the allocation by group and by item at
each level beside the naive one, and the risk events ranked. Cells stay numbers."""

from __future__ import annotations

from charts import numbers
from engine.allocation import Allocation
from reports.content import Column, Table, make_table

RULE = (
    "Each item's share of the contingency at a level is what it is expected to cost when the"
    " total is at that level, less its base value (the Euler allocation by conditional"
    " expectation). The shares add up to the contingency. The naive column takes each item's"
    " own percentile at the level less its base value, scaled to fit, as a spreadsheet would."
)


def method_line(allocation: Allocation) -> str:
    return allocation.how


def confidence_table(allocation: Allocation) -> Table:
    rows = [allocation.base_confidence, *allocation.budgets]
    columns = [
        Column("Amount", "text", lambda c: c.label.capitalize()),
        Column("Value", "money", lambda c: c.amount),
        Column("Chance the total stays within it", "percent", lambda c: c.probability),
        Column("Contingency over the base", "money", lambda c: c.contingency),
    ]
    if any(c.standard_error is not None for c in rows):
        columns.append(Column("Standard error", "percent", lambda c: c.standard_error))
    return make_table(columns, rows)


def shown_levels(allocation: Allocation, most: int = 3) -> list[int]:
    """Which levels a printed page has room for: those nearest P50, P80 and P90."""
    levels = [row.level for row in allocation.levels]
    if len(levels) <= most:
        return list(range(len(levels)))
    picked = {min(range(len(levels)), key=lambda j: abs(levels[j] - aim)) for aim in (50, 80, 90)}
    return sorted(picked)


def _share_columns(
    allocation: Allocation, key: str, naive_key: str, shown: list[int] | None
) -> list[Column]:
    columns = []
    for j in range(len(allocation.levels)) if shown is None else shown:
        tag = numbers.level(allocation.levels[j].level)
        columns.append(Column(f"{tag} share", "money", lambda r, j=j: r[key][j]))
        columns.append(Column(f"{tag} naive", "money", lambda r, j=j: r[naive_key][j]))
    return columns


def group_table(allocation: Allocation, shown: list[int] | None = None) -> Table:
    """One row per group, a share and a naive column per level, and the contingency row."""
    groups = list(allocation.levels[0].groups)
    records = [
        {
            "name": g,
            "share": [row.groups[g] for row in allocation.levels],
            "naive": [
                None if row.naive_groups is None else row.naive_groups[g]
                for row in allocation.levels
            ],
        }
        for g in groups
    ]
    records.append(
        {
            "name": "Contingency",
            "share": [row.contingency for row in allocation.levels],
            "naive": [
                None if row.naive_groups is None else row.contingency for row in allocation.levels
            ],
        }
    )
    columns = [Column("Group", "text", lambda r: r["name"])]
    columns += _share_columns(allocation, "share", "naive", shown)
    top = allocation.levels[-1]
    if top.group_errors is not None:
        errors = top.group_errors
        columns.append(
            Column(
                f"{numbers.level(top.level)} standard error",
                "money",
                lambda r: errors.get(r["name"]),
            )
        )
    return make_table(columns, records)


def item_table(
    allocation: Allocation, limit: int | None = None, shown: list[int] | None = None
) -> Table:
    """One row per item, largest share at the highest level first; `limit` keeps the top
    rows and sums the rest into one."""
    top = allocation.levels[-1]
    order = sorted(range(len(allocation.names)), key=lambda k: -abs(top.shares[k]))
    records = [
        {
            "name": allocation.names[k],
            "group": allocation.groups[k],
            "base": allocation.bases[k],
            "share": [row.shares[k] for row in allocation.levels],
            "naive": [None if row.naive is None else row.naive[k] for row in allocation.levels],
            "se": [
                None if row.standard_errors is None else row.standard_errors[k]
                for row in allocation.levels
            ],
        }
        for k in order
    ]
    if limit is not None and len(records) > limit:
        rest = records[limit:]
        records = [
            *records[:limit],
            {
                "name": f"{len(rest)} other items",
                "group": "",
                "base": sum(r["base"] for r in rest),
                "share": [sum(r["share"][j] for r in rest) for j in range(len(allocation.levels))],
                "naive": [
                    None if rest[0]["naive"][j] is None else sum(r["naive"][j] for r in rest)
                    for j in range(len(allocation.levels))
                ],
                "se": [None] * len(allocation.levels),
            },
        ]
    columns = [
        Column("Item", "text", lambda r: r["name"]),
        Column("Group", "text", lambda r: r["group"]),
        Column("Base value", "money", lambda r: r["base"]),
        *_share_columns(allocation, "share", "naive", shown),
    ]
    if allocation.method == "simulation":
        columns.append(
            Column(f"{numbers.level(top.level)} standard error", "money", lambda r: r["se"][-1])
        )
    return make_table(columns, records)


def risk_table(allocation: Allocation, shown: list[int] | None = None) -> Table:
    levels = [row.level for row in allocation.levels]
    levels = levels if shown is None else [levels[j] for j in shown]
    columns = [
        Column("Risk event", "text", lambda r: r.name),
        Column("Probability", "probability", lambda r: r.probability),
        Column("Impact if it happens (mean)", "money", lambda r: r.impact_mean),
        Column("Expected value", "money", lambda r: r.expected_value),
        Column("Rank by expected value", "number", lambda r: r.rank_by_expected_value),
        Column("Rank by probability", "number", lambda r: r.rank_by_probability),
    ] + [
        Column(
            f"Share of contingency at {numbers.level(lv)}",
            "percent",
            lambda r, lv=lv: r.contingency_share[lv],
        )
        for lv in levels
    ]
    return make_table(columns, allocation.risk_events)
