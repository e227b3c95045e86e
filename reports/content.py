"""What the contingency report says, independent of its file format: the summary facts, the
level table with a plain-language verdict per level, the items and the dependence section.
Cells stay numbers here; each format decides how to show them from the column's kind."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

from charts import numbers
from engine import Analysis, Estimate, LevelRow, LineItem, build_distribution

# Column kinds: money (in the estimate's unit), percent (a fraction, shown as %),
# level (a confidence level in percent, shown as P80), probability (of occurrence, as few
# digits as it has: 100%, 12.5%), coefficient (a correlation),
# statistic (unitless, two decimals), number, text.
Kind = str


@dataclass(frozen=True)
class Column:
    name: str
    kind: Kind
    value: Callable[[Any], Any]


@dataclass(frozen=True)
class Table:
    columns: list[Column]
    rows: list[list[Any]]

    @property
    def headers(self) -> list[str]:
        return [c.name for c in self.columns]


def money_decimals(table: Table) -> int:
    """One number of decimals for every money cell of a table, from its largest figure, so
    a gap reads with the same decimals as the total it is a gap of."""
    return numbers.decimals_for(
        value
        for row in table.rows
        for column, value in zip(table.columns, row, strict=True)
        if column.kind == "money" and isinstance(value, int | float)
    )


def make_table(columns: list[Column], records: list[Any]) -> Table:
    return Table(columns, [[c.value(r) for c in columns] for r in records])


def verdict_sentences(analysis: Analysis, unit: str = "") -> list[str]:
    """One sentence a level, its sums in the level table's decimals."""
    decimals = numbers.decimals_for(r.value for r in analysis.levels)
    return [verdict_sentence(r, analysis.tolerance, unit, decimals) for r in analysis.levels]


def verdict_sentence(row: LevelRow, tolerance: float, unit: str = "", decimals: int = 0) -> str:
    """E.g. 'the normal shortcut understates P90 by 4.1%, 310,442 EUR'."""
    gap = numbers.money(abs(row.gap), unit, decimals)
    size = f"{numbers.percent(abs(row.gap_pct) / 100)}, {gap}"
    if row.holds:
        return (
            f"the normal shortcut holds at P{row.level:g}: off by {size}, "
            f"within the ±{numbers.probability(tolerance)} tolerance"
        )
    return f"the normal shortcut {row.verdict} P{row.level:g} by {size}"


def reasons_heading(analysis: Analysis) -> str:
    """The reasons explain a miss; where the shortcut holds everywhere they are still worth
    knowing, but not as the cause of a failure."""
    if all(r.holds for r in analysis.levels):
        return "What shapes the total (the shortcut holds all the same)"
    return "Why the shortcut misses"


def _fraction(pct: float | None) -> float | None:
    return None if pct is None else pct / 100


def dependence_of(analysis: Analysis) -> Any | None:
    """The correlation section's source; None when the items are independent (or the engine
    in use predates correlation)."""
    return getattr(analysis, "dependence", None)


def level_table(analysis: Analysis) -> Table:
    method = "simulation" if analysis.method == "simulation" else "exact"
    columns = [
        Column("Level", "level", lambda r: r.level),
        Column(f"Total ({method})", "money", lambda r: r.value),
        Column("Contingency", "money", lambda r: r.contingency),
        Column("Contingency %", "percent", lambda r: _fraction(r.contingency_pct)),
        Column("Normal shortcut", "money", lambda r: r.normal),
        Column("Gap (normal - total)", "money", lambda r: r.gap),
        Column("Gap %", "percent", lambda r: _fraction(r.gap_pct)),
        Column("Verdict", "text", lambda r: r.verdict),
        Column("Cornish–Fisher", "money", lambda r: r.cornish_fisher),
        Column("Sum of item percentiles", "money", lambda r: r.sum_of_items),
    ]
    if analysis.method == "simulation":
        columns.append(Column("Standard error", "money", lambda r: r.standard_error))
    if dependence_of(analysis) is not None:
        columns.append(
            Column(
                "Normal with correlation", "money", lambda r: getattr(r, "normal_dependent", None)
            )
        )
        columns.append(
            Column("If independent", "money", lambda r: getattr(r, "independent_value", None))
        )
    return make_table(columns, analysis.levels)


