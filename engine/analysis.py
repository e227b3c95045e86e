"""`analyze`: the total of an estimate at each confidence level, beside the normal shortcut.

Independent items are convolved exactly by default. Correlated items (any non-zero stated
coefficient, see engine.dependence.correlation) are simulated with Iman-Conover, and each level then
also shows the normal shortcut with the covariances and the exact total the same items
would have if they were independent.
"""

from __future__ import annotations

import math
import time
from collections import Counter
from collections.abc import Callable, Sequence
from dataclasses import asdict, dataclass, field, replace
from typing import Any

import numpy as np
from scipy import special

from engine.collection_pause import collector_paused
from engine.dependence.block_structure import BlockStructure
from engine.dependence.correlation import (
    SHEET,
    Dependence,
    Targets,
    achieved_against,
    measured_items,
    targets,
)
from engine.exact.convolution import cumulants_of, exact_total
from engine.exact.grid_plan import TooWideForOneGrid
from engine.exact.refusals import exact_total_or_refusal
from engine.exact.totals import Cumulants, SampleTotal, Total
from engine.families.distributions import Distribution
from engine.items import Estimate, InputError, LineItem, Problem
from engine.memory_reuse import keep_freed_memory
from engine.progress import Progress
from engine.schedule.merge_bias import PathsSection, shortcut_distance
from engine.schedule.paths import SchedulePath, schedule_paths
from engine.schedule.schedule_finish import schedule_finish
from engine.shortcut.diagnostics import ItemDriver, NormalGap, item_drivers, kolmogorov_gap
from engine.shortcut.normal import (
    BERRY_ESSEEN_C0,
    berry_esseen_bound,
    cornish_fisher_domain,
    cornish_fisher_percentile,
    correlated_normal_variance,
    normal_percentile,
    sum_of_item_percentiles,
)
from engine.shortcut.verdict import count, dependence_reasons, reasons_for, summary_sentence
from engine.simulation.factor_pairing import fewest_per_replicate, pairing_for
from engine.simulation.level_windows import KernelSums, LevelWindows, window_edges
from engine.simulation.replicates import new_seed, redraw, simulate
from engine.simulation.sample_statistics import CorrelatedSampleStatistics
from engine.threads import beside
from engine.validation import base_value, build_distribution

DEFAULT_LEVELS = (50.0, 80.0, 90.0)
REDRAWN_SHARE = 0.05  # of a correlated run's progress bar: the pilots drawn again
DEFAULT_TOLERANCE = 0.01  # 1% of the total's percentile (common practice, no source)
METHODS = ("auto", "exact", "simulation")
SAMPLINGS = ("lhs", "random")


@dataclass(frozen=True)
class LevelRow:
    """One confidence level. gap = normal - value: negative when the shortcut understates.

    `normal` is always the independence shortcut (sum of means and of variances). With
    correlated items, `normal_dependent` adds the covariances to the variance and
    `independent_value` is the exact total of the same items with every coefficient 0;
    both are None for independent items.
    """

    level: float
    value: float
    normal: float
    cornish_fisher: float
    sum_of_items: float
    gap: float
    gap_pct: float
    holds: bool
    standard_error: float | None
    contingency: float
    contingency_pct: float | None
    normal_dependent: float | None = None
    independent_value: float | None = None

    @property
    def verdict(self) -> str:
        if self.holds:
            return "holds"
        return "understates" if self.gap < 0 else "overstates"


@dataclass(frozen=True)
class Diagnostics:
    """The evidence behind the verdict; see engine.shortcut.verdict for how it is put into words."""

    item_count: int
    uncertain_count: int
    risk_event_count: int
    risk_event_variance_share: float
    skewness: float
    excess_kurtosis: float
    largest_variance_share: float
    largest_item: str
    normal_gap: NormalGap
    berry_esseen_bound: float
    berry_esseen_constant: float
    cornish_fisher_monotone: bool  # increasing over P0.1..P99.9 and the requested levels
    # The Berry-Esseen bound is a theorem about independent items only.
    berry_esseen_applies: bool = True


