"""The distribution families of the trade, with exact moments and partial moments.

Each family gives its own exact mean, central moments, cdf and ppf. Continuous families also
give their standardised partial moments E[Y^k; Y <= y] (k = 0..3): from those come the
integrated cdf (which the exact convolution uses to put mass on a grid without moving the
mean) and E|X - c|^3 (which the Berry–Esseen bound needs), both without numerical
integration. A risk event is any family times a Bernoulli occurrence (`Occurrence`).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, fields
from functools import partial

import numpy as np
from scipy import special

from engine.families.tabulated_inverse import TabulatedInverse
from engine.threads import run_split

ArrayLike = float | np.ndarray


class computed_once:  # a decorator, named like property
    """functools.cached_property without its lock: on Python 3.11 the lock made the first
    read of an item's moments cost ~2 us (~40 ms of a 10,000-item analysis's first call).
    Two threads reading at once both compute the same value, which is harmless here."""

    def __init__(self, compute: Callable) -> None:
        self.compute = compute
        self.name = compute.__name__

    def __set_name__(self, owner: type, name: str) -> None:
        self.name = name

    def __get__(self, instance, owner=None):
        if instance is None:
            return self
        value = instance.__dict__[self.name] = self.compute(instance)
        return value


# Probability left outside a continuous family's effective range on each side; far below
# anything a percentile of interest can see, and above where floating point gets noisy.
TAIL = 1e-14


class Distribution:
    """Common surface of every family; subclasses fill in the moments and the cdf/ppf."""

    mean: float
    variance: float
    mu3: float  # third central moment (= third cumulant)
    mu4: float  # fourth central moment

    @property
    def sd(self) -> float:
        return math.sqrt(max(self.variance, 0.0))

    @property
    def skewness(self) -> float:
        return self.mu3 / self.variance**1.5 if self.variance > 0 else 0.0

    @property
    def excess_kurtosis(self) -> float:
        return self.mu4 / self.variance**2 - 3.0 if self.variance > 0 else 0.0

    @property
    def kappa4(self) -> float:
        """Fourth cumulant: additive over independent items, unlike mu4."""
        return self.mu4 - 3.0 * self.variance**2

    def abs_moment3(self, about: float | None = None) -> float:
        """E|X - c|^3, by default about the mean: the Berry–Esseen numerator."""
        raise NotImplementedError

    def cdf(self, x: ArrayLike) -> np.ndarray:
        raise NotImplementedError

    def ppf(self, q: ArrayLike) -> np.ndarray:
        raise NotImplementedError

    def sample(self, u: np.ndarray) -> np.ndarray:
        """Values at uniform scores u: inverse transform, so Latin hypercube and rank
        reordering work for every family. Subclasses may use a faster route than ppf."""
        return self.ppf(u)

    def bounds(self) -> tuple[float, float]:
        """A finite range holding all but about TAIL of the mass on each side."""
        raise NotImplementedError

    def parts(self) -> tuple[list[tuple[float, float]], list[tuple[float, Continuous]]]:
        """Point masses [(value, mass)] and continuous parts [(weight, family)]."""
        raise NotImplementedError

    def pdf(self, x: ArrayLike) -> np.ndarray:
        """Density of the continuous part (zero for pure point masses)."""
        _, continuous = self.parts()
        x = np.asarray(x, dtype=float)
        out = np.zeros_like(x)
        for weight, part in continuous:
            out = out + weight * part.pdf(x)
        return out


class Continuous(Distribution):
    """A family written as loc + scale * Y with Y standardised."""

    loc: float = 0.0
    scale: float = 1.0

    def _partial_moments(self, y: np.ndarray) -> tuple[np.ndarray, ...]:
        """(E[1; Y<=y], E[Y; Y<=y], E[Y^2; Y<=y], E[Y^3; Y<=y]) of the standardised Y."""
        raise NotImplementedError

    def _pdf_std(self, y: np.ndarray) -> np.ndarray:
        raise NotImplementedError

    def pdf(self, x: ArrayLike) -> np.ndarray:
        y = (np.asarray(x, dtype=float) - self.loc) / self.scale
        return self._pdf_std(y) / self.scale

    def cdf(self, x: ArrayLike) -> np.ndarray:
        y = (np.asarray(x, dtype=float) - self.loc) / self.scale
        return self._partial_moments(y)[0]

    def integrated_cdf(self, x: ArrayLike) -> np.ndarray:
        """G(x) = E[(x - X)^+] = integral of the cdf up to x; its second difference on a
        grid gives each grid point the mass of a hat function around it (mean-preserving)."""
        y = (np.asarray(x, dtype=float) - self.loc) / self.scale
        return self.scale * self._integrated_cdf_std(y)

    def _integrated_cdf_std(self, y: np.ndarray) -> np.ndarray:
        """E[(y - Y)^+] of the standardised Y; families with a cheaper closed form override it."""
        m0, m1, _, _ = self._partial_moments(y)
        return np.maximum(y * m0 - m1, 0.0)

    def _stop_loss_std(self, y: np.ndarray) -> np.ndarray:
        """E[(Y - y)^+] of the standardised Y; families override it with a form that stays
        accurate in the upper tail, where G(x) - (x - mean) would cancel."""
        mean_std = (self.mean - self.loc) / self.scale
        return np.maximum(self._integrated_cdf_std(y) - (y - mean_std), 0.0)

    def integrated_survival(self, x: ArrayLike) -> np.ndarray:
        """S(x) = E[(X - x)^+]; G(x) - S(x) = x - mean, so both have the same second
        differences, and each is accurate on its own side of the mean."""
        y = (np.asarray(x, dtype=float) - self.loc) / self.scale
        return self.scale * self._stop_loss_std(y)

    def abs_moment3(self, about: float | None = None) -> float:
        c = self.mean if about is None else about
        d = self.mean - c
        signed = self.mu3 + 3 * self.variance * d + d**3  # E[(X - c)^3]
        y = (c - self.loc) / self.scale
        m0, m1, m2, m3 = (float(v[0]) for v in self._partial_moments(np.array([y])))
        lower = self.scale**3 * (y**3 * m0 - 3 * y**2 * m1 + 3 * y * m2 - m3)
        return max(signed + 2 * max(lower, 0.0), 0.0)

    def parts(self) -> tuple[list[tuple[float, float]], list[tuple[float, Continuous]]]:
        return [], [(1.0, self)]


@dataclass(frozen=True)
class Fixed(Distribution):
    value: float

    mean = property(lambda self: self.value)
    variance = property(lambda self: 0.0)
    mu3 = property(lambda self: 0.0)
    mu4 = property(lambda self: 0.0)

    def abs_moment3(self, about: float | None = None) -> float:
        c = self.value if about is None else about
        return abs(self.value - c) ** 3

    def cdf(self, x: ArrayLike) -> np.ndarray:
        return (np.asarray(x, dtype=float) >= self.value).astype(float)

    def ppf(self, q: ArrayLike) -> np.ndarray:
        return np.full(np.shape(q), self.value, dtype=float)

    def bounds(self) -> tuple[float, float]:
        return self.value, self.value

    def parts(self):
        return [(self.value, 1.0)], []


@dataclass(frozen=True)
class Uniform(Continuous):
    low: float
    high: float

    loc = property(lambda self: self.low)
    scale = property(lambda self: self.high - self.low)
    mean = property(lambda self: (self.low + self.high) / 2)
    variance = property(lambda self: (self.high - self.low) ** 2 / 12)
    mu3 = property(lambda self: 0.0)
    mu4 = property(lambda self: (self.high - self.low) ** 4 / 80)

    def _partial_moments(self, y):
        t = np.clip(y, 0.0, 1.0)
        return t, t**2 / 2, t**3 / 3, t**4 / 4

    def _stop_loss_std(self, y):
        t = np.clip(y, 0.0, 1.0)
        return (1 - t) ** 2 / 2 + np.maximum(t - y, 0.0)

    def _pdf_std(self, y):
        return ((y >= 0) & (y <= 1)).astype(float)

    def ppf(self, q):
        return self.low + (self.high - self.low) * np.asarray(q, dtype=float)

    def bounds(self):
        return self.low, self.high


@dataclass(frozen=True)
class Triangular(Continuous):
    low: float
    mode: float
    high: float

    loc = property(lambda self: self.low)
    scale = property(lambda self: self.high - self.low)
    mean = property(lambda self: (self.low + self.mode + self.high) / 3)

    @property
    def mode_fraction(self) -> float:
        """Where the mode sits in the range, 0..1: the standardised triangle's one shape."""
        return (self.mode - self.low) / (self.high - self.low)

    @property
    def _q(self) -> float:
        # Q = a^2+b^2+c^2-ab-ac-bc, written in differences so that a range far from zero
        # keeps its digits
        a, c, b = self.low, self.mode, self.high
        return ((b - a) ** 2 + (c - a) ** 2 + (b - c) ** 2) / 2

    @computed_once
    def variance(self) -> float:
        return self._q / 18

    @computed_once
    def mu3(self) -> float:
        # skewness sqrt(2)(a+b-2c)(2a-b-c)(a-2b+c) / (5 Q^1.5), times variance^1.5
        a, c, b = self.low, self.mode, self.high
        return (a + b - 2 * c) * (2 * a - b - c) * (a - 2 * b + c) / 270

    @computed_once
    def mu4(self) -> float:
        return 2.4 * self.variance**2  # excess kurtosis of every triangle is -3/5

    def _partial_moments(self, y):
        # np.where, not if: the mode fraction may be an array (many triangles at once)
        m = np.asarray(self.mode_fraction, dtype=float)
        y = np.clip(y, 0.0, 1.0)
        t = np.maximum(y, m)
        out = []
        with np.errstate(divide="ignore", invalid="ignore"):
            for k in range(4):
                left = np.where(m > 0, 2 * np.minimum(y, m) ** (k + 2) / ((k + 2) * m), 0.0)
                right = np.where(
                    m < 1,
                    (2 / (1 - m))
                    * (
                        (t ** (k + 1) - m ** (k + 1)) / (k + 1)
                        - (t ** (k + 2) - m ** (k + 2)) / (k + 2)
                    ),
                    0.0,
                )
                out.append(left + right)
        return tuple(out)

    def _integrated_cdf_std(self, y):
        # Integral of the piecewise-quadratic cdf: a cubic on each side of the mode, cheaper
        # than four partial moments on every grid point of the convolution.
        m = self.mode_fraction
        t = np.clip(y, 0.0, 1.0)
        left = np.minimum(t, m) ** 3 / (3 * m) if m > 0 else np.zeros_like(t)
        if m < 1:
            u = np.maximum(t, m)
            right = (u - m) - ((1 - m) ** 3 - (1 - u) ** 3) / (3 * (1 - m))
        else:
            right = np.zeros_like(t)
        return left + right + np.maximum(y - 1.0, 0.0)

    def _stop_loss_std(self, y):
        m = self.mode_fraction
        if m >= 1:
            return super()._stop_loss_std(y)
        upper = (1 - np.clip(y, m, 1.0)) ** 3 / (3 * (1 - m))
        if np.min(y, initial=m) >= m:  # the usual call: only points right of the mode
            return upper
        return np.where(y >= m, upper, super()._stop_loss_std(y))

    def _pdf_std(self, y):
        m = self.mode_fraction
        with np.errstate(divide="ignore", invalid="ignore"):
            up = np.where(m > 0, 2 * y / m if m > 0 else 0.0, 0.0)
            down = np.where(m < 1, 2 * (1 - y) / (1 - m) if m < 1 else 0.0, 0.0)
        f = np.where(y < m, up, down)
        return np.where((y >= 0) & (y <= 1), f, 0.0)

    def ppf(self, q):
        q = np.asarray(q, dtype=float)
        m = self.mode_fraction
        y = np.where(q < m, np.sqrt(q * m), 1 - np.sqrt(np.maximum((1 - q) * (1 - m), 0.0)))
        return self.low + (self.high - self.low) * y

    def bounds(self):
        return self.low, self.high


