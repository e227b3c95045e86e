"""A fast inverse transform for a family whose exact ppf is costly (the beta's betaincinv,
about 2 microseconds a value, is ~100x the rest of a simulation step).

The ppf is tabulated once and read back by cubic Hermite interpolation: exact values and
slopes (1 / density) at the nodes, stored as per-cell polynomial coefficients so a lookup is
four gathers and a Horner step. Nodes are uniform in u over the body, [1/16, 15/16]. Near
the ends the ppf can bend as a power of u (y ~ u^(1/alpha) for a beta), which no uniform
grid follows, so each outer sixteenth is tabulated by octaves of the tail probability p
instead: 64 cells in every [2^-(k+1), 2^-k), read straight from the bits of the float (its
exponent and top six mantissa bits are the cell, the rest the position in it). Over one
octave a power law or a normal-like tail is smooth, whatever its exponent. Tail
probabilities below the deepest octave (2^-16, about 1.5e-5: a few scores in 100,000) use
the exact ppf; deeper tables would cost memory in large estimates (78 kB a table now).

Given the cdf as well (`below`, `above`), only every STRIDE-th node calls the ppf: a beta's
betaincinv costs 1.3-1.6 us a value and its betainc a quarter of that, and 2,500 PERT items'
tables took 5 s of a 10,000-item correlated run on two threads (1.9 s now). The nodes between are read from the cubic
through the exact ones (error ~2e-8 of the range) and corrected by one Newton step on the
cdf, which squares that error (tests/test_distributions.py: within 1e-10 of betaincinv into
the far tails).
"""

from __future__ import annotations

from collections.abc import Callable, Sequence

import numpy as np

BODY_CELLS = 1 << 10  # the body's cells are the middle 7/8 of 1024 equal cells of [0, 1]
EDGE = 1 / 16  # u < EDGE and u >= 1 - EDGE are read from the octave tables
_FIRST_CELL = round(EDGE * BODY_CELLS)
FIRST_OCTAVE = 4  # octave k covers tail probabilities [2^-(k+1), 2^-k), k = 4, 5, ...
OCTAVES = 12  # down to 2^-16
_CELL_BITS = 6  # 64 cells an octave
_LOW_BITS = 52 - _CELL_BITS  # mantissa bits below the cell: the position within it
# Index of the deepest octave's first cell in (float64 bits >> _LOW_BITS): exponent * 64.
_DEEPEST = (1023 - FIRST_OCTAVE - OCTAVES) << _CELL_BITS
CHUNK = 1 << 15  # values per pass: the temporaries stay in cache
STRIDE = 4  # with a cdf given, the ppf is called at every STRIDE-th node only

Curve = Callable[[np.ndarray], np.ndarray]


def _coefficients(y: np.ndarray, slope: np.ndarray) -> np.ndarray:
    """(4, cells) coefficients of y0 + c1 t + c2 t^2 + c3 t^3 on each cell, from the values
    and slopes (per cell width) at its two ends (cubic Hermite)."""
    y0, y1, m0, m1 = y[..., :-1], y[..., 1:], slope[..., :-1], slope[..., 1:]
    c = np.stack([y0, m0, 3 * (y1 - y0) - 2 * m0 - m1, 2 * (y0 - y1) + m0 + m1])
    return c.reshape(4, -1)


def _nodes(
    ppf: Curve, probability: Curve | None, density: Curve, p: np.ndarray, direction: float
) -> tuple[np.ndarray, np.ndarray]:
    """Values and densities at p (equally spaced probabilities along the last axis, STRIDE
    k + 1 of them; the curves may broadcast it over tables on leading axes): ppf(p) rising
    (direction 1, p below) or falling (-1, p above), `probability` its inverse. A node whose
    Newton step leaves the interval of its exact neighbours (a density of 0 or infinity
    there) calls the ppf instead."""
    if probability is None:
        y = ppf(p)
        return y, density(y)
    coarse = p[..., ::STRIDE]
    known = ppf(coarse)
    c = _coefficients(known, direction * (coarse[..., 1:2] - coarse[..., :1]) / density(known))
    t = (np.arange(1, STRIDE) / STRIDE)[:, None]
    between = c[3] * t
    for k in (2, 1, 0):
        between += c[k]
        if k:
            between *= t
    # (STRIDE - 1, nodes in cells) -> each cell's inner nodes in order, as y[..., inner]
    guess = np.moveaxis(between.reshape(STRIDE - 1, -1), 0, -1).reshape(*known.shape[:-1], -1)
    inner = np.ones(p.shape[-1], dtype=bool)
    inner[::STRIDE] = False
    at = np.broadcast_to(p[..., inner], guess.shape)
    with np.errstate(divide="ignore", invalid="ignore"):
        fixed = guess - direction * (probability(guess) - at) / density(guess)
    ends = known[..., :-1].repeat(STRIDE - 1, axis=-1), known[..., 1:].repeat(STRIDE - 1, axis=-1)
    stray = ~((np.minimum(*ends) <= fixed) & (fixed <= np.maximum(*ends)))
    if stray.any():  # exact, from the stray nodes' own tables
        fixed[stray] = ppf(np.where(stray, at, 0.5))[stray]
    y = np.empty(guess.shape[:-1] + p.shape[-1:])
    y[..., ::STRIDE] = known
    y[..., inner] = fixed
    return y, density(y)


