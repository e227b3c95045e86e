"""What the report says about a schedule's parallel paths, independent of the file format:
the path table, the merge table (the finish beside the classic longest-path answer) and the
sentences around them."""

from __future__ import annotations

from charts import numbers
from engine import Analysis
from reports.content import Column, Table, make_table


def path_table(analysis: Analysis) -> Table:
    section = analysis.paths
    assert section is not None
    columns = [
        Column("Path", "text", lambda r: r.name),
        Column("Activities", "number", lambda r: r.activities),
        Column("Mean", "money", lambda r: r.mean),
        Column("SD", "money", lambda r: r.sd),
    ]
    for k, level in enumerate(section.levels):
        columns.append(
            Column(f"{numbers.level(level)} of the path", "money", lambda r, k=k: r.values[k])
        )
    columns.append(Column("Latest in (criticality)", "percent", lambda r: r.criticality))
    if section.method == "simulation":
        columns.append(Column("Criticality standard error", "percent", lambda r: r.criticality_se))
    columns.append(Column("Longest mean", "text", lambda r: "yes" if r.longest_mean else ""))
    return make_table(columns, section.rows)


def merge_table(analysis: Analysis) -> Table:
    """Per level: the finish, the longest-mean path's normal shortcut and the merge bias."""
    section = analysis.paths
    assert section is not None
    records = list(
        zip(section.levels, section.finish, section.shortcut, section.merge_bias, strict=True)
    )
    return make_table(
        [
            Column("Level", "level", lambda r: r[0]),
            Column("Finish (latest path)", "money", lambda r: r[1]),
            Column(f"Normal shortcut of '{section.longest}'", "money", lambda r: r[2]),
            Column("Merge bias (finish less shortcut)", "money", lambda r: r[3]),
            Column("Merge bias %", "percent", lambda r: r[3] / r[2] if r[2] else None),
        ],
        records,
    )


def path_lines(analysis: Analysis, unit: str = "") -> list[str]:
    """The sentences above the tables."""
    section = analysis.paths
    assert section is not None
    decimals = numbers.decimals_for([section.finish_mean, *section.finish])
    lines = [
        "The finish waits for the latest of the paths; each path is the sum of its activities. "
        f"Method: {section.method}; {analysis.method_reason}.",
        f"Reading only the path with the longest mean, '{section.longest}', as a normal curve "
        "misses the merge bias: how much later the finish is.",
        f"Mean finish {numbers.money(section.finish_mean, unit, decimals)} against the longest "
        f"path's mean {numbers.money(section.longest_mean, unit, decimals)}.",
    ]
    if section.shared:
        lines.append("Activities on several paths: " + ", ".join(section.shared) + ".")
    return lines


def activity_table(analysis: Analysis) -> Table:
    """Each activity, the paths it lies on, and how often it is on the latest path."""
    section = analysis.paths
    assert section is not None
    records = [
        (name, "; ".join(r.name for r in section.rows if name in r.names), share)
        for name, share in section.activity_criticality
    ]
    return make_table(
        [
            Column("Activity", "text", lambda r: r[0]),
            Column("Paths", "text", lambda r: r[1]),
            Column("On the latest path (criticality index)", "percent", lambda r: r[2]),
        ],
        records,
    )