@dataclass(frozen=True)
class Beta(Continuous):
    """Beta on [low, high]; beta-PERT is the special case built by `pert`."""

    low: float
    high: float
    alpha: float
    beta: float

    loc = property(lambda self: self.low)
    scale = property(lambda self: self.high - self.low)

    @computed_once
    def mean(self) -> float:
        return self.low + self.scale * self.alpha / (self.alpha + self.beta)

    @computed_once
    def variance(self) -> float:
        a, b = self.alpha, self.beta
        return self.scale**2 * a * b / ((a + b) ** 2 * (a + b + 1))

    @computed_once
    def mu3(self) -> float:
        a, b = self.alpha, self.beta
        skew = 2 * (b - a) * math.sqrt(a + b + 1) / ((a + b + 2) * math.sqrt(a * b))
        return skew * self.variance**1.5

    @computed_once
    def mu4(self) -> float:
        a, b = self.alpha, self.beta
        ex = (
            6
            * ((a - b) ** 2 * (a + b + 1) - a * b * (a + b + 2))
            / (a * b * (a + b + 2) * (a + b + 3))
        )
        return (ex + 3) * self.variance**2

    def _partial_moments(self, y):
        t = np.clip(y, 0.0, 1.0)
        a, b = self.alpha, self.beta
        out = []
        ratio = 1.0  # B(a+k, b) / B(a, b)
        for k in range(4):
            out.append(ratio * special.betainc(a + k, b, t))
            ratio *= (a + k) / (a + b + k)
        return tuple(out)

    def _stop_loss_std(self, y):
        t = np.clip(y, 0.0, 1.0)
        a, b = self.alpha, self.beta
        above0 = special.betainc(b, a, 1 - t)  # P(Y > t)
        above1 = a / (a + b) * special.betainc(b, a + 1, 1 - t)  # E[Y; Y > t]
        return np.maximum(above1 - t * above0, 0.0) + np.maximum(t - y, 0.0)

    def _pdf_std(self, y):
        return _beta_density(self.alpha, self.beta, y)

    def ppf(self, q):
        return self.low + self.scale * special.betaincinv(
            self.alpha, self.beta, np.asarray(q, dtype=float)
        )

    @computed_once
    def inverse_table(self) -> TabulatedInverse:
        """Tables of the standardised ppf, built on first use (~2 ms; beta_tables builds
        many items' at once)."""
        return _joint_tables([self]).split()[0]

    def sample(self, u: np.ndarray) -> np.ndarray:
        """Inverse transform from tables of the exact ppf (engine.families.tabulated_inverse), ~2 ms
        to build once per item, because betaincinv costs ~100x the rest of a simulation step."""
        y = self.inverse_table(u)
        y *= self.scale
        y += self.low
        return y

    def bounds(self):
        return self.low, self.high