@dataclass
class Analysis:
    levels: list[LevelRow]
    total: Total
    method: str
    method_reason: str
    base_estimate: float
    base_basis: str
    tolerance: float
    drivers: list[ItemDriver]
    diagnostics: Diagnostics
    reasons: list[str]
    summary: str
    seed: int | None
    trials: int | None
    sampling: str | None
    compute_seconds: float
    item_names: list[str] = field(default_factory=list)
    dependence: Dependence | None = None
    # What the `normal` column is read from (the sum of the items' means and variances when
    # it differs from the total's own moments, as with correlated items); None: the total's.
    shortcut_cumulants: Cumulants | None = None
    # A schedule of 2+ parallel paths: the total is the finish (engine.schedule).
    paths: PathsSection | None = None
    # Correlated runs: the allocation's sums near each level, gathered in the run.
    kernel_sums: KernelSums | None = None

    @property
    def berry_esseen(self) -> float:
        return self.diagnostics.berry_esseen_bound

    @property
    def grid_error(self) -> float | None:
        return getattr(self.total, "error_bound", None)

    @property
    def grid_error_probability(self) -> float | None:
        """The same check read in probability: the largest |F(x_q) - q| it moves."""
        return getattr(self.total, "error_probability", None)

    def gap_curve(self, percentiles: Sequence[float] = range(1, 100)) -> dict[str, np.ndarray]:
        """The total and the normal shortcut at many percentiles, and the gap between them."""
        q = np.asarray(list(percentiles), dtype=float) / 100
        total = self.total.ppf(q)
        shortcut = self.shortcut_cumulants or self.total_cumulants
        normal = normal_percentile(shortcut, q)
        curve = {"percentile": q * 100, "total": total, "normal": normal, "gap": normal - total}
        if self.dependence is not None:
            curve["normal_dependent"] = normal_percentile(
                Cumulants(shortcut.mean, self.dependence.shortcut_variance, 0.0, 0.0), q
            )
        return curve

    @property
    def total_cumulants(self) -> Cumulants:
        return self.total.cumulants

    def to_dict(self) -> dict[str, Any]:
        curve = self.gap_curve()
        total = self.total
        return {
            "method": self.method,
            "method_reason": self.method_reason,
            "base_estimate": self.base_estimate,
            "base_basis": self.base_basis,
            "tolerance": self.tolerance,
            "levels": [{**asdict(r), "verdict": r.verdict} for r in self.levels],
            "total": {
                "mean": total.mean,
                "sd": total.sd,
                "skewness": total.skewness,
                "excess_kurtosis": total.excess_kurtosis,
                "grid_error": self.grid_error,
                "grid_error_probability": self.grid_error_probability,
            },
            "berry_esseen": self.berry_esseen,
            "diagnostics": asdict(self.diagnostics),
            "drivers": [d.to_dict() for d in self.drivers],
            "reasons": self.reasons,
            "summary": self.summary,
            "seed": self.seed,
            "trials": self.trials,
            "sampling": self.sampling,
            "compute_seconds": self.compute_seconds,
            "dependence": None if self.dependence is None else self.dependence.to_dict(),
            "paths": None if self.paths is None else self.paths.to_dict(),
            "percentiles": {
                key: curve[key].tolist()
                for key in ("percentile", "total", "normal", "normal_dependent")
                if key in curve
            },
        }


