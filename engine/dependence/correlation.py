"""Correlated line items: the stated rank correlations, their checks and repair, and the
record of what the simulation used and achieved.

The analyst states rank (Spearman) correlations three ways, and the most specific wins:
a named pair > the coefficient of a group both items belong to (`LineItem.group`) > the
default for every other pair (0 unless set). Item and group names match ignoring case and
surrounding spaces.

A matrix that is not positive semi-definite states something impossible. It is repaired to
the nearest valid correlation matrix (engine.dependence.nearest_correlation, Higham 2002) only once
the user has accepted the repair (`CorrelationSpec.accept_repair`); until then `analyze`
refuses it and names the pairs that would change most, and `repair_preview` shows the
window or the command line what would change.

The simulation induces the rank target with Iman & Conover (1982) through normal scores, so
the product-moment target on those scores is r = 2 sin(pi r_s / 6) (Pearson 1907). The same
r is the correlation used by the normal shortcut with dependence,
Var = sum_i sum_j r_ij s_i s_j: the normal-copula relation, exact for normal items and an
approximation for others. Every item, risk events included, draws one uniform score per
trial; a risk event's score below 1 - p means "does not occur" (`Occurrence.sample`) and
higher scores map to the upper part of its impact, so a risk event correlated with a cost
item tends to occur, and to cost more, when that item runs high.
"""

from __future__ import annotations

import difflib
import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from engine.dependence.block_structure import (
    BlockStructure,
    FactorModel,
    factor_model,
    is_valid,
)
from engine.dependence.nearest_correlation import (
    PSD_TOLERANCE,
    is_positive_semidefinite,
    nearest_correlation,
    smallest_eigenvalue,
)
from engine.exact.totals import Total
from engine.items import Estimate, InputError, LineItem, Problem
from engine.simulation.iman_conover import pearson_to_rank, rank_to_pearson

SHEET = "Correlations"
PEARSON_FORMULA = "r = 2 sin(pi r_s / 6) (Pearson 1907, normal copula)"
SHORTCUT_FORMULA = "Var = sum_i sum_j r_ij s_i s_j, " + PEARSON_FORMULA
# Pairs named in the message that refuses an invalid matrix.
WORST_PAIRS_SHOWN = 3
# From this many items up, a default and group coefficients (and pairs the factor form can
# carry) are induced by block factors, with no n x n matrix (engine.dependence.block_structure);
# below it, Iman-Conover's exact product-moment pairing is cheap and kept.
FACTOR_ITEMS = 100
# Above this many items, coefficients the block factors cannot carry are refused in words: the
# dense route's n x n checks, repair and pairing would take many minutes and gigabytes.
DENSE_ITEMS = 3_000
# Above this many items the result keeps no n x n matrix (80 MB at 3,000 items, a sheet of
# 9 million cells): the achieved correlations are measured on a sample of items instead.
MATRIX_ITEMS = 300


def _key(name: str) -> str:
    return name.strip().casefold()


def _index(items: Sequence[LineItem]) -> dict[str, list[int]]:
    found: dict[str, list[int]] = {}
    for k, item in enumerate(items):
        found.setdefault(_key(item.name), []).append(k)
    return found


