"""The total by simulation: Latin hypercube or plain Monte Carlo, in independent replicates.

Trials are drawn in replicates; each replicate is one complete design, which bounds memory
and gives the batch standard errors of `SampleTotal`. Random draws never depend on the
items' parameters, so editing one item leaves every other item's draws unchanged: the
change in the total is the edit's effect, not fresh noise. Independent items each draw from
their own stream (child `k` of the run's seed for item `k`), all replicates at once.
Correlation, when given, is induced within each replicate by `pairing` (engine.simulation.iman_conover):
each item still draws its own design, in increasing order, and the pairing says which trial
each of its values goes to; replicates then have streams of their own and the draws are
(items, trials) matrices. `observe` sees each replicate's item values before they are
summed (engine.simulation.sample_statistics gathers the drivers from them).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterable, Sequence
from functools import lru_cache

import numpy as np

from engine.exact.totals import Cumulants, SampleTotal
from engine.families.batch_sampling import BatchSampler, RowSampler
from engine.families.distributions import Beta, Distribution, Occurrence, beta_tables
from engine.progress import Progress
from engine.simulation.ranking import random_permutations
from engine.simulation.workspace import Workspace
from engine.threads import blas_on_one_thread, halves, run_split

REPLICATES = 20
MIN_PER_REPLICATE = 500
PAIRED_VALUES = 1 << 21  # item values in one correlated replicate, at most (but see min)

# (rng, items, trials in this replicate, the thread's work arrays) -> per item, the trials in
# increasing order of its value (items, trials): its k-th smallest goes to trial order[i, k]
# A pairing may also fill the orders block by block: `blocks(rng, positions, work)` yielding
# (first row, rows) of every `block_rows` items, the same orders as a whole call.
Pairing = Callable[[np.random.Generator, int, int, Workspace], np.ndarray]
# (lane, item values (items, trials), total (trials,), positions) of each replicate, before
# the lane draws its next; lanes run at the same time, on their own replicates. positions
# (items, trials): where in values.ravel() each item's values lie, smallest first.
Observer = Callable[[int, np.ndarray, np.ndarray, np.ndarray], None]


def new_seed() -> int:
    """A fresh seed, recorded with the result so the run can be repeated exactly."""
    return int(np.random.SeedSequence().entropy % (2**63))


def item_streams(seed: int, count: int) -> list[np.random.Generator]:
    return [np.random.default_rng(s) for s in np.random.SeedSequence(seed).spawn(count)]


def replicate_scores(
    rng: np.random.Generator, replicates: int, m: int, sampling: str
) -> np.ndarray:
    """One item's scores for every replicate at once (replicates * m, replicate by
    replicate): a Latin hypercube design of m strata per replicate, or plain random."""
    if sampling == "lhs":
        strata = random_permutations(rng, replicates, m).astype(np.float64)
        strata += rng.random((replicates, m))
        strata /= m
        return strata.ravel()
    return rng.random(replicates * m)


def sorted_designs(
    rng: np.random.Generator,
    order: np.ndarray,
    sampling: str,
    out: np.ndarray | None = None,
    mirrored: np.ndarray | None = None,
) -> np.ndarray:
    """(items, n) scores, each row in increasing order, for items whose k-th smallest value
    goes to trial order[i, k]: a Latin hypercube's point in each of n strata, or n plain
    random scores, sorted. `out` is a work array to fill.

    In a Latin hypercube the position inside the stratum belongs to the trial, not to the
    item: every item of trial t sits at the same fraction w_t of its stratum. Items the
    pairing ranks alike (comonotone, rank correlation 1) then get equal scores, so their
    total is exactly the sum of their percentiles. With a position of their own, each
    replicate's total fell short of that at one end of every stratum and over it at the
    other: percentiles off by up to 10 standard errors, which the replicates, all sharing
    the same strata, could not see. Items in `mirrored` (rows) sit at 1 - w_t instead, so an
    item ranked against the others (rank correlation -1) is exactly countermonotone."""
    rows, n = order.shape
    if sampling != "lhs":
        u = rng.random((rows, n), out=out)
        u.sort(axis=1)
        return u
    return lhs_scores(rng.random(n), order, mirrored, out)


def lhs_scores(
    w: np.ndarray,
    order: np.ndarray,
    mirrored: np.ndarray | None = None,
    out: np.ndarray | None = None,
) -> np.ndarray:
    """sorted_designs' Latin hypercube for rows whose k-th smallest value goes to trial
    order[i, k], the trials' positions inside their strata being w (n,)."""
    n = order.shape[1]
    u = w.take(order, out=out)
    if mirrored is not None and len(mirrored):
        u[mirrored] = 1 - u[mirrored]
    u += _strata(n)
    u /= n
    return u