@collector_paused()  # ~100,000 new objects on a first call, none in a cycle
def analyze(
    estimate: Estimate,
    *,
    method: str = "auto",
    levels: Sequence[float] = DEFAULT_LEVELS,
    trials: int = 100_000,
    seed: int | None = None,
    sampling: str = "lhs",
    tolerance: float = DEFAULT_TOLERANCE,
    progress: Callable[[float], None] | None = None,
    cancel: Callable[[], bool] | None = None,
) -> Analysis:
    """Analyse an estimate; raises InputError listing every problem if it has any."""
    keep_freed_memory()
    problems = estimate.problems
    if problems:
        raise InputError(problems)
    _check_settings(estimate, method, levels, trials, sampling, tolerance)
    started = time.perf_counter()
    items = list(estimate.items)
    dists = [build_distribution(i) for i in items]
    tracker = Progress(progress, cancel)
    linked = correlated_pairs(estimate)
    schedule = schedule_paths(items)
    if schedule:  # the estimate names 2+ parallel paths: the total is their finish
        return analyze_schedule(
            estimate, items, dists, schedule, linked, tracker,
            method=method, levels=levels, trials=trials, seed=seed, sampling=sampling,
            tolerance=tolerance,
        )  # fmt: skip
    if linked:
        _check_correlated_settings(method, trials, len(items), linked)
        aims = targets(estimate)
        chosen = "simulation"
        why = (
            "simulation was chosen in the settings"
            if method == "simulation"
            else f"{count(linked, 'pair')} of items {'is' if linked == 1 else 'are'} correlated,"
            " so the total is simulated"
            " (exact convolution needs independent items)"
        ) + (
            "; the correlations are induced by block factors (a default and group"
            " coefficients, no n x n matrix)"
            if aims.model is not None
            else "; the correlations are induced by Iman–Conover"
        )
        if aims.repaired:
            why += " on the nearest valid correlation matrix (repair accepted)"
        if aims.pearson_repaired:
            why += "; the normal-score correlations were repaired to the nearest valid matrix"
    elif method == "simulation":
        chosen, why = "simulation", "simulation was chosen in the settings"
    else:
        chosen, why = "exact", "items are independent, so the total is computed exactly"

    base, basis = base_estimate(items)
    # The shortcut is the items' exact means and variances whatever the method: sample
    # moments would let sampling noise into the gap and the verdict.
    shortcut = cumulants_of(dists)
    dependence = kernel_sums = None
    seed_used = trials_used = sampling_used = None
    if chosen == "exact":
        found = exact_total_or_refusal(items, dists, tracker, shortcut, refuse=method == "exact")
        if isinstance(found, str):  # two items too wide for one grid: simulated instead
            chosen, why = "simulation", found
    if chosen == "exact":
        total: Total = found
        drivers = item_drivers(items, dists)
    else:
        seed_used = new_seed() if seed is None else int(seed)
        sampling_used = sampling
        if linked:
            total, dependence, stats, kernel_sums = simulate_correlated(
                dists, aims, trials, seed_used, sampling, tracker, levels
            )
            drivers = item_drivers(
                items, dists, stats.variance_contributions, stats.rank_with_total
            )
        else:
            total = simulate(
                dists, trials=trials, seed=seed_used, sampling=sampling, progress=tracker
            )
            drivers = item_drivers(items, dists)
        trials_used = total.trials
    rows = level_rows(total, dists, levels, base, tolerance, shortcut, dependence)
    diagnostics = diagnose(
        items, dists, total, drivers, independent=not linked, levels=levels, exact=shortcut
    )
    reasons = reasons_for(diagnostics, drivers, dependence)
    return Analysis(
        levels=rows,
        total=total,
        method=chosen,
        method_reason=why,
        base_estimate=base,
        base_basis=basis,
        tolerance=tolerance,
        drivers=drivers,
        diagnostics=diagnostics,
        reasons=reasons,
        summary=summary_sentence(rows, reasons),
        seed=seed_used,
        trials=trials_used,
        sampling=sampling_used,
        compute_seconds=time.perf_counter() - started,
        item_names=[i.name for i in items],
        dependence=dependence,
        shortcut_cumulants=shortcut,
        kernel_sums=kernel_sums,
    )


def correlated_pairs(estimate: Estimate) -> int:
    """How many pairs of items have a non-zero stated coefficient."""
    if estimate.correlation.is_independent:
        return 0
    return BlockStructure.from_estimate(estimate).linked_pairs()  # no n x n matrix


