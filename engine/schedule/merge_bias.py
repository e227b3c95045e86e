"""The paths beside the finish: each path's own percentiles and criticality, the merge bias
(the finish minus the longest-mean path's normal shortcut, the classic method's answer), and
the reasons in words.

The classic method reads one path, the one with the longest mean, as if it were the whole
schedule; every other path that might finish later is ignored, so it understates the finish
(the merge-event bias: MacCrimmon & Ryavec, Operations Research 12, 1964).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from scipy import special

from engine.exact.totals import Cumulants, Total
from engine.items import LineItem
from engine.schedule.finish import Finish
from engine.schedule.paths import NO_PATH, SchedulePath
from engine.shortcut.diagnostics import NormalGap, kolmogorov_gap
from engine.shortcut.normal import normal_percentile
from engine.shortcut.verdict import compact

NEAR_LONGEST = (
    0.05  # paths within 5% of the longest mean compete for the finish (common practice, no source)
)
NOTABLE_CRITICALITY = (
    0.1  # a path that is the latest this often matters (common practice, no source)
)


@dataclass(frozen=True)
class PathRow:
    name: str
    activities: int
    mean: float
    sd: float
    values: tuple[float, ...]  # the path's own percentile at each level
    criticality: float  # probability the path is the latest
    criticality_se: float | None
    longest_mean: bool
    names: tuple[str, ...] = ()  # its activities, in the estimate's order

    def to_dict(self) -> dict[str, Any]:
        return {
            "name": self.name,
            "activities": self.activities,
            "mean": self.mean,
            "sd": self.sd,
            "values": list(self.values),
            "criticality": self.criticality,
            "criticality_se": self.criticality_se,
            "longest_mean": self.longest_mean,
            "activity_names": list(self.names),
        }


@dataclass
class PathsSection:
    """What `Analysis.paths` carries for a schedule: the total is the finish."""

    levels: tuple[float, ...]
    rows: list[PathRow]
    longest: str  # the path with the longest mean: the classic method's path
    finish: tuple[float, ...]  # the finish at each level
    shortcut: tuple[float, ...]  # the longest-mean path's normal shortcut at each level
    merge_bias: tuple[float, ...]  # finish minus shortcut at each level
    finish_mean: float
    longest_mean: float
    shared: list[str]  # activities on two or more paths
    # (activity, probability it lies on the latest path): the sum of its paths' criticality,
    # since "path k is the latest" are exclusive events (Van Slyke, Operations Research 11,
    # 1963, the criticality index); highest first
    activity_criticality: list[tuple[str, float]]
    method: str
    reasons: list[str]
    path_totals: tuple[Total, ...] = field(default=(), repr=False, compare=False)

    def to_dict(self) -> dict[str, Any]:
        return {
            "levels": list(self.levels),
            "longest": self.longest,
            "finish": list(self.finish),
            "shortcut": list(self.shortcut),
            "merge_bias": list(self.merge_bias),
            "finish_mean": self.finish_mean,
            "longest_mean": self.longest_mean,
            "mean_merge_bias": self.finish_mean - self.longest_mean,
            "shared": self.shared,
            "activity_criticality": [list(pair) for pair in self.activity_criticality],
            "method": self.method,
            "reasons": self.reasons,
            "paths": [r.to_dict() for r in self.rows],
        }


def shortcut_distance(finish: Total, shortcut: Cumulants, points: int = 4001) -> NormalGap:
    """sup |F_finish(x) - Phi((x - m) / s)| with the longest path's m, s: how far the classic
    answer's curve lies from the finish (a Kolmogorov distance), and where."""
    if shortcut.sd <= 0:
        return kolmogorov_gap(finish)
    lo, hi = (float(v) for v in finish.ppf(np.array([1e-6, 1 - 1e-6])))
    x = np.linspace(
        min(lo, shortcut.mean - 5 * shortcut.sd), max(hi, shortcut.mean + 5 * shortcut.sd), points
    )
    cdf = finish.cdf(x)
    gaps = np.abs(cdf - special.ndtr((x - shortcut.mean) / shortcut.sd))
    i = int(np.argmax(gaps))
    return NormalGap(float(gaps[i]), float(x[i]), float(100 * cdf[i]))