def facts(analysis: Analysis, about: dict[str, Any]) -> list[tuple[str, Any, Kind]]:
    """The summary's label / value pairs, in reading order: plain meaning first, the
    statistic's name after it."""
    diag = analysis.diagnostics
    rows: list[tuple[str, Any, Kind]] = [
        ("Base estimate", analysis.base_estimate, "money"),
        ("Basis of the base estimate", analysis.base_basis, "text"),
        ("Mean of the total", analysis.total.mean, "money"),
        ("Standard deviation of the total", analysis.total.sd, "money"),
        ("Lean of the total (skewness)", diag.skewness, "statistic"),
        ("Weight of the tails (excess kurtosis)", diag.excess_kurtosis, "statistic"),
        ("Largest gap between the S-curve and the normal curve", gap_text(analysis), "text"),
        ("Theoretical guarantee (Berry–Esseen)", guarantee_text(analysis), "text"),
        ("Skew-corrected shortcut (Cornish–Fisher)", _cornish_fisher_note(analysis), "text"),
        ("Method", method_name(analysis), "text"),
        ("Why this method", analysis.method_reason, "text"),
    ]
    if analysis.method == "simulation":
        rows += [
            ("Trials", numbers.count(analysis.trials), "text"),
            ("Seed", str(analysis.seed), "text"),
            (
                "Sampling",
                "Latin hypercube" if analysis.sampling == "lhs" else "plain random",
                "text",
            ),
            ("Standard errors", "per level in the table (batch means over replicates)", "text"),
        ]
    else:
        # Compact, not in the table's decimals: the error is far smaller than the total.
        rows.append(
            (
                "Grid error (largest percentile change on halving the grid)",
                numbers.compact(analysis.grid_error, about["unit"]),
                "text",
            )
        )
    rows += [
        ("Tolerance for the verdict", analysis.tolerance, "percent"),
        ("Computed in", f"{analysis.compute_seconds:.2f} s", "text"),
        ("Date", about["created"], "text"),
        ("Input file", about["input_file"] or "(not from a file)", "text"),
        ("Input SHA-256", about["input_sha256"] or "(none)", "text"),
        ("Rangefold version", about["rangefold_version"], "text"),
    ]
    return rows


def method_name(analysis: Analysis) -> str:
    return "simulation" if analysis.method == "simulation" else "exact convolution"


def gap_text(analysis: Analysis) -> str:
    """'27 percentage points, at P66 (Kolmogorov distance)'."""
    gap = analysis.diagnostics.normal_gap
    return (
        f"{numbers.statistic(100 * gap.distance, 1)} percentage points, "
        f"at {numbers.level(round(gap.at_level))} (Kolmogorov distance)"
    )


def guarantee_text(analysis: Analysis) -> str:
    """What the Berry–Esseen theorem promises about that gap; a bound of 1 or more promises
    nothing, and correlated items are outside the theorem."""
    diag = analysis.diagnostics
    if not getattr(diag, "berry_esseen_applies", True):
        return "none for correlated items (the theorem is about independent ones)"
    if diag.berry_esseen_bound >= 1:
        return "none for this estimate (too few, too skewed or too dominant items)"
    return (
        f"the gap cannot exceed {numbers.statistic(100 * diag.berry_esseen_bound, 1)} "
        f"percentage points (C0 = {diag.berry_esseen_constant:g})"
    )


def _cornish_fisher_note(analysis: Analysis) -> str:
    if analysis.diagnostics.cornish_fisher_monotone:
        return "increasing over P0.1 to P99.9: its column is a usable skew-corrected check"
    return (
        "outside its valid domain (the skew and kurtosis fold the expansion back within "
        "P0.1 to P99.9): its column is unreliable here"
    )


def discrete_text(values: tuple[tuple[float, float], ...]) -> str:
    """Discrete values as the importer reads them: '100 @ 20%; 150 @ 50%; 300 @ 30%'."""
    return "; ".join(f"{v:g} @ {100 * w:g}%" for v, w in values)


def discrete_shown(values: tuple[tuple[float, float], ...]) -> str:
    """The same values for reading, with the digits typed: '480,000 @ 50%; 1,250,000 @ 35%'."""
    return "; ".join(f"{v:,.15g} @ {numbers.probability(w)}" for v, w in values)


def family_name(family: str) -> str:
    """Families as the trade writes them: PERT is an acronym, the rest are plain words."""
    return "PERT" if family == "pert" else family


def item_table(estimate: Estimate) -> Table:
    def moment(item: LineItem, name: str) -> float:
        return getattr(build_distribution(item), name)

    columns = [
        Column("Item", "text", lambda i: i.name),
        Column("Group", "text", lambda i: i.group),
        Column("Distribution", "text", lambda i: family_name(i.family)),
        Column("Low", "money", lambda i: i.low),
        Column(
            "Most likely",
            "money",
            lambda i: discrete_shown(i.values) if i.family == "discrete" else i.most_likely,
        ),
        Column("High", "money", lambda i: i.high),
        Column("Low %", "number", lambda i: i.low_pct),
        Column("High %", "number", lambda i: i.high_pct),
        Column("Probability", "probability", lambda i: i.probability),
        Column("Mean", "money", lambda i: moment(i, "mean")),
        Column("SD", "money", lambda i: moment(i, "sd")),
    ]
    return make_table(columns, list(estimate.items))