def _check_correlated_settings(method: str, trials: int, items: int, linked: int) -> None:
    bad = []
    if method == "exact":
        bad.append(
            Problem(
                f"exact convolution needs independent items, and {linked} pair(s) are correlated.",
                "use auto or simulation, or set every correlation to 0.",
                column="Coefficient",
                sheet=SHEET,
            )
        )
    # Two replicates of more than `items` trials each: Iman-Conover needs trials > items.
    if trials < 4 * items:
        bad.append(
            Problem(
                f"{trials} trials are too few to correlate {items} items.",
                f"use at least {4 * items} trials (100000 is usual).",
            )
        )
    if bad:
        raise InputError(bad)


def simulate_correlated(
    dists: Sequence[Distribution],
    aims: Targets,
    trials: int,
    seed: int,
    sampling: str,
    tracker: Progress,
    levels: Sequence[float] = DEFAULT_LEVELS,
) -> tuple[Total, Dependence, CorrelatedSampleStatistics, KernelSums | None]:
    """The correlated simulation, its sample statistics, the same items independent, and
    the allocation's sums near each level (engine.simulation.level_windows)."""
    factored = aims.model is not None
    pairing = pairing_for(aims)
    measured = measured_items(aims.structure)
    stats = CorrelatedSampleStatistics(dists, measured)
    windows = LevelWindows(levels, len(dists))

    def observe(lane: int, values: np.ndarray, total: np.ndarray, positions: np.ndarray) -> None:
        stats(lane, values, total, positions)
        if windows.batches:
            windows(lane, values, total, positions)

    pending = beside(lambda: exact_total(dists, progress=tracker.silent(), check_error=False))
    run = {
        "dists": dists,
        "trials": trials,
        "seed": seed,
        "sampling": sampling,
        "pairing": pairing,
        "min_per_replicate": fewest_per_replicate(aims, len(dists)),
    }
    try:
        share = REDRAWN_SHARE if windows.batches else 0.0
        total = simulate(**run, observe=observe, progress=tracker.part(0, 1 - share))
        if windows.batches:
            lanes = windows.pilots(len(total.by_replicate))
            again = tracker.part(1 - share, share)
            redraw(**run, lanes=lanes, observe=windows.again, progress=again)
        try:
            independent = pending.result()
        except TooWideForOneGrid:  # two items too wide for one exact grid: simulated too
            independent = simulate(dists, trials=trials, seed=seed, sampling=sampling)
    finally:
        pending.cancel()
    kernel_sums = None
    if windows.batches:
        q = np.asarray([float(lv) for lv in levels]) / 100  # as level_rows reads them
        kernel_sums = windows.settle(total, total.ppf(q), window_edges(total, levels))
    sds = np.array([d.sd for d in dists])
    deviation, worst, summary = achieved_against(aims, stats.achieved, measured)
    dependence = Dependence(
        **vars(aims),
        achieved=stats.achieved if len(measured) == len(dists) else None,
        achieved_max_deviation=deviation,
        worst_achieved=worst,
        shortcut_variance=(
            aims.structure.pearson().quadratic_form(sds)
            if factored
            else correlated_normal_variance(sds, aims.pearson_used)
        ),
        sd_dependent=total.sd,
        independent_total=independent,
        achieved_summary=summary,
    )
    return total, dependence, stats, kernel_sums


def _check_settings(estimate, method, levels, trials, sampling, tolerance) -> None:
    bad = []
    if not estimate.items:
        bad.append(Problem("the estimate has no line items.", "add at least one item."))
    if method not in METHODS:
        bad.append(Problem(f"method {method!r} is unknown.", f"use one of {', '.join(METHODS)}."))
    if sampling not in SAMPLINGS:
        bad.append(Problem(f"sampling {sampling!r} is unknown.", "use lhs or random."))
    if not levels or any(not (0 < float(lv) < 100) for lv in levels):
        bad.append(
            Problem(
                f"levels {list(levels)} must lie strictly between 0 and 100.",
                "use e.g. 50, 80, 90.",
            )
        )
    if not (isinstance(trials, int | np.integer) and trials >= 1000):
        bad.append(
            Problem(f"trials {trials!r} is too few.", "use at least 1000 (100000 is usual).")
        )
    if not (0 < tolerance < 1):
        bad.append(
            Problem(
                f"tolerance {tolerance!r} must be a fraction between 0 and 1.", "use 0.01 for 1%."
            )
        )
    if bad:
        raise InputError(bad)