def _beta_density(a, b, y):
    inside = (y >= 0) & (y <= 1)
    t = np.clip(y, 0.0, 1.0)
    with np.errstate(divide="ignore"):
        logf = special.xlogy(a - 1, t) + special.xlog1py(b - 1, -t) - special.betaln(a, b)
    return np.where(inside, np.exp(logf), 0.0)


def _joint_tables(betas: Sequence[Beta]) -> TabulatedInverse:
    """The betas' sampling tables in one build, each shape on its own leading row."""
    a = np.array([d.alpha for d in betas])[:, None, None]
    b = np.array([d.beta for d in betas])[:, None, None]
    return TabulatedInverse(
        partial(special.betaincinv, a, b),
        partial(_beta_above, a, b),
        partial(_beta_density, a, b),
        partial(special.betainc, a, b),
        partial(_beta_sf, a, b),
        # each table's own, for scores past its deepest octave (no reference to the item)
        exact=[
            (partial(special.betaincinv, d.alpha, d.beta), partial(_beta_above, d.alpha, d.beta))
            for d in betas
        ],
    )


def _beta_sf(a, b, y):
    return special.betainc(b, a, 1.0 - y)


def _beta_above(a, b, p):
    """The standard beta's value with probability p above it: Y above y <=> 1 - Y below
    1 - y, so exact for tiny p."""
    return 1.0 - special.betaincinv(b, a, p)


