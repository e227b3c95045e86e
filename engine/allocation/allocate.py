"""Where the contingency sits: the total at each level shared among items and groups.

Item i's share at level q is E[X_i | T = t_q] - base_i (the Euler rule: Tasche, "Risk
contributions and performance measurement", 1999, details from memory), so the shares add
up to t_q - base estimate: the contingency. Exact for independent items
(engine.allocation.exact_shares), simulated near t_q for correlated ones
(engine.allocation.simulated_shares). Beside it, the spreadsheet allocation
(engine.allocation.naive) and a sentence saying whether the difference matters.
"""

from __future__ import annotations

import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np

from engine.allocation.confidence import Confidence, confidence_of
from engine.allocation.exact_shares import GridTooCoarse, conditional_means
from engine.allocation.naive import naive_shares
from engine.allocation.risk_ranking import RankedRisk, rank_risk_events
from engine.allocation.simulated_shares import (
    gathered,
    jackknife_error,
    simulated_means,
    window_edges,
)
from engine.items import Estimate
from engine.progress import Progress
from engine.validation import base_value, build_distribution

UNGROUPED = "(no group)"
# Trials and seed of the shares of an exact analysis read from a simulation (a heavy tail
# that no exact grid resolves): the standard error column says what they cost in precision.
OWN_TRIALS = 400_000
OWN_SEED = 1
# ...at most this many item values in all (10,000 items: 40,000 trials), so the fall-back
# never costs minutes; never fewer trials than MIN_OWN_TRIALS.
OWN_VALUES = 400_000_000
MIN_OWN_TRIALS = 20_000
# A difference this large, in points of the contingency, changes where money is held
# (common practice, no source).
MATTERS = 0.10
NORMAL_P90 = 1.2815515655446004  # the standard normal's P90 (scipy.stats.norm.ppf(0.9))

if TYPE_CHECKING:  # the analysis is taken, never made, here: no import of analysis.py
    from engine.analysis import Analysis


@dataclass(frozen=True)
class LevelAllocation:
    level: float
    total: float  # the total at this level, t_q
    contingency: float  # t_q - base estimate
    shares: list[float]  # per item: E[X_i | T = t_q] - base_i
    standard_errors: list[float] | None  # per item, simulated only
    naive: list[float] | None  # per item: own P_q - base_i, scaled to fit
    groups: dict[str, float]
    naive_groups: dict[str, float] | None
    note: str
    group_errors: dict[str, float] | None = None  # simulated only

    def to_dict(self, names: Sequence[str]) -> dict[str, Any]:
        return {
            "level": self.level,
            "total": self.total,
            "contingency": self.contingency,
            "items": [
                {
                    "name": name,
                    "share": self.shares[k],
                    "standard_error": None
                    if self.standard_errors is None
                    else self.standard_errors[k],
                    "naive": None if self.naive is None else self.naive[k],
                }
                for k, name in enumerate(names)
            ],
            "groups": [
                {
                    "group": g,
                    "share": v,
                    "naive": None if self.naive_groups is None else self.naive_groups[g],
                    "standard_error": None if self.group_errors is None else self.group_errors[g],
                }
                for g, v in self.groups.items()
            ],
            "note": self.note,
        }


@dataclass
class Allocation:
    method: str  # "exact" or "simulation"
    names: list[str]
    groups: list[str]  # each item's group (UNGROUPED when blank)
    bases: list[float]  # each item's base value (0 for a risk event)
    means: list[float]
    base_estimate: float
    levels: list[LevelAllocation]
    base_confidence: Confidence
    budgets: list[Confidence] = field(default_factory=list)
    risk_events: list[RankedRisk] = field(default_factory=list)
    compute_seconds: float = 0.0
    note: str = ""  # why there are no shares (a schedule's finish), else empty
    how: str = ""  # how the shares were computed, in words

    def at(self, level: float) -> LevelAllocation:
        return min(self.levels, key=lambda row: abs(row.level - level))

    def to_dict(self) -> dict[str, Any]:
        return {
            "method": self.method,
            "how": self.how,
            "rule": "E[item | total = level] - item's base value (Euler allocation)",
            "base_estimate": self.base_estimate,
            "base_confidence": self.base_confidence.to_dict(),
            "budgets": [b.to_dict() for b in self.budgets],
            "levels": [row.to_dict(self.names) for row in self.levels],
            "risk_events": [r.to_dict() for r in self.risk_events],
            **({"note": self.note} if self.note else {}),
        }


