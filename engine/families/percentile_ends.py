"""Bounds of a triangular or PERT item whose low and high are stated as percentiles.

Analysts often give "P10 = 80, most likely 100, P90 = 150" rather than absolute bounds. The
absolute low a and high b are then the solution of F(low; a, m, b) = p_low and
F(high; a, m, b) = p_high. Written in gaps below and above the stated range the problem is
smooth and its solution unique, so a Newton-type solver started from a linear guess finds it.
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np
from scipy import optimize

from engine.families.distributions import Continuous, Triangular, pert


class NoBoundsFound(ValueError):
    """The stated percentiles cannot come from the family with that most likely value."""


def solve_bounds(
    family: str, low: float, mode: float, high: float, p_low: float, p_high: float, shape: float
) -> Continuous:
    """Return the triangular or PERT distribution with the stated percentiles and mode."""
    make: Callable[[float, float], Continuous]
    if family == "triangular":

        def make(a: float, b: float) -> Continuous:
            return Triangular(a, mode, b)
    else:

        def make(a: float, b: float) -> Continuous:
            return pert(a, mode, b, shape)

    width = high - low
    inner_low, inner_high = min(low, mode), max(high, mode)

    def residual(t: np.ndarray) -> np.ndarray:
        a = inner_low - width * math.exp(t[0])
        b = inner_high + width * math.exp(t[1])
        dist = make(a, b)
        return np.array([float(dist.cdf(low)) - p_low, float(dist.cdf(high)) - p_high])

    best = None
    for guess in ((-1.0, -1.0), (0.0, 0.0), (-3.0, -3.0), (1.0, 1.0)):
        sol = optimize.root(residual, np.array(guess), method="hybr", options={"xtol": 1e-13})
        err = float(np.max(np.abs(residual(sol.x))))
        if best is None or err < best[0]:
            best = (err, sol.x)
        if err < 1e-10:
            break
    assert best is not None
    err, t = best
    if err > 1e-8:
        raise NoBoundsFound(
            f"no {family} distribution has P{p_low * 100:g} = {low:g}, most likely {mode:g} "
            f"and P{p_high * 100:g} = {high:g}"
        )
    return make(inner_low - width * math.exp(t[0]), inner_high + width * math.exp(t[1]))
