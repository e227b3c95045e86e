"""The distribution of the total, however it was computed.

`GridTotal` holds the exact convolution (probability masses on an evenly spaced grid);
`SampleTotal` holds simulated trials. Both answer cdf, ppf and the moments, and say how
accurate their percentiles are: the grid by a bound on its discretisation error, the
simulation by a standard error per percentile.
"""

from __future__ import annotations

import copy
import math
from dataclasses import dataclass, field

import numpy as np

ATOM_RATIO = 50.0  # a cell this many times heavier than both neighbours holds a point mass
# A sample's k-th smallest of N read as the (k - 1/2)/N quantile (Hazen): a Latin hypercube
# puts one trial in each of N strata, and a stratum's trial is at its midpoint on average.
# numpy's default, (k - 1)/(N - 1), reads every percentile off by up to half a stratum
# toward the median: invisible beside the spread of independent items, but several
# standard errors for comonotone items, whose replicates differ by less than a stratum.
PLOTTING = "hazen"


@dataclass(frozen=True)
class Cumulants:
    """Mean, variance and the 3rd and 4th cumulants: additive over independent items."""

    mean: float
    variance: float
    kappa3: float
    kappa4: float

    @property
    def sd(self) -> float:
        return math.sqrt(max(self.variance, 0.0))

    @property
    def skewness(self) -> float:
        return self.kappa3 / self.variance**1.5 if self.variance > 0 else 0.0

    @property
    def excess_kurtosis(self) -> float:
        return self.kappa4 / self.variance**2 if self.variance > 0 else 0.0


class Total:
    """Shared surface; `cumulants` are the total's own, from the items or the trials."""

    cumulants: Cumulants
    kind: str

    @property
    def mean(self) -> float:
        return self.cumulants.mean

    @property
    def sd(self) -> float:
        return self.cumulants.sd

    @property
    def skewness(self) -> float:
        return self.cumulants.skewness

    @property
    def excess_kurtosis(self) -> float:
        return self.cumulants.excess_kurtosis

    def cdf(self, x: float | np.ndarray) -> np.ndarray:
        raise NotImplementedError

    def ppf(self, q: float | np.ndarray) -> np.ndarray:
        raise NotImplementedError

    def standard_error(self, q: float | np.ndarray) -> np.ndarray | None:
        """Standard error of ppf(q) for simulated totals; None when computed exactly."""
        return None

    def support_grid(self, points: int = 2001) -> np.ndarray:
        """Values spanning the total, for charts and for measuring the normal's CDF gap."""
        lo, hi = (float(v) for v in self.ppf(np.array([1e-6, 1 - 1e-6])))
        if hi <= lo:
            lo, hi = lo - 1.0, hi + 1.0
        return np.linspace(lo, hi, points)


@dataclass(frozen=True)
class PointTotal(Total):
    """A total with no uncertainty (every item fixed)."""

    value: float
    kind: str = "exact"

    @property
    def cumulants(self) -> Cumulants:
        return Cumulants(self.value, 0.0, 0.0, 0.0)

    def cdf(self, x):
        return (np.asarray(x, dtype=float) >= self.value).astype(float)

    def ppf(self, q):
        return np.full(np.shape(q), self.value, dtype=float)