HOW = {
    "exact": "Computed exactly (independent items, numerical convolution).",
    "simulation": (
        "Estimated from the simulation's trials near each level (correlated items);"
        " standard errors by deleting one replicate at a time."
    ),
}
NOT_A_SUM = (
    "The contingency is not shared out among the activities of a schedule of parallel paths: "
    "the finish is the latest path, not the sum of the activities, so their shares would not "
    "add up to it. The chance of the base estimate and of a budget still hold."
)


def shares_add_up(analysis: Analysis) -> bool:
    """Whether the total is the sum of the items, as the Euler shares need (E[sum | T] = T).
    A schedule's finish is the latest of its paths: there the shares would not add up."""
    return getattr(analysis, "paths", None) is None


def allocate(
    estimate: Estimate,
    analysis: Analysis,
    *,
    budgets: Sequence[float] = (),
    progress: Callable[[float], None] | None = None,
    cancel: Callable[[], bool] | None = None,
) -> Allocation:
    """The contingency of `analysis` (of `estimate`) allocated at each of its levels; the
    confidence of the base estimate and of each budget; the risk events ranked. A schedule's
    finish is not shared out (no levels, `note` says why); the rest still holds."""
    started = time.perf_counter()
    items = list(estimate.items)
    if [i.name for i in items] != list(analysis.item_names):
        raise ValueError("the analysis is of another estimate: analyse this one first.")
    tracker = Progress(progress, cancel)
    dists = [build_distribution(i) for i in items]
    bases = [base_value(i)[0] for i in items]
    shared = shares_add_up(analysis)
    totals = [row.value for row in analysis.levels] if shared else []
    levels = [row.level for row in analysis.levels] if shared else []
    errors = group_jack = None
    own_trials = analysis.trials or max(
        MIN_OWN_TRIALS, min(OWN_TRIALS, OWN_VALUES // len(items) // 1000 * 1000)
    )
    if not shared:
        method, how = "none", ""
    elif analysis.dependence is None:
        method, how = "exact", HOW["exact"]
        try:
            spread = central_spread(analysis.total)
            means = conditional_means(dists, totals, spread=spread, progress=tracker)
        except GridTooCoarse:  # a heavy tail leaves the body unresolved: read trials instead
            method, how = (
                "simulation",
                (
                    f"Estimated from {own_trials:,} simulated trials near each"
                    " level: a heavy tail leaves no exact grid fine enough for the body of the"
                    " total; standard errors by deleting one replicate at a time."
                ),
            )
    else:
        method, how = "simulation", HOW["simulation"]
    if method == "simulation":
        # The sums the analysis gathered in its own run; else its trials drawn again (or,
        # for an exact analysis, trials of their own).
        found = gathered(analysis.kernel_sums, totals) or simulated_means(
            dists,
            analysis.dependence,
            totals,
            window_edges(analysis.total, levels),
            trials=own_trials,
            seed=OWN_SEED if analysis.seed is None else analysis.seed,
            sampling=analysis.sampling or "lhs",
            progress=tracker,
        )
        means, errors = found.means, found.standard_errors
        group_jack = found.jackknife
    groups = [i.group.strip() or UNGROUPED for i in items]
    base = analysis.base_estimate
    rows = []
    for j, (level, t) in enumerate(zip(levels, totals, strict=True)):
        contingency = t - base
        shares = means[:, j] - np.asarray(bases)
        naive = naive_shares(dists, bases, level, contingency)
        rows.append(
            LevelAllocation(
                level=level,
                total=t,
                contingency=contingency,
                shares=shares.tolist(),
                standard_errors=None if errors is None else errors[:, j].tolist(),
                naive=None if naive is None else naive.tolist(),
                groups=by_group(groups, shares),
                naive_groups=None if naive is None else by_group(groups, naive),
                group_errors=None
                if group_jack is None
                else group_standard_errors(groups, group_jack[:, :, j]),
                note=difference_note(
                    level,
                    contingency,
                    items_or_groups(groups, shares, naive, [i.name for i in items]),
                ),
            )
        )
    shares_by_level = {row.level: (row.shares, row.contingency) for row in rows}
    return Allocation(
        method=method,
        names=[i.name for i in items],
        groups=groups,
        bases=bases,
        means=[d.mean for d in dists],
        base_estimate=base,
        levels=rows,
        base_confidence=confidence_of(analysis.total, base, base, "base estimate"),
        budgets=[confidence_of(analysis.total, float(b), base, "budget") for b in budgets],
        risk_events=rank_risk_events(items, dists, shares_by_level),
        compute_seconds=time.perf_counter() - started,
        note="" if shared else NOT_A_SUM,
        how=how,
    )


def central_spread(total) -> float:
    """(P90 - P10) / 2.563 of the total: its sd for a normal, the body's width for a heavy
    tail (whose sd the far tail makes)."""
    p10, p90 = total.ppf(np.array([0.1, 0.9]))
    return float(p90 - p10) / (2 * NORMAL_P90)


def group_standard_errors(groups: Sequence[str], leave_one_out: np.ndarray) -> dict[str, float]:
    """Each group's standard error: the jackknife of its items' summed estimates."""
    names = list(dict.fromkeys(groups))
    member = np.array([[g == name for g in groups] for name in names], dtype=float)
    errors = jackknife_error(leave_one_out @ member.T)  # (replicates, groups) -> (groups,)
    return dict(zip(names, errors.tolist(), strict=True))


def by_group(groups: Sequence[str], values: np.ndarray) -> dict[str, float]:
    """Sum per group, groups in order of first appearance."""
    out: dict[str, float] = {}
    for g, v in zip(groups, values, strict=True):
        out[g] = out.get(g, 0.0) + float(v)
    return out


def items_or_groups(
    groups: Sequence[str], shares: np.ndarray, naive: np.ndarray | None, names: Sequence[str]
) -> tuple[str, dict[str, float], dict[str, float] | None]:
    """What the note compares: groups when there are several, else items."""
    if len(set(groups)) > 1:
        return "group", by_group(groups, shares), None if naive is None else by_group(groups, naive)
    own = dict(zip(names, shares.tolist(), strict=False))
    return "item", own, None if naive is None else dict(zip(names, naive.tolist(), strict=False))


def difference_note(
    level: float,
    contingency: float,
    compared: tuple[str, dict[str, float], dict[str, float] | None],
) -> str:
    """One sentence: whether the spreadsheet allocation would move money, and where most."""
    kind, shares, naive = compared
    tag = f"P{level:g}"
    if contingency <= 0:
        return (
            f"At {tag} the total is at or below the base estimate: there is no contingency"
            " to allocate; the shares show which items sit below their base values."
        )
    if naive is None:
        return f"At {tag} the items' own percentiles equal their base values: no naive allocation."
    gaps = {name: (naive[name] - shares[name]) / contingency for name in shares}
    largest = max(abs(g) for g in gaps.values())
    if largest < MATTERS:
        return (
            f"At {tag} the naive allocation is within {100 * largest:.0f} points of the"
            f" contingency of the conditional one for every {kind}: the difference does not"
            " change where the money is held."
        )

    def said(name: str) -> str:
        return (
            f"{kind} {name!r} {100 * naive[name] / contingency:.0f}% of the contingency where"
            f" it carries {100 * shares[name] / contingency:.0f}%"
        )

    over = max(gaps, key=lambda name: gaps[name])
    under = min(gaps, key=lambda name: gaps[name])
    parts = [said(name) for name in (over, under) if abs(gaps[name]) >= MATTERS]
    return (
        f"At {tag} the difference matters: the naive allocation gives "
        + " and ".join(parts)
        + f" when the total is at {tag}."
    )