def longest_index(means: Sequence[float]) -> int:
    """The classic method's path: the longest mean (the first named on a tie)."""
    return int(np.argmax(means))


def paths_section(
    finish: Finish,
    paths: Sequence[SchedulePath],
    path_cumulants: Sequence[Cumulants],
    items: Sequence[LineItem],
    levels: Sequence[float],
    shared: Sequence[int],
) -> PathsSection:
    """`path_cumulants`: each path's exact sum moments (the shortcut reads these)."""
    q = np.asarray([float(lv) for lv in levels]) / 100
    longest = longest_index([c.mean for c in path_cumulants])
    shortcut = normal_percentile(path_cumulants[longest], q)
    value = finish.total.ppf(q)
    se = finish.criticality_se
    rows = [
        PathRow(
            name=path.name,
            activities=len(path.members),
            mean=c.mean,
            sd=c.sd,
            values=tuple(float(v) for v in t.ppf(q)),
            criticality=float(finish.criticality[k]),
            criticality_se=None if se is None else float(se[k]),
            longest_mean=k == longest,
            names=tuple(items[i].name for i in path.members),
        )
        for k, (path, c, t) in enumerate(
            zip(paths, path_cumulants, finish.path_totals, strict=True)
        )
    ]
    section = PathsSection(
        levels=tuple(float(lv) for lv in levels),
        rows=rows,
        longest=paths[longest].name,
        finish=tuple(float(v) for v in value),
        shortcut=tuple(float(v) for v in shortcut),
        merge_bias=tuple(float(v) for v in value - shortcut),
        finish_mean=finish.total.mean,
        longest_mean=path_cumulants[longest].mean,
        shared=[items[i].name for i in shared],
        activity_criticality=activity_criticality(paths, finish.criticality, items),
        method=finish.method,
        reasons=[],
        path_totals=finish.path_totals,
    )
    section.reasons = merge_reasons(section, paths)
    return section


def activity_criticality(
    paths: Sequence[SchedulePath], criticality: np.ndarray, items: Sequence[LineItem]
) -> list[tuple[str, float]]:
    index = np.zeros(len(items))
    for path, share in zip(paths, criticality, strict=True):
        index[list(path.members)] += share
    order = sorted(range(len(items)), key=lambda i: -index[i])
    return [(items[i].name, float(min(index[i], 1.0))) for i in order]


def merge_reasons(section: PathsSection, paths: Sequence[SchedulePath]) -> list[str]:
    """Why the finish is later than the longest path, in the order a reader needs them."""
    rows = section.rows
    top = section.longest_mean
    near = [r for r in rows if top > 0 and r.mean >= (1 - NEAR_LONGEST) * top]
    reasons = []
    if len(near) > 1:
        reasons.append(
            f"{len(near)} paths within {NEAR_LONGEST:.0%} of the longest mean: the finish is "
            "later than any one of them"
        )
    rivals = [r for r in rows if r not in near and r.criticality >= NOTABLE_CRITICALITY]
    for r in sorted(rivals, key=lambda r: -r.criticality)[:3]:
        reasons.append(
            f"path '{r.name}' is the latest in {r.criticality:.0%} of outcomes though its mean "
            f"is {compact(top - r.mean)} below the longest ('{section.longest}')"
        )
    bias = section.finish_mean - top
    if bias > 0:
        reasons.append(
            f"merge bias: the finish's mean is {compact(bias)} later than the longest path's "
            f"({compact(section.finish_mean)} against {compact(top)})"
        )
    if section.shared:
        named = ", ".join(f"'{n}'" for n in section.shared[:3])
        more = f" and {len(section.shared) - 3} more" if len(section.shared) > 3 else ""
        lie, tie = ("lies", "ties") if len(section.shared) == 1 else ("lie", "tie")
        reasons.append(
            f"{named}{more} {lie} on several paths and {tie} them together, so the finish is "
            "simulated (the paths are not independent)"
        )
    if any(p.name == NO_PATH for p in paths):
        count = next(len(p.members) for p in paths if p.name == NO_PATH)
        reasons.append(
            f"{count} activit{'y' if count == 1 else 'ies'} name no path and form the path "
            f"'{NO_PATH}'; name each activity's paths in the Path column, separated by ';'"
        )
    return reasons
