"""The total when one item is too wide for any grid: its own cdf, averaged over the rest.

A lognormal with P10 = 1 and P90 = 10^6 has its median near 10^3 and its P99 near 10^8; a
grid fine enough for the median would need 10^10 points to reach P99. Such an item W is kept
off the grid: with R the sum of the other items on its grid (masses m_k at r_k),

    F(x) = P(W + R <= x) = sum_k m_k F_W(x - r_k)

with F_W the family's closed-form cdf, exact wherever the probability is; W's own point
masses (a risk event's zero) go through the rest's cdf instead. The error is the rest's grid
error only, measured by the same sum over the rest at twice its step.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from engine.exact.totals import Cumulants, GridTotal, PointTotal, Total, coarsened_total
from engine.families.distributions import Distribution

# Rest masses below this are left out of the sums (their total is far below 1e-10).
NEGLIGIBLE = 1e-18
# Elements of one (x, rest point) block of cdf evaluations: bounds the memory to ~64 MB.
BLOCK = 1 << 22
# Probabilities at which the table that starts each percentile search is built.
TABLE_Q = np.concatenate(
    [
        10.0 ** np.arange(-12, -2, 0.25),
        np.linspace(0.01, 0.99, 197),
        1 - 10.0 ** np.arange(-2.25, -12, -0.25),
    ]
)
# The percentile search stops when the cdf is this close to the probability asked for.
PROBABILITY_TOLERANCE = 1e-13
NEWTON_STEPS = 60
# Percentiles at which the two rest grids are compared for the error bound.
CHECK_Q = (np.arange(1, 100) - 1e-6) / 100


@dataclass(frozen=True)
class WideItemTotal(Total):
    """Total = wide item + rest; `rest` is the others' total (a grid, or one value)."""

    wide: Distribution
    rest: GridTotal | PointTotal
    cumulants: Cumulants
    error_bound: float = 0.0  # money: the largest percentile change with the rest's step doubled
    error_probability: float = 0.0  # the same in probability: |F(x_q) - q|
    truncated_mass: float = 0.0
    kind: str = "exact"
    _points: np.ndarray = field(init=False, repr=False, compare=False)
    _masses: np.ndarray = field(init=False, repr=False, compare=False)
    _table: tuple[np.ndarray, np.ndarray] = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        if isinstance(self.rest, GridTotal):
            keep = self.rest.masses > NEGLIGIBLE
            points, masses = self.rest.values[keep], self.rest.masses[keep]
        else:
            points, masses = np.array([self.rest.value]), np.array([1.0])
        object.__setattr__(self, "_points", points)
        object.__setattr__(self, "_masses", masses / masses.sum())
        x = np.unique(np.concatenate([self._bracket(TABLE_Q)[0], self._bracket(TABLE_Q)[1]]))
        object.__setattr__(self, "_table", (x, self.cdf(x)))

    def _bracket(self, q: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """W + min(R) <= total <= W + max(R): the total's q-percentile lies between the wide
        item's shifted by the rest's ends."""
        w = np.asarray(self.wide.ppf(q), dtype=float)
        return w + self._points[0], w + self._points[-1]

    def _sum_over_rest(self, x: np.ndarray, fn) -> np.ndarray:
        out = np.empty(x.shape)
        rows = max(1, BLOCK // len(self._points))
        for i in range(0, len(x), rows):
            block = x[i : i + rows, None] - self._points[None, :]
            out[i : i + rows] = fn(block) @ self._masses
        return out

    def cdf(self, x):
        x = np.asarray(x, dtype=float)
        flat = x.ravel()
        atoms, continuous = self.wide.parts()
        out = np.zeros(flat.shape)
        for value, mass in atoms:
            out += mass * self.rest.cdf(flat - value)
        for weight, part in continuous:
            out += weight * self._sum_over_rest(flat, part.cdf)
        return np.clip(out, 0.0, 1.0).reshape(x.shape)

    def pdf(self, x) -> np.ndarray:
        """Density of the continuous part of the total (the wide item's parts over the rest,
        and the wide item's point masses over the rest's density)."""
        x = np.asarray(x, dtype=float)
        flat = x.ravel()
        atoms, continuous = self.wide.parts()
        out = np.zeros(flat.shape)
        if isinstance(self.rest, GridTotal):
            values, density = self.rest.density()
            for value, mass in atoms:
                out += mass * np.interp(flat - value, values, density, left=0.0, right=0.0)
        for weight, part in continuous:
            out += weight * self._sum_over_rest(flat, part.pdf)
        return out.reshape(x.shape)

    def ppf(self, q):
        q = np.asarray(q, dtype=float)
        flat = q.ravel()
        table_x, table_f = self._table
        lo, hi = self._bracket(flat)
        # narrow the bracket to the table's neighbours, then Newton steps kept inside it
        i = np.searchsorted(table_f, flat, side="left")
        below_x = table_x[np.clip(i - 1, 0, len(table_x) - 1)]
        above_x = table_x[np.clip(i, 0, len(table_x) - 1)]
        lo = np.where(i > 0, np.maximum(lo, below_x), lo)
        hi = np.maximum(np.where(i < len(table_x), np.minimum(hi, above_x), hi), lo)
        x = 0.5 * (lo + hi)
        # Each step evaluates the cdf and pdf only where the percentile is still sought: a
        # sum over the rest's grid for every point, and a few points take many more steps.
        todo = np.arange(len(flat))
        for _ in range(NEWTON_STEPS):
            f = self.cdf(x[todo])
            want = flat[todo]
            below = f < want
            lo[todo] = np.where(below, x[todo], lo[todo])
            hi[todo] = np.where(below, hi[todo], x[todo])
            found = (np.abs(f - want) <= PROBABILITY_TOLERANCE) | (
                hi[todo] - lo[todo] <= 1e-12 * np.abs(hi[todo])
            )
            todo, f, want = todo[~found], f[~found], want[~found]
            if not len(todo):
                break
            dens = self.pdf(x[todo])
            with np.errstate(divide="ignore", invalid="ignore"):
                step = x[todo] + (want - f) / dens
            inside = np.isfinite(step) & (step > lo[todo]) & (step < hi[todo])
            x[todo] = np.where(inside, step, 0.5 * (lo[todo] + hi[todo]))
        return x.reshape(q.shape)

    def support_grid(self, points: int = 2001) -> np.ndarray:
        table_x, table_f = self._table
        return np.interp(np.linspace(1e-6, 1 - 1e-6, points), table_f, table_x)


def wide_item_total(
    wide: Distribution, rest: GridTotal | PointTotal, cumulants: Cumulants, truncated: float
) -> WideItemTotal:
    """The total with its error bound: the same sum over the rest at twice its step."""
    total = WideItemTotal(wide, rest, cumulants, truncated_mass=truncated)
    if not isinstance(rest, GridTotal):
        return total
    x = total.ppf(CHECK_Q)
    coarse = WideItemTotal(wide, coarsened_total(rest), cumulants)
    gap = np.abs(coarse.cdf(x) - CHECK_Q)
    with np.errstate(divide="ignore"):
        in_value = gap / total.pdf(x)
    in_value = np.where(np.isfinite(in_value), in_value, 0.0)
    return WideItemTotal(
        wide,
        rest,
        cumulants,
        error_bound=float(np.max(in_value)) + rest.error_bound,
        error_probability=float(np.max(gap)),
        truncated_mass=truncated,
    )
