"""The items' characteristic functions E[exp(i t X)] at the frequencies of one grid.

Uniform, triangular and normal parts, point masses, and risk events over them have closed
forms, evaluated for all items of a family in one array operation. Parts without one (the
beta of PERT, the lognormal) are put on the grid by hat masses (engine.exact.convolution's
`item_lattice`) and transformed; a hat spreads its item by the kernel whose transform is
sinc^2(t h / 2), so that factor is divided out. Point masses that fall between grid points
are split between the two neighbours the same way (keeping the mean).

Each item is measured from its own grid point near its mean (`anchors`), so that phases stay
small numbers; the product is then the total measured from the sum of those points. An item
of one closed-form part enters the product by its shape about its centre (a uniform's
midpoint, a triangle's mode, a normal's mean), the centres' phases summed into one factor:
a sum of normals is then one exponential, and a uniform's shape is real.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np
from scipy import fft as sp_fft

from engine.exact.family_lattices import PartLattice, part_lattices
from engine.families.distributions import (
    Continuous,
    Distribution,
    Fixed,
    Normal,
    Triangular,
    Uniform,
)

# Lattices up to this long are transformed directly at the frequencies in use (a matrix
# product); longer ones by an FFT over the whole window.
DIRECT_POINTS = 512
# Below this |s| the triangle's transform is summed from its series, of SERIES_TERMS terms.
RAMP_SERIES = 0.05
SERIES_TERMS = 8
# Items evaluated together: their (items x frequencies) arrays stay in the processor's cache.
CHUNK = 256
# Fewer evenly spaced frequencies than this are not worth splitting (`_turns`).
SPLIT_FROM = 32
CLOSED_FORMS = (Uniform, Triangular, Normal)


def _parameters(part: Continuous) -> tuple[float, ...]:
    """A closed-form part's centre, then its shape's parameters (`_SHAPES`)."""
    if isinstance(part, Uniform):
        return (part.low + part.high) / 2, (part.high - part.low) / 2
    if isinstance(part, Triangular):
        return part.mode, part.mode - part.low, part.high - part.mode
    return part.mu, part.sigma


@dataclass
class SpectraPlan:
    """The items' parts sorted by how their transform is computed. `alone`: items of one
    closed-form part, per family, as (item, parameters...); `summed`: the parts of the other
    items (risk events, items with a gridded part) as (table row, rank among the item's
    parts of that family, weight, parameters...), point masses under Fixed as (value,)."""

    count: int
    alone: dict[type, list[tuple]] = field(default_factory=dict)
    summed: dict[type, list[tuple]] = field(default_factory=dict)
    table_items: list[int] = field(default_factory=list)  # the item of each table row
    gridded: list[tuple[int, float, Continuous]] = field(default_factory=list)  # item rows
    atom_log: float = 0.0  # log of the total's point-mass share (the product of the items')
    arrays: _Arrays | None = None  # the lists above as arrays, once the plan is made

    @property
    def has_point_mass(self) -> bool:
        return self.atom_log > math.log(1e-15)

    @classmethod
    def of(cls, dists: Sequence[Distribution]) -> SpectraPlan:
        plan = cls(len(dists))
        for row, d in enumerate(dists):
            atoms, continuous = d.parts()
            if not atoms:  # no point mass: neither has the total
                plan.atom_log = -math.inf
                if len(continuous) == 1 and continuous[0][0] == 1.0:
                    part = continuous[0][1]
                    if isinstance(part, CLOSED_FORMS):
                        plan.alone.setdefault(type(part), []).append((row, *_parameters(part)))
                        continue
            else:
                share = math.fsum(m for _, m in atoms)
                plan.atom_log += math.log(share) if share > 0 else -math.inf
            at = len(plan.table_items)
            plan.table_items.append(row)
            for rank, (value, mass) in enumerate(atoms):
                plan.summed.setdefault(Fixed, []).append((at, rank, mass, value))
            ranks: dict[type, int] = {}
            for weight, part in continuous:
                if isinstance(part, CLOSED_FORMS):
                    rank = ranks[type(part)] = ranks.get(type(part), -1) + 1
                    plan.summed.setdefault(type(part), []).append(
                        (at, rank, weight, *_parameters(part))
                    )
                else:
                    plan.gridded.append((row, weight, part))
        plan.arrays = _Arrays.of(plan)
        return plan


@dataclass(frozen=True)
class _Arrays:
    """The plan's lists as arrays, made once per total (a total takes several blocks)."""

    alone: dict[type, tuple[np.ndarray, ...]]
    summed: dict[type, tuple[np.ndarray, ...]]
    table_items: np.ndarray
    open_rows: np.ndarray  # table rows of items with a gridded part
    gridded_at: np.ndarray  # each gridded part's position among open_rows
    gridded_weights: np.ndarray

    @classmethod
    def of(cls, plan: SpectraPlan) -> _Arrays:
        def columns(rows: list[tuple]) -> tuple[np.ndarray, ...]:
            return tuple(np.array(c) for c in zip(*rows, strict=True))

        table_items = np.array(plan.table_items, dtype=np.int64)
        table_of = np.full(plan.count, -1, dtype=np.int64)
        table_of[table_items] = np.arange(len(table_items))
        gridded_rows = table_of[np.array([r for r, _, _ in plan.gridded], dtype=np.int64)]
        open_rows = np.unique(gridded_rows)
        return cls(
            alone={f: columns(rows) for f, rows in plan.alone.items()},
            summed={f: columns(rows) for f, rows in plan.summed.items()},
            table_items=table_items,
            open_rows=open_rows,
            gridded_at=np.searchsorted(open_rows, gridded_rows),
            gridded_weights=np.array([w for _, w, _ in plan.gridded], dtype=float),
        )