def base_estimate(items: Sequence[LineItem]) -> tuple[float, str]:
    """Sum of the items' point values, and a sentence saying which values those are."""
    values = [base_value(i) for i in items]
    counts = Counter(k for (_, k), i in zip(values, items, strict=True) if not i.is_risk_event)
    kinds = {
        "most likely": "most likely value",
        "mean": "mean",
        "median": "median",
        "most probable value": "most probable value",
    }
    parts = [f"the {said} for {counts[kind]}" for kind, said in kinds.items() if counts[kind]]
    if parts:
        parts[0] += " item" if sum(counts.values()) == 1 else " items"
    basis = "sum of the base items' point values: " + (", ".join(parts) if parts else "none")
    events = sum(1 for i in items if i.is_risk_event)
    if events:
        basis += f"; {count(events, 'risk event')} excluded (contingency carries them)"
    return math.fsum(v for v, _ in values), basis


def level_rows(
    total: Total,
    dists: Sequence[Distribution],
    levels: Sequence[float],
    base: float,
    tolerance: float,
    shortcut: Cumulants | None = None,
    dependence: Dependence | None = None,
) -> list[LevelRow]:
    """`shortcut`: the items' exact moments, which the normal column is read from (default:
    computed here). Cornish–Fisher reads them too, except with correlated items, whose
    total's skewness and kurtosis are not the items' sums: those come from the trials."""
    q = np.asarray([float(lv) for lv in levels]) / 100
    value = total.ppf(q)
    shortcut = shortcut or cumulants_of(dists)
    cumulants = total.cumulants if dependence is not None else shortcut
    normal = normal_percentile(shortcut, q)
    if dependence is not None:
        mean = shortcut.mean
        dependent = normal_percentile(Cumulants(mean, dependence.shortcut_variance, 0, 0), q)
        independent = dependence.independent_total.ppf(q)
    cf = cornish_fisher_percentile(cumulants, q)
    naive = sum_of_item_percentiles(dists, q)
    se = total.standard_error(q)
    rows = []
    for i, lv in enumerate(levels):
        gap = float(normal[i] - value[i])
        scale = abs(float(value[i]))
        rows.append(
            LevelRow(
                level=float(lv),
                value=float(value[i]),
                normal=float(normal[i]),
                cornish_fisher=float(cf[i]),
                sum_of_items=float(naive[i]),
                gap=gap,
                gap_pct=100 * gap / scale if scale > 0 else 0.0,
                holds=abs(gap) <= tolerance * scale,
                standard_error=None if se is None else float(se[i]),
                contingency=float(value[i]) - base,
                contingency_pct=100 * (float(value[i]) - base) / abs(base) if base else None,
                normal_dependent=None if dependence is None else float(dependent[i]),
                independent_value=None if dependence is None else float(independent[i]),
            )
        )
    return rows


def cornish_fisher_span(levels: Sequence[float]) -> float:
    """The |z| the verdict needs Cornish–Fisher to be increasing over: P0.1 to P99.9 (the
    charts' range) and any requested level beyond it."""
    extreme = max(max(abs(float(lv) - 50) for lv in levels) + 50, 99.9)
    return float(special.ndtri(extreme / 100))


