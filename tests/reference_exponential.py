"""An exponential family for the engine's tests only: Rangefold has none, but sums of n
exponentials are gamma(n) in closed form, a skewed reference the uniforms cannot give."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import special

from engine.families.distributions import Continuous


@dataclass(frozen=True)
class Exponential(Continuous):
    """Exponential with the given mean; the standardised Y is exponential(1)."""

    scale: float = 1.0
    loc = 0.0

    mean = property(lambda self: self.scale)
    variance = property(lambda self: self.scale**2)
    mu3 = property(lambda self: 2 * self.scale**3)  # skewness 2
    mu4 = property(lambda self: 9 * self.scale**4)  # excess kurtosis 6

    def _partial_moments(self, y):
        # E[Y^k; Y <= y] = k! * P(k + 1, y), P the regularised lower incomplete gamma
        t = np.maximum(np.asarray(y, dtype=float), 0.0)
        return tuple(math.factorial(k) * special.gammainc(k + 1, t) for k in range(4))

    def _stop_loss_std(self, y):
        # E[(Y - y)^+] = exp(-y) for y >= 0 (memorylessness), 1 - y below 0
        y = np.asarray(y, dtype=float)
        return np.where(y >= 0, np.exp(-np.maximum(y, 0.0)), 1.0 - y)

    def _pdf_std(self, y):
        y = np.asarray(y, dtype=float)
        return np.where(y >= 0, np.exp(-np.maximum(y, 0.0)), 0.0)

    def ppf(self, q):
        return -self.scale * np.log1p(-np.asarray(q, dtype=float))

    def bounds(self):
        return 0.0, -self.scale * math.log(1e-14)