@dataclass(frozen=True)
class PartialSpectrum:
    """The product of the items without gridded parts, and the other items' transforms so
    far (their point masses and closed-form parts), at some frequencies."""

    closed: np.ndarray  # a bound on the total's transform: any transform is at most 1
    open_values: np.ndarray  # (items with a gridded part, frequencies)

    def total(self, plan: SpectraPlan, gridded: np.ndarray) -> np.ndarray:
        """The total's transform at the first len(gridded[0]) of these frequencies, given
        the gridded parts' there (`gridded_spectra`)."""
        width = gridded.shape[1]
        values = self.open_values[:, :width].copy()
        arrays = plan.arrays
        _add_rows(values, arrays.gridded_at, arrays.gridded_weights[:, None] * gridded)
        return self.closed[:width] * np.prod(values, axis=0)


def partial_spectrum(
    plan: SpectraPlan, t: np.ndarray, step: float, anchors: np.ndarray
) -> PartialSpectrum:
    """The items' closed-form transforms at frequencies t, measured from step * sum(anchors)
    (`anchors`: each item's grid index near its mean)."""
    arrays = plan.arrays
    at = anchors * step
    closed = np.ones(len(t), dtype=complex)
    phase = 0.0  # the alone items' centres, from their anchors
    for family, (rows, centre, *shape) in arrays.alone.items():
        phase += float(np.sum(centre - at[rows]))
        if family is Normal:  # a product of normal shapes is one normal shape
            closed *= np.exp(-0.5 * float(np.sum(shape[0] ** 2)) * t * t)
            continue
        for c in range(0, len(rows), CHUNK):
            closed *= np.prod(_SHAPES[family](*(p[c : c + CHUNK] for p in shape), t), axis=0)
    closed *= np.exp(1j * phase * t)
    table = np.zeros((len(arrays.table_items), len(t)), dtype=complex)
    for family, (rows, rank, weight, centre, *shape) in arrays.summed.items():
        offset = centre - at[arrays.table_items[rows]]
        for c in range(0, len(rows), CHUNK):
            part = slice(c, c + CHUNK)
            if family is Fixed:
                values = _lattice_points(offset[part], step, t)
            else:
                values = _SHAPES[family](*(p[part] for p in shape), t)
                values = values * _turns(offset[part], t)
            values *= weight[part, None]
            for r in np.unique(rank[part]):  # an item's parts of one family, one by one
                pick = rank[part] == r
                table[rows[part][pick]] += values[pick]
    is_open = np.zeros(len(table), dtype=bool)
    is_open[arrays.open_rows] = True
    closed *= np.prod(table[~is_open], axis=0)
    return PartialSpectrum(closed, table[arrays.open_rows])