def driver_table(analysis: Analysis) -> Table:
    columns = [
        Column("Item", "text", lambda d: d.name),
        Column("Group", "text", lambda d: d.group),
        Column("Share of variance", "percent", lambda d: d.variance_share),
        Column("Share of skewness", "percent", lambda d: d.skew_share),
        Column("Mean", "money", lambda d: d.mean),
        Column("SD", "money", lambda d: d.sd),
    ]
    return make_table(columns, analysis.drivers)


def percentile_table(analysis: Analysis) -> Table:
    curve = analysis.gap_curve()
    records = list(
        zip(curve["percentile"], curve["total"], curve["normal"], curve["gap"], strict=True)
    )
    columns = [
        Column("Percentile", "number", lambda r: float(r[0])),
        Column("Total", "money", lambda r: float(r[1])),
        Column("Normal shortcut", "money", lambda r: float(r[2])),
        Column("Gap (normal - total)", "money", lambda r: float(r[3])),
    ]
    return make_table(columns, records)


def dependence_lines(dependence: Any) -> list[str]:
    """The repair and the achieved correlation in words (the matrix is a table of its own)."""
    lines = []
    if dependence.repaired:
        a, b, old, new = dependence.largest_change
        lines.append(
            "The stated correlations did not form a valid (positive semi-definite) matrix; "
            f"the nearest valid one was used, with the accepted repair. Largest change: "
            f"'{a}' with '{b}' from {numbers.coefficient(old)} to {numbers.coefficient(new)}."
        )
    else:
        lines.append("The stated correlations form a valid matrix and were used as stated.")
    lines.append(achieved_text(dependence))
    summary = achieved_summary_line(dependence)
    if summary:
        lines.append(summary)
    return lines


def achieved_text(dependence: Any) -> str:
    """How closely the trials met the correlations used. A pair aimed at zero that came out
    at zero is not news, so the worst pair is named only when it missed visibly."""
    deviation = dependence.achieved_max_deviation
    text = (
        "Largest difference between the rank correlation achieved in the trials and the one "
        f"used: {numbers.statistic(deviation, 3)}"
    )
    worst = getattr(dependence, "worst_achieved", None)
    if worst and round(deviation, 2) > 0:
        a, b, aimed, got = worst
        text += (
            f" ('{a}' with '{b}': aimed at {numbers.coefficient(aimed)}, "
            f"achieved {numbers.coefficient(got)})"
        )
    return text + "."


def achieved_summary_line(dependence: Any) -> str | None:
    """For large estimates the achieved correlations are measured on a sample of pairs."""
    summary = getattr(dependence, "achieved_summary", None)
    if summary is None or not summary.pairs:
        return None
    sample = " (a sample of the items)" if summary.items < len(dependence.names) else ""
    return (
        f"Over {numbers.count(summary.pairs, 'pair')} of {numbers.count(summary.items, 'item')}"
        f"{sample}, achieved and aimed at differ by "
        f"{numbers.statistic(summary.mean_abs_deviation, 4)} on average."
    )


def matrix_table(names: list[str], matrix: Any) -> Table:
    columns = [Column("Item", "text", lambda r: r[0])] + [
        Column(n, "coefficient", lambda r, k=k: float(r[1][k])) for k, n in enumerate(names)
    ]
    return make_table(columns, list(zip(names, list(matrix), strict=True)))


def pair_table(dependence: Any) -> Table:
    """Each pair whose stated or used coefficient is not zero, largest repair first, with the
    rank correlation the trials achieved; for many items (no matrix kept), each group's
    pairs and the default's, measured on a sample of the items."""
    if dependence.target is None:
        return group_table(dependence.achieved_summary)
    names = list(dependence.names)
    achieved = getattr(dependence, "achieved", None)
    records = [
        (
            names[i],
            names[j],
            float(dependence.target[i][j]),
            float(dependence.used[i][j]),
            None if achieved is None else float(achieved[i][j]),
        )
        for i in range(len(names))
        for j in range(i + 1, len(names))
        if dependence.target[i][j] != 0 or dependence.used[i][j] != 0
    ]
    records.sort(key=lambda r: -abs(r[3] - r[2]))
    columns = [
        Column("Item A", "text", lambda r: r[0]),
        Column("Item B", "text", lambda r: r[1]),
        Column("Stated", "coefficient", lambda r: r[2]),
        Column("Used", "coefficient", lambda r: r[3]),
        Column("Achieved", "coefficient", lambda r: r[4]),
    ]
    return make_table(columns, records)


def group_table(summary: Any) -> Table:
    """Mean stated and achieved rank correlation of each group's measured pairs."""
    columns = [
        Column("Pairs", "text", lambda r: r[0]),
        Column("Pairs measured", "text", lambda r: f"{r[1]:,}"),
        Column("Stated (mean)", "number", lambda r: r[2]),
        Column("Used (mean)", "number", lambda r: r[2]),
        Column("Achieved (mean)", "number", lambda r: r[3]),
    ]
    return make_table(columns, summary.by_group)