@dataclass(frozen=True)
class GridTotal(Total):
    """Masses at origin + k * step; each mass is read as spread evenly over its cell."""

    origin: float
    step: float
    masses: np.ndarray
    cumulants: Cumulants
    error_bound: float = 0.0  # largest percentile change when the grid is halved (money)
    truncated_mass: float = 0.0  # tail mass folded onto the grid's ends
    error_probability: float = 0.0  # the same change read in probability, |F(x_q) - q|
    kind: str = "exact"
    _edges_cum: np.ndarray = field(init=False, repr=False, compare=False)

    _atom_cell: np.ndarray = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        cum = np.cumsum(self.masses)
        cum /= cum[-1]
        object.__setattr__(self, "_edges_cum", np.concatenate([[0.0], cum]))
        # A cell holding far more than its neighbours is a point mass (a risk event's zero,
        # a fixed total): its percentiles are its value, not a spread across the cell.
        padded = np.concatenate([[0.0], self.masses, [0.0]])
        neighbours = np.maximum(padded[:-2], padded[2:])
        atom = (self.masses > ATOM_RATIO * neighbours) & (self.masses > 1e-9)
        object.__setattr__(self, "_atom_cell", atom)

    def with_error(self, bound: float, probability: float) -> GridTotal:
        """This total with its error estimate; the running sums are kept, not recomputed."""
        out = copy.copy(self)
        object.__setattr__(out, "error_bound", bound)
        object.__setattr__(out, "error_probability", probability)
        return out

    @property
    def edges(self) -> np.ndarray:
        n = len(self.masses)
        return self.origin + (np.arange(n + 1) - 0.5) * self.step

    @property
    def edges_cdf(self) -> np.ndarray:
        """The cdf at `edges` (a point mass sits at its cell's centre, inside the cell)."""
        return self._edges_cum

    @property
    def values(self) -> np.ndarray:
        return self.origin + np.arange(len(self.masses)) * self.step

    def cdf(self, x):
        x = np.asarray(x, dtype=float)
        out = np.interp(x, self.edges, self._edges_cum)
        cell = np.clip(np.rint((x - self.origin) / self.step), 0, len(self.masses) - 1)
        cell = cell.astype(np.int64)
        atom = self._atom_cell[cell]
        if np.any(atom):
            at_or_above = x >= self.origin + cell * self.step
            jumped = np.where(at_or_above, self._edges_cum[cell + 1], self._edges_cum[cell])
            out = np.where(atom, jumped, out)
        return out

    def ppf(self, q):
        q = np.asarray(q, dtype=float)
        cum = self._edges_cum
        idx = np.clip(np.searchsorted(cum, q, side="left"), 1, len(cum) - 1)
        lo, hi = cum[idx - 1], cum[idx]
        with np.errstate(invalid="ignore", divide="ignore"):
            frac = np.where(hi > lo, (q - lo) / (hi - lo), 0.0)
        frac = np.where(self._atom_cell[idx - 1], 0.5, np.clip(frac, 0.0, 1.0))
        return self.origin + (idx - 1 - 0.5 + frac) * self.step

    def density(self) -> tuple[np.ndarray, np.ndarray]:
        """Grid values and the density there (mass / step), for charts."""
        return self.values, self.masses / self.step


def coarsen(start: int, masses: np.ndarray) -> tuple[int, np.ndarray]:
    """Masses at k * h onto the grid of 2h without evaluating anything again: a hat of width
    2h is exactly half, one and half of the three width-h hats beneath it."""
    if start % 2:
        start, masses = start - 1, np.concatenate([[0.0], masses])
    if len(masses) % 2 == 0:
        masses = np.concatenate([masses, [0.0]])
    even = masses[0::2].copy()
    odd = masses[1::2]
    even[:-1] += 0.5 * odd
    even[1:] += 0.5 * odd
    return start // 2, even


def coarsened_total(total: GridTotal) -> GridTotal:
    """The same total on a grid of twice the step (for error checks)."""
    start, masses = coarsen(0, total.masses)
    return GridTotal(total.origin + start * 2 * total.step, 2 * total.step, masses, total.cumulants)


@dataclass(frozen=True)
class SampleTotal(Total):
    """Simulated trials of the total, kept by replicate.

    The trials are drawn as independent replicates (Latin hypercube or plain random designs)
    of equal size; a percentile's standard error is the spread of that percentile across
    replicates divided by sqrt(replicates) (the batch method). That is right for Latin
    hypercube designs, where the binomial order-statistic formula overstates the error.
    """

    by_replicate: np.ndarray  # (replicates, trials per replicate)
    cumulants: Cumulants
    sampling: str = "lhs"
    kind: str = "simulation"
    sorted_trials: np.ndarray = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        object.__setattr__(self, "sorted_trials", np.sort(self.by_replicate, axis=None))

    @property
    def trials(self) -> int:
        return self.by_replicate.size

    @property
    def replicates(self) -> int:
        return self.by_replicate.shape[0]

    def cdf(self, x):
        x = np.asarray(x, dtype=float)
        return np.searchsorted(self.sorted_trials, x, side="right") / self.trials

    def ppf(self, q):
        return np.quantile(self.sorted_trials, np.asarray(q, dtype=float), method=PLOTTING)

    def standard_error(self, q):
        q = np.asarray(q, dtype=float)
        per_rep = np.quantile(self.by_replicate, q.ravel(), axis=1, method=PLOTTING)
        se = per_rep.std(axis=1, ddof=1) / math.sqrt(self.replicates)
        return se.reshape(q.shape)

    def histogram(
        self, bins: int = 80, span: tuple[float, float] | None = None
    ) -> tuple[np.ndarray, np.ndarray]:
        """Bin edges and densities over `span`, else the central 99.9% of the trials."""
        lo, hi = span or np.quantile(self.sorted_trials, [0.0005, 0.9995])
        counts, edges = np.histogram(self.sorted_trials, bins=bins, range=(lo, hi))
        return edges, counts / (self.trials * np.diff(edges))