def spec_problems(estimate: Estimate) -> list[Problem]:
    """What is wrong with the stated correlations, each with where it is and the fix."""
    spec = estimate.correlation
    index = _index(estimate.items)
    problems: list[Problem] = []

    def bad(message: str, fix: str, column: str, row: int | None, item: str = "") -> None:
        problems.append(Problem(message, fix, item=item, row=row, column=column, sheet=SHEET))

    def check_coefficient(value: float, what: str, row: int | None, item: str = "") -> bool:
        if isinstance(value, int | float) and math.isfinite(value) and -1 <= value <= 1:
            return True
        bad(
            f"{what} {value!r} is not a correlation coefficient.",
            "enter a rank correlation between -1 and 1 (0.3 is a moderate link).",
            "Coefficient",
            row,
            item,
        )
        return False

    check_coefficient(spec.default, "the default correlation", None)
    groups = {_key(i.group) for i in estimate.items if i.group.strip()}
    for group, value in spec.groups.items():
        check_coefficient(value, f"the correlation of group {group!r}", None)
        if _key(group) not in groups:
            bad(
                f"no item belongs to group {group!r}, so its correlation applies to nothing.",
                "type the group exactly as in the items' Group column, or remove the row.",
                "Item B",
                None,
            )

    seen: dict[frozenset[str], tuple[float, int | None]] = {}
    for pair in spec.pairs:
        known = True
        for column, name in (("Item A", pair.item_a), ("Item B", pair.item_b)):
            where = index.get(_key(name))
            if where is None:
                known = False
                close = difflib.get_close_matches(name, [i.name for i in estimate.items], n=1)
                hint = f" (did you mean {close[0]!r}?)" if close else ""
                bad(
                    f"{name!r} is not an item of the estimate{hint}.",
                    "type the item's name as in the Item column, or remove the row.",
                    column,
                    pair.row,
                    name,
                )
            elif len(where) > 1:
                known = False
                rows = ", ".join(str(estimate.items[k].row) for k in where)
                bad(
                    f"{len(where)} items are named {name!r} (rows {rows}), so the pair cannot "
                    "tell which one is meant.",
                    "give those items distinct names.",
                    column,
                    pair.row,
                    name,
                )
        if known and _key(pair.item_a) == _key(pair.item_b):
            bad(
                f"{pair.item_a!r} is paired with itself.",
                "name two different items; an item's correlation with itself is always 1.",
                "Item B",
                pair.row,
                pair.item_a,
            )
            continue
        if not check_coefficient(pair.coefficient, "the coefficient", pair.row, pair.item_a):
            continue
        both = frozenset((_key(pair.item_a), _key(pair.item_b)))
        if both in seen and seen[both][0] != pair.coefficient:
            first, first_row = seen[both]
            bad(
                f"the pair {pair.item_a!r} and {pair.item_b!r} is stated twice: {first:g}"
                f" (row {first_row}) and {pair.coefficient:g}.",
                "keep one of the two rows.",
                "Coefficient",
                pair.row,
                pair.item_a,
            )
        seen.setdefault(both, (pair.coefficient, pair.row))
    if not problems and len(estimate.items) > DENSE_ITEMS and not spec.is_independent:
        problems.extend(too_many_for_the_dense_route(BlockStructure.from_estimate(estimate)))
    return problems


def too_many_for_the_dense_route(structure: BlockStructure) -> list[Problem]:
    """Beyond DENSE_ITEMS items, what the block factors cannot carry, said in words."""
    n = len(structure.names)
    if len(structure.pairs) <= n and factor_model(structure.pearson()) is not None:
        return []
    smallest = structure.smallest_eigenvalue()
    if smallest is not None and smallest < -PSD_TOLERANCE:
        what = (
            f"the default and group coefficients contradict each other among {n:,} items "
            f"(the matrix they state is not positive semi-definite; smallest eigenvalue "
            f"{smallest:,.3f}). Among n items a common coefficient cannot be below "
            f"-1/(n-1) = {-1 / (n - 1):.5f}, and a large group's cannot be below the default."
        )
    else:
        what = (
            f"these coefficients need the full {n:,} x {n:,} matrix (a negative default, a "
            "group below the default, or pairs beyond what each item's own share allows), "
            f"too large to check and simulate beyond {DENSE_ITEMS:,} items."
        )
    return [
        Problem(
            what,
            "use a default of 0 or more, group coefficients at or above the default, and "
            "named pairs whose extra correlation, summed for each item, stays below 1 minus "
            "its group's coefficient; or analyse the estimate in parts.",
            column="Coefficient",
            sheet=SHEET,
        )
    ]


