"""How wide a lognormal may be before its moments leave floating point.

The normal shortcut, Cornish–Fisher and the diagnostics read the items' first four moments.
A lognormal's k-th raw moment is exp(k mu + k^2 sigma^2 / 2): with P10 = 1 and P90 = 10^11
the fourth is exp(832), past the largest double (exp(709.78)), and the skewness and kurtosis
that Cornish–Fisher multiplies follow. Such an item is refused with the widest range that
still works, rather than turned into infinities or an overflow far downstream.
"""

from __future__ import annotations

import math

# Largest exponent allowed in any moment term: e^690 ~ 1e299 leaves room to add thousands of
# items and to multiply the sd by the kurtosis in Cornish–Fisher without overflow.
EXPONENT_LIMIT = 690.0


def largest_exponent(mu: float, sigma: float) -> float:
    """The largest exponent among the terms the moments and their uses need: the fourth
    raw moment (4 mu + 8 sigma^2), the sd times the excess kurtosis (mu + 5 sigma^2), and
    the kurtosis itself (4 sigma^2)."""
    s2 = sigma * sigma
    return max(4 * mu + 8 * s2, mu + 5 * s2, 4 * s2)


def lognormal_fits(mu: float, sigma: float) -> bool:
    return largest_exponent(mu, sigma) <= EXPONENT_LIMIT


def widest_ratio(low: float, z_low: float, z_high: float) -> float:
    """The largest High / Low a lognormal with this Low at these percentiles can have
    (Low held, High raised); bisection on sigma, the exponent rises with it."""
    lo, hi = 0.0, 1.0
    while lognormal_fits(math.log(low) - z_low * hi, hi):
        lo, hi = hi, 2 * hi
    for _ in range(80):
        mid = 0.5 * (lo + hi)
        if lognormal_fits(math.log(low) - z_low * mid, mid):
            lo = mid
        else:
            hi = mid
    return math.exp(lo * (z_high - z_low))