TABLES_AT_ONCE = 64  # betas a joint build: its ufunc calls release the GIL (numpy keeps it
# under 500 values, and one table's calls are ~200), and its arrays stay a few MB


def beta_tables(betas: Sequence[Beta], progress: Callable[[int], None] | None = None) -> None:
    """Builds each beta's inverse_table that is not built yet, TABLES_AT_ONCE at a time on
    both engine threads: 2,500 PERT items' tables in about a second instead of 10 built one
    by one (their small calls holding the interpreter lock, the two threads took turns).
    `progress(done)` is called from both threads as tables are built."""
    todo = [d for d in betas if "inverse_table" not in d.__dict__]
    batches = [todo[k : k + TABLES_AT_ONCE] for k in range(0, len(todo), TABLES_AT_ONCE)]

    def build(part: range) -> None:
        for k in part:
            for beta, table in zip(batches[k], _joint_tables(batches[k]).split(), strict=True):
                beta.__dict__["inverse_table"] = table  # computed_once's store
            if progress is not None:
                progress(len(batches[k]))

    run_split(build, len(batches))


def pert(low: float, mode: float, high: float, shape: float = 4.0) -> Beta:
    """Beta-PERT (Malcolm, Roseboom, Clark & Fazar 1959): alpha = 1 + shape (m-a)/(b-a)."""
    width = high - low
    return Beta(low, high, 1 + shape * (mode - low) / width, 1 + shape * (high - mode) / width)