def build_matrix(estimate: Estimate) -> tuple[list[str], np.ndarray]:
    """The stated rank-correlation matrix over all items, in the estimate's order.

    Pairs whose names do not resolve are left out here; `spec_problems` reports them and
    `analyze` refuses the estimate until they are fixed.
    """
    items = estimate.items
    spec = estimate.correlation
    n = len(items)
    matrix = np.full((n, n), float(spec.default))
    for group, value in spec.groups.items():
        members = [
            k for k, i in enumerate(items) if i.group.strip() and _key(i.group) == _key(group)
        ]
        matrix[np.ix_(members, members)] = value
    index = _index(items)
    for pair in spec.pairs:
        for a in index.get(_key(pair.item_a), []):
            for b in index.get(_key(pair.item_b), []):
                matrix[a, b] = matrix[b, a] = pair.coefficient
    np.fill_diagonal(matrix, 1.0)
    return [i.name for i in items], matrix


@dataclass(frozen=True)
class PairChange:
    """One pair's stated coefficient and the one the repair would use instead."""

    item_a: str
    item_b: str
    stated: float
    repaired: float
    row: int | None

    @property
    def change(self) -> float:
        return self.repaired - self.stated

    def __str__(self) -> str:
        return f"{self.item_a!r}-{self.item_b!r} {self.stated:.2f} -> {self.repaired:.2f}"


@dataclass(frozen=True)
class RepairPreview:
    """What repairing an invalid matrix would change, largest change first."""

    names: list[str]
    target: np.ndarray
    repaired: np.ndarray
    changes: list[PairChange]
    smallest_eigenvalue: float
    iterations: int

    @property
    def largest_change(self) -> PairChange:
        return self.changes[0]

    def message(self) -> str:
        shown = "; ".join(str(c) for c in self.changes[:WORST_PAIRS_SHOWN])
        return (
            "the stated correlations contradict each other (the matrix is not positive "
            f"semi-definite; smallest eigenvalue {self.smallest_eigenvalue:.3f}). The nearest "
            f"valid matrix (Higham 2002) changes most: {shown}."
        )

    def to_dict(self) -> dict[str, Any]:
        return {
            "names": self.names,
            "target": _jsonable(self.target),
            "repaired": _jsonable(self.repaired),
            "changes": [
                {"item_a": c.item_a, "item_b": c.item_b, "stated": c.stated, "repaired": c.repaired}
                for c in self.changes
            ],
            "smallest_eigenvalue": self.smallest_eigenvalue,
            "iterations": self.iterations,
        }


def repair_preview(estimate: Estimate) -> RepairPreview | None:
    """None when the stated matrix is valid; otherwise what the repair would change. A
    default and group coefficients are checked in block form (no n x n matrix)."""
    if len(estimate.items) > DENSE_ITEMS or is_valid(BlockStructure.from_estimate(estimate)):
        return None  # beyond DENSE_ITEMS, spec_problems says what is wrong instead
    names, target = build_matrix(estimate)
    if is_positive_semidefinite(target):
        return None
    result = nearest_correlation(target)
    rows = {frozenset((_key(p.item_a), _key(p.item_b))): p.row for p in estimate.correlation.pairs}
    first, second = np.triu_indices(len(names), k=1)
    delta = np.abs(result.matrix - target)[first, second]
    changes = []
    for k in np.argsort(-delta, kind="stable"):
        a, b = int(first[k]), int(second[k])
        if delta[k] > 0:
            row = rows.get(frozenset((_key(names[a]), _key(names[b]))))
            changes.append(
                PairChange(names[a], names[b], float(target[a, b]), float(result.matrix[a, b]), row)
            )
    return RepairPreview(
        names, target, result.matrix, changes, smallest_eigenvalue(target), result.iterations
    )


@dataclass(frozen=True)
class Targets:
    """The rank matrix the simulation aims at and the normal-score correlation it induces.

    With block factors (`model` set) the matrices are kept only up to MATRIX_ITEMS items
    (None above); `structure` always says what was stated, in rank terms."""

    names: list[str]
    target: np.ndarray | None
    used: np.ndarray | None
    repaired: bool
    largest_change: tuple[str, str, float, float] | None
    pearson_used: np.ndarray | None
    pearson_repaired: bool
    structure: BlockStructure
    model: FactorModel | None


