"""Small estimates the window tests share."""

from __future__ import annotations

from engine import Estimate, LineItem


def two_uniforms() -> Estimate:
    return Estimate(
        items=[
            LineItem("Crane hire", "uniform", 0.0, None, 100.0),
            LineItem("Scaffold rental", "uniform", 0.0, None, 100.0),
        ],
        title="Two uniforms",
    )