@dataclass(frozen=True)
class Normal(Continuous):
    mu: float
    sigma: float

    loc = property(lambda self: self.mu)
    scale = property(lambda self: self.sigma)
    mean = property(lambda self: self.mu)
    variance = property(lambda self: self.sigma**2)
    mu3 = property(lambda self: 0.0)
    mu4 = property(lambda self: 3 * self.sigma**4)

    def _partial_moments(self, y):
        phi = np.exp(-0.5 * y * y) / math.sqrt(2 * math.pi)
        cap = special.ndtr(y)
        return cap, -phi, cap - y * phi, -(y * y + 2) * phi

    def _stop_loss_std(self, y):
        return np.exp(-0.5 * y * y) / math.sqrt(2 * math.pi) - y * special.ndtr(-y)

    def _pdf_std(self, y):
        return np.exp(-0.5 * y * y) / math.sqrt(2 * math.pi)

    def ppf(self, q):
        return self.mu + self.sigma * special.ndtri(np.asarray(q, dtype=float))

    def bounds(self):
        z = -special.ndtri(TAIL)
        return self.mu - z * self.sigma, self.mu + z * self.sigma


@dataclass(frozen=True)
class Lognormal(Continuous):
    """ln X ~ Normal(mu, sigma). Kept unstandardised: loc 0, scale 1."""

    mu: float
    sigma: float

    def _raw(self, k: int) -> float:
        return math.exp(k * self.mu + 0.5 * k * k * self.sigma**2)

    @computed_once
    def mean(self) -> float:
        return self._raw(1)

    @computed_once
    def variance(self) -> float:
        return math.expm1(self.sigma**2) * math.exp(2 * self.mu + self.sigma**2)

    @computed_once
    def mu3(self) -> float:
        s2 = self.sigma**2
        return (math.exp(s2) + 2) * math.sqrt(math.expm1(s2)) * self.variance**1.5

    @computed_once
    def mu4(self) -> float:
        s2 = self.sigma**2
        ex = math.exp(4 * s2) + 2 * math.exp(3 * s2) + 3 * math.exp(2 * s2) - 6
        return (ex + 3) * self.variance**2

    def _partial_moments(self, y):
        x = np.asarray(y, dtype=float)
        with np.errstate(divide="ignore"):
            d = (np.log(np.maximum(x, 0.0)) - self.mu) / self.sigma
        return tuple(self._raw(k) * special.ndtr(d - k * self.sigma) for k in range(4))

    def cdf(self, x: ArrayLike) -> np.ndarray:
        # The first partial moment alone: a wide item's cdf is summed over its rest's grid
        # millions of times (engine.exact.wide_item), and the other three cost 3 ndtr more.
        y = (np.asarray(x, dtype=float) - self.loc) / self.scale
        with np.errstate(divide="ignore"):
            return special.ndtr((np.log(np.maximum(y, 0.0)) - self.mu) / self.sigma)

    def _stop_loss_std(self, y):
        x = np.asarray(y, dtype=float)
        pos = x > 0
        safe = np.where(pos, x, 1.0)
        d = (np.log(safe) - self.mu) / self.sigma
        upper = self._raw(1) * special.ndtr(self.sigma - d) - safe * special.ndtr(-d)
        return np.where(pos, np.maximum(upper, 0.0), self.mean - x)

    def _pdf_std(self, y):
        x = np.asarray(y, dtype=float)
        pos = x > 0
        safe = np.where(pos, x, 1.0)
        z = (np.log(safe) - self.mu) / self.sigma
        f = np.exp(-0.5 * z * z) / (safe * self.sigma * math.sqrt(2 * math.pi))
        return np.where(pos, f, 0.0)

    def ppf(self, q):
        return np.exp(self.mu + self.sigma * special.ndtri(np.asarray(q, dtype=float)))

    def bounds(self):
        z = -special.ndtri(TAIL)
        return math.exp(self.mu - z * self.sigma), math.exp(self.mu + z * self.sigma)