def factor_targets(estimate: Estimate, structure: BlockStructure) -> Targets | None:
    """Targets induced by block factors, when the items are many enough for it to pay, the
    stated coefficients hold together and have a factor form."""
    n = len(structure.names)
    if n < FACTOR_ITEMS or len(structure.pairs) > n or not is_valid(structure):
        return None
    pearson = structure.pearson()
    model = factor_model(pearson)
    if model is None:
        return None
    small = n <= MATRIX_ITEMS
    target = structure.dense() if small else None
    return Targets(
        structure.names,
        target,
        target,
        False,
        None,
        pearson.dense() if small else None,
        False,
        structure,
        model,
    )


def targets(estimate: Estimate) -> Targets:
    """Checked targets; raises InputError naming the worst pairs when the stated matrix is
    invalid and the user has not accepted its repair."""
    structure = BlockStructure.from_estimate(estimate)
    factored = factor_targets(estimate, structure)
    if factored is not None:
        return factored
    names, target = build_matrix(estimate)
    preview = repair_preview(estimate)
    used, change = target, None
    if preview is not None:
        worst = preview.largest_change
        if not estimate.correlation.accept_repair:
            raise InputError(
                [
                    Problem(
                        preview.message(),
                        "lower the coefficients of those pairs, or accept the nearest valid "
                        "matrix (the repair) and run again.",
                        item=worst.item_a,
                        row=worst.row,
                        column="Coefficient",
                        sheet=SHEET,
                    )
                ]
            )
        used = preview.repaired
        change = (worst.item_a, worst.item_b, worst.stated, worst.repaired)
    pearson = rank_to_pearson(used)
    pearson_repaired = not is_positive_semidefinite(pearson)
    if pearson_repaired:
        pearson = nearest_correlation(pearson).matrix
    return Targets(
        names,
        target,
        used,
        preview is not None,
        change,
        pearson,
        pearson_repaired,
        structure,
        None,
    )


def _jsonable(matrix: np.ndarray | None) -> list[list[float]] | None:
    return None if matrix is None else [[float(v) for v in row] for row in matrix]


@dataclass(frozen=True)
class AchievedSummary:
    """The achieved rank correlations in a few figures, over every pair of the measured
    items (all items up to MATRIX_ITEMS, a sample of them above), and for each group's
    pairs and the pairs under the default."""

    items: int  # measured
    pairs: int
    mean_abs_deviation: float
    max_abs_deviation: float
    # (group, or DEFAULT_PAIRS for pairs across groups; pairs measured; mean aimed at;
    # mean achieved)
    by_group: list[tuple[str, int, float, float]]

    def to_dict(self) -> dict[str, Any]:
        return {
            "items": self.items,
            "pairs": self.pairs,
            "mean_abs_deviation": self.mean_abs_deviation,
            "max_abs_deviation": self.max_abs_deviation,
            "by_group": [
                {"group": g, "pairs": n, "aimed": aim, "achieved": got}
                for g, n, aim, got in self.by_group
            ],
        }


DEFAULT_PAIRS = "(default)"


