"""Where the contingency sits (conditional-expectation allocation to items and groups), the
confidence of the base estimate and of a budget, and the risk events ranked."""

from engine.allocation.allocate import (
    NOT_A_SUM,
    Allocation,
    LevelAllocation,
    allocate,
    shares_add_up,
)

__all__ = ["NOT_A_SUM", "Allocation", "LevelAllocation", "allocate", "shares_add_up"]