@dataclass(frozen=True)
class Discrete(Distribution):
    """Values with probabilities (weights normalised to 1)."""

    points: tuple[float, ...]
    weights: tuple[float, ...]

    @computed_once
    def _arrays(self) -> tuple[np.ndarray, np.ndarray]:
        v = np.asarray(self.points, dtype=float)
        w = np.asarray(self.weights, dtype=float)
        order = np.argsort(v, kind="stable")
        return v[order], w[order] / w.sum()

    @computed_once
    def _moments(self) -> tuple[float, float, float, float]:
        v, w = self._arrays
        m = float(w @ v)
        d = v - m
        return m, float(w @ d**2), float(w @ d**3), float(w @ d**4)

    mean = property(lambda self: self._moments[0])
    variance = property(lambda self: self._moments[1])
    mu3 = property(lambda self: self._moments[2])
    mu4 = property(lambda self: self._moments[3])

    def abs_moment3(self, about: float | None = None) -> float:
        v, w = self._arrays
        c = self.mean if about is None else about
        return float(w @ np.abs(v - c) ** 3)

    def cdf(self, x):
        v, w = self._arrays
        cum = np.concatenate([[0.0], np.cumsum(w)])
        return np.minimum(cum[np.searchsorted(v, np.asarray(x, dtype=float), side="right")], 1.0)

    def ppf(self, q):
        v, w = self._arrays
        cum = np.cumsum(w)
        cum[-1] = 1.0
        idx = np.searchsorted(cum, np.asarray(q, dtype=float), side="left")
        return v[np.minimum(idx, len(v) - 1)]

    def bounds(self):
        v, _ = self._arrays
        return float(v[0]), float(v[-1])

    def parts(self):
        v, w = self._arrays
        return list(zip(v.tolist(), w.tolist(), strict=True)), []