@dataclass(frozen=True)
class Dependence(Targets):
    """What the analysis did with the stated correlations, and what it achieved.

    `achieved` is the rank correlation of the items' scores, averaged over the replicates:
    the quantity the pairing controls. Items with point masses (risk events, discrete
    items) tie on their values, so the rank correlation of their values is lower. Above
    MATRIX_ITEMS items it is None and `achieved_summary` covers a sample of the items.
    """

    achieved: np.ndarray | None
    achieved_max_deviation: float
    worst_achieved: tuple[str, str, float, float] | None  # a, b, aimed at, achieved
    shortcut_variance: float  # sum_i sum_j r_ij s_i s_j, r from PEARSON_FORMULA
    sd_dependent: float  # the simulated total's
    independent_total: Total  # the same items with every coefficient 0, exact
    pearson_formula: str = PEARSON_FORMULA
    shortcut_formula: str = SHORTCUT_FORMULA
    achieved_summary: AchievedSummary | None = None

    @property
    def sd_independent(self) -> float:
        return self.independent_total.sd

    def to_dict(self) -> dict[str, Any]:
        return {
            "names": self.names,
            "target": _jsonable(self.target),
            "used": _jsonable(self.used),
            "repaired": self.repaired,
            "largest_change": list(self.largest_change) if self.largest_change else None,
            "pearson_used": _jsonable(self.pearson_used),
            "pearson_repaired": self.pearson_repaired,
            "pearson_formula": self.pearson_formula,
            "shortcut_formula": self.shortcut_formula,
            "induced_by": "block factors" if self.model is not None else "Iman-Conover",
            "achieved": _jsonable(self.achieved),
            "achieved_max_deviation": self.achieved_max_deviation,
            "worst_achieved": list(self.worst_achieved) if self.worst_achieved else None,
            "achieved_summary": (
                None if self.achieved_summary is None else self.achieved_summary.to_dict()
            ),
            "shortcut_variance": self.shortcut_variance,
            "sd_dependent": self.sd_dependent,
            "sd_independent": self.sd_independent,
        }


def measured_items(structure: BlockStructure, limit: int = MATRIX_ITEMS) -> np.ndarray:
    """Every item up to `limit`; above it a sample of `limit`: two of each group and the
    items of named pairs first (as many as fit), the rest evenly spaced."""
    n = len(structure.names)
    if n <= limit:
        return np.arange(n)
    chosen: dict[int, None] = {}
    for k in range(1, len(structure.labels)):
        for i in np.flatnonzero(structure.block == k)[:2]:
            chosen[int(i)] = None
    for p in structure.pairs:
        chosen[p.a] = chosen[p.b] = None
    picked = list(chosen)[:limit]
    spare = np.setdiff1d(np.arange(n), picked)
    fill = spare[np.linspace(0, len(spare) - 1, limit - len(picked)).astype(np.intp)]
    return np.sort(np.concatenate([np.array(picked, dtype=np.intp), fill]))


def _aim(aims: Targets, measured: np.ndarray) -> np.ndarray:
    """The rank correlations aimed at among the measured items: the used rank matrix, or
    the rank equivalent of the normal-score matrix when that was repaired too."""
    if aims.used is None:
        return aims.structure.dense(measured)
    aim = pearson_to_rank(aims.pearson_used) if aims.pearson_repaired else aims.used
    return aim[np.ix_(measured, measured)]


def achieved_against(
    aims: Targets, achieved: np.ndarray, measured: np.ndarray
) -> tuple[float, tuple[str, str, float, float] | None, AchievedSummary]:
    """Largest |achieved - aimed at| over the pairs of the measured items, that pair, and
    the summary. `achieved` is among the measured items."""
    aim = _aim(aims, measured)
    first, second = np.triu_indices(len(measured), k=1)
    deviation = np.abs(achieved - aim)[first, second]
    blocks = aims.structure.block[measured]
    same = blocks[first] == blocks[second]
    by_group = []
    for k, label in enumerate(aims.structure.labels):
        inside = same & (blocks[first] == k) if label else ~same | (blocks[first] == 0) & same
        if np.any(inside):
            by_group.append(
                (
                    label or DEFAULT_PAIRS,
                    int(inside.sum()),
                    float(aim[first[inside], second[inside]].mean()),
                    float(achieved[first[inside], second[inside]].mean()),
                )
            )
    if not len(deviation):
        return 0.0, None, AchievedSummary(len(measured), 0, 0.0, 0.0, by_group)
    k = int(np.argmax(deviation))
    a, b = int(first[k]), int(second[k])
    summary = AchievedSummary(
        len(measured),
        len(deviation),
        float(deviation.mean()),
        float(deviation[k]),
        by_group,
    )
    worst = (
        aims.names[measured[a]],
        aims.names[measured[b]],
        float(aim[a, b]),
        float(achieved[a, b]),
    )
    return float(deviation[k]), worst, summary
