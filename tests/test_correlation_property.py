"""Property: a positive default correlation never lowers the simulated P90 of identically
distributed items that are right-skewed or symmetric.

Why it must hold: for identical items the total's spread grows with a positive common
correlation (Var = n s^2 (1 + (n - 1) r)), and for right-skewed or symmetric items the P90
lies above the mean, so it moves up (a consequence of that variance formula; no outside
source for the inequality itself). Compared allowing for both runs' standard errors.
"""

from __future__ import annotations

import math

from hypothesis import given, settings
from hypothesis import strategies as st

from engine import CorrelationSpec, Estimate, LineItem, analyze


@settings(max_examples=6, derandomize=True, deadline=None)
@given(
    count=st.integers(min_value=2, max_value=8),
    low=st.floats(min_value=0, max_value=100),
    width=st.floats(min_value=1, max_value=100),
    skew=st.floats(
        min_value=0.0, max_value=0.5
    ),  # most likely in the lower half: right-skewed or symmetric
    family=st.sampled_from(["triangular", "pert"]),
    rho=st.floats(min_value=0.1, max_value=0.9),
)
def test_positive_correlation_never_lowers_p90(count, low, width, skew, family, rho):
    items = [
        LineItem(f"Lot {k}", family, low, low + skew * width, low + width) for k in range(count)
    ]
    independent = analyze(Estimate(items), method="simulation", trials=8000, seed=5, levels=(90,))
    linked = analyze(
        Estimate(items, correlation=CorrelationSpec(default=rho)), trials=8000, seed=5, levels=(90,)
    )
    a, b = independent.levels[0], linked.levels[0]
    allowance = 3 * math.hypot(a.standard_error, b.standard_error)
    assert b.value >= a.value - allowance
