"""What the contingency report says, independent of its file format: the summary facts, the
level table with a plain-language verdict per level, the items and the dependence section.
Cells stay numbers here; each format decides how to show them from the column's kind."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

from engine import Analysis, Estimate, LevelRow, LineItem, build_distribution
from engine.shortcut.verdict import compact

# Column kinds: money (in the estimate's unit), percent (a fraction, shown as %),
# level (a confidence level in percent, shown as P80), number, text.
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


def make_table(columns: list[Column], records: list[Any]) -> Table:
    return Table(columns, [[c.value(r) for c in columns] for r in records])


def money_text(x: float, unit: str = "") -> str:
    """Compact money for sentences: '310 k EUR', '8.39 working days'."""
    return f"{compact(x)} {unit}".rstrip()


def verdict_sentence(row: LevelRow, tolerance: float, unit: str = "") -> str:
    """E.g. 'the normal shortcut understates P90 by 4.1%, 310 k EUR'."""
    size = f"{abs(row.gap_pct):.1f}%, {money_text(abs(row.gap), unit)}"
    if row.holds:
        return (
            f"the normal shortcut holds at P{row.level:g}: off by {size}, "
            f"within the ±{100 * tolerance:g}% tolerance"
        )
    return f"the normal shortcut {row.verdict} P{row.level:g} by {size}"


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
    """The summary's label / value pairs, in reading order."""
    diag = analysis.diagnostics
    gap = diag.normal_gap
    rows: list[tuple[str, Any, Kind]] = [
        ("Base estimate", analysis.base_estimate, "money"),
        ("Basis of the base estimate", analysis.base_basis, "text"),
        ("Mean of the total", analysis.total.mean, "money"),
        ("Standard deviation of the total", analysis.total.sd, "money"),
        ("Skewness of the total", diag.skewness, "number"),
        ("Excess kurtosis of the total", diag.excess_kurtosis, "number"),
        ("Kolmogorov distance, total vs normal", gap.distance, "number"),
        ("  where it occurs (percentile of the total)", gap.at_level, "number"),
        (
            f"Berry–Esseen bound (C0 = {diag.berry_esseen_constant:g})",
            diag.berry_esseen_bound,
            "number",
        ),
        (
            "  what the bound says",
            _berry_esseen_note(diag.berry_esseen_bound, gap.distance),
            "text",
        ),
        ("Cornish–Fisher", _cornish_fisher_note(analysis), "text"),
        ("Method", analysis.method, "text"),
        ("Why this method", analysis.method_reason, "text"),
    ]
    if analysis.method == "simulation":
        rows += [
            ("Trials", analysis.trials, "number"),
            ("Seed", analysis.seed, "number"),
            (
                "Sampling",
                "Latin hypercube" if analysis.sampling == "lhs" else "plain random",
                "text",
            ),
            ("Standard errors", "per level in the table (batch means over replicates)", "text"),
        ]
    else:
        rows.append(
            (
                "Grid error (largest percentile change on halving the grid)",
                analysis.grid_error,
                "money",
            )
        )
    rows += [
        ("Tolerance of the verdict", analysis.tolerance, "percent"),
        ("Computed in (seconds)", analysis.compute_seconds, "number"),
        ("Date", about["created"], "text"),
        ("Input file", about["input_file"] or "(not from a file)", "text"),
        ("Input SHA-256", about["input_sha256"] or "(none)", "text"),
        ("Rangefold version", about["rangefold_version"], "text"),
    ]
    return rows


def _berry_esseen_note(bound: float, measured: float) -> str:
    """The guarantee beside the measurement; a bound of 1 guarantees nothing."""
    if bound >= 1:
        return "1 or more: no guarantee for this estimate (too few, too skewed or dominated)"
    return f"{bound:.4f} (a guarantee; the measured distance is {measured:.4f})"


def _berry_esseen_note(bound: float, measured: float) -> str:
    """The guarantee beside the measurement; a bound of 1 guarantees nothing."""
    if bound >= 1:
        return "nothing here: at 1 it allows any gap (too few, too skewed or dominated items)"
    return f"the gap cannot exceed {bound:.4f}; the measured distance is {measured:.4f}"


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


def item_table(estimate: Estimate) -> Table:
    def moment(item: LineItem, name: str) -> float:
        return getattr(build_distribution(item), name)

    columns = [
        Column("Item", "text", lambda i: i.name),
        Column("Group", "text", lambda i: i.group),
        Column("Distribution", "text", lambda i: i.family),
        Column("Low", "money", lambda i: i.low),
        Column(
            "Most likely",
            "money",
            lambda i: discrete_text(i.values) if i.family == "discrete" else i.most_likely,
        ),
        Column("High", "money", lambda i: i.high),
        Column("Low %", "number", lambda i: i.low_pct),
        Column("High %", "number", lambda i: i.high_pct),
        Column("Probability", "percent", lambda i: i.probability),
        Column("Mean", "money", lambda i: moment(i, "mean")),
        Column("SD", "money", lambda i: moment(i, "sd")),
    ]
    return make_table(columns, list(estimate.items))


def driver_table(analysis: Analysis) -> Table:
    columns = [
        Column("Item", "text", lambda d: d.name),
        Column("Group", "text", lambda d: d.group),
        Column("Share of variance", "percent", lambda d: d.variance_share),
        Column("Share of skew", "percent", lambda d: d.skew_share),
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
            f"'{a}' with '{b}' from {old:.2f} to {new:.2f}."
        )
    else:
        lines.append("The stated correlations form a valid matrix and were used as stated.")
    text = (
        "Largest difference between the rank correlation achieved in the trials and the one "
        f"used: {dependence.achieved_max_deviation:.3f}"
    )
    worst = getattr(dependence, "worst_achieved", None)
    if worst:
        a, b, aimed, got = worst
        text += f" ('{a}' with '{b}': aimed at {aimed:.2f}, achieved {got:.2f})"
    lines.append(text + ".")
    summary = getattr(dependence, "achieved_summary", None)
    if summary is not None and summary.pairs:
        lines.append(
            f"Over {summary.pairs:,} pairs of {summary.items:,} items"
            + (" (a sample of the items)" if summary.items < len(dependence.names) else "")
            + f", achieved and aimed at differ by {summary.mean_abs_deviation:.4f} on average."
        )
    return lines


def matrix_table(names: list[str], matrix: Any) -> Table:
    columns = [Column("Item", "text", lambda r: r[0])] + [
        Column(n, "number", lambda r, k=k: float(r[1][k])) for k, n in enumerate(names)
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
        Column("Stated", "number", lambda r: r[2]),
        Column("Used", "number", lambda r: r[3]),
        Column("Achieved", "number", lambda r: r[4]),
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