@lru_cache(maxsize=4)
def _strata(n: int) -> np.ndarray:
    strata = np.arange(n, dtype=np.float64)
    strata.setflags(write=False)
    return strata


def simulate(
    dists: Sequence[Distribution],
    *,
    trials: int,
    seed: int,
    sampling: str = "lhs",
    replicates: int = REPLICATES,
    pairing: Pairing | None = None,
    observe: Observer | None = None,
    min_per_replicate: int = 0,
    progress: Progress | None = None,
) -> SampleTotal:
    """Simulated total of the items; `pairing` replaces independent pairing when given."""
    progress = progress or Progress()
    if pairing is None:
        replicates, per = replicate_layout(trials, replicates, min_per_replicate)
        streams = item_streams(seed, len(dists))
        out = _independent(dists, streams, replicates, per, sampling, progress)
    else:
        replicates, per = paired_layout(len(dists), trials, replicates, min_per_replicate)
        build_tables(dists, progress.part(0.0, TABLES_SHARE))
        draws = PairedReplicates(dists, seed, replicates, per, sampling, pairing)
        out = np.zeros((replicates, per))
        lanes = [list(part) for part in halves(replicates)]
        _in_lanes(draws, lanes, out, observe, progress.part(TABLES_SHARE, 1 - TABLES_SHARE))
    return SampleTotal(out, sample_cumulants(out.ravel()), sampling=sampling)


def paired_layout(
    items: int, trials: int, replicates: int = REPLICATES, min_per_replicate: int = 0
) -> tuple[int, int]:
    """replicate_layout for a correlated run. A paired replicate holds several (items, trials)
    arrays per thread: their size is bounded with more, smaller replicates for long runs (a
    million trials of 200 items: 100 of 10k), a round number so round counts split evenly."""
    rounded = PAIRED_VALUES // items // 1000 * 1000
    largest = max(min_per_replicate, MIN_PER_REPLICATE, rounded)
    return replicate_layout(trials, replicates, min_per_replicate, largest)


