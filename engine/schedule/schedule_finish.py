"""Which way the finish is computed, and the paths section beside it.

Independent paths (no shared activity, no correlation) are exact: each path's total from
the exact engine, the finish their product of CDFs. Otherwise, or when simulation is chosen,
every trial takes the latest path.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

from engine.dependence.correlation import (
    Dependence,
    Targets,
    achieved_against,
    measured_items,
)
from engine.exact.convolution import cumulants_of, exact_total
from engine.exact.grid_plan import TooWideForOneGrid
from engine.exact.refusals import too_wide_refusal, too_wide_words
from engine.exact.totals import Total
from engine.exact.wide_item import WideItemTotal
from engine.families.distributions import Distribution
from engine.items import InputError, LineItem, Problem
from engine.progress import Progress
from engine.schedule.finish import Finish
from engine.schedule.latest_exact import latest_of
from engine.schedule.latest_simulated import simulated_finish
from engine.schedule.merge_bias import PathsSection, longest_index, paths_section
from engine.schedule.paths import SchedulePath, shared_activities
from engine.shortcut.normal import correlated_normal_variance
from engine.simulation.factor_pairing import pairing_for
from engine.simulation.sample_statistics import CorrelatedSampleStatistics


def schedule_finish(
    items: Sequence[LineItem],
    dists: Sequence[Distribution],
    paths: Sequence[SchedulePath],
    levels: Sequence[float],
    *,
    method: str,
    aims: Targets | None,
    trials: int,
    seed: int,
    sampling: str,
    progress: Progress,
) -> tuple[Finish, PathsSection, str, Dependence | None]:
    """The finish, the paths section, why the method was chosen, and with correlated
    activities (`aims`) the record of what the correlation did."""
    shared = shared_activities(paths)
    path_dists = [[dists[i] for i in p.members] for p in paths]
    intro = f"the finish is the latest of {len(paths)} paths"
    if shared and method == "exact":
        first = items[shared[0]]
        count = f"{len(shared)} shared activit{'y' if len(shared) == 1 else 'ies'}"
        raise InputError(
            [
                Problem(
                    f"exact needs independent paths, and {first.name!r} lies on several "
                    f"paths ({count}).",
                    "use auto or simulation, or put each activity on one path.",
                    item=first.name,
                    row=first.row,
                    column="Path",
                )
            ]
        )
    dependence = None
    wide = ""  # why an independent schedule is simulated: two activities too wide
    if not (aims is not None or shared or method == "simulation"):
        try:
            finish = _exact_finish(path_dists, paths, progress)
        except TooWideForOneGrid as both:
            if method == "exact":
                raise too_wide_refusal(
                    items, both, "narrow one of the two ranges, or choose the simulation method."
                ) from None
            wide = too_wide_words(items, both)
        except WidePath as bad:
            item = items[bad.item]
            wide = (
                f"'{item.name}' spreads over more orders of magnitude than one grid of the"
                " finish can hold beside the other paths"
            )
            if method == "exact":
                fix = "narrow its range, or choose the simulation method."
                raise InputError(
                    [Problem(wide + ".", fix, item=item.name, row=item.row, column="High")]
                ) from None
        else:
            why = (
                f"{intro}; the paths share no activity and are independent, so the finish is "
                "exact: the product of the paths' exact distributions"
            )
    if aims is not None or shared or method == "simulation" or wide:
        if method == "simulation":
            why = "simulation was chosen in the settings"
        elif wide:
            why = wide
        elif aims is not None:
            why = "activities are correlated (induced by " + (
                "block factors)" if aims.model is not None else "Iman–Conover)"
            )
        else:
            why = f"{len(shared)} activit{'y lies' if len(shared) == 1 else 'ies lie'} on several paths"
        run = {"trials": trials, "seed": seed, "sampling": sampling}
        if aims is None:
            finish = simulated_finish(dists, paths, **run, progress=progress)
        else:
            stats = CorrelatedSampleStatistics(dists, measured_items(aims.structure))
            finish = simulated_finish(
                dists,
                paths,
                **run,
                pairing=pairing_for(aims),
                observe=stats,
                progress=progress.part(0, 0.8),
            )
            # The same paths with every coefficient 0: exact unless activities are shared
            # or two are too wide for one grid, simulated then.
            try:
                independent = None if shared else _exact_finish(path_dists, paths).total
            except (TooWideForOneGrid, WidePath):
                independent = None
            if independent is None:
                again = progress.part(0.8, 0.2)
                independent = simulated_finish(dists, paths, **run, progress=again).total
            dependence = path_dependence(aims, stats, finish, independent, dists, paths)
        why = f"{intro}, simulated with the latest path taken in each trial: {why}"
    cumulants = [cumulants_of(d) for d in path_dists]
    section = paths_section(finish, paths, cumulants, items, levels, shared)
    return finish, section, why, dependence


def _exact_finish(
    path_dists: Sequence[Sequence[Distribution]],
    paths: Sequence[SchedulePath],
    progress: Progress | None = None,
) -> Finish:
    """The product of the paths' exact CDFs; TooWideForOneGrid names items of the schedule."""
    totals = []
    for k, on_path in enumerate(path_dists):
        part = None if progress is None else progress.part(k / len(paths), 1 / len(paths))
        members = list(paths[k].members)
        try:
            total = exact_total(on_path, progress=part)
        except TooWideForOneGrid as both:
            raise TooWideForOneGrid(members[both.first], members[both.second]) from None
        if isinstance(total, WideItemTotal):  # its cdf over the finish's grid costs minutes
            raise WidePath(members[next(i for i, d in enumerate(on_path) if d is total.wide)])
        totals.append(total)
    return latest_of(totals)


class WidePath(ValueError):
    """A path holds an item kept off the grid (engine.exact.wide_item): the finish's grid
    would evaluate its cdf at a quarter of a million points, each a sum over its path."""

    def __init__(self, item: int) -> None:
        self.item = item  # index into the schedule's items
        super().__init__(f"item {item} is too wide for the finish's grid")


def path_dependence(
    aims: Targets,
    stats: CorrelatedSampleStatistics,
    finish: Finish,
    independent: Total,
    dists: Sequence[Distribution],
    paths: Sequence[SchedulePath],
) -> Dependence:
    """The correlation record, read for a schedule: its shortcut variance is the longest-mean
    path's with covariances (the classic method's path), its totals are finishes."""
    means = [math.fsum(dists[i].mean for i in p.members) for p in paths]
    on_longest = list(paths[longest_index(means)].members)
    measured = measured_items(aims.structure)
    deviation, worst, summary = achieved_against(aims, stats.achieved, measured)
    if aims.model is not None:  # block factors: s'Rs with the sds of other paths set to 0
        sds = np.zeros(len(dists))
        sds[on_longest] = [dists[i].sd for i in on_longest]
        variance = aims.structure.pearson().quadratic_form(sds)
    else:
        sds = np.array([dists[i].sd for i in on_longest])
        variance = correlated_normal_variance(
            sds, aims.pearson_used[np.ix_(on_longest, on_longest)]
        )
    return Dependence(
        **vars(aims),
        achieved=stats.achieved if len(measured) == len(dists) else None,
        achieved_max_deviation=deviation,
        worst_achieved=worst,
        shortcut_variance=variance,
        sd_dependent=finish.total.sd,
        independent_total=independent,
        achieved_summary=summary,
    )