def diagnose(
    items: Sequence[LineItem],
    dists: Sequence[Distribution],
    total: Total,
    drivers: Sequence[ItemDriver],
    *,
    independent: bool = True,
    levels: Sequence[float] = DEFAULT_LEVELS,
    exact: Cumulants | None = None,
) -> Diagnostics:
    exact = exact or cumulants_of(dists)
    events = [d for d, i in zip(dists, items, strict=True) if i.is_risk_event]
    top = drivers[0] if drivers else None
    shape = total.cumulants if isinstance(total, SampleTotal) and not independent else exact
    domain = cornish_fisher_domain(shape.skewness, shape.excess_kurtosis)
    return Diagnostics(
        item_count=len(items),
        uncertain_count=sum(1 for d in dists if d.variance > 0),
        risk_event_count=len(events),
        risk_event_variance_share=(
            math.fsum(d.variance for d in events) / exact.variance if exact.variance > 0 else 0.0
        ),
        skewness=shape.skewness,
        excess_kurtosis=shape.excess_kurtosis,
        largest_variance_share=top.variance_share if top else 0.0,
        largest_item=top.name if top else "",
        normal_gap=kolmogorov_gap(total, exact if independent else None),
        berry_esseen_bound=berry_esseen_bound(dists, exact),
        berry_esseen_constant=BERRY_ESSEEN_C0,
        cornish_fisher_monotone=domain.monotone_within(cornish_fisher_span(levels)),
        berry_esseen_applies=independent,
    )


def analyze_schedule(
    estimate: Estimate,
    items: Sequence[LineItem],
    dists: Sequence[Distribution],
    paths: Sequence[SchedulePath],
    linked: int,
    tracker: Progress,
    *,
    method: str,
    levels: Sequence[float],
    trials: int,
    seed: int | None,
    sampling: str,
    tolerance: float,
) -> Analysis:
    """A schedule's finish beside the classic method's answer: every shortcut column reads the
    longest-mean path alone, as that method does; the base is the longest path by point values."""
    started = time.perf_counter()
    aims = None
    if linked:
        _check_correlated_settings(method, trials, len(items), linked)
        aims = targets(estimate)
    seed_used = new_seed() if seed is None else int(seed)
    finish, section, why, dependence = schedule_finish(
        items, dists, paths, levels, method=method, aims=aims,
        trials=trials, seed=seed_used, sampling=sampling, progress=tracker,
    )  # fmt: skip
    longest = next(p for p, r in zip(paths, section.rows, strict=True) if r.longest_mean)
    on_path = [items[i] for i in longest.members]
    path_dists = [dists[i] for i in longest.members]
    bases = [(base_estimate([items[i] for i in p.members]), p.name) for p in paths]
    (base, basis), base_path = max(bases, key=lambda b: b[0][0])
    shortcut = cumulants_of(path_dists)
    rows = level_rows(finish.total, path_dists, levels, base, tolerance, shortcut, dependence)
    drivers = item_drivers(on_path, path_dists)
    path_total = finish.path_totals[paths.index(longest)]
    diagnostics = diagnose(
        on_path, path_dists, path_total, drivers, independent=not linked, levels=levels
    )  # the longest path's evidence; the distance is the finish's from that path's normal
    diagnostics = replace(diagnostics, normal_gap=shortcut_distance(finish.total, shortcut))
    alone = f"on the longest path ('{longest.name}') alone, "
    reasons = section.reasons + ([] if dependence is None else dependence_reasons(dependence))
    reasons += [alone + r for r in reasons_for(diagnostics, drivers)]
    simulated = isinstance(finish.total, SampleTotal)
    return Analysis(
        levels=rows,
        total=finish.total,
        method=finish.method,
        method_reason=why,
        base_estimate=base,
        base_basis=f"the longest path by point values, '{base_path}': {basis}",
        tolerance=tolerance,
        drivers=drivers,
        diagnostics=diagnostics,
        reasons=reasons,
        summary=summary_sentence(rows, reasons).replace(
            "The normal shortcut", "The longest path's normal shortcut", 1
        ),
        seed=seed_used if simulated else None,
        trials=finish.total.trials if simulated else None,
        sampling=sampling if simulated else None,
        compute_seconds=time.perf_counter() - started,
        item_names=[i.name for i in items],
        dependence=dependence,
        shortcut_cumulants=shortcut,
        paths=section,
    )
