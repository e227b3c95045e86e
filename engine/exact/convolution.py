"""The exact total of independent items by numerical convolution on a common grid.

Each item's probability goes onto the grid points k * h by hat functions (each point takes
E[max(0, 1 - |X - kh| / h)]), computed from the integrated cdf, so every item keeps its
exact mean and its point masses (a risk event's zero, a discrete value) stay at their place
instead of being smeared over a bin. Fixed items are a pure shift, added exactly at the end.
The items' arrays are then convolved pairwise in a balanced tree with FFTs, trimming
negligible tails after each step, so the cost grows with the total's spread rather than
with the sum of the items' ranges.

Each hat spreads its item by a known variance (about h^2/6); summed over thousands of items
that spread would move the percentiles by more than the grid's own error, so the total's
spectrum is sharpened by exactly that variance at the end (engine.exact.grid_spread).

The step follows where the probability is (engine.exact.grid_plan), not the total's sd; an
item too wide for any grid is evaluated by its own cdf (engine.exact.wide_item). The same
total at twice the step gives the error estimate reported with every exact result.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from functools import cache

import numpy as np
from scipy import fft as sp_fft
from scipy import signal
from threadpoolctl import ThreadpoolController

from engine.exact.grid_plan import TooWideForOneGrid, plan_grid
from engine.exact.grid_spread import HatSpread, sharpened
from engine.exact.inversion import SpectralSum, window
from engine.exact.lattice import Lattice, aligned_step, item_lattice, trim
from engine.exact.totals import Cumulants, GridTotal, PointTotal, Total, coarsen
from engine.exact.wide_item import wide_item_total
from engine.families.distributions import Distribution, Fixed
from engine.progress import Progress
from engine.threads import run_pair

# Grid steps per unit of the total's central spread (engine.exact.grid_plan). At this
# resolution the percentile error from the grid is ~1e-5 sd or less in every test case; the
# halved grid confirms it per run.
RESOLUTION = 2000
# The inversion gives each cell's probability exactly (engine.exact.inversion), so its grid
# may be this much coarser than the convolution's, whose hats round every item.
SPECTRAL_COARSENING = 5
# The rest's resolution beside an item kept off the grid: each of its points costs one cdf
# evaluation of the wide item per percentile asked.
REST_RESOLUTION = 400
# Longest grid of the rest beside an item kept off it.
REST_POINTS = 1 << 15
# A total whose check at twice the step is further off than the accuracy asked (1e-5 in
# probability) is computed again on a grid fine enough for REFINE_TO, at most REFINEMENTS
# times and on at most MAX_REFINED_POINTS points (an FFT of 4M points: about a second).
REFINE_ABOVE = 1e-5
REFINE_TO = 1e-6
REFINEMENTS = 3
MAX_REFINED_POINTS = 1 << 22
# Points in one stacked FFT of a tree level's merges (bounds its memory to ~100 MB).
BATCH_POINTS = 1 << 22
# Largest product of two lattices' lengths convolved directly rather than by FFT.
DIRECT_LIMIT = 640_000
# Just below whole percentiles: at a point mass's edge the percentile jumps, and a rounding
# difference between the two grids must not read as an error of the jump's size.
CHECK_Q = (np.arange(1, 100) - 1e-6) / 100


def cumulants_of(dists: Sequence[Distribution]) -> Cumulants:
    """Exact cumulants of the sum of independent items."""
    return Cumulants(
        mean=math.fsum(d.mean for d in dists),
        variance=math.fsum(d.variance for d in dists),
        kappa3=math.fsum(d.mu3 for d in dists),
        kappa4=math.fsum(d.kappa4 for d in dists),
    )


def exact_total(
    dists: Sequence[Distribution],
    *,
    resolution: int = RESOLUTION,
    progress: Progress | None = None,
    check_error: bool = True,
    cumulants: Cumulants | None = None,
) -> Total:
    """Distribution of the sum of independent items; see the module docstring.
    `cumulants`: the items' summed cumulants when the caller has them already."""
    # Both cores are busy with the fine grid and its check; BLAS's own threads would spin
    # (a 14 x 4000 x 166 product took 0.28 s on two threads against 1 ms on one).
    with _blas().limit(limits=1, user_api="blas"):
        return _exact_total(dists, resolution, progress, check_error, cumulants)