def gridded_lattices(plan: SpectraPlan, step: float, count: int) -> list[PartLattice]:
    """The gridded parts' hat masses on the grid k * step. A part's range is cut at `count`
    steps: beyond its low end plus the window, the total is beyond the window too."""
    # the span only cuts heavy tails; a power of two of steps lets an analysis of the same
    # items on the same step (another level, a setting changed) reuse the lattices
    span = step * 2 ** math.ceil(math.log2(count))
    return part_lattices([part for _, _, part in plan.gridded], step, span)


def gridded_spectra(
    plan: SpectraPlan,
    step: float,
    anchors: np.ndarray,
    count: int,
    bins: int,
    part_masses: list[PartLattice],
) -> tuple[np.ndarray, float]:
    """The gridded parts' transforms at the first `bins` frequencies 2 pi j / (count step),
    from their hat masses on the grid (`gridded_lattices`; the hat's sinc^2 divided out),
    and the tail mass their grids folded in."""
    out = np.empty((len(plan.gridded), bins), dtype=complex)
    folded = 0.0
    t = 2 * math.pi * np.arange(bins) / (count * step)
    spread = np.sinc(t * step / (2 * math.pi)) ** 2  # np.sinc(x) = sin(pi x) / (pi x)
    lattices = []
    for (row, weight, _), (start, masses, tail) in zip(plan.gridded, part_masses, strict=True):
        folded += weight * tail
        lattices.append((start - anchors[row], masses))
    lengths = np.array([len(m) for _, m in lattices])
    short = np.flatnonzero(lengths <= DIRECT_POINTS)
    if len(short):  # a few frequencies of short lattices: real matrix products
        angle = np.outer(np.arange(int(lengths[short].max())) * step, t)
        cos, sin = np.cos(angle), np.sin(angle)
        bucket = np.ceil(np.log2(np.maximum(lengths[short], 1))).astype(int)
        for b in np.unique(bucket):  # lattices of similar length, padded to the longest
            rows = short[bucket == b]
            width = int(lengths[rows].max())
            stacked = np.zeros((len(rows), width))
            filled = np.arange(width) < lengths[rows, None]  # row by row, as concatenated
            stacked[filled] = np.concatenate([lattices[i][1] for i in rows])
            starts = np.array([lattices[i][0] for i in rows], dtype=float)
            out[rows] = _turns(starts * step, t) * (
                stacked @ cos[:width] + 1j * (stacked @ sin[:width])
            )
    for i in np.flatnonzero(lengths > DIRECT_POINTS):  # long: one FFT over the window
        start, masses = lattices[i]
        where = (start + np.arange(len(masses))) % count
        wrapped = np.bincount(where, weights=masses, minlength=count)
        out[i] = np.conj(sp_fft.rfft(wrapped)[:bins])
    return out / spread, folded


def _add_rows(into: np.ndarray, rows: np.ndarray, values: np.ndarray) -> None:
    if len(np.unique(rows)) == len(rows):  # one gridded part per item: no sort needed
        into[rows] += values
        return
    order = np.argsort(rows, kind="stable")
    rows = rows[order]
    starts = np.flatnonzero(np.diff(rows, prepend=-1))
    if len(starts) == len(rows):
        into[rows] += values[order]
    else:  # several gridded parts of one item
        into[rows[starts]] += np.add.reduceat(values[order], starts, axis=0)


