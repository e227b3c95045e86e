"""Which way the finish is computed, and the paths section beside it.

Independent paths (no shared activity, no correlation) are exact: each path's total from
the exact engine, the finish their product of CDFs. Otherwise, or when simulation is chosen,
every trial takes the latest path.
"""

from __future__ import annotations

from collections.abc import Sequence

from engine.exact.convolution import cumulants_of, exact_total
from engine.families.distributions import Distribution
from engine.items import InputError, LineItem, Problem
from engine.progress import Progress
from engine.schedule.finish import Finish
from engine.schedule.latest_exact import latest_of
from engine.schedule.latest_simulated import simulated_finish
from engine.schedule.merge_bias import PathsSection, paths_section
from engine.schedule.paths import SchedulePath, shared_activities
from engine.simulation.replicates import Pairing


def schedule_finish(
    items: Sequence[LineItem],
    dists: Sequence[Distribution],
    paths: Sequence[SchedulePath],
    levels: Sequence[float],
    *,
    method: str,
    pairing: Pairing | None,
    trials: int,
    seed: int,
    sampling: str,
    progress: Progress,
) -> tuple[Finish, PathsSection, str]:
    """The finish, the paths section, and why the method was chosen."""
    shared = shared_activities(paths)
    path_dists = [[dists[i] for i in p.members] for p in paths]
    intro = f"the finish is the latest of {len(paths)} paths"
    if shared and method == "exact":
        raise InputError(
            [
                Problem(
                    f"exact needs independent paths, and {items[shared[0]].name!r} lies on "
                    f"several paths ({len(shared)} shared activit{'y' if len(shared) == 1 else 'ies'}).",
                    "use auto or simulation, or put each activity on one path.",
                    item=items[shared[0]].name,
                    row=items[shared[0]].row,
                    column="Path",
                )
            ]
        )
    if pairing is not None or shared or method == "simulation":
        if method == "simulation":
            why = "simulation was chosen in the settings"
        elif pairing is not None:
            why = "activities are correlated (induced by Iman-Conover)"
        else:
            why = f"{len(shared)} activit{'y lies' if len(shared) == 1 else 'ies lie'} on several paths"
        finish = simulated_finish(
            dists,
            paths,
            trials=trials,
            seed=seed,
            sampling=sampling,
            pairing=pairing,
            progress=progress,
        )
        why = f"{intro}, simulated with the latest path taken in each trial: {why}"
    else:
        totals = []
        for k, on_path in enumerate(path_dists):
            part = progress.part(k / len(paths), 1 / len(paths))
            totals.append(exact_total(on_path, progress=part))
        finish = latest_of(totals)
        why = (
            f"{intro}; the paths share no activity and are independent, so the finish is "
            "exact: the product of the paths' exact distributions"
        )
    cumulants = [cumulants_of(d) for d in path_dists]
    return finish, paths_section(finish, paths, cumulants, items, levels, shared), why
