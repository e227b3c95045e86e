"""`analyze`: the total of an estimate at each confidence level, beside the normal shortcut."""

from __future__ import annotations

import math
import time
from collections.abc import Callable, Sequence
from dataclasses import asdict, dataclass, field
from typing import Any

import numpy as np

from engine.convolution import cumulants_of, exact_total
from engine.diagnostics import ItemDriver, NormalGap, item_drivers, kolmogorov_gap
from engine.distributions import Distribution
from engine.items import Estimate, InputError, LineItem
from engine.progress import Progress
from engine.shortcut import (
    BERRY_ESSEEN_C0,
    berry_esseen_bound,
    cornish_fisher_domain,
    cornish_fisher_percentile,
    normal_percentile,
    sum_of_item_percentiles,
)
from engine.simulation import new_seed, simulate
from engine.totals import Cumulants, GridTotal, SampleTotal, Total
from engine.validation import base_value, build_distribution
from engine.verdict import reasons_for, summary_sentence

DEFAULT_LEVELS = (50.0, 80.0, 90.0)
DEFAULT_TOLERANCE = 0.01  # 1% of the total's percentile (common practice, no source)
METHODS = ("auto", "exact", "simulation")
SAMPLINGS = ("lhs", "random")


@dataclass(frozen=True)
class LevelRow:
    """One confidence level. gap = normal - value: negative when the shortcut understates."""

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

    @property
    def verdict(self) -> str:
        if self.holds:
            return "holds"
        return "understates" if self.gap < 0 else "overstates"


@dataclass(frozen=True)
class Diagnostics:
    """The evidence behind the verdict; see engine.verdict for how it is put into words."""

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
    cornish_fisher_monotone: bool


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

    @property
    def berry_esseen(self) -> float:
        return self.diagnostics.berry_esseen_bound

    @property
    def grid_error(self) -> float | None:
        return self.total.error_bound if isinstance(self.total, GridTotal) else None

    def gap_curve(self, percentiles: Sequence[float] = range(1, 100)) -> dict[str, np.ndarray]:
        """The total and the normal shortcut at many percentiles, and the gap between them."""
        q = np.asarray(list(percentiles), dtype=float) / 100
        total = self.total.ppf(q)
        normal = normal_percentile(self.total_cumulants, q)
        return {"percentile": q * 100, "total": total, "normal": normal, "gap": normal - total}

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
            "percentiles": {
                "percentile": curve["percentile"].tolist(),
                "total": curve["total"].tolist(),
                "normal": curve["normal"].tolist(),
            },
        }


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
    problems = estimate.problems
    if problems:
        raise InputError(problems)
    _check_settings(estimate, method, levels, trials, sampling, tolerance)
    started = time.perf_counter()
    items = list(estimate.items)
    dists = [build_distribution(i) for i in items]
    tracker = Progress(progress, cancel)

    if method == "simulation":
        chosen, why = "simulation", "simulation was chosen in the settings"
    else:
        chosen, why = "exact", "items are independent, so the total is computed exactly"
    if chosen == "exact":
        total: Total = exact_total(dists, progress=tracker)
        seed_used = trials_used = sampling_used = None
    else:
        seed_used = new_seed() if seed is None else int(seed)
        total = simulate(dists, trials=trials, seed=seed_used, sampling=sampling, progress=tracker)
        trials_used, sampling_used = total.trials, sampling

    base, basis = base_estimate(items)
    rows = level_rows(total, dists, levels, base, tolerance)
    drivers = item_drivers(items, dists)
    diagnostics = diagnose(items, dists, total, drivers)
    reasons = reasons_for(diagnostics, drivers)
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
    )


def _check_settings(estimate, method, levels, trials, sampling, tolerance) -> None:
    from engine.items import Problem

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
    kinds = sorted({k for _, k in values if not k.startswith("risk")})
    events = sum(1 for i in items if i.is_risk_event)
    basis = "sum of " + (", ".join(kinds) if kinds else "no") + " values of the base items"
    if events:
        basis += f"; {events} risk event(s) excluded (contingency carries them)"
    return math.fsum(v for v, _ in values), basis


def level_rows(
    total: Total,
    dists: Sequence[Distribution],
    levels: Sequence[float],
    base: float,
    tolerance: float,
) -> list[LevelRow]:
    q = np.asarray([float(lv) for lv in levels]) / 100
    value = total.ppf(q)
    cumulants = cumulants_of(dists) if isinstance(total, GridTotal) else total.cumulants
    normal = normal_percentile(cumulants, q)
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
            )
        )
    return rows


def diagnose(
    items: Sequence[LineItem],
    dists: Sequence[Distribution],
    total: Total,
    drivers: Sequence[ItemDriver],
) -> Diagnostics:
    exact = cumulants_of(dists)
    events = [d for d, i in zip(dists, items, strict=True) if i.is_risk_event]
    top = drivers[0] if drivers else None
    shape = total.cumulants if isinstance(total, SampleTotal) else exact
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
        normal_gap=kolmogorov_gap(total),
        berry_esseen_bound=berry_esseen_bound(dists),
        berry_esseen_constant=BERRY_ESSEEN_C0,
        cornish_fisher_monotone=domain.monotone,
    )
