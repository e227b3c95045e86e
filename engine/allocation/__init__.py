"""Where the contingency sits (conditional-expectation allocation to items and groups), the
confidence of the base estimate and of a budget, and the risk events ranked."""

from engine.allocation.allocate import Allocation, LevelAllocation, allocate

__all__ = ["Allocation", "LevelAllocation", "allocate"]