def _horner(c: np.ndarray, idx: np.ndarray, t: np.ndarray, out: np.ndarray) -> None:
    """out = the cubic of cell idx at t."""
    scratch = np.empty_like(out)
    c[3].take(idx, out=out)
    for k in (2, 1, 0):
        out *= t
        c[k].take(idx, out=scratch)
        out += scratch


class TabulatedInverse:
    """Inverse transform from tables of an exact ppf; within about 1e-10 of the ppf's range
    for the beta shapes tested (tests/test_distributions.py).

    lower(p): the value with probability p below it; upper(p): the value with probability p
    above it (each exact for tiny p, which 1 - p would lose); density(y): the pdf at y.
    `stack` joins the tables of several distributions, so one call reads a whole
    replicate (row r of the scores through table r); `split` parts them again.
    """

    def __init__(
        self,
        lower: Curve,
        upper: Curve,
        density: Curve,
        below: Curve | None = None,
        above: Curve | None = None,
        exact: Sequence[tuple[Curve, Curve]] | None = None,
    ):
        """below(y), above(y): the probabilities below and above y, for the Newton steps
        (without them every node calls lower or upper). Several tables are built at once
        when the curves carry their parameters on a leading axis of three (tables, 1, 1);
        `exact` then lists each table's own (lower, upper), for scores past the tables."""
        self.exact = [(lower, upper)] if exact is None else list(exact)
        u = np.arange(_FIRST_CELL, BODY_CELLS - _FIRST_CELL + 1)[None, :] / BODY_CELLS
        y, f = _nodes(lower, below, density, u, 1.0)
        self.body = _coefficients(y, 1 / (f * BODY_CELLS))
        # Octave nodes, deepest octave first as the bits index them: p = 2^-(k+1) (1 + j/64).
        cells = 1 << _CELL_BITS
        width = 2.0 ** -(np.arange(FIRST_OCTAVE + OCTAVES, FIRST_OCTAVE, -1)[:, None])
        p = width * (1 + np.arange(cells + 1) / cells)
        step = width / cells
        y_low, f_low = _nodes(lower, below, density, p, 1.0)
        y_high, f_high = _nodes(upper, above, density, p, -1.0)
        self.left = _coefficients(y_low, step / f_low)
        self.right = _coefficients(y_high, -step / f_high)

    @classmethod
    def stack(cls, tables: Sequence[TabulatedInverse]) -> TabulatedInverse:
        joined = cls.__new__(cls)
        joined.exact = [pair for t in tables for pair in t.exact]
        for name in ("body", "left", "right"):
            setattr(joined, name, np.concatenate([getattr(t, name) for t in tables], axis=1))
        return joined

    def split(self) -> list[TabulatedInverse]:
        """Each table of a stacked (or jointly built) one on its own, as views."""
        count = len(self.exact)
        parts = [TabulatedInverse.__new__(TabulatedInverse) for _ in range(count)]
        for name in ("body", "left", "right"):
            for part, block in zip(
                parts, np.split(getattr(self, name), count, axis=1), strict=True
            ):
                setattr(part, name, block)
        for part, pair in zip(parts, self.exact, strict=True):
            part.exact = [pair]
        return parts

    def __call__(self, u: np.ndarray) -> np.ndarray:
        """Values at scores u: (tables, n), or any shape for a single table."""
        u = np.asarray(u, dtype=float)
        rows = len(self.exact)
        grid = u.reshape(rows, -1)
        n = grid.shape[1]
        out = np.empty(grid.shape)
        body_cells = self.body.shape[1] // rows
        step = max(1, CHUNK // max(n, 1))  # rows a pass, or a part of one long row
        for r in range(0, rows, step):
            for c in range(0, n, CHUNK):
                block = np.s_[r : r + step, c : c + CHUNK]
                self._body(grid[block], out[block], r, body_cells)
        flat, values = grid.ravel(), out.reshape(-1)
        low = np.flatnonzero(flat < EDGE)
        high = np.flatnonzero(flat >= 1 - EDGE)
        values[low] = self._tail(flat[low], low // n, self.left, 0)
        values[high] = self._tail(1.0 - flat[high], high // n, self.right, 1)  # 1 - u is exact
        return out.reshape(u.shape)

    def _body(self, u: np.ndarray, out: np.ndarray, first_row: int, cells: int) -> None:
        pos = u * BODY_CELLS
        pos -= _FIRST_CELL
        idx = pos.astype(np.intp)
        # Tail scores pass through here too (and are overwritten); keep them in the table.
        np.minimum(idx.view(np.uintp), cells - 1, out=idx.view(np.uintp))
        pos -= idx
        idx += (np.arange(first_row, first_row + len(u)) * cells)[:, None]
        _horner(self.body, idx, pos, out)

    def _tail(self, p: np.ndarray, rows: np.ndarray, table: np.ndarray, side: int) -> np.ndarray:
        bits = p.view(np.uint64)
        idx = (bits >> np.uint64(_LOW_BITS)).view(np.intp)
        idx -= _DEEPEST
        t = (bits & np.uint64((1 << _LOW_BITS) - 1)).astype(np.float64)
        t *= 2.0**-_LOW_BITS
        cells = table.shape[1] // len(self.exact)
        beyond = np.flatnonzero(idx.view(np.uintp) >= cells)  # below 2^-16, or p = 0
        idx[beyond] = 0
        idx += rows * cells
        out = np.empty_like(p)
        _horner(table, idx, t, out)
        for row in np.unique(rows[beyond]):  # a few scores in 100,000
            at = beyond[rows[beyond] == row]
            out[at] = self.exact[row][side](p[at])
        return out