@dataclass(frozen=True)
class Occurrence(Distribution):
    """A risk event: `impact` with probability p, else 0 (a point mass at zero)."""

    impact: Distribution
    p: float

    @computed_once
    def _moments(self) -> tuple[float, float, float, float]:
        p, base = self.p, self.impact
        mean = p * base.mean
        d = base.mean - mean  # offset of the impact's mean from the event's mean
        v, m3, m4 = base.variance, base.mu3, base.mu4
        # E[(X - mean)^k]: the zero's share, and the impact's moments about its own mean
        # shifted by d (binomial expansion), written out for k = 2, 3, 4
        return (
            mean,
            (1 - p) * mean**2 + p * (d**2 + v),
            (1 - p) * -(mean**3) + p * (d**3 + 3 * d * v + m3),
            (1 - p) * mean**4 + p * (d**4 + 6 * d**2 * v + 4 * d * m3 + m4),
        )

    mean = property(lambda self: self._moments[0])
    variance = property(lambda self: self._moments[1])
    mu3 = property(lambda self: self._moments[2])
    mu4 = property(lambda self: self._moments[3])

    def abs_moment3(self, about: float | None = None) -> float:
        c = self.mean if about is None else about
        return (1 - self.p) * abs(c) ** 3 + self.p * self.impact.abs_moment3(c)

    def cdf(self, x):
        x = np.asarray(x, dtype=float)
        return (1 - self.p) * (x >= 0) + self.p * self.impact.cdf(x)

    def below_zero(self) -> float:
        """Probability of an outcome below zero: an impact that can be negative, occurring."""
        return self.p * float(self.impact.cdf(0.0)) if self.impact.bounds()[0] < 0 else 0.0

    def _split(self, q: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        below = self.below_zero()
        low_part = q < below
        at_zero = (~low_part) & (q <= below + 1 - self.p)
        return low_part, at_zero, ~(low_part | at_zero)

    def _invert(self, q, inverse) -> np.ndarray:
        q = np.asarray(q, dtype=float)
        low_part, _at_zero, high_part = self._split(q)
        out = np.zeros(q.shape)
        if low_part.any():
            out[low_part] = inverse(q[low_part] / self.p)
        if high_part.any():
            out[high_part] = inverse(np.clip((q[high_part] - (1 - self.p)) / self.p, 0.0, 1.0))
        return out

    def ppf(self, q):
        return self._invert(q, self.impact.ppf)

    def sample(self, u):
        return self._invert(u, self.impact.sample)

    def bounds(self):
        lo, hi = self.impact.bounds()
        return min(lo, 0.0), max(hi, 0.0)

    def parts(self):
        return self._parts

    @computed_once
    def _parts(self):
        atoms, continuous = self.impact.parts()
        atoms = [(0.0, 1 - self.p)] + [(v, self.p * m) for v, m in atoms]
        return atoms, [(self.p * w, c) for w, c in continuous]


def _kept_hash(self: Distribution) -> int:
    """The dataclass's hash (that of the fields' tuple), computed once: items are keys of
    the exact engine's per-item caches, looked up several times per analysis."""
    known = self.__dict__.get("_hash")
    if known is None:
        values = tuple(getattr(self, name) for name in self._field_names)  # type: ignore[attr-defined]
        known = self.__dict__["_hash"] = hash(values)
    return known


for _family in (Fixed, Uniform, Triangular, Beta, Normal, Lognormal, Discrete, Occurrence):
    _family.__hash__ = _kept_hash  # type: ignore[method-assign]
    _family._field_names = tuple(f.name for f in fields(_family))  # type: ignore[attr-defined]