@cache
def _blas() -> ThreadpoolController:
    """Found once: finding the libraries costs ~8 ms, more than a small total takes."""
    return ThreadpoolController()


def _exact_total(
    dists: Sequence[Distribution],
    resolution: int,
    progress: Progress | None,
    check_error: bool,
    cumulants: Cumulants | None,
) -> Total:
    progress = progress or Progress()
    cumulants = cumulants or cumulants_of(dists)
    shift = math.fsum(d.value for d in dists if isinstance(d, Fixed))
    kept = [i for i, d in enumerate(dists) if not isinstance(d, Fixed) and d.variance > 0]
    uncertain = [dists[i] for i in kept]
    shift += math.fsum(d.mean for d in dists if not isinstance(d, Fixed) and d.variance <= 0)
    if not uncertain:
        return PointTotal(shift)
    plan = plan_grid(uncertain, resolution)
    if plan.wide is None:
        total = grid_total(uncertain, shift, plan.step, cumulants, progress, check_error)
        if not check_error:  # no check, nothing to refine by
            return total
        return _refined(total, uncertain, shift, plan.step, cumulants, progress)
    others = uncertain[: plan.wide] + uncertain[plan.wide + 1 :]
    if not others:
        return wide_item_total(uncertain[plan.wide], PointTotal(shift), cumulants, 0.0)
    rest_plan = plan_grid(others, min(resolution, REST_RESOLUTION))
    if rest_plan.wide is not None:
        second = kept[rest_plan.wide + (rest_plan.wide >= plan.wide)]
        raise TooWideForOneGrid(kept[plan.wide], second)
    # every rest point costs one cdf evaluation of the wide item per percentile: keep the
    # rest's grid short (the check at twice its step reports what that costs in accuracy)
    rest_step = rest_plan.step * max(1.0, window(others, rest_plan.step)[1] / REST_POINTS)
    rest = grid_total(others, shift, rest_step, cumulants_of(others), progress, check_error)
    return wide_item_total(
        uncertain[plan.wide], rest, cumulants, getattr(rest, "truncated_mass", 0.0)
    )


def _refined(
    total: GridTotal,
    dists: Sequence[Distribution],
    shift: float,
    step: float,
    cumulants: Cumulants,
    progress: Progress,
) -> GridTotal:
    """The total again on finer grids while the check at twice the step says the body is
    not resolved: a rare large risk event sets the items' spread, and the step with it, far
    above the spread of the body where most of the probability is (a 3% chance of 800k
    beside items of about 100: P50 84 where it is 114, 0.12 off in probability). The error
    falls as the step squared; the grid stays within MAX_REFINED_POINTS."""
    for _ in range(REFINEMENTS):
        if total.error_probability <= REFINE_ABOVE:
            break
        finer = step * max(0.05, math.sqrt(REFINE_TO / total.error_probability))
        points = window(dists, finer)[1]
        if points > MAX_REFINED_POINTS:
            finer *= points / MAX_REFINED_POINTS
        if finer >= 0.7 * step:
            break
        step = finer
        total = grid_total(dists, shift, step, cumulants, progress)
    return total


def grid_total(
    dists: Sequence[Distribution],
    shift: float,
    target_step: float,
    cumulants: Cumulants,
    progress: Progress,
    check_error: bool = True,
) -> GridTotal:
    """The items convolved on one grid near `target_step`, plus `shift`, with the error
    estimate from the same total at twice the step."""
    # A smooth total has no point mass to keep on a grid point: no need to align the step.
    spectral = SpectralSum(dists, target_step * SPECTRAL_COARSENING)
    if spectral.is_smooth():
        step = spectral.step
        fine, coarse = spectral.lattices(progress)
        folded = spectral.folded
    else:
        step = aligned_step(dists, target_step)
        lattices, folded = _item_lattices(dists, step, lambda f: progress.report(0.3 * f))
        spread = HatSpread.of(dists, lattices, step)

        def fine_tree() -> tuple[int, np.ndarray]:
            tree = _convolve_tree(list(lattices), lambda f: progress.report(0.3 + 0.7 * f))
            return sharpened(tree, spread, 1)

        if not check_error:
            fine = fine_tree()
            return GridTotal(
                shift + fine[0] * step, step, fine[1], cumulants, truncated_mass=folded
            )
        # The check at twice the step is independent of the fine result: the other core does it.
        fine, coarse = run_pair(
            fine_tree,
            lambda: sharpened(
                _convolve_tree([coarsen(*lat) for lat in lattices], lambda f: None), spread, 2
            ),
        )
    total = GridTotal(shift + fine[0] * step, step, fine[1], cumulants, truncated_mass=folded)
    coarse_total = GridTotal(shift + coarse[0] * 2 * step, 2 * step, coarse[1], cumulants)
    x = total.ppf(CHECK_Q)
    return total.with_error(
        float(np.max(np.abs(x - coarse_total.ppf(CHECK_Q)))),
        float(np.max(np.abs(total.cdf(x) - coarse_total.cdf(x)))),
    )