def _turns(theta: np.ndarray, t: np.ndarray) -> np.ndarray:
    """exp(i theta t), a row per theta. On evenly spaced t (a block of a grid's frequencies)
    from the exponentials at every b-th frequency times those at the first b offsets: one
    complex product per value instead of a sine and a cosine, which cost ~12 ns a value
    here against ~1 ns; both are correct to a few units of rounding of theta t."""
    n = len(t)
    if n < SPLIT_FROM:
        return np.exp(1j * np.outer(theta, t))
    dt = (t[-1] - t[0]) / (n - 1)
    if np.max(np.abs(t - (t[0] + dt * np.arange(n)))) > 1e-13 * np.max(np.abs(t)):
        return np.exp(1j * np.outer(theta, t))
    b = math.isqrt(n - 1) + 1  # b^2 >= n
    coarse = np.exp(1j * np.outer(theta, t[0] + dt * b * np.arange(-(-n // b))))
    fine = np.exp(1j * np.outer(theta, dt * np.arange(b)))
    return (coarse[:, :, None] * fine[:, None, :]).reshape(len(theta), -1)[:, :n]


def _lattice_points(position: np.ndarray, step: float, t: np.ndarray) -> np.ndarray:
    """A point split between its two neighbouring grid points, keeping its mean."""
    cell = np.floor(position / step)
    frac = (position / step - cell)[:, None]
    return _turns(cell * step, t) * ((1 - frac) + frac * np.exp(1j * step * t))


def _uniform(half: np.ndarray, t: np.ndarray) -> np.ndarray:
    """About the midpoint: sin(half t) / (half t)."""
    u = np.outer(half, t)
    with np.errstate(divide="ignore", invalid="ignore"):
        shape = _turns(half, t).imag / u
    shape[u == 0] = 1.0
    return shape


def _triangular(rise: np.ndarray, fall: np.ndarray, t: np.ndarray) -> np.ndarray:
    """About the mode: a mixture of a ramp rising over `rise` to the mode (weight
    rise / range) and one falling over `fall` from it, the first the mirror of the second."""
    left = (rise / (rise + fall))[:, None]
    ramps = _ramp(np.concatenate([fall, rise]), t)  # one call for both: fewer numpy calls
    out, rising = ramps[: len(rise)], ramps[len(rise) :]
    out *= 1 - left
    rising *= left
    out.real += rising.real
    out.imag -= rising.imag
    return out


def _ramp(width: np.ndarray, t: np.ndarray) -> np.ndarray:
    """E[exp(i u V)], u = width t, for V with density 2 (1 - v) on [0, 1]: 2 (1 + iu - e^{iu})
    / u^2, from its power series 2 sum (iu)^n / (n + 2)! where that cancels (|u| <
    RAMP_SERIES: the closed form then loses eps / u^2, 4e-14, and the series' first term
    left out is below u^8 / 8!, 1e-15). At a sum's frequencies most values of a narrow
    ramp are in the series' range: it is summed as two real polynomials in u^2."""
    u = np.outer(width, t)
    out = _turns(width, t)
    small = np.abs(u) < RAMP_SERIES
    with np.errstate(divide="ignore", invalid="ignore"):
        scale = 2 / (u * u)
        np.subtract(1.0, out.real, out=out.real)
        out.real *= scale
        np.subtract(u, out.imag, out=out.imag)
        out.imag *= scale
    v = np.minimum(u * u, RAMP_SERIES**2)
    real, imag = _SERIES_REAL[-1], _SERIES_IMAG[-1]
    for a, b in zip(_SERIES_REAL[-2::-1], _SERIES_IMAG[-2::-1], strict=True):  # Horner
        real = real * v + a
        imag = imag * v + b
    np.copyto(out.real, real, where=small)
    np.copyto(out.imag, imag * u, where=small)
    return out


# 2 (iu)^n / (n + 2)! for n < SERIES_TERMS: the even n give the real part, the odd n the
# imaginary part divided by u, as polynomials in u^2 (lowest power first).
_SERIES_REAL = [2 * (-1) ** k / math.factorial(2 * k + 2) for k in range(SERIES_TERMS // 2)]
_SERIES_IMAG = [2 * (-1) ** k / math.factorial(2 * k + 3) for k in range(SERIES_TERMS // 2)]


def _normal(sigma: np.ndarray, t: np.ndarray) -> np.ndarray:
    """About the mean."""
    return np.exp(-0.5 * np.outer(sigma**2, t * t))


_SHAPES = {Uniform: _uniform, Triangular: _triangular, Normal: _normal}