class PairedReplicates:
    """The replicates of a correlated run. Replicate r draws from streams of its own (one for
    the pairing, one for the designs), so it is the same whichever lane draws it and
    whenever: a replicate drawn again is the analysis's own, bit for bit. Each item's design
    is drawn sorted, the replicate sampled family by family in the pairing's blocks of items
    (or whole), and each value goes to the trial the pairing gives."""

    def __init__(
        self,
        dists: Sequence[Distribution],
        seed: int,
        replicates: int,
        per: int,
        sampling: str,
        pairing: Pairing,
    ):
        self.shape = (len(dists), per)
        # each replicate's two streams, spawned once (spawning again would give new ones)
        self.seeds = [s.spawn(2) for s in np.random.SeedSequence(seed).spawn(replicates)]
        self.sampling, self.pairing = sampling, pairing
        self.mirrored = getattr(pairing, "mirrored", None)  # items ranked against the rest
        self.row_starts = (np.arange(len(dists)) * per)[:, None]
        mirrored = np.zeros(len(dists), dtype=bool)
        if self.mirrored is not None:
            mirrored[self.mirrored] = True
        # per block of rows the pairing gives at once (engine.simulation.factor_pairing), per
        # kind of item in it: its rows in the block, their sampler, which of them are
        # mirrored, and where their rows start in values.ravel()
        block = getattr(pairing, "block_rows", None)
        self.kinds: dict[int, list[tuple[np.ndarray, RowSampler, np.ndarray, np.ndarray]]] = {}
        for start in range(0, len(dists), block or len(dists)):
            part = slice(start, start + (block or len(dists)))
            self.kinds[start] = [
                (rows, sample, np.flatnonzero(mirrored[part][rows]), self.row_starts[part][rows])
                for rows, sample in BatchSampler(dists[part]).groups
            ]

    def draw(self, r: int, work: Workspace, total: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Replicate r's item values (items, trials) and their positions (see Observer), its
        total written into `total`; the arrays are `work`'s, valid until the next draw."""
        shape = self.shape
        pairing_rng, design_rng = (np.random.default_rng(s) for s in self.seeds[r])
        values = work.get("values", shape, float)
        w = design_rng.random(shape[1]) if self.sampling == "lhs" else None
        if hasattr(self.pairing, "blocks"):
            positions = work.get("positions", shape, np.intp)
            parts: Iterable[tuple[int, np.ndarray]] = self.pairing.blocks(
                pairing_rng, positions, work
            )
        else:
            positions = self.pairing(pairing_rng, *shape, work)
            parts = [(0, positions)]
        for start, block in parts:  # kind by kind: no (items, trials) scores or draws kept
            for rows, sample, mirrored, starts in self.kinds[start]:
                order = block[rows]
                if w is not None:
                    drawn = sample(lhs_scores(w, order, mirrored))
                else:
                    drawn = sample(sorted_designs(design_rng, order, self.sampling))
                order += starts  # order within each row -> index into values.ravel()
                values.reshape(-1)[order.ravel()] = drawn.ravel()
        positions += self.row_starts
        np.sum(values, axis=0, out=total)
        return values, positions


def _in_lanes(
    draws: PairedReplicates,
    lanes: Sequence[Sequence[int]],
    out: np.ndarray,
    observe: Observer | None,
    progress: Progress,
) -> None:
    """The replicates of each lane drawn in order on a thread of its own, rows of `out`
    filled with their totals; the observer sees each replicate with its lane's index."""
    done = [0] * len(lanes)
    count = sum(len(lane) for lane in lanes)

    def run(part: range) -> None:
        work = Workspace()
        for lane in part:
            for r in lanes[lane]:
                values, positions = draws.draw(r, work, out[r])
                if observe is not None:
                    observe(lane, values, out[r], positions)
                done[lane] += 1
                progress.report(sum(done) / count)

    with blas_on_one_thread():  # the lanes are the parallelism; BLAS threads would spin
        run_split(run, len(lanes))


def redraw(
    dists: Sequence[Distribution],
    *,
    trials: int,
    seed: int,
    sampling: str,
    pairing: Pairing,
    lanes: Sequence[Sequence[int]],
    observe: Observer,
    min_per_replicate: int = 0,
    progress: Progress | None = None,
) -> None:
    """Some replicates of `simulate`'s correlated run (same arguments) drawn again, each
    lane's list in order on a thread of its own, for an observer that needs them twice."""
    replicates, per = paired_layout(len(dists), trials, REPLICATES, min_per_replicate)
    build_tables(dists, Progress())  # built by the run itself: nothing left to do
    draws = PairedReplicates(dists, seed, replicates, per, sampling, pairing)
    out = np.zeros((replicates, per))
    _in_lanes(draws, lanes, out, observe, progress or Progress())


TABLES_SHARE = 0.05  # of a correlated run's progress bar, for building the PERT tables


def build_tables(dists: Sequence[Distribution], progress: Progress) -> None:
    """Each PERT item's sampling tables, built before the replicates: about a second for
    2,500 PERT items, which the window should see move and be able to cancel (the batch
    sampler would otherwise build them all in one call)."""
    tabled = [d.impact if isinstance(d, Occurrence) else d for d in dists]
    tabled = [d for d in tabled if isinstance(d, Beta)]
    done = [0]

    def built(count: int) -> None:
        done[0] += count
        progress.report(done[0] / len(tabled))

    beta_tables(tabled, built)


def _independent(
    dists: Sequence[Distribution],
    streams: list[np.random.Generator],
    replicates: int,
    per: int,
    sampling: str,
    progress: Progress,
) -> np.ndarray:
    """Each item drawn once for all replicates; the two halves of the items on two threads,
    each summing its own partial total."""
    done = [0] * 2

    def draw(part: range) -> np.ndarray:
        partial = np.zeros(replicates * per)
        half = 0 if part.start == 0 else 1
        for i, k in enumerate(part):
            partial += dists[k].sample(replicate_scores(streams[k], replicates, per, sampling))
            if i % 8 == 7:
                done[half] = i + 1
                progress.report(sum(done) / len(dists))
        return partial

    partials = run_split(draw, len(dists))
    total = partials[0]
    for p in partials[1:]:
        total += p
    progress.report(1.0)
    return total.reshape(replicates, per)


def sample_cumulants(x: np.ndarray) -> Cumulants:
    mean = float(x.mean())
    d = x - mean
    d2 = d * d
    var = float(np.mean(d2))
    k3 = float(np.mean(d2 * d))
    k4 = float(np.mean(d2 * d2)) - 3 * var * var
    return Cumulants(mean, var, k3, k4)


def replicate_layout(
    trials: int,
    replicates: int = REPLICATES,
    min_per_replicate: int = 0,
    max_per_replicate: int | None = None,
) -> tuple[int, int]:
    """(replicates, trials in each): at least MIN_PER_REPLICATE trials per replicate (or
    `min_per_replicate` if larger: Iman-Conover needs more trials than items), so a
    replicate's percentiles are meaningful, and at least two replicates for an error;
    more replicates than asked when each would exceed `max_per_replicate`."""
    count = max(2, min(replicates, trials // max(MIN_PER_REPLICATE, min_per_replicate)))
    if max_per_replicate is not None:
        count = max(count, math.ceil(trials / max_per_replicate))
    return count, max(trials // count, 1)