def _item_lattices(
    dists: Sequence[Distribution], step: float, report: Callable[[float], None]
) -> tuple[list[Lattice], float]:
    lattices: list[Lattice] = []
    folded = 0.0
    for i, d in enumerate(dists):
        start, masses, tail = item_lattice(d, step)
        lattices.append((start, masses))
        folded += tail
        if i % 64 == 0:
            report(i / len(dists))
    return lattices, folded


def _convolve_tree(
    lattices: list[Lattice], report: Callable[[float], None]
) -> tuple[int, np.ndarray]:
    """Pairwise merges in a balanced tree: partial sums stay short until the last levels.

    Each level pairs arrays of similar length and merges the pairs in stacked FFTs, a few
    numpy calls per level rather than a few per pair (the per-call cost dominated)."""
    levels_total = max(math.ceil(math.log2(max(len(lattices), 1))), 1)
    level = 0
    while len(lattices) > 1:
        lattices = sorted(lattices, key=lambda lat: len(lat[1]))
        rest = [lattices.pop()] if len(lattices) % 2 else []
        pairs = [(lattices[j], lattices[j + 1]) for j in range(0, len(lattices), 2)]
        merged: list[Lattice] = []
        for batch in _similar_batches(pairs):
            merged.extend(_merge_batch(batch))
        lattices = merged + rest
        level += 1
        report(level / levels_total)
    report(1.0)
    return lattices[0]


def _similar_batches(pairs: list[tuple[Lattice, Lattice]]) -> list[list[tuple[Lattice, Lattice]]]:
    """Consecutive pairs whose lengths are within 1.5x of the batch's first, and whose
    stacked FFT stays within BATCH_POINTS."""
    batches: list[list[tuple[Lattice, Lattice]]] = []
    for pair in pairs:
        size = len(pair[0][1]) + len(pair[1][1])
        if batches:
            first = batches[-1][0]
            first_size = len(first[0][1]) + len(first[1][1])
            if size <= 1.5 * first_size and (len(batches[-1]) + 1) * size <= BATCH_POINTS:
                batches[-1].append(pair)
                continue
        batches.append([pair])
    return batches


def _merge_batch(batch: list[tuple[Lattice, Lattice]]) -> list[Lattice]:
    if len(batch) == 1:
        return [_merge(*batch[0])]
    la = max(len(a[1]) for a, _ in batch)
    lb = max(len(b[1]) for _, b in batch)
    nfft = sp_fft.next_fast_len(la + lb - 1, real=True)
    left = np.zeros((len(batch), la))
    right = np.zeros((len(batch), lb))
    for i, (a, b) in enumerate(batch):
        left[i, : len(a[1])] = a[1]
        right[i, : len(b[1])] = b[1]
    products = sp_fft.irfft(sp_fft.rfft(left, nfft) * sp_fft.rfft(right, nfft), nfft)
    np.maximum(products, 0.0, out=products)
    return [
        trim(a[0] + b[0], products[i, : len(a[1]) + len(b[1]) - 1])
        for i, (a, b) in enumerate(batch)
    ]


def _merge(a: Lattice, b: Lattice) -> Lattice:
    # Direct convolution only while it is cheaper than FFT (measured crossover ~800 x 800
    # points); scipy's own chooser keeps direct up to a few thousand, 3x slower there.
    la, lb = len(a[1]), len(b[1])
    if min(la, lb) <= 64 or la * lb <= DIRECT_LIMIT:
        masses = np.convolve(a[1], b[1])
    else:
        masses = signal.fftconvolve(a[1], b[1])
    np.maximum(masses, 0.0, out=masses)
    return trim(a[0] + b[0], masses)
